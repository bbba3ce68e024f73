"""Material records and the material library."""
from __future__ import annotations

import math
import tomllib
from importlib import resources

import numpy as np
import pytest

from pulsetherm.network.materials import (Material, MaterialError, MaterialLibrary,
                                          default_library)

REQUIRED = ["copper", "pcb-copper", "aluminium", "aluminium-6061", "silicon", "sic-4h", "gan",
            "gaas", "aln", "alumina-96", "beryllia", "cvd-diamond", "cuw-85-15",
            "cumo-70-30", "ausn", "sac305", "sn63pb37", "sintered-silver", "thermal-grease",
            "gap-pad", "fr4-class", "hydrocarbon-ceramic", "ptfe-woven-glass",
            "ptfe-ceramic", "epoxy-via-fill", "gold", "silver", "molybdenum", "tungsten"]
LAMINATES = ["fr4-class", "hydrocarbon-ceramic", "ptfe-woven-glass", "ptfe-ceramic"]


@pytest.fixture
def lib() -> MaterialLibrary:
    return MaterialLibrary.default()


def test_every_required_entry_present_with_source(lib):
    for name in REQUIRED:
        m = lib.get(name)
        assert m.source.strip(), name
        assert m.description.strip(), name


def test_data_file_every_entry_has_source_and_known_fields():
    """The shipped TOML itself: every table names its source (rule of the project)."""
    data = tomllib.loads(resources.files("pulsetherm.network").joinpath(
        "materials.toml").read_text(encoding="utf-8"))
    for name, entry in data.items():
        assert entry.get("source"), name
        assert set(entry) <= {"k", "k_inplane", "rho", "c", "k_exponent", "t_max_K",
                              "caution", "source", "description", "permittivity",
                              "loss_tangent"}, name


@pytest.mark.parametrize("name, k, rho, c", [
    # Incropera, DeWitt, Bergman & Lavine, Fundamentals of Heat and Mass Transfer,
    # Table A.1, 300 K.
    ("copper", 401.0, 8933.0, 385.0),
    ("aluminium", 237.0, 2702.0, 903.0),
    ("silicon", 148.0, 2330.0, 712.0),
    ("gold", 317.0, 19300.0, 129.0),
    ("silver", 429.0, 10500.0, 235.0),
    ("molybdenum", 138.0, 10240.0, 251.0),
    ("tungsten", 174.0, 19300.0, 132.0),
    # Incropera et al., Table A.2, beryllium oxide at 300 K.
    ("beryllia", 272.0, 3000.0, 1030.0),
])
def test_textbook_values(lib, name, k, rho, c):
    m = lib.get(name)
    assert (m.k, m.rho, m.c) == (k, rho, c)
    assert m.k_inplane == k and not m.anisotropic


def test_pcb_copper_common_practice(lib):
    """Board copper 390 W/(m·K): common practice, no source (385-390 quoted, from memory)."""
    assert lib.get("pcb-copper").k == 390.0


def test_silicon_exponent_plausible(lib):
    """Incropera et al., Table A.1: silicon 148 at 300 K, 98.9 at 400 K.  Our exponent 4/3
    (common practice) must land within 3 % of the table at 400 K."""
    si = lib.get("silicon")
    assert si.k_at(400.0) == pytest.approx(98.9, rel=0.03)
    assert si.k_at(300.0) == pytest.approx(148.0)
    np.testing.assert_allclose(si.k_at(np.array([300.0, 600.0])),
                               [148.0, 148.0 * 2 ** (-4 / 3)])


def test_laminates_ranges_and_inplane(lib):
    """Physics brief §8 [mem] plausibility: laminates 0.2-1.5 W/(m·K) through-plane, in-plane
    not lower; woven-glass epoxy 0.25-0.35 through-plane (value from memory)."""
    for name in LAMINATES:
        m = lib.get(name)
        assert 0.2 <= m.k <= 1.5, name
        assert m.k_inplane >= m.k, name
    fr4 = lib.get("fr4-class")
    assert 0.25 <= fr4.k <= 0.35 and fr4.anisotropic
    assert fr4.t_max_C == pytest.approx(130.0)


def test_solder_limits_are_melting_points(lib):
    """Facts of the trade (physics brief §9): SAC305 melts from 217 degC, Sn63Pb37 at
    183 degC, AuSn at 280 degC."""
    assert lib.get("sac305").t_max_C == pytest.approx(217.0)
    assert lib.get("sn63pb37").t_max_C == pytest.approx(183.0)
    assert lib.get("ausn").t_max_C == pytest.approx(280.0)
    assert lib.get("copper").t_max_K is None


def test_beryllia_caution(lib):
    text = lib.get("beryllia").caution.lower()
    assert "toxic" in text and "never machine" in text and "intact" in text
    assert all(not lib.get(n).caution for n in REQUIRED if n != "beryllia")


def test_no_trade_names_in_data():
    """Generic classes only (project rule 2): a few forbidden patterns of trade naming."""
    text = resources.files("pulsetherm.network").joinpath("materials.toml").read_text(
        encoding="utf-8")
    for word in ("®", "™", "(R)", "(TM)"):
        assert word not in text


def test_derived_properties(lib):
    cu = lib.get("copper")
    assert cu.rho_c == pytest.approx(8933.0 * 385.0)
    assert cu.diffusivity == pytest.approx(401.0 / (8933.0 * 385.0))
    assert cu.effusivity == pytest.approx(math.sqrt(401.0 * 8933.0 * 385.0))
    # Incropera Table A.1 lists alpha = 117e-6 m²/s for copper at 300 K.
    assert cu.diffusivity == pytest.approx(117e-6, rel=0.01)


def test_names_are_forgiving_and_unknowns_suggest(lib):
    assert lib.get("Copper") is lib.get("copper")
    assert lib.get("aluminum").name == "aluminium"
    assert lib.get("FR4").name == "fr4-class"
    assert lib.get("sic_4h").name == "sic-4h"
    assert "aln" in lib and "unobtainium" not in lib
    with pytest.raises(MaterialError, match=r"'coper'.*did you mean 'copper'"):
        lib.get("coper")
    with pytest.raises(MaterialError, match="alumina-96"):
        lib.get("alumina")
    with pytest.raises(MaterialError, match="name"):
        lib.get("")


def test_override_changes_only_this_library(lib):
    new = lib.override("copper", k=390.0)
    assert new.k == 390.0 and new.k_inplane == 390.0 and new.rho == 8933.0
    assert lib.get("copper").k == 390.0
    assert default_library().get("copper").k == 401.0
    fr4 = lib.override("fr4-class", k=0.35)
    assert fr4.k_inplane == 0.75   # anisotropic: in-plane kept


def test_add_and_refuse_duplicates(lib):
    m = Material(name="My Lam", k=0.5, k_inplane=1.0, rho=1900, c=1000, source="datasheet")
    lib.add(m)
    assert lib.get("my-lam").anisotropic
    with pytest.raises(MaterialError, match="already"):
        lib.add(m)
    lib.add(Material(name="my-lam", k=0.6, rho=1900, c=1000), replace_existing=True)
    assert lib.get("my-lam").k == 0.6


def test_from_dict_and_toml(tmp_path):
    text = """
[materials.my-substrate]
k = 0.9
k_inplane = 1.2
rho = 2100.0
c = 950.0
t_max_K = 423.15
source = "supplier sheet"
description = "user laminate"

[materials.copper]
k = 385.0

[materials.thin-grease]
base = "thermal-grease"
k = 1.5
"""
    path = tmp_path / "mats.toml"
    path.write_text(text, encoding="utf-8")
    for lib in (MaterialLibrary.from_toml(path), MaterialLibrary.from_toml(text),
                MaterialLibrary.from_toml(str(path))):
        sub = lib.get("my-substrate")
        assert (sub.k, sub.k_inplane, sub.rho, sub.c, sub.t_max_K) == (0.9, 1.2, 2100.0,
                                                                       950.0, 423.15)
        assert lib.get("copper").k == 385.0 and lib.get("copper").rho == 8933.0
        grease = lib.get("thin-grease")
        assert grease.k == 1.5 and grease.rho == lib.get("thermal-grease").rho
        assert "thermal-grease" in grease.source
    only = MaterialLibrary.from_dict({"x": {"k": 1, "rho": 2, "c": 3}}, defaults=False)
    assert only.names == ("x",)


def test_round_trip_to_dict(lib):
    for m in lib.materials():
        d = m.to_dict()
        name = d.pop("name")
        assert Material.from_dict(name, d) == m


@pytest.mark.parametrize("fields, match", [
    ({"k": -1, "rho": 1, "c": 1}, r"k = -1: expected a finite number > 0"),
    ({"k": 1, "rho": 0, "c": 1}, r"rho = 0"),
    ({"k": 1, "rho": 1, "c": float("nan")}, r"c = nan"),
    ({"k": 1, "rho": 1, "c": "lots"}, r"c = 'lots': no number found; expected a specific"),
    ({"k": 1, "rho": 1, "c": 1, "t_max_K": 150}, r"t_max_K = 150.*403.15 K"),
    ({"k": 1, "rho": 1, "c": 1, "k_exponent": 9}, r"k_exponent = 9"),
    ({"k": 1, "rho": 1}, r"missing field\(s\) c"),
    ({"k": 1, "rho": 1, "c": 1, "cp": 1}, r"unknown field 'cp' \(did you mean 'c'\?\)"),
])
def test_validation_names_field(fields, match):
    with pytest.raises(MaterialError, match=match):
        MaterialLibrary.from_dict({"bad": fields})


def test_errors_are_value_errors():
    assert issubclass(MaterialError, ValueError)
    with pytest.raises(ValueError):
        MaterialLibrary.from_toml("not = [valid")
    with pytest.raises(MaterialError, match="expected a table"):
        MaterialLibrary.from_dict({"x": 3})


def test_fields_with_units():
    """Text fields carry units (parsed by the project's unit table)."""
    lib = MaterialLibrary.from_dict({"my-lam": {"k": "0.3 W/mK", "k_inplane": "0.8 W/(m·K)",
                                                "rho": "1.85 g/cm3", "c": "1150 J/(kg·K)",
                                                "t_max": "150 degC"}})
    m = lib.get("my-lam")
    assert (m.k, m.k_inplane, m.c) == (0.3, 0.8, 1150.0)
    assert m.rho == pytest.approx(1850.0)
    assert m.t_max_K == pytest.approx(423.15)
    with pytest.raises(MaterialError, match=r"material 'x': k = '3 W/K'.*conductivity"):
        MaterialLibrary.from_dict({"x": {"k": "3 W/K", "rho": 1, "c": 1}})
    with pytest.raises(MaterialError, match=r"t_max = 150.*ambiguous"):
        MaterialLibrary.from_dict({"x": {"k": 1, "rho": 1, "c": 1, "t_max": 150}})
