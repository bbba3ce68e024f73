"""Size or sweep one value of the scenario from inside the app.

Size: the largest (or smallest) value in a range that keeps every limit with a margin
(:func:`pulsetherm.network.sizing.size`).  Sweep: the probe peaks over evenly spaced
values (:func:`pulsetherm.network.sweep.parse_axis` and ``run_row``), one row at a time
with progress.  Both run in a worker thread and stop promptly on Esc or "stop".
"""
from __future__ import annotations

import time
from typing import Any

from textual import work
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.screen import ModalScreen
from textual.widgets import Button, Input, Label, ProgressBar, Static
from textual.worker import get_current_worker

from .app_messages import StudyFinished, StudyProgress
from .cancel import SolveCancelled, Stopper

__all__ = ["StudyScreen", "sweep_table"]


def sweep_table(path: str, rows: list[dict[str, Any]], probes: list[str]) -> str:
    """Plain text table of sweep rows: the value, then each probe's peak, then ok."""
    head = [path] + [f"{p} peak °C" for p in probes] + ["limits"]
    lines = ["  ".join(head)]
    for r in rows:
        if r.get("error"):
            lines.append(f"{r[path]}  error: {r['error']}")
            continue
        cells = [str(r[path])] + [f"{r.get(f'{p}.peak_C', float('nan')):.2f}" for p in probes]
        cells.append("hold" if r.get("ok") else "BROKEN")
        lines.append("  ".join(cells))
    return "\n".join(lines)


class StudyScreen(ModalScreen[None]):
    BINDINGS = [Binding("escape", "stop_or_close", "stop / close")]

    def __init__(self, scenario: Any, path: str = "", probes: list[str] | None = None) -> None:
        super().__init__()
        self.scenario = scenario
        self.start_path = path
        self.probes = probes or []
        self.stopper = Stopper()
        self.t0 = 0.0
        self._tick = None

    def compose(self) -> ComposeResult:
        with Vertical(id="study-box"):
            yield Static("Size or sweep one value (the scenario in the app is not changed)")
            with Horizontal(classes="form-row"):
                yield Label("key path", classes="form-key")
                yield Input(self.start_path, id="s-path", compact=True,
                            placeholder="e.g. mount.interface[0].thickness")
            with Horizontal(classes="form-row"):
                yield Label("range", classes="form-key")
                yield Input("", id="s-range", compact=True, placeholder="LO..HI unit, e.g. 20..200 um")
            with Horizontal(classes="form-row"):
                yield Label("steps", classes="form-key")
                yield Input("6", id="s-steps", compact=True, placeholder="sweep points")
            with Horizontal(classes="form-row"):
                yield Label("margin", classes="form-key")
                yield Input("0 K", id="s-margin", compact=True, placeholder="kept below limits")
            with Horizontal(id="study-buttons"):
                yield Button("size", id="s-size", compact=True)
                yield Button("sweep", id="s-sweep", compact=True)
                yield Button("stop", id="s-stop", compact=True, variant="error")
                yield Button("close", id="s-close", compact=True)
            yield ProgressBar(id="s-progress", show_eta=False)
            yield Static("", id="s-out")

    def on_mount(self) -> None:
        self.query_one("#s-range" if self.start_path else "#s-path", Input).focus()

    def _v(self, wid: str) -> str:
        return self.query_one(f"#{wid}", Input).value.strip()

    def on_button_pressed(self, event: Button.Pressed) -> None:
        event.stop()
        bid = event.button.id
        if bid == "s-close":
            self.action_stop_or_close()
        elif bid == "s-stop":
            self.stop()
        elif bid in ("s-size", "s-sweep"):
            self.stop()
            self.t0 = time.perf_counter()
            self._tick = self.set_interval(0.2, self._elapsed)
            self.query_one("#s-out", Static).update("running…")
            self.run_study(bid[2:], self._v("s-path"), self._v("s-range"), self._v("s-steps"),
                           self._v("s-margin"))

    def _elapsed(self) -> None:
        if self.stopper.busy("study"):
            self.query_one("#s-out", Static).update(
                f"running… {time.perf_counter() - self.t0:.1f} s (Esc or stop to cancel)")

    def stop(self) -> bool:
        stopped = self.stopper.stop("study")
        self.workers.cancel_group(self, "study")
        if stopped:
            self.query_one("#s-out", Static).update("stopped")
        return stopped

    def action_stop_or_close(self) -> None:
        if not self.stop():
            self.dismiss(None)

    @work(thread=True, exclusive=True, group="study", exit_on_error=False)
    def run_study(self, what: str, path: str, rng: str, steps: str, margin: str) -> None:
        from pulsetherm.network.scenario import parse_difference

        worker = get_current_worker()
        try:
            with self.stopper.running("study"):
                m = parse_difference(margin or "0 K", "margin")
                if what == "size":
                    from pulsetherm.network.sizing import size

                    res = size(self.scenario, path, rng, margin=m)
                    text = res.summary() + f"\nbinding {res.binding_probe}: peak " \
                        f"{res.binding_peak_C:.2f} °C, limit {res.binding_limit_C:.1f} °C"
                    if res.note:
                        text += "\n" + res.note
                else:
                    from pulsetherm.network.sweep import parse_axis, run_row

                    spec = f"{path}={rng}" + (f":{steps}" if steps and ":" not in rng else "")
                    p, values = parse_axis(self.scenario, spec)
                    rows = []
                    for k, v in enumerate(values):
                        if worker.is_cancelled:
                            return
                        rows.append(run_row(self.scenario, {p: v}))
                        self.post_message(StudyProgress(k + 1, len(values), str(v)))
                    text = sweep_table(p, rows, self.probes)
        except SolveCancelled:
            return
        except ValueError as exc:
            self.post_message(StudyFinished(" ".join(str(exc).split()), ok=False))
            return
        if not worker.is_cancelled:
            self.post_message(StudyFinished(text))

    def on_study_progress(self, message: StudyProgress) -> None:
        bar = self.query_one("#s-progress", ProgressBar)
        bar.update(total=message.total, progress=message.done)

    def on_study_finished(self, message: StudyFinished) -> None:
        if self._tick is not None:
            self._tick.stop()
        from pulsetherm.network.simulate import CAUTION

        tail = "" if not message.ok else f"\nCaution: {CAUTION}"
        self.query_one("#s-out", Static).update(message.text + tail)
