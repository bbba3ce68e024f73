"""Plots for the command line (matplotlib, imported lazily; the ``[plot]`` extra).

Files are deterministic: fixed figure size and dpi, the Agg backend, a fixed SVG hash salt
and no creation dates or software tags in the metadata, so two runs write identical bytes.
Each figure is written to a temporary file beside the target and renamed at the end.
"""
from __future__ import annotations

import math
from pathlib import Path
from typing import Any

__all__ = ["plot_run", "plot_zth", "save_figure"]

FIGSIZE = (10.0, 7.5)
DPI = 100


def _mpl():
    try:
        import matplotlib
    except ImportError:
        raise ValueError("--plot: matplotlib is not installed (pip install "
                         "'pulsetherm[plot]')") from None
    matplotlib.use("Agg", force=True)
    import matplotlib.pyplot as plt

    return matplotlib, plt


def save_figure(fig, path: str | Path) -> None:
    """Write ``fig`` as PNG or SVG with no dates, fixed hash salt, atomically."""
    from .cli import atomic_output

    matplotlib, plt = _mpl()
    p = Path(path)
    fmt = p.suffix.lower().lstrip(".")
    if fmt not in ("png", "svg"):
        raise ValueError(f"--plot {str(path)!r}: expected a .png or .svg file name")
    meta = {"Date": None, "Creator": None} if fmt == "svg" else {"Software": None}
    with matplotlib.rc_context({"svg.hashsalt": "pulsetherm", "svg.fonttype": "path"}):
        with atomic_output(p, "wb") as fh:
            fig.savefig(fh, format=fmt, dpi=DPI, metadata=meta)
    plt.close(fig)


def _figure(plt, rows: int, cols: int):
    return plt.subplots(rows, cols, figsize=FIGSIZE, dpi=DPI, squeeze=False,
                        layout="constrained")


def _time_unit(span: float) -> tuple[str, float]:
    """A readable time unit for an axis spanning ``span`` seconds, and its scale."""
    for unit, scale in (("ns", 1e9), ("µs", 1e6), ("ms", 1e3)):
        if span * scale < 2000:
            return unit, scale
    return "s", 1.0


def _dense_period(res: Any, points: int = 48):
    """One period again with evenly spaced samples in every segment (modal solver), so a
    linear time axis shows the shape between the log-spaced samples; the run's own response
    for the other solvers."""
    r = res.response
    if getattr(r, "method", "") != "modal":
        return r
    m = res.model
    net = m.network
    before = net.solver_options("modal")
    net.configure_solver("modal", **{**before, "linear_points": points})
    try:
        return net.periodic(m.waveforms, probes=list(dict.fromkeys(m.probes.values())),
                            method="modal")
    finally:
        net.configure_solver("modal", **before)  # the user's own options come back


def plot_run(res: Any, path: str | Path) -> None:
    """Temperature against time (warm-up from cold, one period, a zoom on the pulse at the
    hottest probe), each layer's share of the mean rise, and the line profile(s)."""
    import numpy as np

    _, plt = _mpl()
    model = res.model
    has_lines = bool(model.lines)
    rf = getattr(getattr(res, "effects", None), "rf", None) or {}
    fig, ax = _figure(plt, 2, 3 if (has_lines or rf) else 2)
    names = list(res.probes)
    nodes = [model.probes[n] for n in names]
    # warm-up from a cold start
    warm = res.warmup_series()
    a = ax[0][0]
    for n, node in zip(names, nodes):
        a.plot(warm.t, warm.T(node), label=n, lw=1.0)
    a.set(title="warm-up from ambient", xlabel="time (s)", ylabel="temperature (degC)")
    a.legend(fontsize=7, loc="lower right")
    # one period of the periodic steady state, densely sampled for a linear time axis
    r = _dense_period(res)
    unit, scale = _time_unit(float(r.t[-1] - r.t[0]))
    a = ax[0][1]
    for n, node in zip(names, nodes):
        a.plot(r.t * scale, r.T(node), label=n, lw=1.0)
        if res.probes[n].limit_C is not None:
            a.axhline(res.probes[n].limit_C, ls="--", lw=0.7, color="0.4")
    a.set(title="one period, periodic state (dashed: limits)",
          xlabel=f"time ({unit})", ylabel="temperature (degC)")
    # zoom on the pulse at the hottest probe
    hot = max(names, key=lambda n: res.probes[n].peak_C)
    T = r.T(model.probes[hot])
    k = int(np.argmax(T))
    span = float(r.t[-1] - r.t[0])
    t0 = max(float(r.t[0]), float(r.t[k]) - 0.05 * span)
    t1 = min(float(r.t[-1]), float(r.t[k]) + 0.05 * span)
    sel = (r.t >= t0) & (r.t <= t1)
    zunit, zscale = _time_unit(t1 - t0)
    a = ax[1][0]
    a.plot(r.t[sel] * zscale, T[sel], lw=1.2)
    a.axhline(res.probes[hot].peak_C, ls=":", lw=0.7, color="0.4")
    a.set(title=f"zoom on the peak at {hot} ({res.probes[hot].peak_C:.2f} degC)",
          xlabel=f"time ({zunit})", ylabel="temperature (degC)")
    # budget
    a = ax[1][1]
    if res.budget:
        labels = [f"{b['part']}/{b['layer']}" for b in res.budget]
        a.barh(range(len(labels)), [100 * b["share"] for b in res.budget])
        a.set_yticks(range(len(labels)), labels, fontsize=7)
        a.invert_yaxis()
        a.set(title="share of the mean rise", xlabel="%")
    else:
        a.set_axis_off()
    if has_lines:
        a = ax[0][2]
        for name, bl in model.lines.items():
            rep = bl.report(res.response)
            a.plot(np.asarray(rep.x) * 1e3, rep.temperature, label=f"{name} peak")
            a.plot(np.asarray(rep.x) * 1e3, rep.mean, ls="--", label=f"{name} mean")
        a.set(title="line profile", xlabel="position along the line (mm)",
              ylabel="temperature (degC)")
        a.legend(fontsize=7)
        ax[1][2].set_axis_off()
    if rf:
        _rf_panel(ax[1][2], rf)
        if not has_lines:
            ax[0][2].set_axis_off()
    fig.suptitle(res.scenario, fontsize=10)
    # the figure judges limits (dashed lines): it carries the cautions like the text output
    fig.supxlabel("\n".join(f"Caution: {c}" for c in res.cautions), fontsize=6, ha="left",
                  x=0.01)
    save_figure(fig, path)


def _rf_panel(a, rf: dict) -> None:
    """Per pulse of the period: gain (dB) and insertion phase (deg) from the pulse-mean
    junction rise ([devices.rf]; network/pulse_effects.py)."""
    for name, e in rf.items():
        k = range(1, e.pulses.count + 1)
        a.plot(k, e.gain_dB, "o-", lw=1.0, label=f"{name} gain (dB)")
        a.plot(k, e.phase_deg, "s--", lw=1.0, label=f"{name} phase (deg)")
    a.set(title="pulse to pulse (pulse means)", xlabel="pulse in the period",
          ylabel="change over the cold part")
    a.legend(fontsize=7)


def plot_zth(res: Any, path: str | Path) -> None:
    """Zth curve with the pulsed-Zth family, and the cumulative structure function."""
    import numpy as np

    _, plt = _mpl()
    fig, ax = _figure(plt, 1, 2)
    a = ax[0][0]
    a.loglog(res.t, res.zth, lw=1.5, color="k", label="single pulse (Zth)")
    p = res.pulsed
    if p is not None:
        duties = np.atleast_1d(p.duties)
        Z = np.asarray(p.K_per_W)
        if Z.shape[0] != duties.size:
            Z = Z.T
        for j, d in enumerate(duties):
            if d > 0:
                a.loglog(p.widths, Z[j], lw=0.9, label=f"duty {d:g}")
    a.set(title=f"thermal impedance at {res.probe}", xlabel="pulse width / time (s)",
          ylabel="Zth (K/W)")
    a.legend(fontsize=7)
    a = ax[0][1]
    sf = res.structure
    if sf is None:  # no Cauer ladder at this probe: the note says why
        a.axis("off")
        a.text(0.02, 0.5, "\n".join(getattr(res, "notes", []) or ["no structure function"]),
               wrap=True, fontsize=7, va="center")
        save_figure(fig, path)
        return
    Rc = np.asarray(getattr(sf, "R_cum", getattr(sf, "R", [])))
    Cc = np.asarray(getattr(sf, "C_cum", getattr(sf, "C", [])))
    pos = Cc > 0
    a.semilogy(Rc[pos], Cc[pos], drawstyle="steps-post")
    a.set(title="cumulative structure function", xlabel="R (K/W)", ylabel="C (J/K)")
    save_figure(fig, path)
