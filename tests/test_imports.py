"""Import guards for the command line: ``pulsetherm run`` on a small scenario must not load
the modules only large networks, nonlinear solvers or fits need (networkx ~80 ms,
scipy.optimize ~100 ms, scipy.sparse.linalg and csgraph ~10 ms each on the development
machine), so the command stays near the cost of importing numpy and scipy.linalg.  These
check ``sys.modules`` in a fresh interpreter, never the clock (common practice, no source).

scipy.sparse itself is allowed: the assembled system keeps its matrices in CSR form, and
the package costs ~10 ms once scipy.linalg is loaded.
"""
from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

from tests._systems import SMALL_PULSED_SCENARIO

ROOT = Path(__file__).resolve().parents[1]

#: Modules a small ``run`` must not import.
HEAVY_FOR_RUN = ("networkx", "scipy.optimize", "scipy.sparse.linalg", "scipy.sparse.csgraph",
                 "matplotlib", "textual")


def _fresh(code: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-P", "-c", code], capture_output=True, text=True,
                          cwd=ROOT, timeout=120)


def _run_and_list(args: list[str], watch: tuple[str, ...]) -> str:
    return ("import sys\nfrom pulsetherm.tui.cli import main\n"
            f"rc = main({args!r})\n"
            f"bad = [m for m in {watch!r} if m in sys.modules]\n"
            "print('LOADED', bad)\nsys.exit(10 + rc if rc else (1 if bad else 0))\n")


def test_cli_import_is_standard_library_only():
    code = ("import sys\nimport pulsetherm.tui.cli\n"
            "bad = [m for m in ('numpy', 'scipy', 'networkx', 'pulsetherm.network.model') "
            "if m in sys.modules]\nprint('LOADED', bad)\nsys.exit(1 if bad else 0)\n")
    out = _fresh(code)
    assert out.returncode == 0, out.stdout + out.stderr[-2000:]


@pytest.mark.parametrize("scenario", ["small", "xband"])
def test_run_does_not_import_heavy_modules(tmp_path, scenario):
    if scenario == "small":
        path = tmp_path / "small.toml"
        path.write_text(SMALL_PULSED_SCENARIO)
    else:
        path = ROOT / "examples" / "xband_gan_coldplate.toml"
    out = _fresh(_run_and_list(["run", str(path)], HEAVY_FOR_RUN))
    assert out.returncode != 1, f"`pulsetherm run` imported {out.stdout.splitlines()[-1]}"
    assert out.returncode == 0, out.stdout[-2000:] + out.stderr[-2000:]
    assert "probe" in out.stdout            # the run printed its table


def test_guard_sees_an_import():
    """The guard itself can fail: ``zth`` fits a Foster network (scipy.optimize)."""
    path = ROOT / "examples" / "xband_gan_coldplate.toml"
    out = _fresh(_run_and_list(["zth", str(path), "--probe", "pa.junction"],
                               ("scipy.optimize",)))
    assert out.returncode == 1, out.stdout[-2000:] + out.stderr[-2000:]


#: Project modules only other commands or other scenarios need: ``zth`` (impedance), data-sheet
#: Foster devices (foster), ``[devices.rf]`` / ``[devices.cycling]`` (device_effects and its
#: table, effects_report), and ``fractions`` (with ``decimal``: waveforms of unequal
#: periods).  Each costs ~0.2-1.5 ms of import per ``run`` (common practice, no source).
ONLY_FOR_OTHERS = ("pulsetherm.network.impedance", "pulsetherm.network.foster",
                   "pulsetherm.network.device_effects", "pulsetherm.tui.effects_report",
                   "fractions")


def test_run_of_a_die_stack_imports_only_what_it_needs():
    path = ROOT / "examples" / "xband_gan_coldplate.toml"
    out = _fresh(_run_and_list(["run", str(path)], ONLY_FOR_OTHERS))
    assert out.returncode != 1, f"`pulsetherm run` imported {out.stdout.splitlines()[-1]}"
    assert out.returncode == 0, out.stdout[-2000:] + out.stderr[-2000:]


@pytest.mark.parametrize("scenario, module", [
    ("foster", "pulsetherm.network.foster"),
    ("stagger_burst_phase.toml", "pulsetherm.network.device_effects"),
    ("stagger_burst_phase.toml", "pulsetherm.tui.effects_report"),
])
def test_the_lazy_guard_sees_the_import(tmp_path, scenario, module):
    """The guard above can fail: a Foster device needs foster, ``[devices.rf]`` needs
    device_effects."""
    if scenario == "foster":
        path = tmp_path / "small.toml"
        path.write_text(SMALL_PULSED_SCENARIO)
    else:
        path = ROOT / "examples" / scenario
    out = _fresh(_run_and_list(["run", str(path)], (module,)))
    assert out.returncode == 1, out.stdout[-2000:] + out.stderr[-2000:]


def test_impedance_names_still_reach_through_simulate():
    """``simulate.thermal_impedance`` / ``ImpedanceResult`` load their module on first use."""
    import importlib

    impedance = importlib.import_module("pulsetherm.network.impedance")
    simulate = importlib.import_module("pulsetherm.network.simulate")  # the module, not the
    #                                                                   # function of that name
    assert simulate.thermal_impedance is impedance.thermal_impedance
    assert simulate.ImpedanceResult is impedance.ImpedanceResult
    with pytest.raises(AttributeError):
        simulate.no_such_name
