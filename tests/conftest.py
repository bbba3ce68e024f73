"""Test configuration shared by the whole suite.

* One BLAS thread: threaded BLAS on the 2-core CI machines can run 70x slower under load.
* ``--full`` also runs the tests marked ``slow``; the default run stays lean.
* Hypothesis draws fixed examples under CI (``CI=true``), new ones on a developer's run.
"""
from __future__ import annotations

import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")
os.environ.setdefault("MKL_NUM_THREADS", "1")
os.environ.setdefault("MPLBACKEND", "Agg")

import importlib.util  # noqa: E402
import sys  # noqa: E402
from pathlib import Path  # noqa: E402

import pytest  # noqa: E402


def _register_helpers() -> None:
    """Make tests/_systems.py importable as ``pulsetherm_test_systems`` (the tests are not
    a package, and the import mode keeps their folder off sys.path)."""
    name = "pulsetherm_test_systems"
    if name in sys.modules:
        return
    spec = importlib.util.spec_from_file_location(name, Path(__file__).with_name("_systems.py"))
    mod = importlib.util.module_from_spec(spec)
    sys.modules[name] = mod
    spec.loader.exec_module(mod)


_register_helpers()

# Property tests: a developer's run draws new examples every time (that is how the dense/
# sparse extreme misses were found); CI (CI=true) draws a fixed set per test, so a landing
# never hangs on a lucky draw.  A failure found locally becomes an @example.
from hypothesis import settings as _hyp_settings  # noqa: E402

_hyp_settings.register_profile("ci", derandomize=True, database=None)
if os.environ.get("CI", "").lower() in ("1", "true", "yes"):
    _hyp_settings.load_profile("ci")


def pytest_addoption(parser: pytest.Parser) -> None:
    parser.addoption("--full", action="store_true", default=False,
                     help="also run tests marked slow (CI does)")


def pytest_collection_modifyitems(config: pytest.Config, items: list[pytest.Item]) -> None:
    if config.getoption("--full"):
        return
    skip = pytest.mark.skip(reason="slow: run with --full")
    for item in items:
        if "slow" in item.keywords:
            item.add_marker(skip)
