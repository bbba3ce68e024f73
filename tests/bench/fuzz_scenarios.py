"""Seeded mutation fuzzing of the shipped examples through the command line.

    python -P tests/bench/fuzz_scenarios.py --n 100000 [--seed 0] [--timeout 20] [--verb run]
    python -P tests/bench/fuzz_scenarios.py --n 50000 --start 50000 --json B.json   # a shard
    python -P tests/bench/fuzz_scenarios.py --combine A.json B.json                  # add shards

Each case takes one example, applies one to three mutations (a quantity replaced by a hostile
text, a number scaled by 10^k, a value replaced by another type, a key removed or added, an
array of tables repeated, bytes of the TOML text flipped, deleted or inserted) and runs
``pulsetherm run FILE --csv OUT`` in this process (``tui.cli.main``).  A *defect* is any of:

* an exit status other than 0, 1 or 2 (3 is an internal error, anything else a crash);
* status 2 with more or less than one line on stderr, or a traceback;
* status 0 with anything on stderr, or a warning raised (RuntimeWarning ...);
* status 0 without the ``--csv`` file, or status 2 leaving any file behind;
* no answer within ``--timeout`` seconds of CPU time (20 s: a hang; SIGPROF from an
  ``ITIMER_PROF`` timer, so that other work on a shared machine does not turn a slow case
  into a hang), or within ``--wall-timeout`` seconds of wall-clock time (120 s: a wait that
  uses no CPU, such as a blocking read; SIGALRM).

Refusals slower than 2 s are counted apart ("slow").  The summary prints the cases, the
exit statuses, the defects by kind with one example each (seed and case number reproduce
it: ``--only CASE``), and the load average.  ``--json FILE`` also writes the summary's
counts (statuses, defects with their cases, per-case times) so that shards run in parallel
with ``--start`` are added by ``--combine FILE ...`` (the combined wall time is the longest
shard's).
"""
from __future__ import annotations

import argparse
import collections
import contextlib
import io
import json
import os
import random
import re
import shutil
import signal
import sys
import tempfile
import time
import tomllib
import warnings
from pathlib import Path

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

ROOT = Path(__file__).resolve().parents[2]
EXAMPLES = sorted((ROOT / "examples").glob("*.toml"))

HOSTILE_TEXT = [
    "0.76", "2", "", " ", "mm", "1", "1e999 mm", "-1e999 W", "1e-320 mm", "1e-320 W",
    "5000 dBm", "-5000 dBm", "1 kW^200", "1 m^-99", "1 m^99999999999999999999", "1/0 mm",
    "1/00000000000000000000000 mm", "0x10 mm", "1_000 mm", "--1 mm", "1e mm", "1 mm mm",
    "30 mils", "1 oz", "inf W", "nan K/W", "-0 mm", "1e300 W", "1e300 K/W", "1e-300 J/K",
    "1e300 degC", "-300 degC", "0 K", "1e-30 s", "1e30 s", "1" * 2000 + " mm",
    "9" * 400 + " W", "1" + "0" * 310 + " W", "1 \x1b[31mmm", "1 mm\n2 mm", "1\x00 mm",
    "1 W/mK" * 40, "(" * 300 + "m" + ")" * 300, "1 m" + "*m" * 500, "10 %", "150 %",
    "1e6 %", "1 GHz", "50 ohm", "1e9 ohm", "-50 ohm", "1 \u00b5m", "1 \u202em", "\ufeff1 mm",
    "1 degC", "1 deg", "1 rad", "3 dB", "1e-9 m", "1e-7 m", "1 nm", "100 m", "1e5 m",
]
HOSTILE_VALUES = [0, -1, 1, 10**30, -(10**30), 1e308, -1e308, float("inf"), float("nan"),
                  1e-320, True, False, [], {}, [1, 2], ["1 mm"] * 3, {"a": 1}, "x", "",
                  "\x1b[2J", "a" * 5000, [[[[1]]]], 10**9, 2**63, 0.5, 1.5]


def _quantity_paths(node, path=()):
    """Paths of every string and number leaf in a TOML dict."""
    if isinstance(node, dict):
        for k, v in node.items():
            yield from _quantity_paths(v, path + (k,))
    elif isinstance(node, list):
        for i, v in enumerate(node):
            yield from _quantity_paths(v, path + (i,))
    else:
        yield path, node


def _containers(node, path=()):
    if isinstance(node, (dict, list)):
        yield path, node
        items = node.items() if isinstance(node, dict) else enumerate(node)
        for k, v in items:
            yield from _containers(v, path + (k,))


def _get(node, path):
    for p in path:
        node = node[p]
    return node


def _scale(text: str, rng: random.Random) -> str:
    m = re.match(r"\s*([-+]?\d+(?:\.\d*)?(?:[eE][-+]?\d+)?)(.*)$", text)
    if not m:
        return text
    k = rng.choice([-320, -40, -20, -12, -9, -6, -3, -1, 1, 3, 6, 9, 12, 20, 40, 300, 308])
    return f"{m.group(1)}e{k}{m.group(2)}" if "e" not in m.group(1).lower() \
        else f"{float(m.group(1)) * 10.0 ** min(k, 300)!r}{m.group(2)}"


def mutate_data(data: dict, rng: random.Random) -> None:
    """One structural mutation of the parsed TOML, in place."""
    op = rng.randrange(7)
    leaves = list(_quantity_paths(data))
    conts = list(_containers(data))
    if op <= 1 and leaves:                        # hostile text for a value
        path, old = rng.choice(leaves)
        _get(data, path[:-1])[path[-1]] = rng.choice(HOSTILE_TEXT)
    elif op == 2 and leaves:                      # scale a number in a quantity
        path, old = rng.choice(leaves)
        if isinstance(old, str):
            _get(data, path[:-1])[path[-1]] = _scale(old, rng)
    elif op == 3 and leaves:                      # another type
        path, _ = rng.choice(leaves)
        _get(data, path[:-1])[path[-1]] = rng.choice(HOSTILE_VALUES)
    elif op == 4:                                 # remove a key or an element
        path, node = rng.choice(conts)
        if isinstance(node, dict) and node:
            del node[rng.choice(list(node))]
        elif isinstance(node, list) and node:
            node.pop(rng.randrange(len(node)))
    elif op == 5:                                 # add an unknown or a hostile key
        path, node = rng.choice(conts)
        if isinstance(node, dict):
            node[rng.choice(["colour", "\x1b[31mred", "periodic", "delay", "area", "vias",
                             "capacity", "segments", "a" * 300])] = rng.choice(HOSTILE_VALUES
                                                                                + HOSTILE_TEXT)
    else:                                         # repeat an array of tables
        lists = [(p, n) for p, n in conts if isinstance(n, list) and n
                 and all(isinstance(x, dict) for x in n)]
        if lists:
            path, node = rng.choice(lists)
            node.extend([dict(node[-1]) for _ in range(rng.choice([1, 3, 70, 300]))])


def mutate_text(text: str, rng: random.Random) -> str:
    """One byte-level mutation of the TOML text."""
    if not text:
        return text
    i = rng.randrange(len(text))
    op = rng.randrange(4)
    if op == 0:
        return text[:i] + text[i + 1:]
    if op == 1:
        return text[:i] + rng.choice(["[", "]", "{", "\"", "'", "=", "\n", "\x00", "\x1b",
                                      "\udcff"[:0] + "\u00ff", "#", ".", "9" * 50]) + text[i:]
    if op == 2:
        return text[:i] + "[" * 2000 + text[i:]
    return text[:i] + text[i:].replace("\n", "\n" * rng.randrange(1, 3), 1)


def make_case(case: int, seed: int) -> tuple[str, str]:
    """(example name, mutated TOML text) of case number ``case``."""
    from pulsetherm.network.scenario import dumps_toml

    rng = random.Random(f"{seed}:{case}")
    ex = rng.choice(EXAMPLES)
    text = ex.read_text(encoding="utf-8")
    if rng.random() < 0.8:
        data = tomllib.loads(text)
        for _ in range(rng.choice([1, 1, 2, 3])):
            mutate_data(data, rng)
        try:
            text = dumps_toml(data)
        except (TypeError, ValueError):
            text = ex.read_text(encoding="utf-8")
    if rng.random() < 0.25:
        text = mutate_text(text, rng)
    return ex.name, text


class _Hang(BaseException):
    pass


def _alarm(signum, frame):
    raise _Hang()


WALL_TIMEOUT = 120.0


def run_case(text: str, folder: Path, timeout: float, verb: str,
             wall_timeout: float = WALL_TIMEOUT) -> dict:
    """Run one mutated scenario; the outcome as a dict (status, stderr, files, time).

    ``timeout`` is CPU time (ITIMER_PROF), ``wall_timeout`` wall-clock time (ITIMER_REAL)."""
    from pulsetherm.tui.cli import main

    for p in folder.iterdir():
        if p.is_dir():
            shutil.rmtree(p)
        else:
            p.unlink()
    for ex in EXAMPLES:                        # the examples' table files, if any
        for csv in ex.parent.glob("*.csv"):
            shutil.copy(csv, folder / csv.name)
    before = {p.name for p in folder.iterdir()}
    scn = folder / "case.toml"
    scn.write_text(text, encoding="utf-8", errors="surrogatepass")
    out = folder / "out.csv"
    args = [verb, str(scn)] + (["--csv", str(out)] if verb in ("run", "zth") else [])
    o, e = io.StringIO(), io.StringIO()
    t0 = time.perf_counter()
    c0 = time.process_time()
    signal.signal(signal.SIGALRM, _alarm)
    signal.signal(signal.SIGPROF, _alarm)
    signal.setitimer(signal.ITIMER_PROF, timeout)
    signal.setitimer(signal.ITIMER_REAL, max(wall_timeout, timeout))
    caught: list = []
    try:
        with warnings.catch_warnings(record=True) as caught, \
                contextlib.redirect_stdout(o), contextlib.redirect_stderr(e):
            warnings.simplefilter("always")
            status = main(args)
    except _Hang:
        status = "hang"
    except SystemExit as exc:
        status = f"SystemExit({exc.code})"
    except BaseException as exc:              # noqa: BLE001 - everything is a finding
        status = f"raised {type(exc).__name__}"
    finally:
        signal.setitimer(signal.ITIMER_PROF, 0)
        signal.setitimer(signal.ITIMER_REAL, 0)
    dt = time.perf_counter() - t0
    cpu = time.process_time() - c0
    after = {p.name for p in folder.iterdir()} - before - {"case.toml"}
    return {"status": status, "stderr": e.getvalue(), "files": sorted(after), "time": dt,
            "cpu": cpu,
            "warnings": [f"{w.category.__name__}: {w.message}" for w in caught]}


def defects_of(r: dict) -> list[str]:
    st, err = r["status"], r["stderr"]
    out = []
    if st not in (0, 1, 2):
        out.append(f"status {st}")
    if st == 2:
        if len(err.strip().splitlines()) != 1:
            out.append("not one line")
        if r["files"]:
            out.append("file left behind")
    if "Traceback" in err:
        out.append("traceback")
    if st in (0, 1):
        if err.strip():
            out.append("stderr on success")
        if "out.csv" not in r["files"]:
            out.append("no output file")
    if st in (0, 1, 2) and r["warnings"]:
        out.append("warning: " + r["warnings"][0].split(":")[0])
    if "\x1b" in err:
        out.append("escape code echoed")
    return out


def _print_summary(sm: dict) -> int:
    """Print a summary (from one run or several shards added); 1 when there are defects."""
    n = sm["n"]
    times = sorted(sm["times"])
    total = sum(len(v) for v in sm["defects"].values())
    shards = sm.get("shards", 1)
    print(f"fuzz_scenarios: seed {sm['seed']}, cases {sm['ranges']} ({n} of {sm['asked']} "
          f"asked{f', {shards} shards' if shards > 1 else ''}), verb {sm['verb']}, "
          f"{sm['elapsed']:.0f} s, load {sm['load']:.2f}")
    print("  exit statuses: " + ", ".join(f"{k}: {v}" for k, v in
                                           sorted(sm["statuses"].items(), key=str)))
    if times:
        print(f"  time per case: median {times[n // 2]:.3f} s, max {times[-1]:.2f} s "
              f"(CPU max {sm['cpu_max']:.2f} s); refusals over 2 s: {len(sm['slow'])}")
    print(f"  defects: {total} in {len(sm['defects'])} kinds")
    for kind, items in sorted(sm["defects"].items()):
        case, name, err = items[0]
        print(f"    {kind}: {len(items)} (e.g. case {case}, {name}: {err!r})")
        print(f"      cases: {' '.join(str(c) for c, _, _ in items[:40])}")
    return 1 if total else 0


def _combine(paths: list[str]) -> dict:
    """Add the JSON summaries of several shards (same seed and verb)."""
    parts = [json.loads(Path(p).read_text(encoding="utf-8")) for p in paths]
    if len({(p["seed"], p["verb"]) for p in parts}) != 1:
        raise SystemExit("--combine: the shards differ in seed or verb")
    sm = {"seed": parts[0]["seed"], "verb": parts[0]["verb"], "shards": len(parts),
          "ranges": ", ".join(p["ranges"] for p in parts),
          "n": sum(p["n"] for p in parts), "asked": sum(p["asked"] for p in parts),
          "elapsed": max(p["elapsed"] for p in parts), "load": max(p["load"] for p in parts),
          "times": [t for p in parts for t in p["times"]],
          "cpu_max": max(p["cpu_max"] for p in parts),
          "slow": [x for p in parts for x in p["slow"]],
          "statuses": dict(collections.Counter()), "defects": {}}
    st: collections.Counter = collections.Counter()
    for p in parts:
        st.update(p["statuses"])
        for kind, items in p["defects"].items():
            sm["defects"].setdefault(kind, []).extend(items)
    sm["statuses"] = dict(st)
    return sm


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=1000)
    ap.add_argument("--seed", type=int, default=0)
    ap.add_argument("--start", type=int, default=0, help="first case number")
    ap.add_argument("--timeout", type=float, default=20.0,
                    help="CPU seconds before a hang")
    ap.add_argument("--wall-timeout", type=float, default=WALL_TIMEOUT,
                    help="wall-clock seconds before a hang")
    ap.add_argument("--verb", default="run", choices=("run", "check", "zth"))
    ap.add_argument("--only", type=int, default=None, help="run one case and show it")
    ap.add_argument("--max-seconds", type=float, default=None,
                    help="stop after this long and report the cases run (the count is "
                         "printed; nothing is extrapolated)")
    ap.add_argument("--json", default=None, help="also write the summary to this file")
    ap.add_argument("--combine", nargs="+", default=None,
                    help="print the summary of shards written with --json, added")
    a = ap.parse_args(argv)
    if a.combine:
        return _print_summary(_combine(a.combine))
    folder = Path(tempfile.mkdtemp(prefix="pulsetherm-fuzz-"))
    cases = [a.only] if a.only is not None else range(a.start, a.start + a.n)
    statuses: collections.Counter = collections.Counter()
    defects: dict[str, list] = collections.defaultdict(list)
    slow, times, cpu_max = [], [], 0.0
    t_all = time.perf_counter()
    try:
        for k, case in enumerate(cases):
            if a.max_seconds is not None and time.perf_counter() - t_all > a.max_seconds:
                break
            name, text = make_case(case, a.seed)
            r = run_case(text, folder, a.timeout, a.verb, a.wall_timeout)
            statuses[str(r["status"])] += 1
            times.append(r["time"])
            cpu_max = max(cpu_max, r["cpu"])
            for d in defects_of(r):
                defects[d].append((case, name, r["stderr"].strip()[:300]))
            if r["status"] == 2 and r["time"] > 2.0:
                slow.append((case, r["time"]))
            if a.only is not None:
                print(text[:3000])
                print(r)
            if (k + 1) % 500 == 0:
                print(f"  {k + 1} cases, {sum(len(v) for v in defects.values())} defects, "
                      f"{time.perf_counter() - t_all:.0f} s", file=sys.stderr, flush=True)
    finally:
        shutil.rmtree(folder, ignore_errors=True)
    n = len(times)
    first = a.only if a.only is not None else a.start
    sm = {"seed": a.seed, "verb": a.verb, "n": n, "asked": len(cases),
          "ranges": f"{first}..{first + n - 1}" if a.only is None else str(a.only),
          "elapsed": time.perf_counter() - t_all, "load": os.getloadavg()[0],
          "times": times, "cpu_max": cpu_max, "slow": slow,
          "statuses": dict(statuses), "defects": dict(defects)}
    if a.json:
        Path(a.json).write_text(json.dumps(sm), encoding="utf-8")
    return _print_summary(sm)


if __name__ == "__main__":
    sys.exit(main())
