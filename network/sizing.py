"""Sizing: the largest or smallest value of one scenario field that keeps every limit.

The limit function of a value x is the smallest margin over the limited probes minus the
required margin,

    g(x) = min_p (limit_p − peak_p(x)) − margin,

and the answer is the root of g between the range ends.  g is assumed monotone in x (sink
resistance, coolant temperature, duty, pulse width, burst length all heat monotonically);
the ends are checked first: both passing or both failing is reported plainly instead of
searched.  Bisection keeps a passing end and a failing end and halves the bracket until it
is narrower than ``tol``; the passing end is returned, so re-running at the value found
keeps every limit and the failing end (``beyond``) breaks one.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

from .scenario import Scenario, ScenarioError, field_kind, split_unit

__all__ = ["size", "SizingResult", "SizingError"]


class SizingError(ScenarioError):
    """The range has no answer (even its best end breaks a limit) or the input is bad."""


@dataclass(eq=False)
class SizingResult:
    """Outcome of :func:`size`.

    Attributes
    ----------
    adjust
        The scenario path that was sized.
    kind
        ``"largest"`` (larger values break a limit) or ``"smallest"``.
    value, value_text
        The value found, in the range's unit, and as a scenario string.
    beyond_text
        The failing end of the final bracket (just beyond ``value``).
    margin_K
        Margin kept below every limit, K.
    binding_probe, binding_peak_C, binding_limit_C
        The probe with the least margin at ``value``.
    evaluations
        Simulations run.
    whole_range
        True when the whole range keeps every limit (``value`` is then the end that is
        hardest on the limits, and ``note`` says so).
    """

    adjust: str
    kind: str
    value: float
    value_text: str
    beyond_text: str | None
    unit: str
    margin_K: float
    binding_probe: str
    binding_peak_C: float
    binding_limit_C: float
    evaluations: int
    whole_range: bool = False
    note: str = ""
    history: list[tuple[str, float]] = field(default_factory=list)
    cautions: list[str] = field(default_factory=list)
    #: unit of the binding row: degC, or dB / deg for a [devices.rf] limit
    binding_unit: str = "degC"

    def to_dict(self) -> dict[str, Any]:
        return {"adjust": self.adjust, "kind": self.kind, "value": self.value,
                "binding_unit": self.binding_unit,
                "value_text": self.value_text, "beyond_text": self.beyond_text,
                "unit": self.unit, "margin_K": self.margin_K,
                "binding_probe": self.binding_probe, "binding_peak_C": self.binding_peak_C,
                "binding_limit_C": self.binding_limit_C, "evaluations": self.evaluations,
                "whole_range": self.whole_range, "note": self.note,
                "history": [{"value": v, "slack_K": g} for v, g in self.history],
                "cautions": list(self.cautions)}

    def summary(self) -> str:
        return (f"{self.adjust}: {self.kind} value {self.value_text} (binding "
                f"{self.binding_probe}, {self.evaluations} runs)")


def _evaluate(scn: Scenario, path: str, text: str, margin: float):
    """(slack K, binding probe, its peak, its limit) at one value."""
    from .simulate import simulate

    res = simulate(scn.with_value(path, text))
    limited = [(p.limit_C - p.peak_C - margin, name, p.peak_C, p.limit_C)
               for name, p in res.probes.items() if p.limit_C is not None]
    if getattr(res, "effects", None) is not None:
        # [devices.rf] limits (droop, stability, phase p-p; dB or deg): held like a
        # temperature limit, the margin in K does not apply to them
        limited += [(s, n, v, lim) for s, n, v, lim, _u in res.effects.slack()]
    if not limited:
        raise SizingError("limits", None, "at least one probe with a limit (a device limit, "
                          "a line limit or a probe limit) to size against")
    slack, name, value, lim = min(limited, key=lambda x: x[0])
    return slack, name, value, lim, res


def _unit_of(out) -> str:
    """Unit of the binding row of an evaluation: degC, or dB/deg for a [devices.rf] limit."""
    eff = getattr(out[4], "effects", None)
    for _s, n, _v, _l, u in (eff.slack() if eff is not None else ()):
        if n == out[1]:
            return u
    return "degC"


def size(scn: Scenario, adjust: str, range_text: str, margin: float = 0.0,
         tol: str | float | None = None, max_evaluations: int = 60) -> SizingResult:
    """Largest or smallest value of ``adjust`` in ``range_text`` (``"0.1..2 K/W"``) that
    keeps every limit with ``margin`` K to spare.

    ``tol``: bracket width at which to stop, in the range's unit (a number) or a string
    with a unit; default 1e-4 of the range.
    """
    from .simulate import CAUTION
    from .sweep import parse_range

    kind = field_kind(scn, adjust)
    if kind is None:
        raise SizingError(adjust, None, "a quantity field (with a unit) to size")
    scn.get_value(adjust)  # the field must be set in the scenario
    (lo, hi), scale = parse_range(range_text, kind, "--range", counted=False)
    if not (isinstance(margin, (int, float)) and math.isfinite(margin) and margin >= 0):
        raise SizingError("--margin", margin, "a temperature difference >= 0 K")
    if tol is None:
        width = 1e-4 * abs(hi - lo)
    elif isinstance(tol, str):
        from .scenario import parse_quantity

        q = parse_quantity(tol, "difference" if kind == "temperature" else kind, "--tol")
        width = abs(q.value / scale.factor)
    else:
        width = float(tol)
    if not (width > 0 and math.isfinite(width)):
        raise SizingError("--tol", tol, "a bracket width > 0")
    history: list[tuple[str, float]] = []

    cautions: list[str] = []

    def g(x: float):
        text = scale.text(x)
        try:
            out = _evaluate(scn, adjust, text, margin)
        except ScenarioError as exc:
            raise SizingError(adjust, text, f"a value the scenario accepts ({exc})") from None
        history.append((text, out[0]))
        # the general caution and every material caution met on the way (a sized layer
        # material can change between evaluations)
        cautions.extend(c for c in out[4].cautions if c not in cautions)
        return out

    g_lo, g_hi = g(lo), g(hi)
    unit = scale.unit
    if g_lo[0] < 0 and g_hi[0] < 0:
        best, bx = (g_lo, lo) if g_lo[0] >= g_hi[0] else (g_hi, hi)
        u = _unit_of(best)
        if u == "degC":
            detail = (f"by {-best[0]:.3g} K (peak {best[2]:.2f} degC, limit "
                      f"{best[3]:.2f} degC, margin {margin:g} K)")
        else:  # a [devices.rf] limit: its own unit, the K margin does not apply
            detail = f"by {-best[0]:.3g} {u} (value {best[2]:.4g} {u}, limit {best[3]:.4g} {u})"
        raise SizingError(adjust, range_text,
                          f"a range with a passing end: even the better end "
                          f"{scale.text(bx)} breaks {best[1]} {detail}")
    if g_lo[0] >= 0 and g_hi[0] >= 0:
        worst, wx = (g_lo, lo) if g_lo[0] <= g_hi[0] else (g_hi, hi)
        kind_txt = "largest" if wx == max(lo, hi) else "smallest"
        out = SizingResult(adjust, kind_txt, wx, scale.text(wx), None, unit, margin,
                           worst[1], worst[2], worst[3], 2, True,
                           f"the whole range {range_text} keeps every limit; the limit is "
                           f"not reached inside it (least slack {worst[0]:.3g} K at "
                           f"{scale.text(wx)})", history, cautions or [CAUTION])
        out.binding_unit = _unit_of(worst)
        return out
    good, bad = (lo, hi) if g_lo[0] >= 0 else (hi, lo)
    g_good = g_lo if g_lo[0] >= 0 else g_hi
    n = 2
    while abs(bad - good) > width and n < max_evaluations:
        mid = 0.5 * (good + bad)
        gm = g(mid)
        n += 1
        if gm[0] >= 0:
            good, g_good = mid, gm
        else:
            bad = mid
    kind_txt = "largest" if good < bad else "smallest"
    # the value reported is the one simulated: the number of its text (10 digits), not the
    # unrounded midpoint, which may lie a rounding step beyond it
    good_text = scale.text(good)
    out = SizingResult(adjust, kind_txt, split_unit(good_text)[0], good_text,
                       scale.text(bad), unit,
                       margin, g_good[1], g_good[2], g_good[3], n, False, "", history,
                       cautions or [CAUTION])
    out.binding_unit = _unit_of(g_good)
    return out
