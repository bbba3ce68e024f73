"""The shared ``==``, ``hash`` and ``repr`` of the frozen dataclasses
(:mod:`pulsetherm.waveforms.fieldwise`) against what :func:`dataclasses.dataclass` generates
from the same fields (common practice, no source: the reference is the standard library)."""
from __future__ import annotations

import dataclasses
import importlib

import numpy as np

from pulsetherm.waveforms.fieldwise import FieldMethods
from pulsetherm_test_systems import dataclass_twin as _twin  # tests/_systems.py, by conftest

#: Every module with a class that uses FieldMethods (the coverage test imports them all).
MODULES = ("pulsetherm.waveforms.pulses", "pulsetherm.waveforms.canonical",
           "pulsetherm.network.units", "pulsetherm.network.materials",
           "pulsetherm.network.scenario")



def _outcome(fn, *args):
    """A call's result, or its exception's type and message (arrays compare ambiguously,
    dicts do not hash: the twin must fail the same way)."""
    try:
        return "ok", fn(*args)
    except (TypeError, ValueError) as exc:
        return type(exc).__name__, str(exc)


def _samples():
    from pulsetherm.network.materials import default_library
    from pulsetherm.network.scenario import UnitScale, parse_quantity
    from pulsetherm.network.units import KINDS
    from pulsetherm.waveforms.canonical import Piecewise
    from pulsetherm.waveforms.pulses import Burst, Constant, PulseTrain, Stagger

    train = PulseTrain(10.0, 1e-4, 1e-3)
    lib = default_library()
    return [
        Constant(2.0), Constant(2.0, 1e-3), Constant(2.5),
        train, PulseTrain(10.0, 1e-4, prf=1e3), PulseTrain(10.0, 1e-4, 1e-3, idle=1.0),
        Burst(train, 3, 1e-2), Burst(train, 3, gap=2e-3),
        Stagger(5.0, (1e-3, 1.5e-3), 1e-4), Stagger(5.0, (1e-3, 1.5e-3), (1e-4, 2e-4)),
        train.compile(), Piecewise([0.0, 1.0, 2.0], [1.0, 0.0]),
        *list(KINDS.values())[:6],
        *(lib.get(n) for n in list(lib)[:6]),
        parse_quantity("40 degC", "temperature", "x"), parse_quantity("1 mm", "length", "y"),
        UnitScale.of("degC", "temperature", "z"), UnitScale.of("mm", "length", "w"),
    ]


def test_every_user_is_a_frozen_dataclass_without_its_own_eq_or_repr():
    """The mixin is only for frozen dataclasses declared eq=False, repr=False (a generated
    method would override it; a mutable class must keep no hash)."""
    for m in MODULES:
        importlib.import_module(m)
    users, todo = [], list(FieldMethods.__subclasses__())
    while todo:
        cls = todo.pop()
        todo += cls.__subclasses__()
        if dataclasses.is_dataclass(cls):
            users.append(cls)
            p = cls.__dataclass_params__
            assert p.frozen and not p.eq and not p.repr, cls
            assert cls.__module__ in MODULES, cls      # MODULES lists every user
    assert len(users) >= 25


def test_eq_hash_repr_are_the_generated_ones():
    objs = _samples()
    for obj in objs:
        twin = _twin(obj)
        assert repr(obj) == repr(twin)
        assert _outcome(hash, obj) == _outcome(hash, twin)
        assert obj.__eq__("text") is NotImplemented and (obj == "text") is False
    for a in objs:
        for b in objs:
            if type(a) is type(b):
                assert (_outcome(lambda x, y: x == y, a, b)
                        == _outcome(lambda x, y: x == y, _twin(a), _twin(b))), (a, b)
    # read-only derived fields (compare=False, repr=False) take no part
    from pulsetherm.waveforms.pulses import PulseTrain

    assert PulseTrain(10.0, 1e-4, 1e-3) == PulseTrain(10.0, 1e-4, prf=1e3)
    assert "prf" not in repr(PulseTrain(10.0, 1e-4, 1e-3))


def test_a_wrong_field_choice_is_seen(monkeypatch):
    """The comparison above can fail: repr of every field (the derived ones too) differs."""
    from pulsetherm.waveforms import fieldwise
    from pulsetherm.waveforms.pulses import PulseTrain

    train = PulseTrain(10.0, 1e-4, 1e-3)
    monkeypatch.setattr(fieldwise, "field_names",
                        lambda cls, use: tuple(f.name for f in dataclasses.fields(cls)))
    assert repr(train) != repr(_twin(train))
    assert hash(train) != hash(_twin(train))
    assert np.isfinite(train.mean)
