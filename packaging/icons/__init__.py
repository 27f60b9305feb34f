"""trueslope's icon, installed as ``trueslope.icons``: ``trueslope.svg`` (the drawing) and its
PNG renderings ``trueslope-48.png``, ``-128.png``, ``-256.png`` (``packaging/make_icons.py``).

:mod:`trueslope.app.icon` reads them; the desktop bundle carries them too.
"""
