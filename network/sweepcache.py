"""Built networks reused across the rows of a sweep whose axes change only waveforms.

A sweep row sets some values on one base scenario and solves it.  When a row changes only
power waveforms (``waveforms.*``, or a device's, line's or heater's ``power``), the network
is the same as that of an earlier row: same conductances, capacities and inputs, so the
same assembled system and the same eigendecomposition.  :class:`ModelCache` keeps the
built :class:`~pulsetherm.network.simulate.ScenarioModel` of recent rows keyed by

* the row's values on every *other* path (the base scenario is fixed per cache), and
* what the network build takes from the waveforms
  (:func:`pulsetherm.network.simulate.waveform_t_min`: the shortest waveform feature sets
  the thinnest sub-layer of the ladder),

and hands out a copy with the row's own waveforms bound to the same network.  The network
object (and so its cached system and modal solver) is shared, never changed: a solve only
reads it.  A cached row is therefore the same computation as a fresh build, bit for bit;
a row whose power is the previous solve's times one factor then takes that response scaled
(:mod:`pulsetherm.network.rescale`), equal to a fresh solve to rounding (about 1e-12 of the
rise), so such a row's last digits may depend on the row solved before it.
"""
from __future__ import annotations

import re
import threading
from collections import OrderedDict
from typing import Any

__all__ = ["ModelCache", "is_waveform_path"]

_WAVE_PATH = re.compile(r"^(?:waveforms(?:\.|$)|(?:devices|lines|heaters)\[\d+\]\.power(?:[.\[]|$))")


def is_waveform_path(path: str) -> bool:
    """True for a scenario path that only changes a power waveform: ``waveforms.radar.peak``,
    ``devices[0].power``, ``lines[1].power.duty``, ..."""
    return bool(_WAVE_PATH.match(path.strip()))


class ModelCache:
    """Recently built models of one base scenario (at most ``size``), keyed by the row values
    that shape the network and the waveforms' shortest feature."""

    def __init__(self, size: int = 8) -> None:
        self.size = size
        self._models: OrderedDict[Any, Any] = OrderedDict()
        self._lock = threading.Lock()  # Dask runs rows in threads of one process
        self.hits = 0
        self.misses = 0

    def model(self, scn, values: dict[str, Any]):
        """The built model of ``scn`` (the base scenario with ``values`` applied)."""
        from .simulate import _waveforms, build, waveform_t_min

        shape = tuple(sorted((p, repr(v)) for p, v in values.items()
                             if not is_waveform_path(p)))
        if len(shape) == len(values):  # no waveform axis: nothing to reuse
            return build(scn)
        waves = _waveforms(scn)
        key = (shape, waveform_t_min(scn, waves))
        with self._lock:
            tpl = self._models.get(key)
        if tpl is not None:
            model = _rebind(tpl, scn, waves)
            if model is not None:
                with self._lock:
                    if key in self._models:
                        self._models.move_to_end(key)
                    self.hits += 1
                return model
        model = build(scn)
        with self._lock:
            self.misses += 1
            self._models[key] = _snapshot(model, model.scenario, model.waveforms)
            while len(self._models) > self.size:
                self._models.popitem(last=False)
        return model


def _snapshot(model, scn, waveforms):
    """A copy of ``model`` for ``scn`` and ``waveforms`` sharing the network (and the stack
    build), with its own tables: every dict and list field is copied (a solve fills in line
    hot spots), whatever fields the model has."""
    import dataclasses

    fields = {}
    for f in dataclasses.fields(model):
        v = getattr(model, f.name)
        if isinstance(v, dict):
            v = {k: list(x) if isinstance(x, list) else x for k, x in v.items()}
        elif isinstance(v, list):
            v = list(v)
        fields[f.name] = v
    fields.update(scenario=scn, waveforms=dict(waveforms))
    return dataclasses.replace(model, **fields)


def _rebind(tpl, scn, waves: dict[str, Any]):
    """The cached model with the heat-source waveforms ``waves`` (source name -> waveform)
    bound to its inputs as :func:`pulsetherm.network.simulate.build` binds them (device
    inputs renamed by the stack build, a line's RF waveform turned into its heat, line
    heaters onto their inputs).  None when the inputs do not come out the same."""
    built = tpl.built
    bound = ({built.inputs.get(k, k): w for k, w in waves.items()} if built is not None
             else dict(waves))
    try:
        for name, bl in tpl.lines.items():
            rf = bound.pop(name)
            if bl.rf_input is not None:
                bound[bl.rf_input] = bl.heat_waveform(rf)
            for h, inp in bl.heater_inputs.items():
                bound[inp] = bound.pop(h)
    except KeyError:
        return None
    if bound.keys() != tpl.waveforms.keys():
        return None
    return _snapshot(tpl, scn, bound)
