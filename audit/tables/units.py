"""Units written in a header's brackets: ``x [m]``, ``E [N/mm2]``, ``alpha [1/degC]``, ``kx [kN/m]``.

A unit is a product of the format's base units (length ``m cm mm ft in``, force ``N kN MN lbf kip``,
temperature ``degC K degF``) with integer powers, optionally over a denominator:
``N/mm2``, ``N/mm²``, ``kN/m^2``, ``mm2``, ``kN/m``, ``1/degC``, ``kN/m3``, ``kN*m``.  The pressure names
``Pa``, ``kPa``, ``MPa`` and ``GPa`` stand for ``N/m2`` times their prefix.  Anything else is an
error (``TABLES.md``: a unit that cannot be so composed).

Factors are exact fractions (foot = 0.3048 m and pound-force = 4.4482216152605 N exactly, by the 1959
international agreement; degF differences are 5/9 of degC: common practice), so that converting a
decimal text changes only what the factor changes.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from fractions import Fraction

#: base units: name -> (dimension, factor to m / N / degC)
BASE: dict[str, tuple[str, Fraction]] = {
    "m": ("L", Fraction(1)),
    "cm": ("L", Fraction(1, 100)),
    "mm": ("L", Fraction(1, 1000)),
    "ft": ("L", Fraction("0.3048")),
    "in": ("L", Fraction("0.0254")),
    "N": ("F", Fraction(1)),
    "kN": ("F", Fraction(1000)),
    "MN": ("F", Fraction(10**6)),
    "lbf": ("F", Fraction("4.4482216152605")),
    "kip": ("F", Fraction("4448.2216152605")),
    "degC": ("T", Fraction(1)),
    "K": ("T", Fraction(1)),
    "degF": ("T", Fraction(5, 9)),
}

#: other spellings of the base units
ALIASES = {
    "KN": "kN",
    "kn": "kN",
    "Kn": "kN",
    "kips": "kip",
    "Kip": "kip",
    "inch": "in",
    "foot": "ft",
    "feet": "ft",
    "°C": "degC",
    "ºC": "degC",
    "C": "degC",
    "°F": "degF",
    "ºF": "degF",
    "F": "degF",
    "°K": "K",
}

#: pressures: name -> factor to N/m²
PRESSURES = {"Pa": Fraction(1), "kPa": Fraction(10**3), "MPa": Fraction(10**6), "GPa": Fraction(10**9)}

_SUPERSCRIPTS = {"²": "2", "³": "3", "¹": "1", "⁻": "-"}
_FACTOR = re.compile(r"([A-Za-z°º]+)(?:\^|\*\*)?(-?\d+)?")


@dataclass(frozen=True)
class Unit:
    """A parsed unit: powers of length, force and temperature, and the base unit met for each."""

    text: str
    powers: tuple[int, int, int]  #: (length, force, temperature) exponents
    bases: tuple[str | None, str | None, str | None]  #: the first length, force, temperature unit named
    scale: Fraction  #: the factor to the same powers of m, N and degC


class UnitError(ValueError):
    pass


def _factor_word(word: str) -> str:
    return ALIASES.get(word, word)


def parse_unit(text: str) -> Unit:
    """Parse a unit; raise :class:`UnitError` (with a plain message) when it cannot be composed."""
    raw = text.strip()
    clean = "".join(_SUPERSCRIPTS.get(ch, ch) for ch in raw).replace("**", "^").replace("·", "*").replace(" ", "*")
    # "mm2", "m^2", "mm**2", "mm²": a power right after a unit name
    parts = clean.split("/")
    if len(parts) > 2 or not clean:
        raise UnitError(f"unit {raw!r} cannot be read: use at most one '/' (e.g. N/mm2)")
    powers = [0, 0, 0]
    bases: list[str | None] = [None, None, None]
    scale = Fraction(1)
    for side, part in enumerate(parts):
        sign = 1 if side == 0 else -1
        factors = [f for f in part.split("*") if f]
        if not factors:
            raise UnitError(f"unit {raw!r} cannot be read")
        for f in factors:
            if f == "1" and len(factors) == 1:
                continue
            m = _FACTOR.fullmatch(f)
            if not m:
                raise UnitError(f"unknown unit {raw!r}: {f!r} is not a unit of length, force or temperature")
            word, power_text = _factor_word(m.group(1)), m.group(2)
            power = int(power_text) if power_text else 1
            if word in PRESSURES:
                scale *= PRESSURES[word] ** (sign * power)
                for k, p in ((0, -2), (1, 1)):
                    powers[k] += sign * power * p
                continue
            if word not in BASE:
                raise UnitError(
                    f"unknown unit {raw!r}: {m.group(1)!r} is not one of " + ", ".join(BASE) + " (or Pa, kPa, MPa, GPa)"
                )
            dim, fac = BASE[word]
            k = "LFT".index(dim)
            powers[k] += sign * power
            scale *= fac ** (sign * power)
            if bases[k] is None:
                bases[k] = word
    return Unit(raw, (powers[0], powers[1], powers[2]), (bases[0], bases[1], bases[2]), scale)


def conversion(unit: Unit, model: tuple[str, str, str | None]) -> Fraction:
    """The factor from ``unit`` to the same quantity in the model's units (exact)."""
    out = unit.scale
    for power, model_unit in zip(unit.powers, model, strict=True):
        if power:
            assert model_unit is not None
            out /= BASE[model_unit][1] ** power
    return out


#: the quantity of each kind of column: (length, force, temperature) powers and a word for messages
QUANTITIES: dict[str, tuple[tuple[int, int, int], str]] = {
    "length": ((1, 0, 0), "a length, e.g. m or mm"),
    "force": ((0, 1, 0), "a force, e.g. kN"),
    "modulus": ((-2, 1, 0), "force per area, e.g. N/mm2 or kN/m^2"),
    "area": ((2, 0, 0), "an area, e.g. mm2"),
    "stiffness": ((-1, 1, 0), "force per length, e.g. kN/m"),
    "expansion": ((0, 0, -1), "per temperature degree, e.g. 1/degC"),
    "weight": ((-3, 1, 0), "force per volume, e.g. kN/m3"),
    "temperature": ((0, 0, 1), "a temperature difference, e.g. degC"),
}


def base_of(unit: Unit, dim: str) -> str | None:
    """The base unit of dimension ``dim`` ("L", "F" or "T") that ``unit`` names, if any."""
    return unit.bases["LFT".index(dim)]
