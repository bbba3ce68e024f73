"""Test configuration shared by the whole suite.

* One BLAS thread: threaded BLAS on the 2-core CI machines can run 70x slower under load.
* ``--full`` also runs the tests marked ``slow``; the default run stays lean.
"""
from __future__ import annotations

import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")
os.environ.setdefault("MKL_NUM_THREADS", "1")
os.environ.setdefault("MPLBACKEND", "Agg")

import pytest  # noqa: E402


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
