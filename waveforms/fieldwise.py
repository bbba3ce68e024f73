"""``==``, ``hash`` and ``repr`` of frozen dataclasses, shared instead of written per class.

Python 3.11's :func:`dataclasses.dataclass` compiles every method it writes separately
(one ``exec`` each, ~50-100 µs), six for a frozen class, at every import.  A frozen
dataclass declared ``@dataclass(frozen=True, eq=False, repr=False)`` that inherits
:class:`FieldMethods` takes three of them from here instead, written as ``dataclass`` writes
them: the same fields, the same results (``tests/test_fieldwise.py`` compares both on every
class that uses it).  Standard library only; the network package uses it too.
"""
from __future__ import annotations

import dataclasses
import functools
import reprlib

__all__ = ["FieldMethods"]


@functools.lru_cache(maxsize=None)
def field_names(cls: type, use: str) -> tuple[str, ...]:
    """Names of the fields of the dataclass ``cls`` that take part in ``use``: ``"compare"``
    (``==``), ``"hash"`` or ``"repr"``, chosen as :mod:`dataclasses` chooses them."""
    fields = dataclasses.fields(cls)
    if use == "hash":
        return tuple(f.name for f in fields if (f.compare if f.hash is None else f.hash))
    return tuple(f.name for f in fields if getattr(f, use))


class FieldMethods:
    """Mixin for frozen dataclasses declared ``eq=False, repr=False``: ``==`` (same class,
    equal tuples of the compared fields), ``hash`` (of the tuple of the hashed fields) and
    ``repr`` (``Name(field=value, ...)``), as ``@dataclass(frozen=True)`` would write them.

    Frozen classes only: a mutable dataclass with ``==`` has no hash.
    """

    __slots__ = ()

    def __eq__(self, other: object) -> bool:
        if other.__class__ is self.__class__:
            names = field_names(self.__class__, "compare")
            return (tuple(getattr(self, n) for n in names)
                    == tuple(getattr(other, n) for n in names))
        return NotImplemented

    def __hash__(self) -> int:
        return hash(tuple(getattr(self, n) for n in field_names(self.__class__, "hash")))

    @reprlib.recursive_repr()
    def __repr__(self) -> str:
        return (self.__class__.__qualname__ + "("
                + ", ".join(f"{n}={getattr(self, n)!r}"
                            for n in field_names(self.__class__, "repr")) + ")")
