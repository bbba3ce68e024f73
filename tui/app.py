"""The terminal app: open a scenario, see every probe against its limit, ask what-if.

Layout: probe table and one-period trace on the left, the layer budget on the right, a
what-if line below.  Runs go to a worker thread; results come back as messages.

Keys: ``r`` run again, ``u`` undo the last what-if, ``s`` save the changed scenario to a new
file beside the original (the original is never overwritten), ``j`` write the JSON report,
``q`` quit.
"""
from __future__ import annotations

import json
import tomllib
from pathlib import Path
from typing import Any

from textual import work
from textual.app import App, ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.widgets import Footer, Header, Static
from textual.worker import get_current_worker

from .app_messages import ProbeChosen, RunFailed, RunFinished, WhatIf
from .budget_table import BudgetTable
from .probe_table import ProbeTable
from .trace_view import TraceView
from .whatif_bar import WhatIfBar

__all__ = ["ScenarioApp", "literal_value", "free_path"]


def literal_value(text: str) -> Any:
    """A what-if value: a TOML literal (number, boolean, array, quoted string) if it reads as
    one, otherwise the text itself (a quantity with units such as ``0.2 K/W``)."""
    try:
        return tomllib.loads(f"v = {text}")["v"]
    except tomllib.TOMLDecodeError:
        return text


def free_path(path: Path, suffix: str) -> Path:
    """``name.<suffix>`` beside ``path``, numbered so that no existing file is replaced."""
    stem = path.name.removesuffix(".toml")
    cand = path.with_name(f"{stem}.{suffix}")
    k = 2
    while cand.exists():
        cand = path.with_name(f"{stem}.{suffix.replace('.', f'-{k}.', 1)}")
        k += 1
    return cand


def _write_new(path: Path, text: str) -> None:
    """Write ``text`` to a new file through the project's atomic writer (no partial file)."""
    from pulsetherm.network.scenario import atomic_open

    with atomic_open(path) as fh:
        fh.write(text)


class ScenarioApp(App):
    """pulsetherm's terminal face for one scenario file."""

    CSS_PATH = "app.tcss"
    TITLE = "pulsetherm"
    BINDINGS = [
        Binding("r", "run", "Run"),
        Binding("u", "undo", "Undo what-if"),
        Binding("s", "save", "Save as new"),
        Binding("j", "report", "JSON report"),
        Binding("q", "quit", "Quit"),
    ]

    def __init__(self, path: str | Path) -> None:
        super().__init__()
        self.path = Path(path)
        self.base_text = self.path.read_text(encoding="utf-8")
        self.changes: list[tuple[str, str]] = []
        self.result: Any = None
        self.probe: str | None = None

    # -- layout ------------------------------------------------------------------------
    def compose(self) -> ComposeResult:
        yield Header()
        with Horizontal(id="body"):
            with Vertical(id="left"):
                yield ProbeTable(id="probes")
                yield TraceView(id="trace")
            with Vertical(id="right"):
                yield BudgetTable(id="budget")
        yield Static("", id="changes")
        yield WhatIfBar(id="whatif")
        yield Static("", id="status")
        yield Static("", id="cautions")
        yield Footer()

    def on_mount(self) -> None:
        self.sub_title = str(self.path)
        self.query_one(ProbeTable).border_title = "probes (periodic steady state)"
        self.query_one(BudgetTable).border_title = "where the heat is held up"
        self.query_one(ProbeTable).focus()
        self.action_run()

    # -- scenario text with the what-ifs applied -----------------------------------------
    def scenario_text(self) -> str:
        """TOML text of the scenario with every what-if applied, in order."""
        if not self.changes:
            return self.base_text
        from pulsetherm.network.scenario import dumps_toml, set_path

        data = tomllib.loads(self.base_text)
        for path, value in self.changes:
            set_path(data, path, literal_value(value))
        return dumps_toml(data)

    def _status(self, text: str, cls: str) -> None:
        status = self.query_one("#status", Static)
        status.set_classes(cls)
        status.update(text)

    # -- actions -----------------------------------------------------------------------
    def action_run(self) -> None:
        self._status("running …", "-busy")
        label = "; ".join(f"{p} = {v}" for p, v in self.changes) or "as written"
        self.solve(label)

    def action_undo(self) -> None:
        if self.changes:
            self.changes.pop()
            self._show_changes()
            self.action_run()

    def action_save(self) -> None:
        if not self.changes:
            self.notify("nothing changed: the scenario is as written", severity="warning")
            return
        target = free_path(self.path, "whatif.toml")
        try:
            _write_new(target, self.scenario_text())
        except (OSError, ValueError) as exc:
            self.notify(f"could not save: {exc}", severity="error")
            return
        self.notify(f"saved {target}")

    def action_report(self) -> None:
        if self.result is None:
            self.notify("no result yet", severity="warning")
            return
        target = free_path(self.path, "report.json")
        try:
            _write_new(target, json.dumps(self.result.to_dict(), indent=2) + "\n")
        except OSError as exc:
            self.notify(f"could not write the report: {exc}", severity="error")
            return
        self.notify(f"wrote {target}")

    # -- work --------------------------------------------------------------------------
    @work(thread=True, exclusive=True)
    def solve(self, label: str) -> None:
        """Build and solve in a worker thread; report back only through messages."""
        from pulsetherm.network.scenario import loads
        from pulsetherm.network.simulate import simulate

        worker = get_current_worker()
        try:
            scn = loads(self.scenario_text(), source=str(self.path))
            result = simulate(scn)
        except (ValueError, RuntimeError, ArithmeticError) as exc:  # input errors are ValueErrors
            if not worker.is_cancelled:
                self.post_message(RunFailed(str(exc)))
            return
        if not worker.is_cancelled:
            self.post_message(RunFinished(result, label))

    # -- messages ----------------------------------------------------------------------
    def on_run_finished(self, message: RunFinished) -> None:
        self.result = res = message.result
        self.query_one(ProbeTable).show(res)
        self.query_one(BudgetTable).show(res.budget)
        if self.probe not in res.probes:
            self.probe = next(iter(res.probes), None)
        if self.probe is not None:
            self.query_one(TraceView).show(res, self.probe)
        bad = res.violations()
        if bad:
            self._status(f"{message.label}: limit broken at {', '.join(bad)}", "-breach")
        else:
            self._status(f"{message.label}: every limit holds; warm-up {res.warmup_s:.3g} s",
                         "-ok")
        self.query_one("#cautions", Static).update(
            "Cautions: " + " ".join(res.cautions) if res.cautions else "")

    def on_run_failed(self, message: RunFailed) -> None:
        if self.changes:  # the last what-if broke the scenario: take it back
            path, value = self.changes.pop()
            self._show_changes()
            text = f"what-if {path} = {value} not applied: {message.text}"
        else:
            text = message.text
        self._status(text, "-failed")

    def on_what_if(self, message: WhatIf) -> None:
        self.changes.append((message.path, message.value))
        self._show_changes()
        self.query_one(WhatIfBar).value = ""
        self.query_one(ProbeTable).focus()
        self.action_run()

    def on_probe_chosen(self, message: ProbeChosen) -> None:
        self.probe = message.probe
        if self.result is not None and message.probe in self.result.probes:
            self.query_one(TraceView).show(self.result, message.probe)

    def _show_changes(self) -> None:
        text = "\n".join(f"what-if {i + 1}: {p} = {v}" for i, (p, v) in enumerate(self.changes))
        self.query_one("#changes", Static).update(text)


def run_app(path: str | Path) -> int:
    """Open the app on ``path``; returns the exit status."""
    ScenarioApp(path).run()
    return 0
