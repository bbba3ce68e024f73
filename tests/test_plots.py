"""Plots are written whole, deterministically (two runs give identical bytes), as PNG or
SVG.  Common practice, no source."""
from __future__ import annotations

from pathlib import Path

import pytest

pytest.importorskip("matplotlib")

from pulsetherm.network.scenario import load  # noqa: E402
from pulsetherm.network.simulate import simulate, thermal_impedance  # noqa: E402
from pulsetherm.tui.cli import main  # noqa: E402
from pulsetherm.tui.plots import plot_run, plot_zth  # noqa: E402

EX = Path(__file__).resolve().parents[1] / "examples"


@pytest.mark.parametrize("suffix", [".svg", ".png"])
def test_run_plot_is_deterministic(tmp_path, suffix):
    res = simulate(load(EX / "termination_line.toml"))  # includes the line profile panel
    a, b = tmp_path / f"a{suffix}", tmp_path / f"b{suffix}"
    plot_run(res, a)
    plot_run(res, b)
    assert a.read_bytes() == b.read_bytes()
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted([a.name, b.name])
    if suffix == ".svg":
        text = a.read_text()
        assert "<dc:date>" not in text and "<svg" in text


def test_zth_plot_and_csv(tmp_path, capsys):
    f = EX / "xband_gan_coldplate.toml"
    png, out = tmp_path / "z.png", tmp_path / "z.csv"
    assert main(["zth", str(f), "--probe", "pa.junction", "--plot", str(png), "--csv",
                 str(out)]) == 0
    text = capsys.readouterr().out
    assert "Foster" in text and "Cauer" in text
    assert png.read_bytes()[:4] == b"\x89PNG"
    lines = out.read_text().splitlines()
    assert lines[0] == "t_s,zth_K_per_W" and any(x.startswith("width_s,duty_0") for x in lines)
    res = thermal_impedance(load(f), "pa.junction")
    # the Zth curve ends at the steady resistance (sum of the Foster terms), K/W
    assert res.zth[-1] == pytest.approx(res.R_th, rel=2e-2)
    assert main(["zth", str(f), "--probe", "pa.junctoin"]) == 2
    assert "did you mean 'pa.junction'" in capsys.readouterr().err


def test_unknown_plot_suffix_leaves_nothing(tmp_path):
    res = simulate(load(EX / "four_channel_module.toml"))
    with pytest.raises(ValueError, match="png or .svg"):
        plot_zth(thermal_impedance(res.model, "ch1.junction"), tmp_path / "x.pdf")
    assert list(tmp_path.iterdir()) == []


def test_run_plot_carries_the_cautions(tmp_path, monkeypatch):
    """The run figure shows limits, so it carries the general and the material cautions
    (beryllia).  Common practice, no source."""
    import pulsetherm.tui.plots as plots

    seen = {}
    monkeypatch.setattr(plots, "save_figure", lambda fig, path: seen.setdefault("fig", fig))
    res = simulate(load(EX / "xband_gan_coldplate.toml"))
    res.cautions.append("Beryllia: test caution")
    plot_run(res, tmp_path / "a.png")
    fig = seen["fig"]
    text = fig.get_supxlabel()
    assert "Caution: engineering estimates" in text and "Caution: Beryllia" in text
    import matplotlib.pyplot as plt
    plt.close(fig)
