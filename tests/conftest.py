"""Shared test set-up: offscreen Qt, and the ``ngspice`` fixture of the live simulator tests.

Helpers live in the package ``tests.support`` (``from tests.support.spice import ...``);
``tests`` is a package, so pytest's default import mode finds it from the project root.
"""

import os

import pytest

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")


@pytest.fixture
def ngspice() -> str:
    """The path of ngspice. Without it the test is skipped with the reason, or fails when
    the environment variable ``CI`` is true (``.ci/run`` sets it)."""
    from tests.support.spice import require_ngspice

    return require_ngspice()
