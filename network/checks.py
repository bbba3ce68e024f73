"""Judging a run against its limits: the one place ``check`` (and the app) decide.

Every probe of a run gets one row and one status:

``ok``
    peak + required margin <= limit.
``margin short``
    the limit itself holds (peak <= limit) but by less than the required margin.
``limit broken``
    peak > limit.
``no limit``
    the probe has no limit: it is listed, never judged, and the verdict says so.

``check`` exits 1 when any row is ``limit broken`` or ``margin short`` and prints a final
line that tells the two apart.  Further kinds of limit (other quantities than a peak
temperature) are added as more :class:`CheckRow` objects through ``extra`` in
:func:`judge`; the statuses and the verdict stay the same.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Iterable

__all__ = ["CheckRow", "CheckResult", "judge", "OK", "SHORT", "BROKEN", "NO_LIMIT"]

OK = "ok"
SHORT = "margin short"
BROKEN = "limit broken"
NO_LIMIT = "no limit"


@dataclass(frozen=True)
class CheckRow:
    """One probe (or other limited quantity) against its limit.

    ``value`` and ``limit`` share a unit (``unit``; degC for temperatures); ``margin`` is
    ``limit - value`` in the unit of a difference (K), None without a limit."""

    name: str
    value: float
    limit: float | None
    margin: float | None
    status: str
    unit: str = "degC"

    def to_dict(self) -> dict[str, Any]:
        return {"name": self.name, "value": self.value, "limit": self.limit,
                "margin": self.margin, "status": self.status, "unit": self.unit}


def status_of(margin: float | None, required: float) -> str:
    """The status of a margin (limit - value) against the required margin (>= 0)."""
    if margin is None:
        return NO_LIMIT
    if margin < 0:
        return BROKEN
    if margin < required:
        return SHORT
    return OK


@dataclass(eq=False)
class CheckResult:
    """Rows of a check, the required margin and the cautions that go with any verdict."""

    scenario: str
    margin_K: float
    rows: list[CheckRow]
    cautions: list[str] = field(default_factory=list)

    def named(self, status: str) -> list[str]:
        return [r.name for r in self.rows if r.status == status]

    @property
    def broken(self) -> list[str]:
        return self.named(BROKEN)

    @property
    def short(self) -> list[str]:
        return self.named(SHORT)

    @property
    def unlimited(self) -> list[str]:
        return self.named(NO_LIMIT)

    @property
    def failed(self) -> bool:
        """True when a limit is broken or a margin is short (exit 1)."""
        return bool(self.broken or self.short)

    def verdict(self) -> str:
        """The final line: tells a broken limit from a short margin, and never says every
        limit holds when a probe had none."""
        b, s, u = self.broken, self.short, self.unlimited
        if b:
            line = f"{len(b)} limit(s) broken: {', '.join(b)}"
            if s:
                line += f"; {len(s)} margin(s) short: {', '.join(s)}"
            return line
        if s:
            return (f"no limit is broken, but {len(s)} margin(s) are short of the required "
                    f"{self.margin_K:g} K: {', '.join(s)}")
        if len(u) == len(self.rows):
            return "nothing checked (give a device, line, heater or probe limit)"
        if u:
            return (f"every given limit holds ({len(u)} probe(s) with no limit, not judged: "
                    f"{', '.join(u)})")
        return "every limit holds"

    def to_dict(self) -> dict[str, Any]:
        return {"scenario": self.scenario, "margin_K": self.margin_K,
                "rows": [r.to_dict() for r in self.rows], "broken": self.broken,
                "short": self.short, "no_limit": self.unlimited, "failed": self.failed,
                "verdict": self.verdict(), "cautions": list(self.cautions)}


def judge(res: Any, margin: float = 0.0, extra: Iterable[CheckRow] = ()) -> CheckResult:
    """Rows for every probe of a :class:`~pulsetherm.network.simulate.RunResult` (peak
    temperature against its limit), then ``extra`` rows, judged with ``margin`` K."""
    rows = []
    for name, p in res.probes.items():
        m = None if p.limit_C is None else p.limit_C - p.peak_C
        rows.append(CheckRow(name, p.peak_C, p.limit_C, m, status_of(m, margin)))
    rows += list(extra)
    return CheckResult(res.scenario, margin, rows, list(res.cautions))
