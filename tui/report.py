"""Plain-text tables for the command line.

Every function takes result objects (or records) and returns a string; nothing prints here.
Only the standard library is imported at module level.
"""
from __future__ import annotations

import math
from typing import Any, Iterable, Sequence

__all__ = ["table", "material_table", "material_text", "run_table", "check_text",
           "zth_text", "sweep_text", "sizing_text"]


def _fmt(v: Any, digits: int = 4) -> str:
    if v is None:
        return "-"
    if isinstance(v, bool):
        return "yes" if v else "no"
    if isinstance(v, float):
        if not math.isfinite(v):
            return str(v)
        a = abs(v)
        if v != 0 and (a >= 1e6 or a < 1e-3):
            return f"{v:.{digits - 1}e}"
        return f"{v:.{digits}g}"
    return str(v)


def table(headers: Sequence[str], rows: Iterable[Sequence[Any]],
          align: str | None = None) -> str:
    """Fixed-width table; ``align`` one letter per column, 'l' or 'r' (text left, numbers
    right by default)."""
    cells = [[_fmt(v) for v in row] for row in rows]
    rows_raw = cells
    n = len(headers)
    widths = [len(h) for h in headers]
    for row in rows_raw:
        for i, c in enumerate(row):
            widths[i] = max(widths[i], len(c))
    if align is None:
        align = "l" + "r" * (n - 1)
    def line(row: Sequence[str]) -> str:
        return "  ".join(c.ljust(widths[i]) if align[i] == "l" else c.rjust(widths[i])
                         for i, c in enumerate(row)).rstrip()
    out = [line(list(headers)), "  ".join("-" * w for w in widths)]
    out += [line(r) for r in rows_raw]
    return "\n".join(out)


# -- materials ---------------------------------------------------------------------------
def material_table(materials: Iterable[Any]) -> str:
    """One line per material: name, k, in-plane k, rho, c, limit, description."""
    rows = []
    for m in materials:
        rows.append([m.name, float(m.k), float(m.k_inplane), float(m.rho), float(m.c),
                     None if m.t_max_K is None else float(m.t_max_K) - 273.15,
                     ("(!) " if m.caution else "") + m.description])
    return table(["material", "k W/m/K", "k_xy W/m/K", "rho kg/m3", "c J/kg/K",
                  "limit degC", "description"], rows, align="lrrrrrl")


def material_text(m: Any) -> str:
    """Every field of one material, its source and its caution."""
    lines = [f"{m.name}: {m.description}",
             f"  k (through-plane)  {m.k:g} W/(m K)",
             f"  k (in-plane)       {m.k_inplane:g} W/(m K)",
             f"  density            {m.rho:g} kg/m3",
             f"  specific heat      {m.c:g} J/(kg K)"]
    if m.k_exponent:
        lines.append(f"  k(T) exponent      {m.k_exponent:g}  (k = k300 (T/300 K)^-a)")
    if m.t_max_K is not None:
        lines.append(f"  service limit      {m.t_max_K - 273.15:.1f} degC")
    if getattr(m, "permittivity", None) is not None:
        lines.append(f"  permittivity       {m.permittivity:g}  (relative, lines on it take it)")
    if getattr(m, "loss_tangent", None) is not None:
        lines.append(f"  loss tangent       {m.loss_tangent:g}")
    lines.append(f"  source: {m.source}")
    if m.caution:
        lines.append(f"  CAUTION: {m.caution}")
    return "\n".join(lines)


# -- run / check -------------------------------------------------------------------------
def _cautions(cautions: Sequence[str]) -> list[str]:
    return [f"Caution: {c}" for c in cautions]


def run_table(res: Any) -> str:
    """Probe table (peak, mean, minimum, ripple, limit, margin), the budget, warm-up time
    and the cautions of a :class:`~pulsetherm.network.simulate.RunResult`."""
    d = res.to_dict()
    out = [f"scenario: {d['scenario']}",
           f"ambient/coolant: {d['ambient_C']:.2f} degC", ""]
    rows = []
    for name, p in d["probes"].items():
        rows.append([name, p["peak_C"], p["mean_C"], p["min_C"], p["ripple_K"],
                     p["limit_C"], p["margin_K"]])
    out.append(table(["probe", "peak degC", "mean degC", "min degC", "ripple K",
                      "limit degC", "margin K"], rows))
    if d["budget"]:
        out.append("")
        where = getattr(res, "budget_probe", None) or "each junction"
        out.append(f"share of the mean rise at {where} (mean power, steady):")
        out.append(table(["part", "layer", "share %", "rise K"],
                         [[b["part"], b["layer"], 100.0 * b["share"], b["rise_K"]]
                          for b in d["budget"]], align="llrr"))
    if d.get("via_fields"):
        out.append("")
        out.append("via fields used (vias.area, else the footprint of the part above):")
        out.append(table(["part", "layer", "size mm", "area mm2", "k_z W/mK", "from"],
                         [[v["part"], v["layer"], f"{_fmt(1e3 * v['width_m'])} x "
                           f"{_fmt(1e3 * v['length_m'])}", 1e6 * v["area_m2"], v["k_z"],
                           "vias.area" if v["given"] else "part footprint"]
                          for v in d["via_fields"]], align="llrrrl"))
    out.append("")
    out.append(f"warm-up (99 % of the periodic state): {_fmt(d['warmup_s'])} s")
    if d.get("rf") or d.get("cycling"):      # [devices.rf] / [devices.cycling]
        from .effects_report import effects_lines

        out += effects_lines(d)
    if d["cautions"]:
        out.append("")
        out += _cautions(d["cautions"])
    return "\n".join(out)


def check_text(chk: Any) -> str:
    """Every probe with its status (ok, margin short, limit broken, no limit) and the
    verdict of a :class:`~pulsetherm.network.checks.CheckResult`, then the cautions."""
    d = chk.to_dict()
    out = [f"scenario: {d['scenario']}  (required margin {d['margin_K']:g} K)"]
    rows = [[r["name"], r["value"], r["limit"], r["margin"], r["status"]] for r in d["rows"]]
    if any(r.get("unit", "degC") != "degC" for r in d["rows"]):
        # signal limits ([devices.rf]) in dB or deg: the unit of each row is shown
        rows = [row + [r.get("unit", "degC")] for row, r in zip(rows, d["rows"])]
        out.append(table(["probe", "peak/value", "limit", "margin", "status", "unit"], rows,
                         align="lrrrll"))
    elif rows:
        out.append(table(["probe", "peak degC", "limit degC", "margin K", "status"], rows,
                         align="lrrrl"))
    else:
        out.append("no probe")
    out.append("")
    out.append(d["verdict"])
    out += _cautions(d["cautions"])
    return "\n".join(out)


# -- zth ---------------------------------------------------------------------------------
def zth_text(res: Any) -> str:
    """Steady resistance, the Foster network and the Cauer ladder (when they exist), the
    notes on what was skipped and why, the cautions."""
    d = res.to_dict()
    out = [f"thermal impedance at {d['probe']} (input {d['input']}), from "
           f"{_fmt(float(d.get('t_from_s', 0.0)))} s",
           f"steady resistance: {d['R_th_K_per_W']:.5g} K/W"]
    if d["foster"] is not None:
        out += ["", "Foster network:"]
        out.append(table(["stage", "R K/W", "tau s"],
                         [[i + 1, r, t] for i, (r, t) in enumerate(zip(d["foster"]["R"],
                                                                     d["foster"]["tau"]))]))
    if d["cauer"] is not None:
        out += ["", "Cauer ladder:"]
        out.append(table(["stage", "R K/W", "C J/K"],
                         [[i + 1, r, c] for i, (r, c) in enumerate(zip(d["cauer"]["R"],
                                                                     d["cauer"]["C"]))]))
    if d.get("notes"):
        out.append("")
        out += [f"Note: {n}" for n in d["notes"]]
    if d.get("cautions"):
        out.append("")
        out += _cautions(d["cautions"])
    return "\n".join(out)


# -- sweep / size ------------------------------------------------------------------------
#: A grid sweep with at most this many rows is printed row by row.
GRID_ROWS_SHOWN = 60


def sweep_text(res: Any) -> str:
    d = res.to_dict()
    out = [f"sweep of {d['scenario']}: {d['rows']} rows ({d['skipped']} resumed, "
           f"{d['failed']} failed)"]
    if d.get("out"):
        out.append(f"rows written to {d['out']}")
    if res.mode == "grid" and 0 < len(res.rows) <= GRID_ROWS_SHOWN:
        heads = list(res.paths) + [f"{p} peak degC" for p in res.probes] + ["limits"]
        body = []
        for r in res.rows:
            if r.get("error"):
                body.append([r.get(p) for p in res.paths] + ["-"] * len(res.probes)
                            + [f"error: {r['error']}"])
                continue
            body.append([r.get(p) for p in res.paths] + [r.get(f"{p}.peak_C") for p in res.probes]
                        + ["ok" if r.get("ok") else "broken"])
        out.append("")
        out.append(table(heads, body, align="l" * len(res.paths) + "r" * len(res.probes) + "l"))
    stats = d.get("percentiles") or {}
    if stats and not (res.mode == "grid" and len(res.rows) <= GRID_ROWS_SHOWN):
        qs = list(next(iter(stats.values())).keys())
        out.append("")
        out.append(table(["probe peak degC"] + qs,
                         [[name] + [v[q] for q in qs] for name, v in stats.items()]))
    if d.get("cautions"):
        out.append("")
        out += _cautions(d["cautions"])
    return "\n".join(out)


def _short_quantity(text: str, digits: int = 5, toward: str | None = None) -> str:
    """``'400.793457 us'`` -> ``'400.79 us'`` for display (the JSON keeps every digit).

    ``toward`` = ``"down"`` or ``"up"`` rounds in that direction instead of to the nearest
    (a sized value is shown rounded toward its passing side, so the printed number still
    keeps every limit).
    """
    from decimal import ROUND_CEILING, ROUND_FLOOR, ROUND_HALF_EVEN, Decimal, InvalidOperation

    num, _, unit = text.partition(" ")
    try:
        x = Decimal(num)
    except InvalidOperation:
        return text
    if not x.is_finite():
        return text
    if x == 0:
        return f"0 {unit}".strip()
    mode = {"down": ROUND_FLOOR, "up": ROUND_CEILING}.get(toward or "", ROUND_HALF_EVEN)
    q = Decimal(1).scaleb(x.adjusted() - digits + 1)
    y = x.quantize(q, rounding=mode)
    return f"{float(y):.{digits}g} {unit}".strip()


def _safe_side(kind: str) -> str | None:
    """Rounding direction that keeps a sized value on its passing side."""
    return {"largest": "down", "smallest": "up"}.get(kind)


def sizing_text(res: Any) -> str:
    d = res.to_dict()
    out = [f"{d['adjust']}: {d['kind']} value keeping every limit with {d['margin_K']:g} K "
           f"margin = {_short_quantity(d['value_text'], toward=_safe_side(d['kind']))}",
           (f"binding probe: {d['binding_probe']} (peak {d['binding_peak_C']:.2f} degC, "
            f"limit {d['binding_limit_C']:.2f} degC)"
            if d.get("binding_unit", "degC") == "degC" else
            f"binding: {d['binding_probe']} ({_fmt(d['binding_peak_C'])} {d['binding_unit']}, "
            f"limit {_fmt(d['binding_limit_C'])} {d['binding_unit']})"),
           f"evaluations: {d['evaluations']}"]
    if d.get("note"):
        out.append(d["note"])
    out += _cautions(d["cautions"])
    return "\n".join(out)
