"""Material properties: one frozen record per material and a library to look them up.

The default library is the data file ``materials.toml`` shipped beside this module; every
entry carries the note of where its numbers come from.  Users add their own materials or
override single fields of a default one (``MaterialLibrary.add`` / ``override`` /
``update``), from Python, a dict or a TOML file.

All values are SI: conductivity W/(m·K), density kg/m³, specific heat J/(kg·K),
temperatures K.  Conductivity may follow k(T) = k·(T / 300 K)^-a (exponent ``k_exponent``).
"""
from __future__ import annotations

import difflib
import functools
import math
import tomllib
from dataclasses import asdict, dataclass, fields, replace
from os import PathLike
from pathlib import Path
from typing import Any, Iterable, Iterator, Mapping

from pulsetherm.waveforms.fieldwise import FieldMethods

__all__ = ["Material", "MaterialLibrary", "MaterialError", "default_library",
           "K_REFERENCE_K"]

#: Temperature at which ``k`` is given and k(T) is referred, K.
K_REFERENCE_K = 300.0

# Short-hands users type for a default entry (US spelling, trade short names).
_ALIASES = {
    "aluminum": "aluminium",
    "aluminum-6061": "aluminium-6061",
    "al-6061": "aluminium-6061",
    "fr4": "fr4-class",
    "fr-4": "fr4-class",
}


class MaterialError(ValueError):
    """Bad or unknown material; the message names the field, the value and what is expected."""


def _norm_name(name: object, field: str = "name") -> str:
    if not isinstance(name, str) or not name.strip():
        raise MaterialError(f"{field} = {name!r}: expected a non-empty material name")
    return name.strip().lower().replace("_", "-").replace(" ", "-")


def _positive(where: str, value: object, *, allow_zero: bool = False) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise MaterialError(f"{where} = {value!r}: expected a number")
    v = float(value)
    if not math.isfinite(v) or v < 0 or (v == 0 and not allow_zero):
        want = "a finite number >= 0" if allow_zero else "a finite number > 0"
        raise MaterialError(f"{where} = {value!r}: expected {want}")
    return v


@dataclass(frozen=True, kw_only=True, eq=False, repr=False)   # ==, hash, repr: FieldMethods
class Material(FieldMethods):
    """Thermal properties of one material near 300 K.

    Parameters
    ----------
    name
        Library key, lower case (``"copper"``, ``"fr4-class"``).
    k
        Thermal conductivity through the thickness (z), W/(m·K), at 300 K.
    k_inplane
        In-plane conductivity (x, y), W/(m·K); ``None`` means isotropic (set equal to ``k``).
    rho
        Density, kg/m³.
    c
        Specific heat, J/(kg·K).
    k_exponent
        Exponent a of k(T) = k·(T / 300 K)^-a (both directions); 0 = constant.
    t_max_K
        Maximum service temperature, K (laminate continuous-use rating, solder melting point
        as a limit), or ``None``.
    caution
        Handling caution to show the user ("" = none).
    permittivity, loss_tangent
        Laminates only: relative permittivity εr and loss tangent tan δ of the class near
        1-10 GHz (``None`` = not an RF dielectric / not known).  A line on the laminate
        takes them unless its scenario gives its own.
    source
        Where the values come from (the RF values' source included).
    description
        Plain description of the material class.
    """

    name: str
    k: float
    k_inplane: float | None = None
    rho: float
    c: float
    k_exponent: float = 0.0
    t_max_K: float | None = None
    caution: str = ""
    permittivity: float | None = None
    loss_tangent: float | None = None
    source: str = ""
    description: str = ""

    def __post_init__(self) -> None:
        name = _norm_name(self.name, "name")
        where = f"material {name!r}"
        set_ = functools.partial(object.__setattr__, self)
        set_("name", name)
        set_("k", _positive(f"{where}: k", self.k))
        set_("k_inplane", self.k if self.k_inplane is None
             else _positive(f"{where}: k_inplane", self.k_inplane))
        set_("rho", _positive(f"{where}: rho", self.rho))
        set_("c", _positive(f"{where}: c", self.c))
        a = self.k_exponent
        if isinstance(a, bool) or not isinstance(a, (int, float)) or not math.isfinite(a) \
                or abs(a) > 5:
            raise MaterialError(f"{where}: k_exponent = {a!r}: expected a number between -5 "
                                "and 5 (k(T) = k·(T/300 K)^-a; about 1.3 for silicon)")
        set_("k_exponent", float(a))
        if self.t_max_K is not None:
            t = _positive(f"{where}: t_max_K", self.t_max_K)
            if t < 200.0 or t > 5000.0:
                raise MaterialError(f"{where}: t_max_K = {self.t_max_K!r}: expected an "
                                    "absolute temperature in K between 200 and 5000 "
                                    "(130 degC is 403.15 K)")
            set_("t_max_K", t)
        if self.permittivity is not None:
            e = _positive(f"{where}: permittivity", self.permittivity)
            if not 1.0 <= e <= 100.0:
                raise MaterialError(f"{where}: permittivity = {self.permittivity!r}: expected "
                                    "a relative permittivity between 1 and 100")
            set_("permittivity", e)
        if self.loss_tangent is not None:
            d = _positive(f"{where}: loss_tangent", self.loss_tangent, allow_zero=True)
            if d >= 1.0:
                raise MaterialError(f"{where}: loss_tangent = {self.loss_tangent!r}: expected "
                                    "a loss tangent in [0, 1) (0.02 for an FR-4 class)")
            set_("loss_tangent", d)
        for text in ("caution", "source", "description"):
            value = getattr(self, text)
            if not isinstance(value, str):
                raise MaterialError(f"{where}: {text} = {value!r}: expected text")

    # -- derived properties ------------------------------------------------------------
    @property
    def rho_c(self) -> float:
        """Volumetric heat capacity ρ·c, J/(m³·K)."""
        return self.rho * self.c

    @property
    def diffusivity(self) -> float:
        """Through-plane thermal diffusivity α = k/(ρc), m²/s."""
        return self.k / (self.rho * self.c)

    @property
    def effusivity(self) -> float:
        """Thermal effusivity e = √(kρc), W·s^½/(m²·K) (through-plane)."""
        return math.sqrt(self.k * self.rho * self.c)

    @property
    def anisotropic(self) -> bool:
        """True when the in-plane conductivity differs from the through-plane one."""
        return self.k_inplane != self.k

    @property
    def t_max_C(self) -> float | None:
        """Maximum service temperature in degC, or ``None``."""
        return None if self.t_max_K is None else self.t_max_K - 273.15

    def k_at(self, T_K, inplane: bool = False):
        """Conductivity at absolute temperature ``T_K`` (K, scalar or array), W/(m·K).

        k(T) = k(300 K)·(T / 300 K)^-a, the power law commonly fitted to semiconductor data
        (physics brief §8).
        """
        k0 = self.k_inplane if inplane else self.k
        if self.k_exponent == 0.0:
            return k0 + 0.0 * T_K
        return k0 * (T_K / K_REFERENCE_K) ** (-self.k_exponent)

    def to_dict(self) -> dict[str, Any]:
        """Plain dict of every field (round-trips through :meth:`from_dict`)."""
        return asdict(self)

    @classmethod
    def from_dict(cls, name: str, data: Mapping[str, Any],
                  base: "Material | None" = None) -> "Material":
        """Build a material from a mapping of field values.

        Numbers are SI; text carries its unit (``k = "0.3 W/mK"``, ``rho = "1.85 g/cm3"``,
        ``c = "1150 J/(kg·K)"``), read by :func:`pulsetherm.network.units.parse_quantity`.
        ``t_max = "150 degC"`` (text with a unit) may stand for ``t_max_K``.  With
        ``base``, unspecified fields are taken from it (an override).  Unknown keys are
        refused with a suggestion.
        """
        if not isinstance(data, Mapping):
            raise MaterialError(f"material {name!r}: expected a table of fields, got "
                                f"{type(data).__name__}")
        allowed = [f.name for f in fields(cls) if f.name != "name"] + ["t_max"]
        values: dict[str, Any] = {}
        for key, value in data.items():
            if key not in allowed:
                hint = difflib.get_close_matches(str(key), allowed, n=1)
                also = f" (did you mean {hint[0]!r}?)" if hint else ""
                raise MaterialError(f"material {name!r}: unknown field {key!r}{also}; "
                                    f"expected one of {', '.join(allowed)}")
            if key == "t_max" or (key in _UNIT_KINDS and isinstance(value, str)):
                value = _with_unit(name, key, value)
                key = "t_max_K" if key == "t_max" else key
            values[key] = value
        if base is not None:
            merged = base.to_dict()
            if "k" in values and "k_inplane" not in values and not base.anisotropic:
                merged["k_inplane"] = None   # isotropic base stays isotropic with the new k
            merged.update(values)
            merged["name"] = name
            return cls(**merged)
        missing = [f for f in ("k", "rho", "c") if f not in values]
        if missing:
            raise MaterialError(f"material {name!r}: missing field(s) {', '.join(missing)}; "
                                "a new material needs k (W/(m·K)), rho (kg/m³) and c "
                                "(J/(kg·K)), or 'base' naming a material to start from")
        return cls(name=name, **values)


# Fields that may be given as text with a unit ("390 W/mK", "8.9 g/cm3", "150 degC").
_UNIT_KINDS = {"k": "conductivity", "k_inplane": "conductivity", "rho": "density",
               "c": "specific_heat", "t_max_K": "temperature", "t_max": "temperature",
               "k_exponent": "dimensionless", "permittivity": "dimensionless",
               "loss_tangent": "dimensionless"}


def _with_unit(name: str, key: str, value: Any) -> float:
    from .units import parse_quantity

    try:
        return parse_quantity(value, _UNIT_KINDS[key], f"material {name!r}: {key}")
    except ValueError as exc:
        raise MaterialError(str(exc)) from None


@functools.lru_cache(maxsize=1)
def _default_materials() -> tuple[Material, ...]:
    # the file beside this module (package data), read directly: importlib.resources.files
    # took ~0.5 ms of every run for the same text
    text = Path(__file__).with_name("materials.toml").read_text(encoding="utf-8")
    data = tomllib.loads(text)
    return tuple(Material.from_dict(name, entry) for name, entry in data.items())


class MaterialLibrary:
    """Named materials: the shipped defaults plus the user's own.

    Names are case-insensitive; ``_`` and spaces read as ``-``.  A few common spellings
    ("aluminum", "fr4") are accepted as aliases of the default names.

    Examples
    --------
    >>> lib = MaterialLibrary.default()
    >>> lib.get("copper").k
    401.0
    >>> lib.override("copper", k=390.0).k
    390.0
    """

    def __init__(self, materials: Iterable[Material] = ()) -> None:
        self._items: dict[str, Material] = {}
        for m in materials:
            self.add(m)

    # -- construction ------------------------------------------------------------------
    @classmethod
    def default(cls) -> "MaterialLibrary":
        """A fresh library holding the shipped defaults (changing it leaves others alone)."""
        return cls(_default_materials())

    @classmethod
    def from_dict(cls, data: Mapping[str, Mapping[str, Any]],
                  defaults: bool = True) -> "MaterialLibrary":
        """Library from ``{name: {field: value}}``, on top of the defaults unless
        ``defaults=False``.  See :meth:`update` for the rules."""
        lib = cls.default() if defaults else cls()
        lib.update(data)
        return lib

    @classmethod
    def from_toml(cls, source: str | PathLike, defaults: bool = True) -> "MaterialLibrary":
        """Library from a TOML file path or TOML text (``[name]`` tables, or one
        ``[materials.name]`` table per material)."""
        data = _read_toml(source)
        return cls.from_dict(data, defaults=defaults)

    def update(self, data: Mapping[str, Mapping[str, Any]]) -> None:
        """Add or override materials from ``{name: {field: value}}``.

        A name already in the library is an override: only the given fields change.  A new
        name needs ``k``, ``rho`` and ``c``, or ``base = "<name>"`` to start from another
        material.  A top-level ``materials`` table is unwrapped.
        """
        if not isinstance(data, Mapping):
            raise MaterialError(f"materials: expected a table of materials, got "
                                f"{type(data).__name__}")
        if set(data) == {"materials"} and isinstance(data["materials"], Mapping):
            data = data["materials"]
        for raw_name, entry in data.items():
            name = _norm_name(raw_name, "material name")
            if not isinstance(entry, Mapping):
                raise MaterialError(f"material {name!r}: expected a table of fields, got "
                                    f"{entry!r}")
            entry = dict(entry)
            base_name = entry.pop("base", None)
            if base_name is not None:
                base = self.get(base_name)
                mat = Material.from_dict(name, entry, base=base)
                if not entry.get("source"):
                    mat = replace(mat, source=f"user material based on {base.name!r} "
                                              f"({base.source})")
            elif self._resolve(name) in self._items:
                key = self._resolve(name)
                mat = Material.from_dict(key, entry, base=self._items[key])
            else:
                mat = Material.from_dict(name, entry)
            self._items[mat.name] = mat

    # -- access ------------------------------------------------------------------------
    def _resolve(self, name: str) -> str:
        key = _norm_name(name)
        if key not in self._items and key in _ALIASES:
            return _ALIASES[key]
        return key

    def get(self, name: str) -> Material:
        """The material called ``name``; an unknown name raises :class:`MaterialError`
        with the closest names."""
        key = self._resolve(name)
        try:
            return self._items[key]
        except KeyError:
            pass
        close = difflib.get_close_matches(key, list(self._items) + list(_ALIASES), n=3,
                                          cutoff=0.5)
        close = list(dict.fromkeys(_ALIASES.get(c, c) for c in close))
        hint = (f"did you mean {' or '.join(repr(c) for c in close)}?" if close
                else f"known materials: {', '.join(sorted(self._items))}")
        raise MaterialError(f"material {name!r} is not in the library; {hint}")

    __getitem__ = get

    def __contains__(self, name: object) -> bool:
        return isinstance(name, str) and bool(name.strip()) and self._resolve(name) in self._items

    def __iter__(self) -> Iterator[str]:
        return iter(self._items)

    def __len__(self) -> int:
        return len(self._items)

    @property
    def names(self) -> tuple[str, ...]:
        """Names in insertion order (defaults first)."""
        return tuple(self._items)

    def materials(self) -> tuple[Material, ...]:
        """All materials in insertion order."""
        return tuple(self._items.values())

    def copy(self) -> "MaterialLibrary":
        """Independent copy (materials are immutable, so a shallow copy suffices)."""
        return MaterialLibrary(self._items.values())

    # -- changes -----------------------------------------------------------------------
    def add(self, material: Material, replace_existing: bool = False) -> Material:
        """Add ``material``; a name already present is refused unless
        ``replace_existing``."""
        if not isinstance(material, Material):
            raise MaterialError(f"material: expected a Material, got {material!r}")
        if material.name in self._items and not replace_existing:
            raise MaterialError(f"material {material.name!r} is already in the library; use "
                                "override(name, field=value) or replace_existing=True")
        self._items[material.name] = material
        return material

    def override(self, name: str, **changes: Any) -> Material:
        """Replace some fields of the material ``name`` in this library; returns the new
        record.  Changing ``k`` of an isotropic material changes ``k_inplane`` too."""
        old = self.get(name)
        new = Material.from_dict(old.name, changes, base=old)
        self._items[new.name] = new
        return new


def default_library() -> MaterialLibrary:
    """A fresh copy of the shipped material library."""
    return MaterialLibrary.default()


def _read_toml(source: str | PathLike) -> dict[str, Any]:
    if isinstance(source, PathLike) or (isinstance(source, str) and "\n" not in source
                                        and source.strip().endswith(".toml")):
        path = Path(source)
        try:
            text = path.read_text(encoding="utf-8")
        except OSError as exc:
            raise MaterialError(f"materials file {str(path)!r}: cannot read ({exc})") from exc
    else:
        text = str(source)
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise MaterialError(f"materials TOML: {exc}") from exc
