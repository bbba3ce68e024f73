"""``zth`` of a scenario: Zth(t), the pulsed family, Foster/Cauer and the structure function
at one probe, on a network built for the impedance's own time range.

* The ladder is graded for the earliest time asked (``t_from``, default 1 µs), not for the
  shortest feature of the scenario's waveform: a constant-power device would otherwise be
  built for its 1 s placeholder period and give a one-stage curve far off at 1 µs.  The
  curve and the pulsed family start at ``t_from``.
* Parts that do not exist for the impedance are skipped with a note instead of refusing the
  whole answer: a junction with no heat capacity (a device given by ``rth`` alone) has an
  instantaneous term that no Foster network holds; a transfer impedance (the r-z mode's
  junction is the centre node of a heated footprint, not the heated node itself) has
  negative Foster terms and no Cauer ladder or structure function.
"""
from __future__ import annotations

import csv
import difflib
import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

__all__ = ["ImpedanceResult", "thermal_impedance", "ZTH_FROM"]

#: Earliest time of ``zth`` by default, s.
ZTH_FROM = 1e-6


@dataclass(eq=False)
class ImpedanceResult:
    """Zth at one probe (its own part's input): curve, pulsed family, Foster, Cauer,
    structure function (each of the last three None when it does not exist; ``notes``
    then says why), from ``t_from`` s on."""

    probe: str
    input: str
    t: np.ndarray
    zth: np.ndarray
    pulsed: Any
    foster: Any
    cauer: Any
    structure: Any
    R_th: float = math.nan
    t_from: float = ZTH_FROM
    notes: list[str] = field(default_factory=list)
    cautions: list[str] = field(default_factory=list)

    def to_dict(self) -> dict[str, Any]:
        f, c = self.foster, self.cauer
        return {"probe": self.probe, "input": self.input, "R_th_K_per_W": self.R_th,
                "t_from_s": self.t_from,
                "foster": None if f is None else {"R": [float(x) for x in f.R],
                                                  "tau": [float(x) for x in f.tau]},
                "cauer": None if c is None else {"R": [float(x) for x in c.R],
                                                 "C": [float(x) for x in c.C]},
                "zth": {"t_s": [float(x) for x in self.t],
                        "K_per_W": [float(x) for x in self.zth]},
                "notes": list(self.notes), "cautions": list(self.cautions)}

    def to_csv(self, fh) -> None:
        """Zth against time, then the pulsed-Zth family (one column per duty)."""
        w = csv.writer(fh)
        w.writerow(["t_s", "zth_K_per_W"])
        for t, z in zip(self.t, self.zth):
            w.writerow([repr(float(t)), repr(float(z))])
        p = self.pulsed
        if p is not None:
            w.writerow([])
            duties = [float(d) for d in np.atleast_1d(p.duties)]
            w.writerow(["width_s"] + [f"duty_{d:g}" for d in duties])
            Z = np.asarray(p.K_per_W)
            if Z.shape[0] != len(duties):
                Z = Z.T
            for k, tp in enumerate(np.atleast_1d(p.widths)):
                w.writerow([repr(float(tp))] + [repr(float(Z[j, k])) for j in range(len(duties))])


def _check_from(t_from: float) -> float:
    from .scenario import ScenarioError

    t = float(t_from)
    if not (math.isfinite(t) and 1e-9 <= t <= 1e2):
        raise ScenarioError("--from", t_from, "an earliest time from 1 ns to 100 s")
    return t


def thermal_impedance(scn, probe: str, t_from: float = ZTH_FROM) -> ImpedanceResult:
    """Zth, pulsed Zth, Foster/Cauer and the structure function at ``probe``, from
    ``t_from`` s (module docstring).

    The input is the heat source the probe belongs to (a device's own input for its
    junction); otherwise the first input.  A :class:`ScenarioModel` passed in is used as
    built; when its ladder was graded for a later time than ``t_from`` a note says from
    which time the curve is resolved.
    """
    from .scenario import ScenarioError
    from .simulate import ScenarioModel, build, massless_caution, CAUTION

    t_from = _check_from(t_from)
    model = scn if isinstance(scn, ScenarioModel) else build(scn, t_min=t_from)
    if probe not in model.probes:
        close = difflib.get_close_matches(probe, list(model.probes), n=2)
        hint = f"did you mean {' or '.join(map(repr, close))}? " if close else ""
        raise ScenarioError("--probe", probe, f"a probe of the scenario; {hint}probes: "
                            f"{', '.join(model.probes)}")
    node = model.probes[probe]
    owner = probe.split(".")[0]
    net = model.network
    inputs = list(net.inputs)
    inp = owner if owner in inputs else inputs[0]
    notes: list[str] = []
    if not any(net.graph.nodes[n].get("capacity", 0.0) > 0 for n in net.nodes):
        raise ScenarioError("devices", None, "at least one heat capacity for a thermal "
                            "impedance: a device 'foster' network, a die 'stack', an rth "
                            "device's 'capacity', a sink 'capacity' or a 'mass' element "
                            "('rth' alone has none)")
    if model.t_min is not None and model.t_min > t_from * (1 + 1e-9):
        notes.append(f"the network resolves times from {model.t_min:.3g} s (graded for the "
                     f"waveform); earlier values are not resolved")
    curve = net.zth(node, input=inp, t=_times(net, node, inp, t_from))
    widths = np.geomspace(t_from, 100.0, max(2, int(round(10 * math.log10(100.0 / t_from)))
                                             + 1))
    pulsed = net.pulsed_zth(node, input=inp, widths=widths)
    fost = cauer = sf = None
    if curve.direct > 0:
        notes.append(f"{probe} has no heat capacity (an instantaneous {curve.direct:.4g} K/W: "
                     "a device given by 'rth' alone): no Foster network, Cauer ladder or "
                     "structure function; give 'foster', a die 'stack' or 'capacity' "
                     "for one")
    else:
        # the modal Foster network has a term per mode; terms below 1e-6 of the total are
        # folded into their neighbours (ΣR kept exactly, Zth changed by < 1e-6 of it)
        fost = net.foster(node, input=inp).pruned(rel_tol=1e-6)
        weights = dict(net.input_spec(inp).weights)
        if getattr(fost, "transfer", False) or set(weights) != {node}:
            notes.append(f"{probe} is not the one heated node (a transfer impedance: the "
                         "r-z mode heats a footprint of rings and reads its centre): a "
                         "Cauer ladder and a structure function exist only for a driving "
                         "point, so they are skipped; use fidelity = 'ladder' for them")
        else:
            from .structure import structure_function

            cauer = fost.to_cauer()
            sf = structure_function(cauer)
    cautions = [CAUTION] + massless_caution(model.scenario)
    return ImpedanceResult(probe, inp, np.asarray(curve.t), np.asarray(curve.K_per_W), pulsed,
                           fost, cauer, sf, R_th=float(curve.R_th), t_from=t_from,
                           notes=notes, cautions=cautions)


def _times(net, node: str, inp: str, t_from: float, per_decade: int = 20) -> np.ndarray:
    """Log-spaced times from ``t_from`` to 20 times the slowest time constant that carries
    a noticeable share of the impedance (at least 100·t_from)."""
    c = net.zth(node, input=inp, t=np.array([t_from]))
    r, tau = np.abs(np.asarray(c.R)), np.asarray(c.tau)
    big = r >= 1e-9 * r.sum() if r.sum() > 0 else np.ones_like(r, bool)
    t_end = max(20.0 * float(tau[big].max()) if big.any() else 1.0, 100 * t_from)
    n = int(np.ceil(np.log10(t_end / t_from) * per_decade)) + 1
    return np.geomspace(t_from, t_end, n)
