"""The ``pulsetherm`` command line.

``pulsetherm <verb> ...`` with the verbs ``run``, ``zth``, ``sweep``, ``size``, ``check`` and
``materials``.  Only the standard library is imported at module level: numpy, scipy,
matplotlib and the network modules are imported inside the verb handlers, so
``pulsetherm --help`` answers at once.

Exit status (:mod:`pulsetherm.tui.exit_status`): 0 success (``check``: every limit holds),
1 ``check`` found a broken limit (``sweep``: rows failed), 2 an input error (bad scenario,
bad option, unreadable file), 3 an internal error (please report it).  Errors print one short message
naming the key or option, never a traceback, and leave no partial output file behind
(outputs go to a temporary file in the target folder and are renamed at the end).
"""
from __future__ import annotations

import argparse
import gc
import os
import sys
from contextlib import contextmanager
from typing import Iterator, Sequence, TextIO

__all__ = ["main", "build_parser", "CliError", "atomic_output"]

from pulsetherm.tui.exit_status import (EXIT_ERROR, EXIT_INTERNAL, EXIT_LIMIT, EXIT_OK,
                                        guarded)


class CliError(ValueError):
    """A bad command-line option; the message names the option."""


# ======================================================================================
# Output files: all or nothing
# ======================================================================================
@contextmanager
def atomic_output(path: str | os.PathLike, mode: str = "w") -> Iterator[TextIO]:
    """Open a temporary file beside ``path``; rename it onto ``path`` only on success.

    An exception inside the ``with`` block removes the temporary file, so a failed command
    never leaves a partial output.  ``mode`` is ``"w"`` (text) or ``"wb"`` (bytes).  Only
    regular files are written (a device, FIFO or directory at ``path`` is refused; a
    symbolic link to a regular file is followed), with the user's umask.
    """
    from pulsetherm.network.safe_io import atomic_open

    with atomic_open(path, mode, newline="") as fh:
        yield fh


# ======================================================================================
# Parser
# ======================================================================================
def _add_run(sub) -> None:
    r = sub.add_parser("run", help="simulate a scenario: probe temperatures, budget, warm-up")
    r.add_argument("file", help="scenario TOML file")
    r.add_argument("--json", action="store_true", help="print one JSON object")
    r.add_argument("--csv", metavar="PATH", help="write the time series to a CSV file")
    r.add_argument("--plot", metavar="PATH", help="write a plot (.png or .svg)")
    r.add_argument("--set", action="append", default=[], metavar="PATH=VALUE",
                   help="change one scenario value (repeatable), e.g. coolant='30 degC'")


def _add_zth(sub) -> None:
    z = sub.add_parser("zth", help="thermal impedance at a probe: Zth, pulsed Zth, "
                                   "Foster/Cauer, structure function")
    z.add_argument("file")
    z.add_argument("--probe", required=True, help="probe name, e.g. pa.junction")
    z.add_argument("--csv", metavar="PATH", help="write Zth and the pulsed-Zth family")
    z.add_argument("--plot", metavar="PATH", help="write plots (.png or .svg)")
    z.add_argument("--json", action="store_true", help="print one JSON object")
    z.add_argument("--from", dest="t_from", default="1 us", metavar="TIME",
                   help="earliest time: the network is graded to resolve it (1 us)")
    z.add_argument("--set", action="append", default=[], metavar="PATH=VALUE")


def _add_sweep(sub) -> None:
    s = sub.add_parser("sweep", help="grid or Monte Carlo over scenario values")
    s.add_argument("file")
    s.add_argument("--vary", action="append", default=[], metavar="PATH=VALUES",
                   help="grid axis: a list 'a,b,c' or a range 'LO..HI UNIT:N' (repeatable)")
    s.add_argument("--zip", action="append", default=[], metavar="PATH=VALUES",
                   help="paired axis: every --zip path steps together, one value of each "
                        "per row (same count each; repeatable, or several joined by ';')")
    s.add_argument("--mc", action="append", default=[], metavar="PATH=DIST:WIDTH",
                   help="Monte Carlo: normal:SIGMA or uniform:HALFWIDTH (with unit)")
    s.add_argument("--samples", type=int, default=100,
                   help="Monte Carlo samples per grid point (100; a sweep has at most "
                        "100000 rows)")
    s.add_argument("--seed", type=int, default=0, help="random seed (0)")
    s.add_argument("--out", metavar="PATH", help="rows: .csv or .jsonl (JSON lines)")
    s.add_argument("--resume", action="store_true",
                   help="skip rows already in --out (refused when the file comes from "
                        "another scenario, envelope file or seed)")
    s.add_argument("--workers", type=int, default=1,
                   help="worker processes (1; at most the CPU count)")
    s.add_argument("--scheduler", metavar="ADDRESS",
                   help="run on a Dask cluster (needs the [cluster] extra)")
    s.add_argument("--json", action="store_true", help="print the summary as JSON")
    s.add_argument("--no-progress", action="store_true", help="no progress bar on stderr")
    s.add_argument("--set", action="append", default=[], metavar="PATH=VALUE")


def _add_size(sub) -> None:
    z2 = sub.add_parser("size", help="largest or smallest value that keeps every limit")
    z2.add_argument("file")
    z2.add_argument("--adjust", required=True, metavar="PATH", help="scenario value to size")
    z2.add_argument("--range", required=True, metavar="LO..HI",
                    help="search range with unit, e.g. '0.1..2 K/W'")
    z2.add_argument("--margin", default="0 K", help="margin kept below every limit ('10 K')")
    z2.add_argument("--tol", default=None, help="stop when the bracket is this narrow "
                                                "(default 1e-4 of the range)")
    z2.add_argument("--json", action="store_true")
    z2.add_argument("--set", action="append", default=[], metavar="PATH=VALUE")


def _add_check(sub) -> None:
    c = sub.add_parser("check", help="exit 0 when every limit holds, 1 otherwise")
    c.add_argument("file")
    c.add_argument("--margin", default="0 K", help="margin required below every limit")
    c.add_argument("--set", action="append", default=[], metavar="PATH=VALUE")


def _add_materials(sub) -> None:
    m = sub.add_parser("materials", help="list the material library or show one material")
    m.add_argument("name", nargs="?", help="material to show")


def _add_ui(sub) -> None:
    u = sub.add_parser("ui", help="the terminal workbench: edit a scenario and watch its "
                                  "response (the built-in demo without a file)")
    u.add_argument("file", nargs="?", default=None,
                   help="scenario TOML file (default: an invented two-stage demo)")


#: The verbs in the order of ``pulsetherm --help``.
_VERB_PARSERS = {"run": _add_run, "zth": _add_zth, "sweep": _add_sweep, "size": _add_size,
                 "check": _add_check, "materials": _add_materials, "ui": _add_ui}


def build_parser(verb: str | None = None) -> argparse.ArgumentParser:
    """The command-line parser: every verb, or only ``verb`` (:func:`main` passes the verb
    the command line starts with: each sub-parser costs argparse ~0.2 ms to build, and no
    other one can be reached from that command line)."""
    p = argparse.ArgumentParser(
        prog="pulsetherm",
        description="Pulsed and periodic thermal analysis of RF boards, devices and lines.",
        epilog="Exit status: 0 ok, 1 a limit is broken (check) or rows failed (sweep), "
               "2 input error, 3 internal error (please report it).")
    sub = p.add_subparsers(dest="verb", metavar="VERB")
    sub.required = True

    for name, add in _VERB_PARSERS.items():
        if verb is None or verb == name:
            add(sub)
    for verb_parser in sub.choices.values():   # every verb that reads a scenario
        if any(a.dest == "file" for a in verb_parser._actions) and not any(
                a.dest == "allow_path" for a in verb_parser._actions):
            verb_parser.add_argument("--allow-path", action="append", default=[], metavar="DIR",
                              help="a folder outside the scenario's own that its table "
                                   "files may be read from (repeatable)")
    return p


# ======================================================================================
# Entry point
# ======================================================================================
def main(argv: Sequence[str] | None = None) -> int:
    """Run one command; returns the exit status (0 ok, 1 limit broken, 2 error).

    ``argv`` None: the process's own command line (the ``pulsetherm`` script), which ends
    when this returns; a one-shot verb then leaves its objects frozen (:func:`gc.freeze`):
    the collections of the interpreter's exit skip them (see :func:`_collector_paused`).
    """
    at_exit = argv is None
    if at_exit:
        _one_blas_thread()
    argv = list(sys.argv[1:] if argv is None else argv)
    parser = build_parser(argv[0] if argv and argv[0] in _VERB_PARSERS else None)
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # argparse: --help (0) or a usage error (2)
        return int(exc.code or 0) if exc.code in (0, None) else EXIT_ERROR
    handler = _HANDLERS[args.verb]
    if args.verb in _ONE_SHOT:
        handler = _collector_paused(handler, freeze=at_exit)
    # every verb runs through one guard: exit 2 for input errors (one line naming the key),
    # 3 for internal errors (see tui/exit_status.py)
    allow = getattr(args, "allow_path", None)
    if not allow:
        return guarded(args.verb, lambda: handler(args), lambda exc: _located(exc, args))
    # --allow-path also reaches sweep worker processes, through their environment
    name = "PULSETHERM_ALLOW_PATH"        # pulsetherm.network.safe_io.ALLOW_ENV
    old = os.environ.get(name)
    os.environ[name] = os.pathsep.join([*allow, *([old] if old else [])])
    try:
        return guarded(args.verb, lambda: handler(args), lambda exc: _located(exc, args))
    finally:
        if old is None:
            os.environ.pop(name, None)
        else:
            os.environ[name] = old


#: Thread counts of BLAS/OpenMP the ``pulsetherm`` script sets when the environment does
#: not (the values every sweep worker runs with: ``network.sweep.ONE_THREAD``).
_THREAD_VARS = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS",
                "VECLIB_MAXIMUM_THREADS", "NUMEXPR_NUM_THREADS")


def _one_blas_thread() -> None:
    """One BLAS thread for the script's process, set before numpy loads unless the user
    set a count.  pulsetherm's matrices are small (a ladder has tens of nodes, where one
    eigendecomposition takes well under a millisecond), so a second BLAS thread has
    nothing to share, and OpenBLAS's waiting threads spin: on the 2-core project machine
    under load they took ~0.2 s of CPU from a 0.3 s demo run (wall 0.33 -> 0.29 s median
    with one thread, measured side by side).  Sweep workers already ran this way."""
    for name in _THREAD_VARS:
        os.environ.setdefault(name, "1")


#: Verbs that compute one scenario and end: Python's cyclic garbage collector is paused for
#: them (:func:`_collector_paused`); sweep, size and ui run long and keep it running.
_ONE_SHOT = ("run", "check", "zth", "materials")


def _collector_paused(handler, freeze: bool = False):
    """``handler`` with Python's cyclic garbage collector paused while it runs (its state
    restored after).  A command's imports (numpy, scipy, the network modules) create ~10^5
    objects that live to the end, and the collector scanned them ~110 times for nothing
    (~17 ms of CPU of a ~0.29 s ``pulsetherm run`` of the demo).  Reference counting still
    frees everything else at once: peak memory of every example and hostile file stays
    within 0.6 MB of a run with the collector.

    ``freeze``: the process ends after the command; its objects are frozen before the
    collector is turned back on, so neither the next young collection nor the full ones of
    the interpreter's exit walk them again (~35 ms more; outputs are closed by then, inside
    their ``with`` blocks).  Common practice, no source (:func:`gc.freeze`)."""
    def paused(args: argparse.Namespace) -> int:
        was = gc.isenabled()
        gc.disable()
        try:
            return handler(args)
        finally:
            if freeze:
                gc.freeze()
            if was:
                gc.enable()

    return paused


def _located(exc: BaseException, args: argparse.Namespace) -> BaseException:
    """A scenario error raised after loading (building, solving) carries no line: add the
    file and the line of its key, as the loader does."""
    from pulsetherm.network.scenario import ScenarioError

    file = getattr(args, "file", None)
    if (not isinstance(exc, ScenarioError) or exc.line is not None or exc.source
            or not exc.path or exc.path.startswith("-") or not file):
        return exc
    from pulsetherm.network.safe_io import read_text

    try:
        text = read_text(file, "scenario")
    except (OSError, ValueError):
        return exc
    located = exc.located(text, file)
    return located if located.line is not None else exc


def _out(text: str = "", file: TextIO | None = None) -> None:
    print(text, file=file or sys.stdout)


def _emit(res, as_json: bool, text) -> None:
    """Print a result as one JSON object (``--json``) or as the text ``text(res)``.

    JSON is strict: a NaN or infinity is an error (exit 2), never a bare ``NaN`` token that
    other JSON readers refuse.
    """
    if as_json:
        import json

        try:
            body = json.dumps(res.to_dict(), indent=2, allow_nan=False)
        except ValueError:
            raise ValueError("result: a value that is not a finite number; expected finite "
                             "figures only (nothing printed)") from None
        _out(body)
    else:
        _out(text(res))


# -- materials ---------------------------------------------------------------------------
def _cmd_materials(args: argparse.Namespace) -> int:
    from pulsetherm.tui.report import material_table, material_text
    from pulsetherm.network.materials import default_library

    lib = default_library()
    if args.name is None:
        _out(material_table(lib.materials()))
    else:
        _out(material_text(lib.get(args.name)))
    return EXIT_OK


def _load(args: argparse.Namespace):
    from pulsetherm.network.scenario import load, parse_literal

    scn = load(args.file, allow_paths=tuple(getattr(args, "allow_path", None) or ()))
    for item in getattr(args, "set", []) or []:
        path, sep, value = item.partition("=")
        if not sep or not path.strip():
            raise CliError(f"--set {item!r}: expected PATH=VALUE, e.g. coolant=30 degC")
        scn = scn.with_value(path.strip(), parse_literal(value.strip()))
    return scn


# -- run ---------------------------------------------------------------------------------
def _cmd_run(args: argparse.Namespace) -> int:
    from pulsetherm.network.simulate import simulate
    from pulsetherm.tui.report import run_table

    res = simulate(_load(args))
    _files(res, args, "plot_run")
    _emit(res, args.json, run_table)
    return EXIT_OK


def _files(res, args: argparse.Namespace, plotter: str) -> None:
    """Write ``--csv`` (the result's own table) and ``--plot`` (``tui.plots.<plotter>``),
    each atomically."""
    if args.csv:
        with atomic_output(args.csv) as fh:
            res.to_csv(fh)
    if args.plot:
        from pulsetherm.tui import plots
        getattr(plots, plotter)(res, args.plot)


def _margin(text: str) -> float:
    """``--margin``: a temperature difference >= 0 K (a negative one would pass a broken
    limit)."""
    from pulsetherm.network.scenario import parse_difference

    margin = parse_difference(text, "--margin")
    if margin < 0:
        raise CliError(f"--margin = {text!r}: expected a margin >= 0 K (a negative margin "
                       "would let a broken limit pass)")
    return margin


# -- check -------------------------------------------------------------------------------
def _cmd_check(args: argparse.Namespace) -> int:
    from pulsetherm.network.checks import judge
    from pulsetherm.network.simulate import simulate
    from pulsetherm.tui.report import check_text

    margin = _margin(args.margin)
    scn = _load(args)
    from pulsetherm.network.device_effects import check_rows  # droop/stability limits

    res = simulate(scn)
    chk = judge(res, margin, extra=check_rows(res.effects))
    _out(check_text(chk))
    return EXIT_LIMIT if chk.failed else EXIT_OK


# -- zth ---------------------------------------------------------------------------------
def _cmd_zth(args: argparse.Namespace) -> int:
    from pulsetherm.network.impedance import thermal_impedance
    from pulsetherm.tui.report import zth_text

    from pulsetherm.network.scenario import parse_quantity

    t_from = parse_quantity(args.t_from, "time", "--from").value
    res = thermal_impedance(_load(args), args.probe, t_from=t_from)
    _files(res, args, "plot_zth")
    _emit(res, args.json, zth_text)
    return EXIT_OK


# -- sweep -------------------------------------------------------------------------------
def _cmd_sweep(args: argparse.Namespace) -> int:
    from pulsetherm.network.sweep import plan_sweep, run_sweep
    from pulsetherm.tui.report import sweep_text

    from pulsetherm.network.sweep import MAX_ROWS, cpu_cap

    if not args.vary and not args.mc and not args.zip:
        raise CliError("sweep: give at least one --vary PATH=VALUES, --zip PATH=VALUES or "
                       "--mc PATH=DIST:WIDTH")
    if args.scheduler is None and not 1 <= args.workers <= cpu_cap():
        raise CliError(f"--workers {args.workers}: expected a whole number from 1 to "
                       f"{cpu_cap()} (the CPUs of this machine; a cluster takes --scheduler)")
    if args.mc and not 1 <= args.samples <= MAX_ROWS:
        raise CliError(f"--samples {args.samples}: expected a whole number from 1 to "
                       f"{MAX_ROWS} (rows of one sweep)")
    if args.resume and not args.out:
        raise CliError("--resume needs --out PATH (the rows to resume from)")
    scn = _load(args)
    plan = plan_sweep(scn, vary=args.vary, mc=args.mc, samples=args.samples, seed=args.seed,
                      paired=args.zip)
    progress = None if args.no_progress else _Progress(plan.size)
    res = run_sweep(plan, out=args.out, resume=args.resume, workers=args.workers,
                    scheduler=args.scheduler, progress=progress)
    if progress is not None:
        progress.close()
    _emit(res, args.json, sweep_text)
    if res.failed:
        where = f" (their errors are in {args.out})" if args.out else ""
        bug = (f"; {res.internal} on an internal error: this is a bug in pulsetherm, please "
               "report it" if res.internal else "")
        from pulsetherm.network.safe_io import printable

        first = printable(next(str(r["error"]) for r in res.rows if r.get("error")))
        first = first if len(first) <= 200 else first[:200] + " ..."
        print(f"pulsetherm sweep: {res.failed} of {len(res.rows)} rows failed{where}{bug}; "
              f"first: {first}", file=sys.stderr)
        return EXIT_INTERNAL if res.internal else EXIT_LIMIT
    return EXIT_OK


class _Progress:
    """A one-line progress bar on stderr (redrawn in place; silent when not a terminal
    except for the final line)."""

    def __init__(self, total: int, stream: TextIO | None = None) -> None:
        self.total = max(total, 1)
        self.done = 0
        self.stream = stream or sys.stderr
        self.tty = getattr(self.stream, "isatty", lambda: False)()

    def __call__(self, done: int) -> None:
        self.done = done
        if self.tty:
            width = 30
            fill = int(width * done / self.total)
            self.stream.write(f"\r[{'#' * fill}{'.' * (width - fill)}] {done}/{self.total}")
            self.stream.flush()

    def close(self) -> None:
        if self.tty:
            self.stream.write("\n")
        else:
            self.stream.write(f"sweep: {self.done}/{self.total} rows\n")
        self.stream.flush()


# -- size --------------------------------------------------------------------------------
def _cmd_size(args: argparse.Namespace) -> int:
    from pulsetherm.network.sizing import size
    from pulsetherm.tui.report import sizing_text

    margin = _margin(args.margin)
    scn = _load(args)
    res = size(scn, args.adjust, args.range, margin=margin, tol=args.tol)
    _emit(res, args.json, sizing_text)
    return EXIT_OK


def _cmd_ui(args: argparse.Namespace) -> int:
    from pulsetherm.network.scenario import load
    from pulsetherm.tui.app import run_app

    if args.file is not None:
        load(args.file)  # a broken file is reported here (exit 2), before the screen opens
    return run_app(args.file)


_HANDLERS = {
    "run": _cmd_run,
    "ui": _cmd_ui,
    "zth": _cmd_zth,
    "sweep": _cmd_sweep,
    "size": _cmd_size,
    "check": _cmd_check,
    "materials": _cmd_materials,
}

if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
