"""The terminal workbench: edit a scenario and watch its response.

Left: the scenario as a tree and a form for the chosen item.  Right: result tabs (probe
table with one period at the chosen probes, warm-up from a cold start with a play mode,
where the heat is held up, the heat waveforms, pulsed Zth, the network the builder made).
Below: the status line and the what-if line (``key.path = value``).

Every valid edit is kept in the editing :class:`~pulsetherm.tui.session.Session` (undo,
redo, save with comments kept) and recomputed in a worker thread; results come back as
messages.  A newer edit, Esc, or quitting stops the running solve
(:mod:`pulsetherm.tui.cancel`).  Letters act as commands only while no text field has the
focus; saving, undo, redo, reload and quit are control keys.
"""
from __future__ import annotations

import time
import tomllib
from collections import OrderedDict
from pathlib import Path
from typing import Any, Iterable

import numpy as np
from textual import work
from textual.app import App, ComposeResult, SystemCommand
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.screen import Screen
from textual.widgets import Footer, Header, Input, Static, TabbedContent, TabPane
from textual.worker import get_current_worker

from .app_messages import (ExtrasFinished, FieldEdited, ItemChosen, KindSwitched,
                           MaterialWanted, ProbeChosen, RunFailed, RunFinished,
                           StructureEdit, WhatIf)
from .budget_table import BudgetTable
from .cancel import SolveCancelled, Stopper
from .confirm_screen import ConfirmScreen
from .item_form import ItemForm
from .network_view import NetworkView
from .probe_table import ProbeTable
from .scenario_tree import ScenarioTree
from .session import Session, free_path
from .trace_view import TraceView
from .warmup_view import WarmupView
from .waveform_view import WaveformView
from .whatif_bar import WhatIfBar
from .zth_view import ZthView

__all__ = ["ScenarioApp", "literal_value", "free_path", "run_app"]

#: Result tabs in order (key 1..6).
TABS = ("t-probes", "t-warmup", "t-budget", "t-wave", "t-zth", "t-net")
#: Actions bound to plain keys: refused while a text field has the focus.
_LETTER_ACTIONS = {"tab", "play", "speed", "whatif", "study", "help"}


def literal_value(text: str) -> Any:
    """A what-if value: a TOML literal (number, boolean, array, quoted string) if it reads as
    one, otherwise the text itself (a quantity with units such as ``0.2 K/W``)."""
    try:
        return tomllib.loads(f"v = {text}")["v"]
    except tomllib.TOMLDecodeError:
        return text


def _one_line(exc: BaseException) -> str:
    return " ".join(str(exc).split())


class ScenarioApp(App):
    """pulsetherm's terminal workbench for one scenario (a file, or the built-in demo)."""

    CSS_PATH = "app.tcss"
    TITLE = "pulsetherm workbench"
    BINDINGS = [
        Binding("ctrl+s", "save", "save", priority=True),
        Binding("ctrl+z", "undo", "undo", priority=True),
        Binding("ctrl+y", "redo", "redo", priority=True, show=False),
        Binding("ctrl+r", "reload", "reload", priority=True, show=False),
        Binding("ctrl+q", "quit", "quit", priority=True),
        Binding("escape", "escape", "cancel solve", show=False),
        Binding("f1,question_mark", "help", "help"),
        Binding("1", "tab(0)", show=False), Binding("2", "tab(1)", show=False),
        Binding("3", "tab(2)", show=False), Binding("4", "tab(3)", show=False),
        Binding("5", "tab(4)", show=False), Binding("6", "tab(5)", show=False),
        Binding("p", "play", "play", show=False),
        Binding("plus", "speed(1)", show=False), Binding("minus", "speed(-1)", show=False),
        Binding("w", "whatif", "what-if", show=False),
        Binding("z", "study", "size/sweep", show=False),
    ]

    def __init__(self, path: str | Path | None = None, *, save_dir: str | Path | None = None
                 ) -> None:
        super().__init__()
        self.session = Session.open(path) if path is not None else Session.demo(save_dir)
        self.path = self.session.path
        self.result: Any = None
        self.base_result: Any = None
        self.probe: str | None = None
        self.seq = 0
        self.solve_count = 0
        self.stopper = Stopper()
        self.cache: OrderedDict[str, Any] = OrderedDict()
        self._pending: dict[int, tuple[str, str, bool, str | None]] = {}
        self._t_start = 0.0
        self.last_latency: float | None = None  # request to result shown, s
        self.last_solve_s = 0.0  # of which in the worker (load and simulate), s
        self._result_seq = -1
        self.done_seq = -1  # the last request answered (result or failure)
        self._extras_seq = -1
        self._stale: set[str] = set()
        self.item: tuple[str | None, str | None, int | None] = (None, None, None)

    @property
    def changes(self) -> list[str]:
        return list(self.session.changes)

    # -- layout ------------------------------------------------------------------------
    def compose(self) -> ComposeResult:
        yield Header()
        with Horizontal(id="body"):
            with Vertical(id="edit"):
                yield ScenarioTree(id="tree")
                yield ItemForm(id="form")
            with TabbedContent(id="results"):
                with TabPane("probes", id="t-probes"):
                    yield ProbeTable(id="probes")
                    yield TraceView(id="trace")
                    yield Static("", id="cautions")
                with TabPane("warm-up", id="t-warmup"):
                    yield WarmupView(id="warmup")
                with TabPane("held up", id="t-budget"):
                    yield BudgetTable(id="budget")
                with TabPane("waves", id="t-wave"):
                    yield WaveformView(id="wave")
                with TabPane("Zth", id="t-zth"):
                    yield ZthView(id="zth")
                with TabPane("net", id="t-net"):
                    yield NetworkView(id="network")
        yield Static("", id="status")
        yield WhatIfBar(id="whatif")
        yield Footer()

    def on_mount(self) -> None:
        self.sub_title = self.session.source
        self.query_one("#tree").border_title = "scenario"
        self.query_one("#form").border_title = "item"
        self.query_one(ProbeTable).border_title = "probes (periodic steady state)"
        self._rebuild_tree(select="")
        self.query_one(ScenarioTree).focus()
        self.set_interval(0.2, self._tick)
        self._fit_class()
        self.request_run("as written")

    def on_resize(self) -> None:
        self._fit_class()

    def _fit_class(self) -> None:
        self.screen.set_class(self.size.width < 120, "-narrow")
        self.screen.set_class(self.size.height < 32, "-short")

    # -- helpers -------------------------------------------------------------------------
    def _status(self, text: str, cls: str) -> None:
        status = self.query_one("#status", Static)
        status.set_classes(cls)
        status.update(text)

    def _rebuild_tree(self, select: str | None = None) -> None:
        path = self.item[0] if select is None else select
        self.query_one(ScenarioTree).show(self.session.data(), select=path)

    def _typing(self) -> bool:
        return isinstance(self.focused, Input)

    def check_action(self, action: str, parameters: tuple[object, ...]) -> bool | None:
        """Plain-key commands never act while a text field has the focus."""
        if action in _LETTER_ACTIONS and self._typing():
            return False
        return True

    # -- running -------------------------------------------------------------------------
    def request_run(self, label: str, from_edit: bool = False, path: str | None = None) -> None:
        """Recompute the current scenario (the cached result when the text was run)."""
        text = self.session.text()
        self.seq += 1
        self.stopper.stop("solve")
        self._t_start = time.perf_counter()
        if text in self.cache:
            self.cache.move_to_end(text)
            res = self.cache[text][0]
            self._pending[self.seq] = (text, label, from_edit, path)
            self.post_message(RunFinished(res, label, self.seq, 0.0))
            return
        self.solve_count += 1
        self._pending[self.seq] = (text, label, from_edit, path)
        self._status(f"{label}: solving …", "-busy")
        scn = self.session.validated[1] if self.session.validated[0] == text else None
        self.solve(text, self.seq, label, scn)

    @work(thread=True, exclusive=True, group="solve", exit_on_error=False)
    def solve(self, text: str, seq: int, label: str, scn: Any = None) -> None:
        """Build and solve in a worker thread; report back only through messages."""
        from pulsetherm.network.scenario import loads
        from pulsetherm.network.simulate import simulate

        worker = get_current_worker()
        t0 = time.perf_counter()
        try:
            with self.stopper.running("solve"):
                try:
                    if scn is None:  # an edit gives its validated scenario along
                        scn = loads(text, source=self.session.source)
                    result = simulate(scn)
                except (ValueError, RuntimeError, ArithmeticError) as exc:
                    if not worker.is_cancelled:
                        self.post_message(RunFailed(_one_line(exc), seq,
                                                    getattr(exc, "path", None)))
                    return
                if not worker.is_cancelled:
                    self.post_message(RunFinished(result, label, seq,
                                                  time.perf_counter() - t0))
        except SolveCancelled:
            return

    def request_extras(self) -> None:
        """Warm-up and Zth of the shown result, computed only when their tab is shown."""
        res = self.result
        if res is None or self._extras_seq == self._result_seq:
            return
        if self.query_one(TabbedContent).active not in ("t-warmup", "t-zth"):
            return
        self._extras_seq = self._result_seq
        self.stopper.stop("extras")
        self.query_one(WarmupView).waiting(0.0)
        self.extras(res, self._result_seq, self.probe)

    @work(thread=True, exclusive=True, group="extras", exit_on_error=False)
    def extras(self, result: Any, seq: int, probe: str | None) -> None:
        from pulsetherm.network.impedance import thermal_impedance

        worker = get_current_worker()
        try:
            with self.stopper.running("extras"):
                try:
                    names = list(result.probes)
                    zprobe = probe if probe in names else (names[0] if names else None)
                    zth = thermal_impedance(result.model, zprobe) if zprobe else None
                    warm = result.warmup_series()
                except (ValueError, RuntimeError, ArithmeticError):
                    warm, zth, zprobe = None, None, None
                if not worker.is_cancelled:
                    self.post_message(ExtrasFinished(seq, warm, zth, zprobe))
        except SolveCancelled:
            return

    def on_tabbed_content_tab_activated(self, event: TabbedContent.TabActivated) -> None:
        self._show_tab(event.pane.id)
        self.request_extras()

    def _show_tab(self, tab: str | None) -> None:
        """Fill a result tab that is out of date (hidden tabs wait until shown)."""
        res = self.result
        if res is None or tab not in self._stale:
            return
        self._stale.discard(tab)
        if tab == "t-budget":
            self.query_one(BudgetTable).show(res.budget)
        elif tab == "t-net":
            self.query_one(NetworkView).show(res.model)
        elif tab == "t-wave":
            try:
                from pulsetherm.network.simulate import _period

                self.query_one(WaveformView).show(res.model, _period(res.model))
            except (ValueError, AttributeError):
                pass

    def _tick(self) -> None:
        if self.stopper.busy("extras"):
            self.query_one(WarmupView).waiting(time.perf_counter() - self._t_start)
        if not self.stopper.busy("solve"):
            return
        el = time.perf_counter() - self._t_start
        if el > 0.5:
            self._status(f"solving … {el:.1f} s  (Esc cancels; the last result stays)",
                         "-busy")

    def cancel_solve(self) -> bool:
        """Stop the running solve (if any); the last result stays on screen."""
        stopped = self.stopper.stop("solve")
        self.workers.cancel_group(self, "solve")
        if self.stopper.stop("extras"):
            self._extras_seq = -1
            self.query_one(WarmupView).note = "warm-up stopped (show the tab again to restart)"
            stopped = True
        if stopped:
            self._status("solve cancelled; the results shown are of the last finished run",
                         "-failed")
        return stopped

    # -- results -----------------------------------------------------------------------
    def on_run_finished(self, message: RunFinished) -> None:
        info = self._pending.get(message.seq)
        if message.seq != self.seq or info is None:
            return
        text, label, _, _ = info
        self.last_latency = time.perf_counter() - self._t_start
        self._result_seq = self.done_seq = message.seq
        self.last_solve_s = message.elapsed
        res = message.result
        self.result = res
        if text not in self.cache:
            self.cache[text] = (res, None)
            while len(self.cache) > 32:
                self.cache.popitem(last=False)
        if text == self.session.saved_text or self.base_result is None:
            self.base_result = res
        if self.probe not in res.probes:
            self.probe = next(iter(res.probes), None)
        extras = self.cache.get(text, (None, None))[1]
        if extras is not None:
            self.post_message(ExtrasFinished(message.seq, *extras))
        else:
            self.call_after_refresh(self.request_extras)
        self.query_one(ProbeTable).show(res, self.base_result)
        self._show_trace()
        self._stale = {"t-budget", "t-wave", "t-net"}
        self._show_tab(self.query_one(TabbedContent).active)
        bad = res.violations()
        took = f" ({message.elapsed:.2f} s)" if message.elapsed > 0.5 else ""
        if bad:
            self._status(f"{label}: LIMIT BROKEN at {', '.join(bad)}{took}", "-breach")
        else:
            self._status(f"{label}: every limit holds; warm-up {res.warmup_s:.3g} s{took}",
                         "-ok")
        self.query_one("#cautions", Static).update(
            "Caution: " + " ".join(res.cautions) if res.cautions else "")

    def _show_trace(self) -> None:
        res = self.result
        if res is None:
            return
        names = [self.probe] + [n for n in res.probes if n != self.probe]
        names = [n for n in names if n is not None][:3]
        self.query_one(TraceView).show(res, names, self.base_result)

    def on_extras_finished(self, message: ExtrasFinished) -> None:
        info = self._pending.get(message.seq)
        if info is not None and info[0] in self.cache and message.warmup is not None:
            res = self.cache[info[0]][0]
            self.cache[info[0]] = (res, (message.warmup, message.zth, message.zth_probe))
        if message.seq != self._result_seq or self.result is None:
            return
        self._extras_seq = message.seq
        res = self.result
        if message.warmup is not None:
            names = [self.probe] + [n for n in res.probes if n != self.probe]
            t = np.asarray(res.response.t)
            self.query_one(WarmupView).show(message.warmup, res.model.probes,
                                            [n for n in names if n][:3], float(t[-1] - t[0]))
        if message.zth is not None:
            self.query_one(ZthView).show(message.zth, message.zth_probe)

    def on_run_failed(self, message: RunFailed) -> None:
        info = self._pending.get(message.seq)
        if message.seq != self.seq or info is None:
            return
        _, label, from_edit, path = info
        self.done_seq = message.seq
        text = message.text
        if from_edit:  # the last edit made a scenario that cannot be built: take it back
            self.session.undo()
            self.session.redo_stack.clear()
            self._after_change(structure=True)
            text = f"{label} not applied: {message.text}"
            form = self.query_one(ItemForm)
            for p in (message.path, path):
                if p and form.show_error(p, message.text):
                    break
            if self.result is not None:
                self.seq += 1  # the shown result is of the restored scenario
                self.done_seq = self.seq
        self._status(text, "-failed")

    def on_probe_chosen(self, message: ProbeChosen) -> None:
        changed = message.probe != self.probe
        self.probe = message.probe
        self._show_trace()
        if changed and self.query_one(TabbedContent).active == "t-zth":
            self._extras_seq = -1  # the Zth tab follows the chosen probe
            self.request_extras()

    # -- editing -----------------------------------------------------------------------
    def on_item_chosen(self, message: ItemChosen) -> None:
        self.item = (message.path, message.array, message.index)
        self.query_one(ItemForm).show(self.session.data(), message.path, message.array,
                                      message.index)

    def _after_change(self, structure: bool = False, select: str | None = None) -> None:
        data = self.session.data()
        form = self.query_one(ItemForm)
        if structure:
            self._rebuild_tree(select)
            if select is not None:
                self.item = (select, *self._array_of(select))
            path, array, index = self.item
            try:
                form.show(data, path, array, index)
            except KeyError:
                form.show(data, None)
        else:
            form.update_values(data)
        self.sub_title = self.session.source + (" (changed)" if self.session.dirty else "")

    @staticmethod
    def _array_of(path: str) -> tuple[str | None, int | None]:
        if path.endswith("]"):
            head, _, idx = path[:-1].rpartition("[")
            if idx.isdigit():
                return head, int(idx)
        return None, None

    def apply_value(self, path: str, value: Any, from_line: bool = False) -> bool:
        """Keep one value (validated as a whole scenario) and recompute; False (and a
        message at the field or on the status line) when it is refused."""
        from pulsetherm.network.scenario import ScenarioError

        form = self.query_one(ItemForm)
        try:
            if value is None:
                self.session.delete_key(path)
            else:
                self.session.set_value(path, value)
        except ScenarioError as exc:
            kept = self._kept(path)
            msg = _one_line(exc) + (f" (kept {kept})" if kept else "")
            if not form.show_error(path, msg) or from_line:
                self._status(msg, "-failed")  # the what-if line: the message where one types
            else:
                self._status(f"{path}: not applied (see the field)", "-failed")
            return False
        form.clear_error(path)
        key = path.rsplit(".", 1)[-1]
        self._after_change(structure=key in ("name", "material", "kind"))
        self.request_run(self.session.changes[-1] if self.session.changes else path,
                         from_edit=True, path=path)
        return True

    def _kept(self, path: str) -> str:
        try:
            v = self.session.get(path)
        except (ValueError, KeyError):
            return ""
        return "" if isinstance(v, dict) else str(v)

    def on_field_edited(self, message: FieldEdited) -> None:
        from pulsetherm.network.scenario import ScenarioError

        from .fields import read_field

        form = self.query_one(ItemForm)
        spec = form.spec(message.path)
        if spec is None:
            return
        try:
            value = read_field(spec, message.text)
        except ScenarioError as exc:
            kept = self._kept(message.path)
            form.show_error(message.path, _one_line(exc) + (f" (kept {kept})" if kept else ""))
            self._status(f"{message.path}: not applied (see the field)", "-failed")
            return
        self.apply_value(message.path, value)

    def on_what_if(self, message: WhatIf) -> None:
        self.apply_value(message.path, literal_value(message.value), from_line=True)

    def on_kind_switched(self, message: KindSwitched) -> None:
        from pulsetherm.network.scenario import ScenarioError

        from .fields import kind_defaults, section_class

        cls = section_class(message.path).__name__
        old = self.session.get(message.path)
        new = kind_defaults(cls, old, message.kind)
        try:
            self.session.replace_table(message.path, new,
                                       f"{message.path}.kind = {message.kind}")
        except ScenarioError as exc:
            self._status(f"kind {message.kind} not applied: {_one_line(exc)}", "-failed")
            return
        self._after_change(structure=True, select=message.path)
        self.request_run(self.session.changes[-1], from_edit=True, path=message.path)

    def on_structure_edit(self, message: StructureEdit) -> None:
        from pulsetherm.network.scenario import ScenarioError

        s = self.session
        arr, i = message.array, message.index
        try:
            if message.op == "add":
                s.insert_item(arr, i + 1, {"name": self._new_layer_name(arr),
                                           "material": "copper", "thickness": "100 um"},
                              f"{arr}[{i + 1}] added")
                select = f"{arr}[{i + 1}]"
            elif message.op == "remove":
                s.remove_item(arr, i)
                n = len(s.get(arr) or [])
                select = f"{arr}[{min(i, n - 1)}]" if n else None
            elif message.op in ("up", "down"):
                step = -1 if message.op == "up" else 1
                s.move_item(arr, i, step)
                j = min(max(i + step, 0), len(s.get(arr)) - 1)
                select = f"{arr}[{j}]"
            else:
                s.duplicate_item(arr, i)
                select = f"{arr}[{i + 1}]"
        except (ScenarioError, IndexError) as exc:
            self._status(f"{message.op} not applied: {_one_line(exc)}", "-failed")
            return
        self._after_change(structure=True, select=select)
        self.request_run(s.changes[-1], from_edit=True)

    def _new_layer_name(self, arr: str) -> str:
        from .session import unique_name

        taken = {str(x.get("name")) for x in self.session.get(arr) or []}
        return "new-layer" if "new-layer" not in taken else unique_name("new-layer", taken)

    def on_material_wanted(self, message: MaterialWanted) -> None:
        from .material_picker import MaterialPicker

        def chosen(name: str | None) -> None:
            if name:
                self.apply_value(message.path, name)
        current = self._kept(message.path) or None
        self.push_screen(MaterialPicker(current), chosen)

    # -- actions -----------------------------------------------------------------------
    def action_undo(self) -> None:
        label = self.session.undo()
        if label is None:
            self.notify("nothing to undo")
            return
        self._after_change(structure=True)
        self.request_run(f"undone: {label}")

    def action_redo(self) -> None:
        label = self.session.redo()
        if label is None:
            self.notify("nothing to redo")
            return
        self._after_change(structure=True)
        self.request_run(f"redone: {label}")

    def action_report(self) -> None:
        """Write the JSON report of the shown result beside the scenario (a new file)."""
        import json

        from pulsetherm.network.scenario import atomic_open

        if self.result is None:
            self.notify("no result yet", severity="warning")
            return
        base = self.session.path or self.session.save_dir / "demo.toml"
        target = free_path(base, "report.json")
        try:
            with atomic_open(target) as fh:
                fh.write(json.dumps(self.result.to_dict(), indent=2) + "\n")
        except OSError as exc:
            self._status(f"report not written: {_one_line(exc)}", "-failed")
            return
        self._status(f"wrote {target}", "-ok")

    def action_save_new(self) -> None:
        self.action_save(new_file=True)

    def action_save(self, new_file: bool = False) -> None:
        from pulsetherm.network.scenario import ScenarioError

        try:
            target = self.session.save(new_file=new_file or self.session.path is None)
        except (OSError, ScenarioError) as exc:
            self._status(f"not saved: {_one_line(exc)}; the file on disk is unchanged",
                         "-failed")
            self.notify(f"not saved: {_one_line(exc)}", severity="error")
            return
        self.path = target
        self.base_result = self.result
        self.sub_title = str(target)
        if self.result is not None:
            self.query_one(ProbeTable).show(self.result, self.base_result)
        self._status(f"saved {target}", "-ok")
        self.notify(f"saved {target}")

    def action_reload(self) -> None:
        def go(answer: str | None) -> None:
            if answer == "yes":
                self._do_reload()
        if self.session.dirty:
            self.push_screen(ConfirmScreen(
                f"Reload {self.session.source}?  {len(self.session.changes)} unsaved "
                "change(s) will be lost.", yes="reload", save=None, no="stay"), go)
        else:
            self._do_reload()

    def _do_reload(self) -> None:
        from pulsetherm.network.scenario import ScenarioError

        try:
            self.session.reload()
        except (OSError, ScenarioError) as exc:
            self._status(f"not reloaded: {_one_line(exc)}", "-failed")
            return
        self.base_result = None
        self._after_change(structure=True)
        self.request_run("reloaded")

    async def action_quit(self) -> None:
        if not self.session.dirty:
            self._leave()
            return

        def answer(choice: str | None) -> None:
            if choice == "yes":
                self._leave()
            elif choice == "save":
                self.action_save()
                if not self.session.dirty:
                    self._leave()
        n = len(self.session.changes)
        self.push_screen(ConfirmScreen(f"{n} unsaved change(s) to {self.session.source}. "
                                       "Quit anyway?"), answer)

    def _leave(self) -> None:
        self.stopper.stop("solve")
        self.stopper.stop("extras")
        self.stopper.stop("study")
        self.workers.cancel_all()
        self.exit(0)

    def action_escape(self) -> None:
        if self.cancel_solve():
            return
        if self._typing():
            self.query_one(ScenarioTree).focus()

    def action_help(self) -> None:
        from .help_screen import HelpScreen, editable_paths

        self.push_screen(HelpScreen(editable_paths(self.session.data())))

    def action_tab(self, index: int) -> None:
        self.query_one(TabbedContent).active = TABS[index]

    def action_play(self) -> None:
        self.action_tab(1)
        self.query_one(WarmupView).play()

    def action_speed(self, step: int) -> None:
        self.query_one(WarmupView).faster(step)

    def action_whatif(self) -> None:
        self.query_one(WhatIfBar).focus()

    def action_study(self) -> None:
        from .study_screen import StudyScreen

        try:
            scn = self.session.scenario()
        except ValueError as exc:
            self._status(_one_line(exc), "-failed")
            return
        focused = self.focused
        path = ""
        form = self.query_one(ItemForm)
        if isinstance(focused, Input) and focused.id and focused.id.startswith("f-"):
            spec = form._index_of(focused.id)
            path = spec.path if spec else ""
        probes = list(self.result.probes) if self.result is not None else []
        self.push_screen(StudyScreen(scn, path, probes))

    def get_system_commands(self, screen: Screen) -> Iterable[SystemCommand]:
        yield from super().get_system_commands(screen)
        for title, help_, cb in (
                ("Save scenario", "write the scenario (comments kept)", self.action_save),
                ("Save as a new file", "a numbered file beside it, headed by the changes",
                 self.action_save_new),
                ("Write JSON report", "the shown result as JSON, a new file",
                 self.action_report),
                ("Undo edit", "step back one edit", self.action_undo),
                ("Redo edit", "step forward one edit", self.action_redo),
                ("Reload scenario", "read the file again", self.action_reload),
                ("Cancel solve", "stop the running solve", self.cancel_solve),
                ("Play warm-up", "run the warm-up with a time cursor", self.action_play),
                ("Size or sweep a value", "size or sweep one key", self.action_study),
                ("Keys and editable paths", "the help screen", self.action_help),
                ("Show probes", "probe table and one period", lambda: self.action_tab(0)),
                ("Show warm-up", "warm-up from a cold start", lambda: self.action_tab(1)),
                ("Show where the heat is held up", "layer budget",
                 lambda: self.action_tab(2)),
                ("Show waveforms", "heat of each source", lambda: self.action_tab(3)),
                ("Show pulsed Zth", "Zth against pulse width", lambda: self.action_tab(4)),
                ("Show network", "nodes, C, R, tau", lambda: self.action_tab(5))):
            yield SystemCommand(title, help_, cb)

    # -- programmatic helpers (tests, scripts) -------------------------------------------
    def choose(self, path: str) -> None:
        """Show the item at ``path`` in the form (as choosing it in the tree does)."""
        array, index = self._array_of(path)
        self.item = (path, array, index)
        self._rebuild_tree(select=path)
        self.query_one(ItemForm).show(self.session.data(), path, array, index)


def run_app(path: str | Path | None) -> int:
    """Open the workbench on ``path`` (the built-in demo when None); the exit status."""
    ScenarioApp(path).run()
    return 0
