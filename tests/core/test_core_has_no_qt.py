"""core is pure computation: importing all of it loads no Qt module (STYLE.md rule 1)."""

import subprocess
import sys

CODE = """
import importlib, pkgutil, sys
import trueslope.core as core
for m in pkgutil.walk_packages(core.__path__, 'trueslope.core.'):
    importlib.import_module(m.name)
import trueslope.app.cli  # the dispatcher itself must not pull Qt in either
bad = sorted(m for m in sys.modules if m.split('.')[0] in ('PySide6', 'shiboken6', 'pyqtgraph'))
print(','.join(bad))
"""


def test_importing_core_loads_no_qt():
    out = subprocess.run([sys.executable, "-c", CODE], capture_output=True, text=True, timeout=120)
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip() == ""
