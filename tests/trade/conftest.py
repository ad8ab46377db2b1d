"""The ``slow`` marker of test_results.py, kept here so that the file itself stays as its owner wrote it.

Its module fixture runs the default scenario three times through the command line and
``tradeopt budget`` once, in new processes (about 45 s on two cores), so every test of the
module is slow. A ``pytestmark = pytest.mark.slow`` line in the file would do the same and can
replace this hook.
"""
from __future__ import annotations

from pathlib import Path

import pytest

_HERE = Path(__file__).resolve().parent
_SLOW_MODULES = {"test_results.py"}


@pytest.hookimpl(tryfirst=True)
def pytest_collection_modifyitems(config, items):
    for item in items:
        if item.path.parent == _HERE and item.path.name in _SLOW_MODULES:
            item.add_marker(pytest.mark.slow)
