"""Sweeps: grids and Monte Carlo over any scenario value, run in parallel, resumable.

A sweep is a list of *rows*; a row sets some scenario values (``path -> text``, e.g.
``mount.sink.resistance -> "0.3 K/W"``) on a base scenario, rebuilds and solves it, and
records every probe's peak, mean and margin.  Rows are keyed by a hash of the varied values
(and of the base scenario),
written (CSV or JSON lines) and flushed one complete line at a time as they finish, so an
interrupted sweep resumes by skipping the keys already in the file.

Workers are processes (``fork`` when the parent is single-threaded and already pinned to
one BLAS thread, else ``forkserver`` or ``spawn``; one BLAS thread each) or a Dask
cluster (``scheduler=``, imported only then).  This module imports no numpy at module level
so that process workers can pin BLAS threads before numpy loads.
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
from typing import Any, Callable, Iterable, Sequence

from .scenario import (Scenario, ScenarioError, UnitScale, field_kind, parse_literal,
                       parse_quantity, split_unit)

__all__ = ["SweepPlan", "SweepResult", "plan_sweep", "run_sweep", "parse_axis",
           "parse_mc", "run_row", "row_key", "sweep"]

#: Environment set in every worker before numpy is imported: one BLAS/OpenMP thread.
ONE_THREAD = {"OPENBLAS_NUM_THREADS": "1", "OMP_NUM_THREADS": "1", "MKL_NUM_THREADS": "1",
              "VECLIB_MAXIMUM_THREADS": "1", "NUMEXPR_NUM_THREADS": "1"}
#: Percentiles reported for every probe's peak.
PERCENTILES = (5.0, 50.0, 95.0)


# ======================================================================================
# Axes
# ======================================================================================
def _split_values(text: str) -> list[str]:
    return [v.strip() for v in text.split(",") if v.strip()]


def parse_range(text: str, kind: str, option: str) -> tuple[list[float], UnitScale]:
    """``"LO..HI UNIT:N"`` -> N values evenly spaced in the unit (``:N`` optional for
    sizing ranges, then the two ends).  Returns the numbers in the unit and its scale."""
    body, _, count = text.rpartition(":") if ":" in text else (text, "", "")
    count = count.strip().removesuffix("log").strip()
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
    except ScenarioError as exc:
        from .scenario import QUANTITY_KINDS

        what = kind.replace("_", " ")
        ex = QUANTITY_KINDS[kind][1].split(" ", 1)[-1]
        why = f"{unit!r} is not a {what} unit" if unit else "a bare number has no unit"
        raise ScenarioError(option, text, f"a range in a {what} unit, e.g. 'LO..HI {ex}' "
                            f"({why})") from None
    if not (math.isfinite(lo) and math.isfinite(hi)) or lo == hi:
        raise ScenarioError(option, text, "two different finite ends")
    if count:
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


def parse_axis(scn: Scenario, spec: str) -> tuple[str, list[Any]]:
    """``PATH=VALUES`` (a list ``a,b,c`` or a range ``LO..HI UNIT:N``) -> (path, values as
    scenario values: unit strings, numbers, names)."""
    path, sep, values = spec.partition("=")
    path = path.strip()
    if not sep or not path or not values.strip():
        raise ScenarioError("--vary", spec, "PATH=VALUES, e.g. "
                            "mount.sink.resistance=0.1..0.5 K/W:5 or devices[0].limit=150 degC,175 degC")
    kind = field_kind(scn, path)
    values = values.strip()
    if ".." in values and kind is not None:
        nums, scale = parse_range(values, kind, f"--vary {path}")
        return path, [scale.text(x) for x in nums]
    out: list[Any] = []
    items = _split_values(values)
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
        raise ScenarioError("--vary", spec, "at least one value")
    return path, out


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
def row_key(values: dict[str, Any], base: Scenario | None = None) -> str:
    """Stable key of a row: a hash of its varied values (path and value as written) and,
    given ``base``, of the base scenario too, so that a resumed sweep does not take rows
    computed from an edited scenario (or other ``--set`` values) for its own."""
    blob = json.dumps(sorted(values.items()), separators=(",", ":"), default=str)
    if base is not None:
        blob += _digest(base)
    return hashlib.sha1(blob.encode("utf-8")).hexdigest()[:16]


def _digest(scn: Scenario) -> str:
    """Hash of a scenario's values as written (its source file name left out)."""
    text = json.dumps(scn.to_dict(), sort_keys=True, separators=(",", ":"), default=str)
    return hashlib.sha1(text.encode("utf-8")).hexdigest()


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

    @property
    def size(self) -> int:
        return len(self.rows)


def plan_sweep(scn: Scenario, vary: Sequence[str] = (), mc: Sequence[str] = (),
               samples: int = 100, seed: int = 0) -> SweepPlan:
    """Rows of a grid (every combination of the ``vary`` axes) and/or Monte Carlo draws
    (``samples`` per grid point, seeded); the base scenario is built once to check it and
    learn its probes."""
    from .simulate import build

    axes = [parse_axis(scn, v) for v in vary]
    mcs = [parse_mc(scn, m) for m in mc]
    paths = [p for p, _ in axes] + [m.path for m in mcs]
    for p in paths:
        if "." in p and p.rsplit(".", 1)[-1] == "name":
            # a renamed device/line/probe renames the probes: its rows would have no figures
            raise ScenarioError("--vary", p, "a value to vary, not a name (names make the "
                                "probe columns of every row)")
    dup = {p for p in paths if paths.count(p) > 1}
    if dup:
        raise ScenarioError("--vary/--mc", sorted(dup)[0], "each path varied once")
    if mcs and (isinstance(samples, bool) or not isinstance(samples, int) or samples < 1):
        raise ScenarioError("--samples", samples, "a whole number >= 1")
    grid = [dict(zip([p for p, _ in axes], combo))
            for combo in itertools.product(*[vals for _, vals in axes])] if axes else [{}]
    rows: list[dict[str, Any]] = []
    if mcs:
        rng = random.Random(seed)
        for point in grid:
            for _ in range(samples):
                row = dict(point)
                for m in mcs:
                    row[m.path] = m.draw(rng)
                rows.append(row)
        mode = "grid+monte-carlo" if axes else "monte-carlo"
    else:
        rows = grid
        mode = "grid"
    # every varied value must be accepted by the schema: check the first row of each axis
    for path, vals in axes:
        for v in vals:
            scn.with_value(path, v)
    model = build(scn)
    cautions = model.cautions()
    # a varied material brings its own caution (every value of a material axis is built)
    for path, vals in axes:
        if path.rsplit(".", 1)[-1] in ("material", "fill", "dielectric"):
            for v in vals:
                cautions += [c for c in build(scn.with_value(path, v)).cautions()
                             if c not in cautions]
    return SweepPlan(scn, rows, paths, list(model.probes), mode, cautions)


# ======================================================================================
# One row (runs in the workers)
# ======================================================================================
_BASE: dict[str, Any] = {}


def _init_worker(base: dict[str, Any] | None = None, source: str | None = None) -> None:
    """Process initializer: one BLAS thread (set before numpy loads), the base scenario."""
    for k, v in ONE_THREAD.items():
        os.environ[k] = v
    if base is not None:
        _BASE["data"] = base
        _BASE["source"] = source


def run_row(scn: Scenario, values: dict[str, Any]) -> dict[str, Any]:
    """Apply ``values`` to ``scn``, simulate, return the row: key, values, and per probe
    ``peak_C``, ``mean_C``, ``margin_K``; ``ok`` (every limit holds) or ``error``."""
    from .simulate import simulate

    row: dict[str, Any] = {"key": row_key(values, scn), **values}
    try:
        s = scn
        for path, v in values.items():
            s = s.with_value(path, v)
        res = simulate(s)
    except ValueError as exc:
        row["error"] = " ".join(str(exc).split())
        return row
    for name, p in res.probes.items():
        row[f"{name}.peak_C"] = p.peak_C
        row[f"{name}.mean_C"] = p.mean_C
        row[f"{name}.margin_K"] = p.margin_K
    row["ok"] = res.ok
    row["error"] = ""
    return row


def _worker_row(values: dict[str, Any]) -> dict[str, Any]:
    scn = _BASE.get("scenario")
    if scn is None:
        scn = Scenario.from_dict(_BASE["data"], source=_BASE.get("source"))
        _BASE["scenario"] = scn
    return run_row(scn, values)


def _worker_chunk(chunk: list[dict[str, Any]]) -> list[dict[str, Any]]:
    """Several rows in one task (fewer round trips between the parent and a worker)."""
    return [_worker_row(values) for values in chunk]


def chunk_size(rows: int, workers: int) -> int:
    """Rows per task: about 16 tasks per worker (so that the last ones balance the load and
    results stream back), at most 32 rows (an interruption loses little), at least 1."""
    return max(1, min(32, rows // (16 * max(workers, 1))))


def _dask_row(base: dict[str, Any], values: dict[str, Any]) -> dict[str, Any]:
    return run_row(Scenario.from_dict(base), values)


# ======================================================================================
# Output rows
# ======================================================================================
class _RowWriter:
    """Append complete rows to a CSV or JSON-lines file, flushing each one."""

    def __init__(self, path: Path, columns: list[str], resume: bool) -> None:
        self.path = path
        self.columns = columns
        self.jsonl = path.suffix.lower() in (".jsonl", ".ndjson", ".json")
        self.done: set[str] = set()
        if path.suffix.lower() not in (".csv", ".jsonl", ".ndjson", ".json"):
            raise ScenarioError("--out", str(path), "a .csv or .jsonl file")
        if not path.parent.is_dir():
            raise ScenarioError("--out", str(path), f"a file in an existing folder (folder "
                                f"{str(path.parent)!r} does not exist)")
        if resume and path.exists():
            self._read_done()
            self.fh = open(path, "a", encoding="utf-8", newline="")
        else:
            if path.exists() and not resume:
                raise ScenarioError("--out", str(path), "a new file (it exists; give --resume "
                                    "to continue it or remove it)")
            self.fh = open(path, "w", encoding="utf-8", newline="")
            if not self.jsonl:
                self._write_line(self._csv_line(columns))

    def _read_done(self) -> None:
        data = self.path.read_bytes()
        if data and not data.endswith(b"\n"):
            # an interrupted write left a partial last line: drop it
            cut = data.rfind(b"\n") + 1
            with open(self.path, "r+b") as fh:
                fh.truncate(cut)
            data = data[:cut]
        text = data.decode("utf-8")
        if self.jsonl:
            for line in text.splitlines():
                try:
                    self.done.add(json.loads(line)["key"])
                except (ValueError, KeyError, TypeError):
                    continue
        else:
            reader = csv.reader(io.StringIO(text))
            header = next(reader, None)
            if header is not None and header != self.columns:
                raise ScenarioError("--resume", str(self.path), "a file written by the same "
                                    "sweep (its columns differ)")
            for rec in reader:
                if len(rec) == len(header):
                    self.done.add(rec[0])
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
                "out": self.out, "percentiles": self.percentiles(),
                "cautions": list(self.cautions)}

    def summary(self) -> str:
        return (f"{self.scenario}: {len(self.rows)} rows, {self.skipped} resumed, "
                f"{self.failed} failed")


def run_sweep(plan: SweepPlan, out: str | os.PathLike | None = None, resume: bool = False,
              workers: int = 1, scheduler: Any = None,
              progress: Callable[[int], None] | None = None) -> SweepResult:
    """Run the rows of ``plan`` (skipping those already in ``out`` with ``resume``).

    Parameters
    ----------
    out
        CSV or JSON-lines file; each row is appended and flushed as it finishes.
    workers
        Processes (1 = in this process).
    scheduler
        A Dask scheduler address (or a ``dask.distributed.Client``): run there instead.
    progress
        Called with the number of rows finished (resumed rows count as finished).
    """
    from .simulate import CAUTION

    columns = ["key"] + plan.paths + [f"{p}.{f}" for p in plan.probes
                                      for f in ("peak_C", "mean_C", "margin_K")] + ["ok", "error"]
    writer = _RowWriter(Path(out), columns, resume) if out is not None else None
    todo = plan.rows
    done_keys = writer.done if writer is not None else set()
    todo = [r for r in plan.rows if row_key(r, plan.scenario) not in done_keys]
    skipped = len(plan.rows) - len(todo)
    rows: list[dict[str, Any]] = []
    count = skipped
    if progress:
        progress(count)

    def finish(row: dict[str, Any]) -> None:
        nonlocal count
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
            for values in todo:
                finish(run_row(plan.scenario, values))
        else:
            _run_pool(plan, todo, workers, finish)
    finally:
        if writer is not None:
            writer.close()
    failed = sum(1 for r in rows if r.get("error"))
    return SweepResult(plan.scenario.name, plan.paths, plan.probes, rows, skipped, failed,
                       plan.mode, None if out is None else str(out),
                       list(plan.cautions) or [CAUTION])


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


def _run_pool(plan: SweepPlan, todo: list[dict[str, Any]], workers: int,
              finish: Callable[[dict[str, Any]], None]) -> None:
    """Rows on ``workers`` processes.

    The base scenario goes to each worker once (the pool initializer); a task carries only
    the varied values of a few rows (:func:`chunk_size`).  The one-thread BLAS environment
    is set before any worker (or the forkserver) starts; workers are forked directly when
    that is safe (:func:`_start_method`), else from a forkserver that imports the solver
    modules once, so each worker starts ready to run."""
    import multiprocessing as mp
    from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait

    saved = {k: os.environ.get(k) for k in ONE_THREAD}
    method = _start_method(saved)
    ctx = mp.get_context(method)
    os.environ.update(ONE_THREAD)  # inherited by the workers (and the forkserver) at start
    if method == "forkserver":
        ctx.set_forkserver_preload(["pulsetherm.network.sweep", "pulsetherm.network.simulate",
                                    "pulsetherm.network.modal", "pulsetherm.network.builder"])
    size = chunk_size(len(todo), workers)
    chunks = [todo[i:i + size] for i in range(0, len(todo), size)]
    try:
        with ProcessPoolExecutor(max_workers=workers, mp_context=ctx,
                                 initializer=_init_worker,
                                 initargs=(plan.scenario.to_dict(), plan.scenario.source)) as ex:
            # a bounded number of tasks in flight: results stream back in order of
            # completion and an interruption loses little work
            it = iter(chunks)
            pending = set()
            for chunk in itertools.islice(it, 3 * workers):
                pending.add(ex.submit(_worker_chunk, chunk))
            while pending:
                done, pending = wait(pending, return_when=FIRST_COMPLETED)
                for fut in done:
                    for row in fut.result():
                        finish(row)
                    nxt = next(it, None)
                    if nxt is not None:
                        pending.add(ex.submit(_worker_chunk, nxt))
    finally:
        for k, v in saved.items():
            if v is None:
                os.environ.pop(k, None)
            else:
                os.environ[k] = v


def _run_dask(plan: SweepPlan, todo: list[dict[str, Any]], scheduler: Any,
              finish: Callable[[dict[str, Any]], None]) -> None:
    try:
        from dask.distributed import Client, as_completed
    except ImportError:
        raise ScenarioError("--scheduler", str(scheduler), "dask.distributed installed "
                            "(pip install 'pulsetherm[cluster]')") from None
    own = not isinstance(scheduler, Client)
    try:
        client = Client(scheduler) if own else scheduler
    except OSError as exc:
        raise ScenarioError("--scheduler", str(scheduler), f"a reachable Dask scheduler "
                            f"({exc})") from None
    try:
        base = client.scatter(plan.scenario.to_dict(), broadcast=True)
        futures = [client.submit(_dask_row, base, values, pure=False) for values in todo]
        for fut in as_completed(futures):
            finish(fut.result())
    finally:
        if own:
            client.close()


def sweep(scn: Scenario, vary: Sequence[str] = (), mc: Sequence[str] = (), samples: int = 100,
          seed: int = 0, **run_options: Any) -> SweepResult:
    """Plan and run a sweep in one call (see :func:`plan_sweep`, :func:`run_sweep`)."""
    return run_sweep(plan_sweep(scn, vary, mc, samples, seed), **run_options)
