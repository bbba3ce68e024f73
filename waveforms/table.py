"""Measured power envelopes: time-power tables, from and to CSV.

Table semantics
---------------
Rows ``(t_k, P_k)`` sorted by time; time is counted from the first row (a bench capture that
starts at -10 µs is shifted so that its first row is t = 0).

* ``interp="step"``: ``P_k`` holds from ``t_k`` to ``t_{k+1}``.  Times must be strictly
  increasing.
* ``interp="linear"``: power varies linearly between rows.  Exactly two rows may share a
  time: that marks a jump (the first row is the value reached from the left, the second the
  new value).  Three rows at one time are an error.
* ``periodic=False`` (single shot): after the last row the power stays at its value.
* ``periodic=True``: the pattern repeats with ``period`` (default: last time - first time;
  the last row then only closes the period, and in step mode its power is not used).  A
  longer ``period`` extends the last row: held (step) or ramped linearly back to the first
  row's power (linear).

CSV format
----------
Optional comment lines starting with ``#`` (anywhere; blank lines are skipped too).  A
directive comment ``# pulsetherm-table: interp=linear, periodic=true, period=0.001`` (period in
s) sets the mode; arguments of :meth:`Table.from_csv` override it.  Then one header row and
two columns, time first, power second, separated by commas (semicolons or tabs also work).

Accepted header cells: a name followed by its unit in one of these forms::

    time_us     t [ms]     t (ns)     time/s
    power_W     P [dBm]    P (mW)     heat/kW

Time units: s, ms, us (also µs, μs), ns.  Power units: W, mW, kW, MW, dBm.  Unit names are
case-sensitive except W/w and dBm/dbm (mW and MW differ).  Powers must be >= 0 W (dBm is
always positive power).
"""
from __future__ import annotations

import io
import math
import os
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from .base import WaveformBase, check_time
from .canonical import TIME_RTOL, Piecewise, WaveformError

__all__ = ["Table", "TIME_UNITS", "POWER_UNITS", "parse_header_cell", "MAX_ROWS"]

#: Most data rows read from one CSV envelope (the waveform benchmark reads 4x10^5).
MAX_ROWS = 2_000_000

#: Time units accepted in CSV headers: name -> seconds per unit.
TIME_UNITS: dict[str, float] = {"s": 1.0, "ms": 1e-3, "us": 1e-6, "\u00b5s": 1e-6,
                                "\u03bcs": 1e-6, "ns": 1e-9}
#: Power units accepted in CSV headers: name -> watts per unit (None: logarithmic dBm).
POWER_UNITS: dict[str, float | None] = {"W": 1.0, "w": 1.0, "mW": 1e-3, "kW": 1e3,
                                        "MW": 1e6, "dBm": None, "dbm": None}

_HEADER_FORMS = (
    re.compile(r"^(?P<name>.*?)\s*\[\s*(?P<unit>[^\]\s]+)\s*\]$"),   # t [ms]
    re.compile(r"^(?P<name>.*?)\s*\(\s*(?P<unit>[^)\s]+)\s*\)$"),    # t (ms)
    re.compile(r"^(?P<name>[^/]*?)\s*/\s*(?P<unit>\S+)$"),           # t/ms
    re.compile(r"^(?P<name>.*\S)_(?P<unit>[^_\s]+)$"),              # time_ms
)
_DIRECTIVE = re.compile(r"^#\s*pulsetherm-table\s*:(?P<body>.*)$", re.IGNORECASE)


def parse_header_cell(cell: str, column: int) -> tuple[str, str]:
    """Split a header cell into (name, unit); raise naming the column when no unit is found."""
    text = cell.strip()
    for form in _HEADER_FORMS:
        m = form.match(text)
        if m and m.group("name").strip():
            return m.group("name").strip(), m.group("unit")
    raise WaveformError(
        f"header column {column}: no unit found; expected a name and a unit, e.g. "
        "'time_us', 't [ms]', 't (ns)', 't/s' or 'power_W', 'P [dBm]'")


def _to_watts(values: np.ndarray, unit: str) -> np.ndarray:
    scale = POWER_UNITS[unit]
    if scale is None:  # dBm: P = 1 mW * 10^(dBm/10)
        return 1e-3 * np.power(10.0, values / 10.0)
    return values * scale


def _from_watts(values: np.ndarray, unit: str) -> np.ndarray:
    scale = POWER_UNITS[unit]
    if scale is None:
        if np.any(values <= 0):
            i = int(np.flatnonzero(values <= 0)[0])
            raise WaveformError(f"power[{i}] = {float(values[i])!r} W cannot be written in dBm "
                                "(zero power has no dBm value); expected a linear unit W/mW/kW")
        return 10.0 * np.log10(values / 1e-3)
    return values / scale


def _check_rows(time: np.ndarray, power: np.ndarray, interp: str, where) -> None:
    """Sortedness, duplicates and power sign, with ``where(i)`` naming row i."""
    if time.size < 2:
        raise WaveformError(f"table: {time.size} row(s): expected at least two rows")
    dt = np.diff(time)
    back = dt < 0
    if back.any():
        i = int(np.flatnonzero(back)[0]) + 1
        raise WaveformError(f"{where(i, 0)}: time {float(time[i])!r} s is before the previous row's "
                            f"{float(time[i - 1])!r} s; expected rows sorted by time")
    same = dt == 0
    if same.any():
        i = int(np.flatnonzero(same)[0]) + 1
        if interp == "step":
            raise WaveformError(
                f"{where(i, 0)}: time {float(time[i])!r} s repeats the previous row's; expected "
                "strictly increasing times in step mode (linear mode allows one repeated time "
                "to mark a jump)")
        triple = same[1:] & same[:-1]
        if triple.any():
            i = int(np.flatnonzero(triple)[0]) + 2
            raise WaveformError(
                f"{where(i, 0)}: a third row at time {float(time[i])!r} s; expected at most two rows "
                "per time (a jump: the value before, then the value after)")
    neg = power < 0
    if neg.any():
        i = int(np.flatnonzero(neg)[0])
        raise WaveformError(f"{where(i, 1)}: power {float(power[i])!r} W: expected a power >= 0 W")


def _index_where(i: int, col: int) -> str:
    return f"{('time', 'power')[col]}[{i}]"


@dataclass(frozen=True, eq=False)
class Table(WaveformBase):
    """A time-power table (a measured envelope), step or linear, single shot or periodic.

    Parameters
    ----------
    time
        (n,) s, sorted (see the module notes for repeated times).
    power
        (n,) W, >= 0.
    interp
        "step" or "linear".
    periodic
        Repeat the pattern (True) or play it once (False).
    period
        Periodic only: repetition period, s, at least last time - first time (default).

    Notes
    -----
    ``time`` and ``power`` are stored as read-only float64 arrays.  Equality compares them
    element by element.
    """

    time: np.ndarray
    power: np.ndarray
    interp: str = "step"
    periodic: bool = False
    period: float | None = None

    def __post_init__(self) -> None:
        arrays = {}
        for name in ("time", "power"):
            arr = np.array(getattr(self, name), dtype=np.float64, ndmin=1, copy=True)
            if arr.ndim != 1:
                raise WaveformError(f"Table.{name}: expected a 1-D sequence, got shape "
                                    f"{arr.shape}")
            bad = ~np.isfinite(arr)
            if bad.any():
                i = int(np.flatnonzero(bad)[0])
                raise WaveformError(f"Table.{name}[{i}] = {float(arr[i])!r}: expected a finite number")
            arr.setflags(write=False)
            arrays[name] = arr
        t, p = arrays["time"], arrays["power"]
        if t.size != p.size:
            raise WaveformError(f"Table: {t.size} times and {p.size} powers: expected one power "
                                "per time")
        if self.interp not in ("step", "linear"):
            raise WaveformError(f"Table.interp = {self.interp!r}: expected 'step' or 'linear'")
        if not isinstance(self.periodic, (bool, np.bool_)):
            raise WaveformError(f"Table.periodic = {self.periodic!r}: expected True or False")
        _check_rows(t, p, self.interp, _index_where)
        span = float(t[-1] - t[0])
        if span <= 0:
            raise WaveformError(f"Table.time: all rows at {float(t[0])!r} s; expected a time span > 0")
        period = self.period
        if not self.periodic:
            if period is not None:
                raise WaveformError(f"Table.period = {period!r}: a single-shot table has no "
                                    "period; expected None (or periodic=True)")
        else:
            period = span if period is None else check_time("Table.period", period)
            if period < span * (1 - TIME_RTOL):
                raise WaveformError(f"Table.period = {self.period!r} s: expected at least the "
                                    f"table's span, {span!r} s (last time - first time)")
            period = max(period, span)
        object.__setattr__(self, "time", t)
        object.__setattr__(self, "power", p)
        object.__setattr__(self, "periodic", bool(self.periodic))
        object.__setattr__(self, "period", period)

    def __eq__(self, other) -> bool:
        if not isinstance(other, Table):
            return NotImplemented
        return (self.interp == other.interp and self.periodic == other.periodic
                and self.period == other.period and np.array_equal(self.time, other.time)
                and np.array_equal(self.power, other.power))

    __hash__ = None  # arrays: not hashable

    # -- canonical form -------------------------------------------------------------------
    def _build(self) -> Piecewise:
        t = self.time - self.time[0]
        p = self.power
        span = float(t[-1])
        if self.interp == "step":
            edges, level, slope = t, p[:-1], np.zeros(p.size - 1)
        else:
            dt = np.diff(t)
            seg = dt > 0  # a zero-length pair is a jump
            edges = np.append(t[:-1][seg], span)
            level = p[:-1][seg]
            slope = np.diff(p)[seg] / dt[seg]
        if not self.periodic:
            return Piecewise(edges, level, slope, False, after=float(p[-1]))
        if self.period > span * (1 + TIME_RTOL):
            wrap = self.period - span
            edges = np.append(edges, self.period)
            level = np.append(level, p[-1])
            slope = np.append(slope, 0.0 if self.interp == "step" else (p[0] - p[-1]) / wrap)
        return Piecewise(edges, level, slope, True)

    @classmethod
    def from_piecewise(cls, pw: Piecewise, interp: str | None = None) -> "Table":
        """The table that compiles back to ``pw``.

        Step forms (all slopes zero) give a step table, others a linear table with jump
        pairs at discontinuities.  Exact for step forms; linear slopes are recomputed from
        the rows, equal to within rounding.
        """
        if interp is None:
            interp = "step" if not np.any(pw.slope) else "linear"
        e, lv = pw.edges, pw.level
        if interp == "step":
            if np.any(pw.slope):
                raise WaveformError("Table.from_piecewise: interp = 'step' but the form has "
                                    "ramps; expected interp='linear'")
            last = lv[0] if pw.periodic else pw.after
            return cls(e.copy(), np.append(lv, last), "step", pw.periodic,
                       pw.span if pw.periodic else None)
        if interp != "linear":
            raise WaveformError(f"interp = {interp!r}: expected 'step' or 'linear'")
        end = pw.end_level
        scale = max(float(np.abs(lv).max()), float(np.abs(end).max()), 1e-300)
        # a ramp down to 0 W may end a rounding error below zero: that is 0 W
        end = np.where((end < 0) & (end >= -1e-12 * scale), 0.0, end)
        # rows: start of every segment, plus the end value where the next segment jumps
        jump = np.abs(end[:-1] - lv[1:]) > 1e-12 * scale
        n = lv.size
        t_rows = [e[:1]]
        p_rows = [lv[:1]]
        # interleave: for segment k >= 1, [end of k-1 if jump] + start of k
        tt = np.empty((n - 1, 2))
        pp = np.empty((n - 1, 2))
        tt[:, 0] = e[1:-1]
        tt[:, 1] = e[1:-1]
        pp[:, 0] = end[:-1]
        pp[:, 1] = lv[1:]
        keep = np.stack([jump, np.ones(n - 1, bool)], axis=1)
        t_rows.append(tt[keep])
        p_rows.append(pp[keep])
        t_rows.append(e[-1:])
        last = end[-1]
        if not pw.periodic and abs(pw.after - last) <= 1e-12 * scale:
            last = pw.after
        p_rows.append([last])
        if not pw.periodic and pw.after != last:
            t_rows.append(e[-1:])
            p_rows.append([pw.after])
        return cls(np.concatenate(t_rows), np.concatenate(p_rows), "linear", pw.periodic,
                   pw.span if pw.periodic else None)

    # -- CSV ------------------------------------------------------------------------------
    @classmethod
    def from_csv(cls, source, interp: str | None = None, periodic: bool | None = None,
                 period: float | None = None) -> "Table":
        """Read a table from CSV text, a path or an open text file.

        ``source`` is taken as text when it is a ``str`` containing a line break, as a path
        when it is a ``str`` or ``os.PathLike`` without one, and as a file when it has
        ``read()``.  See the module notes for the accepted format.  Errors name the row
        (data row number and file line) and the column.
        """
        if hasattr(source, "read"):
            text = source.read()
        elif isinstance(source, str) and ("\n" in source or "\r" in source):
            text = source
        elif isinstance(source, (str, os.PathLike)):
            text = Path(source).read_text(encoding="utf-8-sig")
        else:
            raise WaveformError(f"source = {source!r}: expected CSV text, a path or a file")
        return cls._parse(text, interp, periodic, period)

    @classmethod
    def _parse(cls, text: str, interp, periodic, period) -> "Table":
        directive: dict[str, str] = {}
        header = None
        sep = ","
        lines = text.splitlines()
        first = len(lines)
        for lineno, raw in enumerate(lines, start=1):
            line = raw.strip().lstrip("\ufeff")
            if not line:
                continue
            if line.startswith("#"):
                m = _DIRECTIVE.match(line)
                if m:
                    for item in re.split(r"[,;]", m.group("body")):
                        if item.strip():
                            key, _, val = item.partition("=")
                            directive[key.strip().lower()] = val.strip()
                continue
            sep = next((c for c in (",", ";", "\t") if c in line), ",")
            header = (lineno, [c.strip() for c in line.split(sep)])
            first = lineno  # data start after the header line (0-based index = lineno)
            break
        if header is None:
            raise WaveformError("CSV: no header row; expected a units header such as "
                                "'time_us,power_W' followed by data rows")
        hline, cells = header
        if len(cells) != 2:
            raise WaveformError(f"CSV line {hline}: header has {len(cells)} columns; "
                                "expected two: time, power")
        tname, tunit = parse_header_cell(cells[0], 1)
        pname, punit = parse_header_cell(cells[1], 2)
        if tunit not in TIME_UNITS:
            raise WaveformError(f"header column 1 (line {hline}): time unit not recognised; "
                                f"expected one of {', '.join(TIME_UNITS)}")
        if punit not in POWER_UNITS:
            raise WaveformError(f"header column 2 (line {hline}): power unit not recognised; "
                                f"expected one of {', '.join(POWER_UNITS)}")
        # columns are named by their unit, the file's own text is never echoed
        cells = [f"time_{tunit}", f"power_{punit}"]
        body = lines[first:]
        if len(body) > MAX_ROWS:
            raise WaveformError(f"CSV: {len(body)} lines after the header; expected at most "
                                f"{MAX_ROWS} rows")

        def data_rows() -> list[tuple[int, list[str]]]:
            """(file line number, cells) of every data row; comments and blanks skipped."""
            return [(n, raw.split(sep)) for n, raw in enumerate(body, start=first + 1)
                    if raw.strip() and not raw.lstrip().startswith("#")]

        try:  # fast path: numpy's C reader; any doubt goes to the cell-by-cell reader
            if not any(raw.strip() and not raw.lstrip().startswith("#") for raw in body):
                raise ValueError("no data rows")
            values = np.loadtxt(io.StringIO("\n".join(body)), delimiter=sep, comments="#",
                                ndmin=2, dtype=np.float64)
            ok = values.shape[1] == 2 and bool(np.isfinite(values).all())
        except ValueError:
            ok = False
        if not ok or values.shape[0] == 0:
            values = cls._parse_slow(data_rows(), cells)

        def where(i: int, col: int) -> str:
            lineno, _ = data_rows()[i]
            return f"CSV row {i + 1} (line {lineno}), column {col + 1} ({cells[col]})"

        if POWER_UNITS[punit] is None and values.shape[0] and float(values[:, 1].max()) > 300:
            i = int(np.argmax(values[:, 1]))
            lineno, _ = data_rows()[i]
            raise WaveformError(f"CSV row {i + 1} (line {lineno}), column 2 (power_{punit}): "
                                "above 300 dBm; expected a plausible power")
        time = values[:, 0] * TIME_UNITS[tunit]
        power = _to_watts(values[:, 1], punit)
        if interp is None:
            interp = directive.get("interp", "step")
        if periodic is None:
            flag = directive.get("periodic", "false").lower()
            if flag not in ("true", "false", "yes", "no", "1", "0"):
                raise WaveformError("CSV directive periodic: expected true or false")
            periodic = flag in ("true", "yes", "1")
        if period is None and "period" in directive and periodic:
            try:
                period = float(directive["period"])
            except ValueError:
                raise WaveformError("CSV directive period: expected a number in s") from None
        if interp not in ("step", "linear"):
            raise WaveformError("CSV directive interp: expected 'step' or 'linear'")
        _check_rows(time, power, interp, where)
        return cls(time, power, interp, periodic, period)

    @staticmethod
    def _parse_slow(rows: list, cells: list[str]) -> np.ndarray:
        """Cell by cell, to name the first bad row and column."""
        values = np.empty((len(rows), 2))
        for r, (lineno, row) in enumerate(rows, start=1):
            if len(row) != 2:
                raise WaveformError(f"CSV row {r} (line {lineno}): {len(row)} cells; expected "
                                    "two (time, power)")
            for c, cell in enumerate(row):
                cell = cell.strip()
                try:
                    v = float(cell)
                except ValueError:
                    v = math.nan
                    if not cell:
                        cell = "(empty)"
                if not math.isfinite(v):
                    what = "empty" if cell == "(empty)" else "not a finite number"
                    raise WaveformError(f"CSV row {r} (line {lineno}), column {c + 1} "
                                        f"({cells[c]}): {what}; expected a finite number")
                values[r - 1, c] = v
        return values

    def to_csv(self, path_or_buffer=None, time_unit: str = "s",
               power_unit: str = "W") -> str | None:
        """Write the table as CSV (directive comment, header, rows).

        Values are written with ``repr`` (shortest exact form), so in s and W the file reads
        back bit for bit.  Returns the text when ``path_or_buffer`` is None.
        """
        if time_unit not in TIME_UNITS:
            raise WaveformError(f"time_unit = {time_unit!r}: expected one of "
                                f"{', '.join(TIME_UNITS)}")
        if power_unit not in POWER_UNITS:
            raise WaveformError(f"power_unit = {power_unit!r}: expected one of "
                                f"{', '.join(POWER_UNITS)}")
        t = self.time / TIME_UNITS[time_unit]
        p = _from_watts(self.power, power_unit)
        head = f"# pulsetherm-table: interp={self.interp}, periodic={str(self.periodic).lower()}"
        if self.periodic:
            head += f", period={self.period!r}"
        out = io.StringIO()
        out.write(head + "\n")
        out.write(f"time_{time_unit},power_{power_unit}\n")
        out.write("".join(f"{a!r},{b!r}\n" for a, b in zip(t.tolist(), p.tolist())))
        text = out.getvalue()
        if path_or_buffer is None:
            return text
        if hasattr(path_or_buffer, "write"):
            path_or_buffer.write(text)
        else:
            Path(path_or_buffer).write_text(text, encoding="utf-8")
        return None
