"""Sweeps: grids and Monte Carlo over any scenario value, run in parallel, resumable.

A sweep is a list of *rows*; a row sets some scenario values (``path -> text``, e.g.
``mount.sink.resistance -> "0.3 K/W"``) on a base scenario, rebuilds and solves it, and
records every probe's peak, mean and margin.  Axes are grid axes (``--vary``: every
combination), paired axes (``--zip``: several paths stepped together, one value of each per
row) and Monte Carlo draws (``--mc``, seeded).  A row that fails (an input error or a
numerical failure in its scenario, or an internal error) is recorded as a failed row with a
one-line error; the other rows still run and are kept.

Every row carries the sweep's *fingerprint*: a hash of the base scenario as written, of the
content of every file it reads (CSV power envelopes) and of the seed.  Rows are keyed by a
hash of the varied values and the fingerprint, written (CSV or JSON lines) and flushed one
complete line at a time as they finish, so an interrupted sweep resumes by skipping the
keys already in the file; resuming onto a file written by another scenario, seed or
envelope is refused.  A row whose axes change only waveforms reuses the network built for
an earlier row (:mod:`pulsetherm.network.sweepcache`).

Workers are processes (``fork`` when the parent is single-threaded and already pinned to
one BLAS thread, else ``forkserver`` or ``spawn``; one BLAS thread each) or a Dask
cluster (``scheduler=``, imported only then).  When forked workers run a waveform-only
sweep, this process is one of them: it built the network for the first row and keeps
working beside N-1 forked ones (:func:`_run_with_parent`).  This module imports no numpy
at module level so that process workers can pin BLAS threads before numpy loads.
"""
from __future__ import annotations

import csv
import hashlib
import io
import itertools
import json
import math
import os
import random
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Callable, Iterable, Iterator, Sequence

from .scenario import (Scenario, ScenarioError, UnitScale, field_kind, parse_literal,
                       parse_quantity, split_unit)

__all__ = ["SweepPlan", "SweepResult", "plan_sweep", "run_sweep", "parse_axis",
           "parse_mc", "parse_zip", "run_row", "row_key", "sweep", "MAX_ROWS", "cpu_cap"]

#: Environment set in every worker before numpy is imported: one BLAS/OpenMP thread.
ONE_THREAD = {"OPENBLAS_NUM_THREADS": "1", "OMP_NUM_THREADS": "1", "MKL_NUM_THREADS": "1",
              "VECLIB_MAXIMUM_THREADS": "1", "NUMEXPR_NUM_THREADS": "1"}
#: Percentiles reported for every probe's peak.
PERCENTILES = (5.0, 50.0, 95.0)
#: Most rows in one sweep (grid points x paired values x Monte Carlo samples); the count is
#: checked before any row is made.  About 100 MB of rows in memory at most.
MAX_ROWS = 100_000
#: Error text of a row that failed on a bug rather than on its input.
INTERNAL = "internal error"


def cpu_cap() -> int:
    """CPUs this process may run on (the most ``workers`` a sweep takes on this machine)."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):
        return max(1, os.cpu_count() or 1)


def _too_many(option: str, value: Any, count: int | str) -> ScenarioError:
    count = str(count)
    shown = count if len(count) <= 12 else f"about {count[0]}.{count[1:3]}e{len(count) - 1}"
    return ScenarioError(option, value, f"a sweep of at most {MAX_ROWS} rows (this one asks "
                         f"for {shown}); split it into several sweeps, each with its own --out")


# ======================================================================================
# Axes
# ======================================================================================
def _split_values(text: str) -> list[str]:
    return [v.strip() for v in text.split(",") if v.strip()]


def parse_range(text: str, kind: str, option: str,
                counted: bool = True) -> tuple[list[float], UnitScale]:
    """``"LO..HI UNIT:N"`` -> N values evenly spaced in the unit (``:N`` optional, then the
    two ends; refused when not ``counted``: a search range).  Returns the numbers in the
    unit and its scale."""
    body, _, count = text.rpartition(":") if ":" in text else (text, "", "")
    count = count.strip().removesuffix("log").strip()
    if count and not counted:
        raise ScenarioError(option, text, "a range LO..HI UNIT without ':N' (the two ends of "
                            "the search), e.g. '0.1..2 K/W'")
    lo_txt, sep, hi_txt = body.partition("..")
    if not sep:
        raise ScenarioError(option, text, "a range LO..HI UNIT[:N], e.g. '0.1..0.5 K/W:5'")
    try:
        hi, unit = split_unit(hi_txt)
        lo, lo_unit = split_unit(lo_txt)
    except ValueError:
        raise ScenarioError(option, text, "a range LO..HI UNIT[:N], e.g. '0.1..0.5 K/W:5'") \
            from None
    if lo_unit and lo_unit != unit:
        raise ScenarioError(option, text, f"one unit for both ends ({lo_unit!r} and {unit!r})")
    try:
        scale = UnitScale.of(unit, kind, option) if kind else UnitScale("", "", 0.0, 1.0)
    except ScenarioError:
        from .scenario import QUANTITY_KINDS

        what = kind.replace("_", " ")
        ex = QUANTITY_KINDS[kind][1].split(" ", 1)[-1]
        why = f"{unit!r} is not a {what} unit" if unit else "a bare number has no unit"
        raise ScenarioError(option, text, f"a range in a {what} unit, e.g. 'LO..HI {ex}' "
                            f"({why})") from None
    if not (math.isfinite(lo) and math.isfinite(hi)) or lo == hi:
        raise ScenarioError(option, text, "two different finite ends")
    if count:
        n = count.strip()
        if n.isdigit() and (len(n) > 9 or int(n) > MAX_ROWS):
            raise _too_many(option, text, n)
        # the project's range syntax (":N", ":N log"): values from the unit table, then
        # written back in the range's own unit
        from .scenario import QUANTITY_KINDS
        from .units import parse_range as units_range

        try:
            si = units_range(text, QUANTITY_KINDS[kind][0] if kind else "dimensionless",
                             option)
        except ValueError as exc:
            raise ScenarioError(option, text, "a range LO..HI UNIT:N, e.g. '0.1..0.5 K/W:5' "
                                f"({' '.join(str(exc).split())})") from None
        if len(si) < 2:
            raise ScenarioError(option, text, "a count N >= 2 after the colon")
        return [scale.from_si(float(v)) for v in si], scale
    return [lo, hi], scale


def parse_axis(scn: Scenario, spec: str, option: str = "--vary") -> tuple[str, list[Any]]:
    """``PATH=VALUES`` (a list ``a,b,c`` or a range ``LO..HI UNIT:N``) -> (path, values as
    scenario values: unit strings, numbers, names)."""
    path, sep, values = spec.partition("=")
    path = path.strip()
    if not sep or not path or not values.strip():
        raise ScenarioError(option, spec, "PATH=VALUES, e.g. "
                            "mount.sink.resistance=0.1..0.5 K/W:5 or devices[0].limit=150 degC,175 degC")
    kind = field_kind(scn, path)
    values = values.strip()
    if ".." in values and kind is not None:
        nums, scale = parse_range(values, kind, f"{option} {path}")
        return path, [scale.text(x) for x in nums]
    out: list[Any] = []
    items = _split_values(values)
    if len(items) > MAX_ROWS:
        raise _too_many(option, path, len(items))
    # a unit on the last item only applies to bare numbers before it: "0.1,0.2,0.3 K/W"
    tail_unit = ""
    if kind is not None and items:
        try:
            _, tail_unit = split_unit(items[-1])
        except ValueError:
            tail_unit = ""
    for item in items:
        if kind is not None:
            try:
                x, unit = split_unit(item)
                item = item if unit else f"{item} {tail_unit}".strip()
            except ValueError:
                pass
            out.append(item)
        else:
            out.append(parse_literal(item))
    if not out:
        raise ScenarioError(option, spec, "at least one value")
    return path, out


def parse_zip(scn: Scenario, specs: Sequence[str]) -> list[tuple[str, list[Any]]]:
    """Paired axes: every ``--zip`` item is ``PATH=VALUES`` (or several joined by ``;``);
    all of them step together, the i-th row of the pair taking the i-th value of each path
    (``board.layers[1].material=a,b,c`` with ``lines[0].permittivity=3.0,3.5,4.4``).  Each
    path needs the same number of values; the error names every path and its count."""
    axes: list[tuple[str, list[Any]]] = []
    for spec in specs:
        for part in spec.split(";"):
            if part.strip():
                axes.append(parse_axis(scn, part.strip(), "--zip"))
    if not axes and specs:
        raise ScenarioError("--zip", "; ".join(specs), "PATH=VALUES, e.g. "
                            "board.layers[1].material=fr4,ptfe-woven-glass")
    counts = {len(vals) for _, vals in axes}
    if len(counts) > 1:
        listed = ", ".join(f"{p} has {len(v)}" for p, v in axes)
        raise ScenarioError("--zip", None, f"paired axes with the same number of values "
                            f"({listed})")
    return axes


@dataclass(frozen=True)
class MonteCarloAxis:
    """A scenario value drawn around its base: ``normal`` (sigma) or ``uniform``
    (half-width), in the base value's own unit."""

    path: str
    dist: str
    width: float          # in the unit of ``scale``
    base: float           # in the unit of ``scale``
    scale: UnitScale

    def draw(self, rng: random.Random) -> str:
        if self.dist == "normal":
            x = rng.gauss(self.base, self.width)
        else:
            x = rng.uniform(self.base - self.width, self.base + self.width)
        return self.scale.text(x)


def parse_mc(scn: Scenario, spec: str) -> MonteCarloAxis:
    """``PATH=normal:SIGMA`` or ``PATH=uniform:HALFWIDTH`` (SIGMA with a unit, or a
    percentage of the base value such as ``5%``)."""
    path, sep, rest = spec.partition("=")
    path = path.strip()
    dist, sep2, width = rest.partition(":")
    dist = dist.strip()
    if not sep or not sep2 or dist not in ("normal", "uniform") or not width.strip():
        raise ScenarioError("--mc", spec, "PATH=normal:SIGMA or PATH=uniform:HALFWIDTH, "
                            "e.g. mount.sink.resistance=normal:0.02 K/W")
    kind = field_kind(scn, path)
    if kind is None:
        raise ScenarioError(f"--mc {path}", None, "a quantity with a unit (Monte Carlo "
                            "draws numbers)")
    base_text = scn.get_value(path)
    if not isinstance(base_text, str):
        raise ScenarioError(f"--mc {path}", base_text, "one quantity string to draw around")
    base, unit = split_unit(base_text)
    scale = UnitScale.of(unit, kind, path)
    width = width.strip()
    if width.endswith("%"):
        try:
            w = abs(base) * float(width[:-1]) / 100.0
        except ValueError:
            raise ScenarioError(f"--mc {path}", width, "a percentage such as '5%'") from None
    else:
        diff_kind = "difference" if kind == "temperature" else kind
        q = parse_quantity(width, diff_kind, f"--mc {path}")
        w = q.value / scale.factor
    if not (w >= 0 and math.isfinite(w)):
        raise ScenarioError(f"--mc {path}", width, "a width >= 0")
    return MonteCarloAxis(path, dist, w, base, scale)


# ======================================================================================
# Plan
# ======================================================================================
def row_key(values: dict[str, Any], base: "Scenario | str | None" = None, seed: int = 0) -> str:
    """Stable key of a row: a hash of its varied values (path and value as written) and of
    the sweep's fingerprint (``base``: a fingerprint, or a scenario whose fingerprint is
    taken with ``seed``), so that a resumed sweep never takes rows computed from an edited
    scenario, another envelope file or another seed for its own."""
    blob = json.dumps(sorted(values.items()), separators=(",", ":"), default=str)
    if isinstance(base, Scenario):
        base = fingerprint(base, seed)
    if base is not None:
        blob += base
    return hashlib.sha1(blob.encode("utf-8")).hexdigest()[:16]


def _digest(scn: Scenario) -> str:
    """Hash of a scenario's values as written (its source file name left out)."""
    text = json.dumps(scn.to_dict(), sort_keys=True, separators=(",", ":"), default=str)
    return hashlib.sha1(text.encode("utf-8")).hexdigest()


#: Largest envelope file read into a fingerprint or shipped to a cluster, bytes.
MAX_ENVELOPE_BYTES = 64_000_000


def _table_names(data: Any, out: set[str]) -> set[str]:
    """Every ``file`` of a ``kind = "table"`` waveform in a scenario's dict form."""
    if isinstance(data, dict):
        if data.get("kind") == "table" and isinstance(data.get("file"), str):
            out.add(data["file"])
        for v in data.values():
            _table_names(v, out)
    elif isinstance(data, (list, tuple)):
        for v in data:
            _table_names(v, out)
    return out


def envelope_files(scn: Scenario, extra: Iterable[str] = ()) -> dict[str, bytes | str]:
    """The files a sweep reads, resolved here as the scenario resolves them (relative to
    its own folder): name as written -> content (bytes), for the base scenario's table
    waveforms and the ``extra`` names (values of an axis on a ``file`` key).  A file that
    is missing, not a regular file or larger than :data:`MAX_ENVELOPE_BYTES` maps to a
    short text describing it (its rows then fail as a single run would)."""
    try:  # the folders a scenario may read from (refused files are not read here either)
        from .safe_io import resolve_inside
    except ImportError:  # pragma: no cover - older tree
        resolve_inside = None
    base = Path(scn.source).parent if scn.source else Path.cwd()
    allow = tuple(getattr(scn, "allow_paths", ()) or ())
    out: dict[str, bytes | str] = {}
    for name in sorted(_table_names(scn.to_dict(), set()) | set(extra)):
        try:
            f = (resolve_inside(base, name, allow) if resolve_inside is not None
                 else (base / name).resolve())
            st = f.stat()
            if not f.is_file():
                out[name] = "not a regular file"
            elif st.st_size > MAX_ENVELOPE_BYTES:
                out[name] = f"{st.st_size} bytes, modified {st.st_mtime_ns}"
            else:
                out[name] = f.read_bytes()
        except (OSError, ValueError, RuntimeError):
            out[name] = "missing"
    return out


def fingerprint(scn: Scenario, seed: int = 0, files: dict[str, bytes | str] | None = None) -> str:
    """The sweep's identity: a hash of the base scenario as written, of the content of
    every file it reads (:func:`envelope_files`) and of the seed."""
    files = envelope_files(scn) if files is None else files
    sums = {k: hashlib.sha1(v).hexdigest() if isinstance(v, bytes) else v
            for k, v in sorted(files.items())}
    blob = json.dumps({"scenario": _digest(scn), "files": sums, "seed": seed},
                      sort_keys=True, separators=(",", ":"))
    return hashlib.sha1(blob.encode("utf-8")).hexdigest()[:16]


@dataclass(eq=False)
class SweepPlan:
    """The base scenario and the rows to run (each a dict path -> value)."""

    scenario: Scenario
    rows: list[dict[str, Any]]
    paths: list[str]
    probes: list[str]
    mode: str  # "grid" | "monte-carlo" | "grid+monte-carlo"
    #: Cautions of the base scenario: the general one and its materials' (beryllia, ...).
    cautions: list[str] = field(default_factory=list)
    #: Random seed of the Monte Carlo draws.
    seed: int = 0
    #: Files the rows read (:func:`envelope_files`), resolved in this process.
    files: dict[str, Any] = field(default_factory=dict)
    #: :func:`fingerprint` of the scenario, its files and the seed (every row carries it).
    fingerprint: str = ""

    def __post_init__(self) -> None:
        if not self.fingerprint:
            if not self.files:
                self.files = envelope_files(self.scenario)
            self.fingerprint = fingerprint(self.scenario, self.seed, self.files)

    @property
    def size(self) -> int:
        return len(self.rows)

    def key(self, values: dict[str, Any]) -> str:
        return row_key(values, self.fingerprint)


def plan_sweep(scn: Scenario, vary: Sequence[str] = (), mc: Sequence[str] = (),
               samples: int = 100, seed: int = 0, paired: Sequence[str] = ()) -> SweepPlan:
    """Rows of a grid (every combination of the ``vary`` axes and of the ``paired`` group,
    whose paths step together: :func:`parse_zip`) and/or Monte Carlo draws (``samples``
    per grid point, seeded); the base scenario is built once to check it and learn its
    probes.  More than :data:`MAX_ROWS` rows is refused before any row is made."""
    from .simulate import build

    if mc and (isinstance(samples, bool) or not isinstance(samples, int) or samples < 1):
        raise ScenarioError("--samples", samples, "a whole number >= 1")
    if mc and samples > MAX_ROWS:
        raise _too_many("--samples", samples, samples)
    axes = [parse_axis(scn, v) for v in vary]
    zipped = parse_zip(scn, paired)
    mcs = [parse_mc(scn, m) for m in mc]
    paths = [p for p, _ in axes] + [p for p, _ in zipped] + [m.path for m in mcs]
    for p in paths:
        if "." in p and p.rsplit(".", 1)[-1] == "name":
            # a renamed device/line/probe renames the probes: its rows would have no figures
            raise ScenarioError("--vary", p, "a value to vary, not a name (names make the "
                                "probe columns of every row)")
    dup = {p for p in paths if paths.count(p) > 1}
    if dup:
        raise ScenarioError("--vary/--zip/--mc", sorted(dup)[0], "each path varied once")
    count = math.prod(len(v) for _, v in axes) * (len(zipped[0][1]) if zipped else 1) \
        * (samples if mcs else 1)
    if count > MAX_ROWS:
        raise _too_many("--vary/--zip/--samples" if mcs else "--vary/--zip",
                        " x ".join([str(len(v)) for _, v in axes]
                                   + ([str(len(zipped[0][1]))] if zipped else [])
                                   + ([str(samples)] if mcs else [])), count)
    # the paired group is one more grid axis whose values are dicts of its paths
    groups: list[list[dict[str, Any]]] = [[{p: v} for v in vals] for p, vals in axes]
    if zipped:
        groups.append([{p: vals[i] for p, vals in zipped} for i in range(len(zipped[0][1]))])
    grid = [{k: v for part in combo for k, v in part.items()}
            for combo in itertools.product(*groups)] if groups else [{}]
    rows: list[dict[str, Any]] = []
    if mcs:
        rng = random.Random(seed)
        for point in grid:
            for _ in range(samples):
                row = dict(point)
                for m in mcs:
                    row[m.path] = m.draw(rng)
                rows.append(row)
        mode = "grid+monte-carlo" if groups else "monte-carlo"
    else:
        rows = grid
        mode = "grid"
    # a value the scenario refuses (a thickness of 0, a material not in the library) is not
    # checked here: its rows fail with the message naming it, and the others run
    every = axes + zipped
    model = build(scn)
    cautions = model.cautions()
    # a varied material brings its own caution (every value of a material axis is built;
    # a paired group with a material is built row by row, with its other paths set too)
    def material(path: str) -> bool:
        return path.rsplit(".", 1)[-1] in ("material", "fill", "dielectric")

    varied = [[{path: v} for v in vals] for path, vals in axes if material(path)]
    if any(material(p) for p, _ in zipped):
        varied.append(groups[-1])
    for group in varied:
        for values in group:
            try:
                s = scn
                for path, v in values.items():
                    s = s.with_value(path, v)
                more = build(s).cautions()
            except ValueError:
                continue  # its rows fail, with the reason
            cautions += [c for c in more if c not in cautions]
    files = envelope_files(scn, [str(v) for p, vals in every if p.rsplit(".", 1)[-1] == "file"
                                 for v in vals])
    return SweepPlan(scn, rows, paths, list(model.probes), mode, cautions, seed, files)


# ======================================================================================
# One row (runs in the workers)
# ======================================================================================
_BASE: dict[str, Any] = {}
#: Set in the parent while a pool of forked workers starts: (scenario, model cache) with
#: the first row already run; a forked worker starts from it instead of loading the
#: scenario and building and solving that network again.  None otherwise.
_PREWARM: tuple[Any, Any] | None = None


def _init_worker(base: dict[str, Any] | None = None, source: str | None = None,
                 allow: tuple = ()) -> None:
    """Process initializer: one BLAS thread (set before numpy loads), the base scenario
    (its dict form, file and the folders it may read from)."""
    for k, v in ONE_THREAD.items():
        os.environ[k] = v
    if base is not None:
        _BASE.clear()
        _BASE["data"] = base
        _BASE["source"] = source
        _BASE["allow"] = tuple(allow)
        if _PREWARM is not None:        # forked from the parent: its warm cache
            _BASE["scenario"], _BASE["cache"] = _PREWARM




def with_values(scn: Scenario, values: dict[str, Any]) -> Scenario:
    """``scn`` with a row's values set, one at a time, each validated as
    :meth:`Scenario.with_value` does (which rebuilds only the tables on the key's path)."""
    for path, v in values.items():
        scn = scn.with_value(path, v)
    return scn


def _failure(exc: BaseException) -> str:
    """One line for a failed row: the message of an input error; the kind of a numerical
    failure; a request to report an internal error (a bug)."""
    from .safe_io import is_input_error

    text = " ".join(str(exc).split())
    if len(text) > 400:
        text = text[:400] + " ..."
    if isinstance(exc, (ValueError, OSError, KeyError)) and is_input_error(exc):
        return text or type(exc).__name__
    if isinstance(exc, (ArithmeticError, MemoryError, RecursionError)):
        what = {"MemoryError": "out of memory", "RecursionError": "nested too deeply"}.get(
            type(exc).__name__, "numerical failure")
        return f"{what} ({type(exc).__name__}{': ' + text if text else ''})"
    return (f"{INTERNAL} ({type(exc).__name__}{': ' + text if text else ''}); this is a bug "
            "in pulsetherm, please report it with the scenario and the command")


def run_row(scn: Scenario, values: dict[str, Any], key: str | None = None,
            cache: Any = None) -> dict[str, Any]:
    """Apply ``values`` to ``scn``, solve, return the row: key, values, and per probe
    ``peak_C``, ``mean_C``, ``margin_K``; ``ok`` (every limit holds) and ``error`` (empty,
    or the one-line reason the row failed: any exception of the row is caught here, so one
    bad row never stops a sweep).  ``key`` defaults to :func:`row_key` of the scenario;
    ``cache`` is a :class:`~pulsetherm.network.sweepcache.ModelCache` of the base."""
    from .simulate import probe_figures, violations

    row: dict[str, Any] = {"key": row_key(values, scn) if key is None else key, **values}
    try:
        s = with_values(scn, values)
        # the probes' figures only: a row has no use for the warm-up time and the layer
        # budget a single run adds (simulate)
        _, _, probes = probe_figures(cache.model(s, values) if cache is not None else s)
        figures = {}
        for name, p in probes.items():
            figures[f"{name}.peak_C"] = p.peak_C
            figures[f"{name}.mean_C"] = p.mean_C
            figures[f"{name}.margin_K"] = p.margin_K
        ok = not violations(probes)
    except Exception as exc:  # noqa: BLE001 - a row records its failure, whatever it is
        row["ok"] = False
        row["error"] = _failure(exc)
        return row
    row.update(figures)
    row["ok"] = ok
    row["error"] = ""
    return row


def _worker_row(key: str, values: dict[str, Any]) -> dict[str, Any]:
    scn = _BASE.get("scenario")
    if scn is None:
        from .sweepcache import ModelCache

        allow = _BASE.get("allow") or ()
        scn = Scenario.from_dict(_BASE["data"], source=_BASE.get("source"),
                                 **({"allow_paths": allow} if allow else {}))
        _BASE["scenario"] = scn
        _BASE["cache"] = ModelCache()
    return run_row(scn, values, key, _BASE["cache"])


def _worker_chunk(chunk: list[tuple[str, dict[str, Any]]]) -> list[dict[str, Any]]:
    """Several rows in one task (fewer round trips between the parent and a worker)."""
    return [_worker_row(key, values) for key, values in chunk]


def guided_chunks(rows: list, workers: int, cap: int = 32) -> Iterator[list]:
    """The rows in tasks that shrink as they run out: each takes ⌈remaining/(8·workers)⌉
    rows, at most ``cap`` (an interruption loses little) and at least 1, so that there are
    few round trips while many rows remain and single rows at the end, where no worker
    then waits long on another's last task (guided self-scheduling, with 8·workers in
    place of the workers: C. D. Polychronopoulos and D. J. Kuck, "Guided self-scheduling:
    a practical scheduling scheme for parallel supercomputers", IEEE Trans. Computers
    C-36(12), 1987)."""
    div = 8 * max(workers, 1)
    i, n = 0, len(rows)
    while i < n:
        size = max(1, min(cap, -(-(n - i) // div)))
        yield rows[i:i + size]
        i += size


#: Dask workers: fingerprint -> (scenario, model cache, envelope name -> file name here).
_DASK: dict[str, tuple[Scenario, Any, dict[str, str]]] = {}


def _envelope_folder(files: dict[str, Any]) -> tuple[Path, dict[str, str]]:
    """Write the shipped envelope files into a private folder of this worker: the folder
    and name as written -> name there (``env-<hash>.csv``, inside the folder, whatever
    folders the original name had)."""
    import atexit
    import shutil
    import tempfile

    folder = Path(tempfile.mkdtemp(prefix="pulsetherm-sweep-"))
    atexit.register(shutil.rmtree, folder, True)
    names: dict[str, str] = {}
    for name, content in files.items():
        if not isinstance(content, bytes):
            continue  # missing or too large: the row fails as a single run would
        local = f"env-{hashlib.sha1(name.encode('utf-8')).hexdigest()[:16]}.csv"
        (folder / local).write_bytes(content)
        names[name] = local
    return folder, names


def _renamed(data: Any, names: dict[str, str]) -> Any:
    """The dict form with every table ``file`` renamed by ``names``."""
    if isinstance(data, dict):
        out = {k: _renamed(v, names) for k, v in data.items()}
        if out.get("kind") == "table" and out.get("file") in names:
            out["file"] = names[out["file"]]
        return out
    if isinstance(data, list):
        return [_renamed(v, names) for v in data]
    return data


def _dask_row(base: dict[str, Any], files: dict[str, Any], fp: str, key: str,
              values: dict[str, Any]) -> dict[str, Any]:
    """One row on a Dask worker.  The scenario's envelope files travel with the task
    (``files``, read in the parent): the worker writes them into a folder of its own and
    reads them there, never a file of its own working folder."""
    from .sweepcache import ModelCache

    hit = _DASK.get(fp)
    if hit is None:
        folder, names = _envelope_folder(files)
        scn = Scenario.from_dict(_renamed(base, names), source=str(folder / "scenario.toml"))
        hit = (scn, ModelCache(), names)
        if len(_DASK) > 8:
            _DASK.clear()
        _DASK[fp] = hit
    scn, cache, names = hit
    local = {p: names.get(v, v) if p.rsplit(".", 1)[-1] == "file" and isinstance(v, str)
             else v for p, v in values.items()}
    row = run_row(scn, local, key, cache)
    row.update(values)  # the values as the user wrote them
    if row.get("error"):
        for name, there in names.items():
            row["error"] = row["error"].replace(there, name)
    return row


# ======================================================================================
# Output rows
# ======================================================================================
class _RowWriter:
    """Append complete rows to a CSV or JSON-lines file, flushing each one.

    Only a regular file is written (a device, FIFO or folder at the target is refused; a
    symbolic link to a regular file is followed, the link kept:
    :func:`pulsetherm.network.safe_io.check_output_target`) and a new file is created as
    the user's umask allows.  With ``resume``, the
    rows already in the file are read first: every one must carry this sweep's
    ``fingerprint`` (else the file is refused, untouched); a partial last line left by an
    interruption is dropped."""

    def __init__(self, path: Path, columns: list[str], resume: bool,
                 fingerprint: str = "") -> None:
        self.path = path
        self.columns = columns
        self.fingerprint = fingerprint
        self.jsonl = path.suffix.lower() in (".jsonl", ".ndjson", ".json")
        self.done: set[str] = set()
        if path.suffix.lower() not in (".csv", ".jsonl", ".ndjson", ".json"):
            raise ScenarioError("--out", str(path), "a .csv or .jsonl file")
        if not path.parent.is_dir():
            raise ScenarioError("--out", str(path), f"a file in an existing folder (folder "
                                f"{str(path.parent)!r} does not exist)")
        from .safe_io import check_output_target

        try:
            path, mode = check_output_target(path)
        except ValueError as exc:
            raise ScenarioError("--out", str(path), " ".join(str(exc).split())) from None
        self.path = path
        if resume and mode is not None:
            self._read_done()
            self.fh = open(path, "a", encoding="utf-8", newline="")
        else:
            try:
                self.fh = open(path, "x", encoding="utf-8", newline="")
            except FileExistsError:
                raise ScenarioError("--out", str(path), "a new file (it exists; give --resume "
                                    "to continue it or remove it)") from None
            if not self.jsonl:
                self._write_line(self._csv_line(columns))

    def _refuse(self, why: str) -> ScenarioError:
        return ScenarioError("--resume", str(self.path), f"a file written by this sweep ({why}; "
                             "give a new --out)")

    def _read_done(self) -> None:
        data = self.path.read_bytes()
        cut = len(data) if not data or data.endswith(b"\n") else data.rfind(b"\n") + 1
        try:
            text = data[:cut].decode("utf-8")
        except UnicodeDecodeError:
            raise self._refuse("it is not UTF-8 text") from None
        other = "its rows come from another scenario, envelope file or seed"
        if self.jsonl:
            for line in text.splitlines():
                try:
                    rec = json.loads(line)
                    key, fp = rec["key"], rec.get("sweep")
                except (ValueError, KeyError, TypeError):
                    continue
                if fp != self.fingerprint:
                    raise self._refuse(other)
                self.done.add(key)
        else:
            reader = csv.reader(io.StringIO(text))
            header = next(reader, None)
            if header is not None and header != self.columns:
                raise self._refuse("its columns differ")
            at = self.columns.index("sweep")
            for rec in reader:
                if header is not None and len(rec) == len(header):
                    if rec[at] != self.fingerprint:
                        raise self._refuse(other)
                    self.done.add(rec[0])
        if cut < len(data):
            # an interrupted write left a partial last line: drop it
            with open(self.path, "r+b") as fh:
                fh.truncate(cut)
        if not text:
            with open(self.path, "w", encoding="utf-8", newline="") as fh:
                if not self.jsonl:
                    fh.write(self._csv_line(self.columns))

    @staticmethod
    def _csv_line(values: Iterable[Any]) -> str:
        buf = io.StringIO()
        csv.writer(buf, lineterminator="\n").writerow(list(values))
        return buf.getvalue()

    def _write_line(self, line: str) -> None:
        self.fh.write(line)
        self.fh.flush()

    def write(self, row: dict[str, Any]) -> None:
        if self.jsonl:
            self._write_line(json.dumps(row, default=str) + "\n")
        else:
            self._write_line(self._csv_line(_cell(row.get(c)) for c in self.columns))

    def close(self) -> None:
        self.fh.close()


def _cell(v: Any) -> Any:
    if v is None:
        return ""
    if isinstance(v, float):
        return repr(v)
    return v


# ======================================================================================
# Run
# ======================================================================================
@dataclass(eq=False)
class SweepResult:
    """Rows of a sweep and, per probe, percentiles of the peak over the rows run."""

    scenario: str
    paths: list[str]
    probes: list[str]
    rows: list[dict[str, Any]]
    skipped: int
    failed: int
    mode: str
    out: str | None = None
    cautions: list[str] = field(default_factory=list)
    #: The sweep's fingerprint (scenario, the files it reads, seed), as in every row.
    fingerprint: str = ""

    def percentiles(self, qs: Sequence[float] = PERCENTILES) -> dict[str, dict[str, float]]:
        """Probe -> {"p5": ..., "p50": ..., "p95": ...} of the peak (degC), rows without
        errors only (linear interpolation between order statistics)."""
        import numpy as np

        out: dict[str, dict[str, float]] = {}
        good = [r for r in self.rows if not r.get("error")]
        for name in self.probes:
            vals = np.array([r[f"{name}.peak_C"] for r in good if f"{name}.peak_C" in r],
                            dtype=float)
            if vals.size:
                out[name] = {f"p{q:g}": float(np.percentile(vals, q)) for q in qs}
        return out

    def column(self, name: str) -> list[Any]:
        return [r.get(name) for r in self.rows]

    def to_dict(self) -> dict[str, Any]:
        return {"scenario": self.scenario, "mode": self.mode, "paths": self.paths,
                "rows": len(self.rows), "skipped": self.skipped, "failed": self.failed,
                "internal": self.internal, "sweep": self.fingerprint, "out": self.out,
                "percentiles": self.percentiles(), "cautions": list(self.cautions)}

    @property
    def internal(self) -> int:
        """Rows that failed on an internal error (a bug), not on their input."""
        return sum(1 for r in self.rows if str(r.get("error") or "").startswith(INTERNAL))

    def summary(self) -> str:
        return (f"{self.scenario}: {len(self.rows)} rows, {self.skipped} resumed, "
                f"{self.failed} failed")


def run_sweep(plan: SweepPlan, out: str | os.PathLike | None = None, resume: bool = False,
              workers: int = 1, scheduler: Any = None,
              progress: Callable[[int], None] | None = None) -> SweepResult:
    """Run the rows of ``plan`` (skipping those already in ``out`` with ``resume``).

    A row that fails is recorded with its one-line error and the others still run; the
    rows written stay in ``out`` whatever happens later (each is flushed as it finishes).

    Parameters
    ----------
    out
        CSV or JSON-lines file; each row is appended and flushed as it finishes.
    workers
        Processes (1 = in this process); at most the CPUs of this machine
        (:func:`cpu_cap`) unless ``scheduler`` is given.
    scheduler
        A Dask scheduler address (or a ``dask.distributed.Client``): run there instead.
    progress
        Called with the number of rows finished (resumed rows count as finished).
    """
    from .simulate import CAUTION

    if scheduler is None:
        cap = cpu_cap()
        if isinstance(workers, bool) or not isinstance(workers, int) or not 1 <= workers <= cap:
            raise ScenarioError("--workers", workers, f"a whole number from 1 to {cap} (the "
                                "CPUs of this machine; a cluster takes --scheduler)")
    columns = ["key", "sweep"] + plan.paths + [f"{p}.{f}" for p in plan.probes
                                               for f in ("peak_C", "mean_C", "margin_K")] \
        + ["ok", "error"]
    writer = (_RowWriter(Path(out), columns, resume, plan.fingerprint)
              if out is not None else None)
    done_keys = writer.done if writer is not None else set()
    todo = [(k, r) for k, r in ((plan.key(r), r) for r in plan.rows) if k not in done_keys]
    skipped = len(plan.rows) - len(todo)
    rows: list[dict[str, Any]] = []
    count = skipped
    if progress:
        progress(count)

    def finish(row: dict[str, Any]) -> None:
        nonlocal count
        row = {"key": row["key"], "sweep": plan.fingerprint,
               **{k: v for k, v in row.items() if k != "key"}}
        rows.append(row)
        if writer is not None:
            writer.write(row)
        count += 1
        if progress:
            progress(count)

    try:
        if scheduler is not None:
            _run_dask(plan, todo, scheduler, finish)
        elif workers <= 1 or len(todo) <= 1:
            from .sweepcache import ModelCache

            cache = ModelCache()
            for key, values in todo:
                finish(run_row(plan.scenario, values, key, cache))
        else:
            _run_pool(plan, todo, workers, finish)
    finally:
        if writer is not None:
            writer.close()
    failed = sum(1 for r in rows if r.get("error"))
    return SweepResult(plan.scenario.name, plan.paths, plan.probes, rows, skipped, failed,
                       plan.mode, None if out is None else str(out),
                       list(plan.cautions) or [CAUTION], plan.fingerprint)


def _start_method(env: dict[str, str | None]) -> str:
    """``fork`` on Linux when it is safe and cheap: this process runs one thread and was
    already pinned to one BLAS thread (``env``: the variables before the sweep set them),
    so the workers inherit loaded modules and caches and start at once.  Otherwise
    ``forkserver`` (``spawn`` where there is none): a fresh interpreter per worker."""
    import multiprocessing as mp
    import sys
    import threading

    methods = mp.get_all_start_methods()
    if (sys.platform.startswith("linux") and "fork" in methods
            and threading.active_count() == 1
            and env.get("OPENBLAS_NUM_THREADS") == "1" and env.get("OMP_NUM_THREADS") in
            (None, "1") and env.get("MKL_NUM_THREADS") in (None, "1")):
        return "fork"
    return "forkserver" if "forkserver" in methods else "spawn"


#: Pools started again after worker processes died, at most, before the rest of the rows
#: are recorded as failed.
POOL_RESTARTS = 20


def _run_pool(plan: SweepPlan, todo: list[tuple[str, dict[str, Any]]], workers: int,
              finish: Callable[[dict[str, Any]], None]) -> None:
    """Rows on ``workers`` processes.

    The base scenario goes to each worker once (the pool initializer); a task carries only
    the keys and varied values of a few rows (:func:`guided_chunks`).  The one-thread BLAS
    environment is set before any worker (or the forkserver) starts; workers are forked
    directly when that is safe (:func:`_start_method`), else from a forkserver that imports
    the solver modules once, so each worker starts ready to run.

    A worker process that dies (killed, out of memory) breaks its pool: the rows then in
    flight are run again one at a time in a one-worker pool, so that only the row that
    kills its worker is recorded as failed; then the sweep goes on (at most
    :data:`POOL_RESTARTS` pools are started again)."""
    import multiprocessing as mp
    from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
    from concurrent.futures.process import BrokenProcessPool

    saved = {k: os.environ.get(k) for k in ONE_THREAD}
    method = _start_method(saved)
    ctx = mp.get_context(method)
    os.environ.update(ONE_THREAD)  # inherited by the workers (and the forkserver) at start
    if method == "forkserver":
        ctx.set_forkserver_preload(["pulsetherm.network.sweep", "pulsetherm.network.simulate",
                                    "pulsetherm.network.modal", "pulsetherm.network.builder"])
    global _PREWARM
    local = None
    if method == "fork":
        warm = _prewarm(plan, todo)
        if warm is not None:
            _PREWARM, first = warm
            finish(first)
            todo = todo[1:]
            local = _PREWARM
    initargs = (plan.scenario.to_dict(), plan.scenario.source,
                getattr(plan.scenario, "allow_paths", ()))

    def run(chunks: Iterator[list], n: int) -> list[list]:
        """Run ``chunks`` on ``n`` workers (3n tasks in flight); [] when all finished, else
        the chunks in flight when a worker died."""
        pending: dict[Any, Any] = {}
        try:
            with ProcessPoolExecutor(max_workers=n, mp_context=ctx, initializer=_init_worker,
                                     initargs=initargs) as ex:
                # a bounded number of tasks in flight: results stream back in order of
                # completion and an interruption loses little work
                for chunk in itertools.islice(chunks, 3 * n if n > 1 else 1):
                    pending[ex.submit(_worker_chunk, chunk)] = chunk
                while pending:
                    done, _ = wait(pending, return_when=FIRST_COMPLETED)
                    for fut in done:
                        got = fut.result()  # a dead worker raises here
                        del pending[fut]
                        for row in got:
                            finish(row)
                        nxt = next(chunks, None)
                        if nxt is not None:
                            pending[ex.submit(_worker_chunk, nxt)] = nxt
            return []
        except BrokenProcessPool:
            return list(pending.values())

    def failed(rows, why: str) -> None:
        for key, values in rows:
            finish({"key": key, **values, "ok": False, "error": why})

    why = (f"{INTERNAL} (its worker process ended unexpectedly: killed, or out of memory); "
           "run it alone to see more")
    starts = 0
    try:
        chunks = guided_chunks(todo, workers)
        while True:
            if local is not None:
                lost = _run_with_parent(ctx, local, chunks, workers - 1, finish)
                local = None    # after a dead worker: the pool alone, so no row runs here
            else:
                lost = run(chunks, workers)
            if not lost:
                return
            # the rows in flight, one at a time: only the one that kills its worker fails
            singles = iter([[row] for chunk in lost for row in chunk])
            while True:
                starts += 1
                if starts > POOL_RESTARTS:
                    failed([row for chunk in singles for row in chunk], why)
                    failed([row for chunk in chunks for row in chunk], why)
                    return
                dead = run(singles, 1)
                if not dead:
                    break
                failed(dead[0], why)
    finally:
        _PREWARM = None
        for k, v in saved.items():
            if v is None:
                os.environ.pop(k, None)
            else:
                os.environ[k] = v


def _pipe_worker(conn: Any, warm: tuple[Any, Any]) -> None:
    """A forked worker of :func:`_run_with_parent`: chunks of rows in, their rows out, in
    order, until ``None`` (or the parent's end of the pipe closes).  Ctrl-C is the
    parent's to handle: it stops this worker (no second traceback from here)."""
    import signal

    signal.signal(signal.SIGINT, signal.SIG_IGN)
    for k, v in ONE_THREAD.items():
        os.environ[k] = v
    scn, cache = warm
    try:
        while (chunk := conn.recv()) is not None:
            conn.send([run_row(scn, values, key, cache) for key, values in chunk])
    except (EOFError, OSError):  # the parent is gone: nothing to report to
        pass


def _run_with_parent(ctx: Any, warm: tuple[Any, Any], chunks: Iterator[list], others: int,
                     finish: Callable[[dict[str, Any]], None]) -> list[list]:
    """Rows of a waveform-only sweep on this process and ``others`` forked ones.

    This process holds the warm network (:func:`_prewarm`), so it is one of the workers:
    a 2-worker sweep forks one process, not two.  It runs chunks itself and, between
    rows, hands the next chunk to a forked worker whose answer came back (two chunks in
    flight per worker, over a pipe: no helper threads here to wait for the interpreter
    lock while this process computes).  Returns [] when all finished, else the chunks
    that were in flight on a worker that died (the caller runs them again one at a time,
    then the chunks not handed out yet)."""
    from collections import deque
    from multiprocessing.connection import wait as ready

    procs, flight, lost = [], {}, []

    def dead(conn: Any) -> None:
        """That worker died (killed, out of memory): its chunks in flight are lost."""
        lost.extend(flight.pop(conn))
        conn.close()

    def hand(conn: Any, chunk: list | None) -> None:
        if chunk is not None:
            flight[conn].append(chunk)
            try:
                conn.send(chunk)
            except OSError:
                dead(conn)

    def collect(timeout: float | None) -> None:
        for conn in ready([c for c, q in flight.items() if q], timeout):
            try:
                got = conn.recv()
            except (EOFError, OSError):
                dead(conn)
                continue
            flight[conn].popleft()
            for row in got:             # an error writing a row is not a worker's death
                finish(row)
            hand(conn, None if lost else next(chunks, None))

    scn, cache = warm
    done = False
    try:
        for _ in range(others):
            here, there = ctx.Pipe()
            proc = ctx.Process(target=_pipe_worker, args=(there, warm), daemon=True)
            proc.start()
            there.close()
            procs.append(proc)
            flight[here] = deque()
            for _ in range(2):
                hand(here, next(chunks, None))
        while not lost and (mine := next(chunks, None)) is not None:
            for key, values in mine:
                finish(run_row(scn, values, key, cache))
                collect(0)
        while any(flight.values()):
            collect(None)
        for conn in flight:
            try:
                conn.send(None)          # done: the worker returns
            except OSError:
                pass
        done = True
        return lost
    finally:
        for conn in flight:
            conn.close()
        for proc in procs:
            if not done:                 # interrupted or failed here: stop at once
                proc.kill()
            proc.join()


def _prewarm(plan: SweepPlan, todo: list[tuple[str, dict[str, Any]]]):
    """((scenario, model cache), first row) when the rows change only waveforms, else
    None: the first row runs here, before the workers fork, so that every worker starts
    with its network built, the eigendecomposition done and the periodic response that a
    drive-level row rescales (:mod:`pulsetherm.network.rescale`), instead of doing that
    work once in each worker.  The row is the one a worker would return (:func:`run_row`
    records any failure of it)."""
    from .sweepcache import ModelCache, is_waveform_path

    if not todo or not all(is_waveform_path(p) for p in todo[0][1]):
        return None
    cache = ModelCache()
    key, values = todo[0]
    return (plan.scenario, cache), run_row(plan.scenario, values, key, cache)


def _run_dask(plan: SweepPlan, todo: list[tuple[str, dict[str, Any]]], scheduler: Any,
              finish: Callable[[dict[str, Any]], None]) -> None:
    """Rows on a Dask cluster.  The base scenario and the content of every file it reads
    (:attr:`SweepPlan.files`, resolved in this process) are scattered to the workers once;
    a worker never reads a file of its own folders."""
    try:
        from dask.distributed import Client, as_completed
    except ImportError:
        raise ScenarioError("--scheduler", str(scheduler), "dask.distributed installed "
                            "(pip install 'pulsetherm[cluster]')") from None
    own = not isinstance(scheduler, Client)
    try:
        client = Client(scheduler, timeout=10) if own else scheduler
    except OSError as exc:
        raise ScenarioError("--scheduler", str(scheduler), f"a reachable Dask scheduler "
                            f"({exc})") from None
    try:
        base = client.scatter(plan.scenario.to_dict(), broadcast=True)
        files = client.scatter([plan.files], broadcast=True)[0]
        futures = {client.submit(_dask_row, base, files, plan.fingerprint, key, values,
                                 pure=False): (key, values) for key, values in todo}
        for fut in as_completed(futures):
            try:
                row = fut.result()
            except Exception as exc:  # noqa: BLE001 - a lost worker fails its row only
                key, values = futures[fut]
                row = {"key": key, **values, "ok": False, "error": _failure(exc)}
            finish(row)
    finally:
        if own:
            client.close()


def sweep(scn: Scenario, vary: Sequence[str] = (), mc: Sequence[str] = (), samples: int = 100,
          seed: int = 0, paired: Sequence[str] = (), **run_options: Any) -> SweepResult:
    """Plan and run a sweep in one call (see :func:`plan_sweep`, :func:`run_sweep`)."""
    return run_sweep(plan_sweep(scn, vary, mc, samples, seed, paired), **run_options)
