"""Packaging guards: every sub-package is listed in pyproject, and the top-level folders are
only ever imported through the ``pulsetherm`` namespace (common practice, no source)."""
from __future__ import annotations

import subprocess
import sys
import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
TOP = {"network", "waveforms", "tui"}


def _pyproject() -> dict:
    return tomllib.loads((ROOT / "pyproject.toml").read_text())


def test_no_pulsetherm_folder():
    assert not (ROOT / "pulsetherm").exists(), "there must be no pulsetherm/ folder"


def test_every_subpackage_is_listed():
    cfg = _pyproject()["tool"]["setuptools"]
    listed = set(cfg["packages"])
    mapped = cfg["package-dir"]
    found = set()
    for top in TOP:
        for init in (ROOT / top).rglob("__init__.py"):
            rel = init.parent.relative_to(ROOT / top)
            found.add(".".join(["pulsetherm", top, *rel.parts]))
    missing = found - listed
    assert not missing, f"sub-packages missing from pyproject [tool.setuptools] packages: {sorted(missing)}"
    stale = listed - found
    assert not stale, f"pyproject lists packages that do not exist: {sorted(stale)}"
    for top in TOP:
        assert mapped[f"pulsetherm.{top}"] == top


def test_dependencies_flow_one_way():
    """waveforms depends on numpy only; network never imports tui."""
    for path in (ROOT / "waveforms").rglob("*.py"):
        text = path.read_text()
        for bad in ("pulsetherm.network", "pulsetherm.tui", "import scipy", "from scipy",
                    "import networkx", "import textual"):
            assert bad not in text, f"{path.name} must not use {bad!r}"
    for path in (ROOT / "network").rglob("*.py"):
        assert "pulsetherm.tui" not in path.read_text(), f"{path.name} imports tui"


def test_no_bare_top_level_modules_imported():
    """Importing the whole package must never load bare ``network``/``waveforms``/``tui``."""
    code = (
        "import sys, importlib, pkgutil\n"
        "import pulsetherm.network, pulsetherm.waveforms, pulsetherm.tui\n"
        "for pkg in (pulsetherm.network, pulsetherm.waveforms, pulsetherm.tui):\n"
        "    for m in pkgutil.walk_packages(pkg.__path__, pkg.__name__ + '.'):\n"
        "        importlib.import_module(m.name)\n"
        "bad = sorted(n for n in sys.modules if n.split('.')[0] in {'network','waveforms','tui'})\n"
        "print(bad)\n"
        "sys.exit(1 if bad else 0)\n"
    )
    out = subprocess.run([sys.executable, "-P", "-c", code], capture_output=True, text=True, cwd=ROOT)
    assert out.returncode == 0, f"bare modules imported: {out.stdout} {out.stderr[-2000:]}"


def test_this_session_has_no_bare_modules():
    bad = sorted(n for n in sys.modules if n.split(".")[0] in TOP)
    assert not bad, f"bare top-level modules were imported in the test session: {bad}"
