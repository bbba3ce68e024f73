"""Pieces of the workbench that need no screen: text plots, column fitting, the tree rows,
the material search, the network rows, stopping a worker thread."""
from __future__ import annotations

import threading
import time

import numpy as np

from pulsetherm.tui.cancel import SolveCancelled, Stopper
from pulsetherm.tui.fit import ellipsize, fit_columns
from pulsetherm.tui.material_picker import material_choices, search_materials
from pulsetherm.tui.probe_table import COLUMNS, DROP_ORDER
from pulsetherm.tui.scenario_tree import tree_items
from pulsetherm.tui.session import Session
from pulsetherm.tui.textplot import Series, draw, nice_ticks
from pulsetherm.tui.trace_view import resample_max


def test_plot_fits_its_box_and_labels_both_axes():
    t = np.linspace(0.0, 2e-3, 400)
    y = 40 + 30 * np.exp(-((t - 3e-4) / 1e-4) ** 2)
    lines = [x.plain for x in draw([Series("junction", t, y)], 60, 14)]
    assert len(lines) == 14 and all(len(x) <= 60 for x in lines)
    assert lines[0].startswith("°C vs time, ms") and "junction" in lines[0]
    assert "┤" in lines[1] and "└" in lines[-2]
    assert lines[-1].split()[0] == "0"  # time ticks under the axis


def test_plot_keeps_a_one_sample_spike_and_draws_a_log_axis():
    t = np.linspace(0.0, 1.0, 20001)
    y = np.zeros_like(t)
    y[7000] = 10.0
    lines = [x.plain for x in draw([Series("s", t, y)], 40, 8)]
    assert "10" in lines[1]  # the top tick is the spike's height
    assert any(ch not in " ⠀" for ch in lines[1].split("┤")[1])  # and the spike reaches it
    tl = np.logspace(-5, 1, 200)
    log = [x.plain for x in draw([Series("w", tl, 1 - np.exp(-tl))], 70, 8, xlog=True,
                                 x_title="time from a cold start")]
    assert "log scale" in log[0] and "1 ms" in log[-1] and "10 s" in log[-1]


def test_nice_ticks_are_round():
    assert nice_ticks(0.0, 2e-3, 4) == [0.0, 5e-4, 1e-3, 1.5e-3, 2e-3]


def test_columns_drop_in_order_and_margin_goes_last():
    widths = [20, 7, 7, 6, 8, 8, 9, 8]
    keep, name_w = fit_columns(widths, DROP_ORDER, 200)
    assert keep == list(range(8)) and name_w == 20
    keep, _ = fit_columns(widths, DROP_ORDER, 40)
    assert COLUMNS.index("margin K") in keep and COLUMNS.index("min °C") not in keep
    keep, name_w = fit_columns(widths, DROP_ORDER, 10)
    assert keep == [0, 7] and name_w >= 6
    assert ellipsize("final.junction", 8) == "final.j…" and ellipsize("pa", 8) == "pa"


def test_tree_lists_every_part_of_the_demo():
    rows = tree_items(Session.demo().data())
    paths = [r[2] for r in rows if r[2] is not None]
    assert "board.layers[1].vias" in paths and "mount.sink" in paths
    assert "devices[1].stack[1]" in paths and "waveforms.radar" in paths
    labels = [r[1] for r in rows]
    assert "sink (fixed)" in labels and "driver" in labels


def test_material_search_matches_every_word():
    found = [n for n, _ in search_materials(material_choices(), "ceramic laminate")]
    assert "hydrocarbon-ceramic" in found and "ptfe-ceramic" in found
    assert "copper" not in found


def test_resample_keeps_the_peak():
    t = np.linspace(0.0, 1e-3, 5001)
    y = np.where((t >= 0.40e-3) & (t <= 0.4002e-3), 99.0, 1.0)
    out = resample_max(t, y, 40)
    assert out.max() == 99.0 and out.size == 40 and np.all(np.isfinite(out))


def test_a_stopped_thread_stops_at_its_next_python_step():
    stopper = Stopper()
    state = {}

    def work():
        try:
            with stopper.running("g"):
                n = 0
                while True:  # a pure-Python loop that would never end by itself
                    n += 1
        except SolveCancelled:
            state["stopped"] = True

    th = threading.Thread(target=work, daemon=True)
    th.start()
    while not stopper.busy("g"):
        time.sleep(0.001)
    assert stopper.stop("g")
    th.join(10)
    assert not th.is_alive() and state == {"stopped": True}
    assert not stopper.stop("g")  # nothing left to stop


def test_network_rows_account_for_every_capacity():
    from pulsetherm.network.simulate import build
    from pulsetherm.tui.network_view import network_rows

    model = build(Session.demo().scenario())
    g = model.network.graph
    rows = network_rows(model)
    heads = [r for r in rows if r[0] == 0 and "nodes)" in r[1]]
    counted = sum(int(r[1].rsplit("(", 1)[1].split()[0]) for r in heads)
    inner = [n for n in model.network.nodes if not g.nodes[n].get("boundary")]
    assert counted == len(inner) == sum(1 for r in rows if r[0] == 1)
    assert any("fixed temperature" in r[1] for r in rows)
