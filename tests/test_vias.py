"""Thermal vias: single barrels and smeared via arrays."""
from __future__ import annotations

import math

import pytest

from pulsetherm.network.materials import MaterialLibrary
from pulsetherm.network.vias import FILLS, Via, ViaArray, ViaError, barrel_resistance

VIA = dict(drill=0.30e-3, plating=25e-6)


@pytest.mark.parametrize("length, expect", [(1.6e-3, 189.9), (0.508e-3, 60.3)])
def test_single_barrel(length, expect):
    """Physics brief §7 [deriv] (R = L/(k_Cu·π·t_pl·(d − t_pl)), common practice):
    0.30 mm drill, 25 µm plating, k 390: 189.9 K/W at 1.6 mm, 60.3 K/W at 0.508 mm."""
    r = barrel_resistance(length=length, k_copper=390.0, **VIA)
    assert round(r, 1) == expect
    assert Via(**VIA).resistance(length) == r
    assert r == pytest.approx(length / (390.0 * math.pi * 25e-6 * 275e-6), rel=1e-14)


@pytest.mark.parametrize("pitch, expect", [(0.6e-3, 23.6), (1.0e-3, 8.7)])
def test_square_array_kz(pitch, expect):
    """Physics brief §7 [deriv] (area-fraction rule, common practice): same vias, empty,
    square grid, laminate 0.3 W/(m·K): k_z,eff 23.6 / 8.7 W/(m·K) at 0.6 / 1.0 mm pitch."""
    arr = ViaArray(Via(**VIA), pitch, 0.3)
    assert round(arr.k_z, 1) == expect
    fc = math.pi * 25e-6 * 275e-6 / pitch ** 2
    fh = math.pi * (125e-6) ** 2 / pitch ** 2
    assert arr.f_copper == pytest.approx(fc) and arr.f_hole == pytest.approx(fh)
    assert arr.k_z == pytest.approx(390 * fc + 0.3 * (1 - fc - fh))


def test_array_equals_parallel_vias_and_laminate():
    """The smeared layer over n whole cells conducts exactly n vias plus the laminate
    around them in parallel (the area-fraction rule is the parallel sum), common
    practice, no source."""
    via = Via(fill="epoxy", **VIA)
    arr = ViaArray(via, 0.8e-3, 0.3)
    n, L = arr.count(4e-3, 4e-3), 1.6e-3
    assert n == 25
    area = n * arr.cell_area
    g_parallel = n * via.conductance(L) + 0.3 * (area - n * (via.copper_area
                                                             + via.hole_area)) / L
    assert 1 / arr.resistance(L, area) == pytest.approx(g_parallel, rel=1e-12)


def test_fills():
    """Fill in parallel with the barrel: k_fill·π(d/2 − t_pl)²/L (physics brief §7).
    Library fills: epoxy-via-fill, sac305, pcb-copper."""
    L = 1.6e-3
    lib = MaterialLibrary.default()
    core = math.pi * (0.15e-3 - 25e-6) ** 2
    for fill, name in FILLS.items():
        via = Via(fill=fill, **VIA)
        k_fill = 0.0 if name is None else lib.get(name).k
        assert via.k_fill == k_fill
        g = 1 / barrel_resistance(length=L, **VIA) + k_fill * core / L
        assert via.conductance(L) == pytest.approx(g, rel=1e-12)
    empty = Via(**VIA).resistance(L)
    assert Via(fill="copper", **VIA).resistance(L) < Via(fill="solder", **VIA).resistance(L) \
        < Via(fill="epoxy", **VIA).resistance(L) < empty
    # A copper-filled via is a solid copper post: L/(k·π d²/4).
    assert Via(fill="copper", **VIA).resistance(L) == pytest.approx(
        L / (390.0 * math.pi * 0.15e-3 ** 2), rel=1e-12)
    assert Via(fill="Epoxy", k_fill=3.0, **VIA).k_fill == 3.0


def test_staggered_grid_denser():
    """Triangular (staggered) cell (√3/2)·p²: the same vias at the same pitch give a
    higher k_z (geometry, no source)."""
    sq = ViaArray(Via(**VIA), 0.6e-3, 0.3)
    st = ViaArray(Via(**VIA), 0.6e-3, 0.3, grid="staggered")
    assert st.cell_area == pytest.approx(math.sqrt(3) / 2 * 0.36e-6)
    assert st.k_z > sq.k_z
    assert st.count(3e-3, 3e-3) == 23
    assert sq.count(3e-3, 3e-3) == 25


def test_inplane_estimate_bounds():
    """Maxwell Garnett (2-D) estimate: above the laminate, below the parallel (area)
    bound, and equal to the laminate when the vias are made of laminate (rough estimate,
    Maxwell Garnett mixing rule, value from memory of the form)."""
    lam = MaterialLibrary.default().get("fr4-class")
    arr = ViaArray(Via(**VIA), 0.6e-3, lam)
    f = arr.f_copper + arr.f_hole
    assert lam.k_inplane < arr.k_inplane < (1 + f) / (1 - f) * lam.k_inplane * 1.0001
    same = ViaArray(Via(drill=0.3e-3, plating=25e-6, k_copper=0.3, fill="epoxy",
                        k_fill=0.3), 0.6e-3, 0.3)
    assert same.k_inplane == pytest.approx(0.3)
    assert same.k_z == pytest.approx(0.3)


def test_material_of_the_field():
    lam = MaterialLibrary.default().get("fr4-class")
    arr = ViaArray(Via(**VIA), 1.0e-3, lam)
    m = arr.material("pa-vias")
    assert m.k == arr.k_z and m.k_inplane == arr.k_inplane and m.anisotropic
    cu = MaterialLibrary.default().get("pcb-copper")
    fc, fh = arr.f_copper, arr.f_hole
    assert m.rho == pytest.approx(cu.rho * fc + lam.rho * (1 - fc - fh))
    assert m.rho * m.c == pytest.approx(cu.rho_c * fc + lam.rho_c * (1 - fc - fh))
    with pytest.raises(ViaError, match="rho_c_laminate"):
        ViaArray(Via(**VIA), 1.0e-3, 0.3).material()
    assert ViaArray(Via(**VIA), 1.0e-3, 0.3).material(rho_c_laminate=(1850, 1150)).rho > 1850


@pytest.mark.parametrize("kwargs, match", [
    (dict(drill=0.0, plating=25e-6), r"drill = 0.0: expected a finite number > 0"),
    (dict(drill=0.3e-3, plating=0.2e-3), r"plating = 0.0002: expected at most half"),
    (dict(drill=0.3e-3, plating=25e-6, fill="glue"), r"fill = 'glue': expected one of"),
    (dict(drill=0.3e-3, plating=25e-6, k_fill=2.0), r"k_fill = 2.0: an unfilled via"),
    (dict(drill="0.3 mm", plating=25e-6), r"drill = '0.3 mm': expected a number"),
])
def test_via_validation(kwargs, match):
    with pytest.raises(ViaError, match=match):
        Via(**kwargs)
    assert issubclass(ViaError, ValueError)


def test_array_validation():
    via = Via(**VIA)
    with pytest.raises(ViaError, match=r"pitch = 0.0002: expected more than the drill"):
        ViaArray(via, 0.2e-3, 0.3)
    with pytest.raises(ViaError, match=r"grid = 'round'"):
        ViaArray(via, 0.6e-3, 0.3, grid="round")
    with pytest.raises(ViaError, match=r"laminate = -1"):
        ViaArray(via, 0.6e-3, -1)
    with pytest.raises(ViaError, match=r"length = 0"):
        via.resistance(0)


def test_grid_aliases():
    arr = ViaArray(Via(**VIA), 0.6e-3, 0.3, grid="hex")
    assert arr.grid == "staggered"
