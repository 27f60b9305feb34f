"""The desktop bundle's program: the ``trueslope`` command (``packaging/trueslope.spec``).

``freeze_support`` lets the comparison's worker processes (started with ``spawn``) run
inside the bundle, whose executable is this program rather than a Python interpreter.
"""

import multiprocessing
import sys

from trueslope.app.cli import main

if __name__ == "__main__":
    multiprocessing.freeze_support()
    sys.exit(main())
