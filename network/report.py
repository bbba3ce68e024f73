"""Where the heat is held up: per-layer share of the steady junction rise, layer time
constants and node counts of a built stack-up model.

For a ladder column the junction rise is the sum of the temperature drops across its
layers (junction → case → stack → board → interface → sink → ambient), so

    share_j = (T_top,j − T_bottom,j) / (T_junction − T_ambient),   Σ share_j = 1,

with the steady temperatures of the network under the given powers (each part at 1 W,
alone, by default).  A layer's time constant is R_j·C_j, its path resistance times its
stored heat capacity: where in time the layer shows up in Zth (common practice, no source).
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping

__all__ = ["LayerShare", "PartReport", "StackReport", "stack_report"]


@dataclass(frozen=True)
class LayerShare:
    """One layer's part in a column's steady rise."""

    layer: str
    group: str
    material: str
    thickness: float       # m
    drop: float            # K
    share: float           # drop / junction rise
    resistance: float      # K/W along the path
    capacity: float        # J/K
    time_constant: float   # s, R·C
    nodes: int             # nodes of this layer (faces below its top face)
    angle: float | None    # spreading half-angle, degrees


@dataclass(frozen=True)
class PartReport:
    part: str
    junction_rise: float   # K
    power: dict[str, float]
    layers: tuple[LayerShare, ...]
    nodes: int

    def largest(self) -> LayerShare:
        """The layer that holds the heat up most."""
        return max(self.layers, key=lambda s: s.share)


@dataclass(frozen=True)
class StackReport:
    parts: tuple[PartReport, ...]
    node_count: int

    def part(self, name: str) -> PartReport:
        for p in self.parts:
            if p.part == name:
                return p
        raise KeyError(f"part {name!r} is not in this report (known: "
                       f"{', '.join(p.part for p in self.parts)})")

    def to_dict(self) -> dict:
        return {"node_count": self.node_count,
                "parts": [{"part": p.part, "junction_rise_K": p.junction_rise,
                           "power_W": dict(p.power), "nodes": p.nodes,
                           "layers": [s.__dict__.copy() for s in p.layers]}
                          for p in self.parts]}

    def summary(self) -> str:
        lines = [f"{self.node_count} nodes"]
        for p in self.parts:
            lines.append(f"{p.part}: junction rise {p.junction_rise:.4g} K "
                         f"({p.nodes} nodes)")
            lines.append(f"  {'layer':<22}{'material':<20}{'drop K':>10}{'share':>8}"
                         f"{'R K/W':>11}{'C J/K':>11}{'RC s':>11}")
            for s in p.layers:
                lines.append(f"  {s.layer:<22}{s.material:<20}{s.drop:>10.4g}"
                             f"{100 * s.share:>7.1f}%{s.resistance:>11.4g}"
                             f"{s.capacity:>11.4g}{s.time_constant:>11.4g}")
        return "\n".join(lines)


def stack_report(model, powers: Mapping[str, float] | None = None) -> StackReport:
    """Per-layer steady shares, time constants and node counts of a
    :class:`~pulsetherm.network.builder.BuiltModel`.

    Parameters
    ----------
    model
        The built model.
    powers
        Input name -> W for one steady solution shared by all parts; ``None``: each part
        at 1 W alone (its own shares, no coupling).
    """
    net = model.network
    reports = []
    cache = None
    if powers is not None:
        cache = net.steady(dict(powers))
    for name, col in model.columns.items():
        pw = dict(powers) if powers is not None else {model.inputs[name]: 1.0}
        res = cache if cache is not None else net.steady(pw)
        rise = res.T(col.junction) - res.T(model.ambient)
        if not rise > 0:
            raise ValueError(f"powers = {powers!r}: part {name!r} has no junction rise "
                             f"({rise!r} K); expected some power reaching it")
        rows = []
        nodes = sum(1 for info in model.node_map.values() if info.part == name)
        for lay in col.layers:
            drop = res.T(lay.nodes[0]) - res.T(lay.nodes[-1])
            n = sum(1 for x in lay.nodes[1:] if x in model.node_map)
            if lay.group == "device":
                n = len(lay.nodes) - 1
            rows.append(LayerShare(lay.name, lay.group, lay.material, lay.thickness, drop,
                                   drop / rise,
                                   lay.resistance, lay.capacity, lay.time_constant, n,
                                   lay.angle))
        reports.append(PartReport(name, rise, pw, tuple(rows), nodes))
    return StackReport(tuple(reports), len(net.nodes))
