"""The project's units (``IfcUnitAssignment``) and the conversion of IFC numbers to the format's units.

Every unit is resolved to an exact factor to SI (metre, kilogram, second, kelvin) and its dimension
(exponents of length, mass, time, temperature): SI units with prefixes (``IfcSIUnit``), conversion-based
units (``IfcConversionBasedUnit``: foot, inch, pound-force, kip, ... through their ``ConversionFactor``)
and derived units (``IfcDerivedUnit``: kN/mm², N/m, ...).  A unit that cannot be resolved, or whose
dimension does not fit its unit type, is a problem naming the unit entity.

The model is written in the file's own length and force units when the format has them (``m``, ``cm``,
``mm``, ``ft``, ``in``; ``N``, ``kN``, ``MN``, ``lbf``, ``kip``), so that results written by ``solve``
come out in the units of the file; any other unit is converted to metre or newton.  E, A, spring
stiffness and alpha are read in the unit assigned to their own measure (E in MPa in a mm/kN file,
say) and converted exactly to the derived unit of the format (force/length², ...).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from decimal import Context, Decimal
from fractions import Fraction
from typing import Any

from ..model import FORCE_UNITS, LENGTH_UNITS, TEMPERATURE_UNITS
from .places import Issues, label

Dim = tuple[int, int, int, int]  #: exponents of length, mass, time, temperature

LENGTH: Dim = (1, 0, 0, 0)
FORCE: Dim = (1, 1, -2, 0)
AREA: Dim = (2, 0, 0, 0)
MODULUS: Dim = (-1, 1, -2, 0)
STIFFNESS: Dim = (0, 1, -2, 0)
PER_DEGREE: Dim = (0, 0, 0, -1)
TEMPERATURE: Dim = (0, 0, 0, 1)
DENSITY: Dim = (-3, 1, 0, 0)
UNIT_WEIGHT: Dim = (-2, 1, -2, 0)
#: standard acceleration of gravity, m/s^2 (exact by definition; common practice for weight from mass density)
GRAVITY = Fraction("9.80665")

#: what each dimension is, for notes
QUANTITY: dict[Dim, str] = {
    LENGTH: "lengths and displacements",
    FORCE: "forces",
    AREA: "section areas",
    MODULUS: "E",
    STIFFNESS: "spring stiffnesses",
    PER_DEGREE: "alpha",
    TEMPERATURE: "temperature changes",
    UNIT_WEIGHT: "unit weights",
}

_PREFIX = {
    "EXA": 18, "PETA": 15, "TERA": 12, "GIGA": 9, "MEGA": 6, "KILO": 3, "HECTO": 2, "DECA": 1,
    "DECI": -1, "CENTI": -2, "MILLI": -3, "MICRO": -6, "NANO": -9, "PICO": -12, "FEMTO": -15, "ATTO": -18,
}  # fmt: skip

#: SI unit names: (factor of the unprefixed unit to SI base units, dimension, power the prefix is raised to)
_SI: dict[str, tuple[Fraction, Dim, int]] = {
    "METRE": (Fraction(1), (1, 0, 0, 0), 1),
    "SQUARE_METRE": (Fraction(1), (2, 0, 0, 0), 2),
    "CUBIC_METRE": (Fraction(1), (3, 0, 0, 0), 3),
    "GRAM": (Fraction(1, 1000), (0, 1, 0, 0), 1),
    "SECOND": (Fraction(1), (0, 0, 1, 0), 1),
    "NEWTON": (Fraction(1), FORCE, 1),
    "PASCAL": (Fraction(1), MODULUS, 1),
    "KELVIN": (Fraction(1), TEMPERATURE, 1),
    "DEGREE_CELSIUS": (Fraction(1), TEMPERATURE, 1),  # differences only
}

#: unit types read, the dimension each must have, and the unit used when the file assigns none
_TYPES: dict[str, Dim] = {
    "LENGTHUNIT": LENGTH,
    "FORCEUNIT": FORCE,
    "AREAUNIT": AREA,
    "MODULUSOFELASTICITYUNIT": MODULUS,
    "PRESSUREUNIT": MODULUS,
    "LINEARSTIFFNESSUNIT": STIFFNESS,
    "THERMALEXPANSIONCOEFFICIENTUNIT": PER_DEGREE,
    "THERMODYNAMICTEMPERATUREUNIT": TEMPERATURE,
    "MASSDENSITYUNIT": DENSITY,
}

_REL = Fraction(1, 10**9)  # a conversion factor this close to a format unit's is that unit (files round them)


@dataclass(frozen=True)
class Unit:
    factor: Fraction  #: to SI base units
    dim: Dim


def _mul(a: Dim, b: Dim, k: int = 1) -> Dim:
    return (a[0] + k * b[0], a[1] + k * b[1], a[2] + k * b[2], a[3] + k * b[3])


def _value(v: Any) -> Any:
    return getattr(v, "wrappedValue", v)


def resolve(unit: Any, issues: Issues, depth: int = 0) -> Unit | None:
    """The factor to SI and dimension of an IFC unit entity, or None (with a problem) when it is unknown."""
    if unit is None or depth > 8:
        return None
    if unit.is_a("IfcSIUnit"):
        name = str(unit.Name)
        if name not in _SI:
            issues.problem(unit, f"SI unit {name} is not one the reader knows for a truss model")
            return None
        base, dim, power = _SI[name]
        prefix = unit.Prefix
        scale = Fraction(10) ** (_PREFIX[prefix] * power) if prefix else Fraction(1)
        return Unit(base * scale, dim)
    if unit.is_a("IfcConversionBasedUnit"):
        cf = unit.ConversionFactor
        inner = resolve(cf.UnitComponent, issues, depth + 1) if cf is not None else None
        value = _value(cf.ValueComponent) if cf is not None else None
        if inner is None or not isinstance(value, (int, float)):
            issues.problem(unit, f"conversion-based unit {unit.Name!r} has no usable ConversionFactor")
            return None
        return Unit(Fraction(repr(float(value))) * inner.factor, inner.dim)
    if unit.is_a("IfcDerivedUnit"):
        factor, dim = Fraction(1), (0, 0, 0, 0)
        for el in unit.Elements or ():
            if el.Unit is None or not isinstance(el.Exponent, int):
                issues.problem(el, "needs a Unit and an integer Exponent")
                return None
            inner = resolve(el.Unit, issues, depth + 1)
            if inner is None:
                return None
            factor *= inner.factor ** int(el.Exponent)
            dim = _mul(dim, inner.dim, int(el.Exponent))
        return Unit(factor, dim)
    issues.problem(unit, "a unit without a conversion to SI (a context-dependent unit) cannot be read")
    return None


def _match(factor: Fraction, table: dict[str, Fraction]) -> str | None:
    for name, f in table.items():
        if abs(factor - f) <= _REL * f:
            return name
    return None


@dataclass
class Units:
    """The file's units and the format units the model is written in."""

    assigned: dict[str, Unit] = field(default_factory=dict)
    length: str = "m"
    force: str = "N"
    temperature: str = "K"
    uses_temperature: bool = False  #: a temperature change was read (the model then declares its unit)
    _scales: dict[tuple[Dim, str | None], Fraction] = field(default_factory=dict)
    #: dimensions converted by a factor with no exact decimal form (their texts are rounded to 40 digits)
    inexact: set[Dim] = field(default_factory=set)
    notes: list[str] = field(default_factory=list)

    def si(self, unit_type: str) -> Fraction | None:
        u = self.assigned.get(unit_type)
        return None if u is None else u.factor

    def scale(self, dim: Dim, unit_type: str | None, own: Unit | None = None) -> Fraction:
        """Factor from the file's unit of a quantity (its own unit, else its assigned one, else the one
        derived from length and force) to the model's unit of that dimension."""
        if own is None:
            hit = self._scales.get((dim, unit_type))
            if hit is None:
                hit = self._scales[(dim, unit_type)] = self._scale(dim, unit_type, None)
            return hit
        return self._scale(dim, unit_type, own)

    def _scale(self, dim: Dim, unit_type: str | None, own: Unit | None) -> Fraction:
        factor = self._factor(dim, unit_type, own)
        if not _finite_decimal(factor):
            self.inexact.add(dim)
        return factor

    def _factor(self, dim: Dim, unit_type: str | None, own: Unit | None) -> Fraction:
        lf, ff = LENGTH_UNITS[self.length], FORCE_UNITS[self.force]
        # model unit of a dimension L^a (force)^b: force carries mass, so b = mass exponent
        b = dim[1]
        a = dim[0] - b
        target = lf**a * ff**b * TEMPERATURE_UNITS[self.temperature] ** dim[3]
        unit = own or (self.assigned.get(unit_type) if unit_type else None)
        source = self._derived(dim) if unit is None else unit.factor
        return source / target

    def _derived(self, dim: Dim) -> Fraction:
        length = self.assigned.get("LENGTHUNIT", Unit(Fraction(1), LENGTH)).factor
        force = self.assigned.get("FORCEUNIT", Unit(Fraction(1), FORCE)).factor
        b = dim[1]
        a = dim[0] - b
        temperature = self.assigned.get("THERMODYNAMICTEMPERATUREUNIT", Unit(Fraction(1), TEMPERATURE)).factor
        return length**a * force**b * temperature ** dim[3]


def read_units(project: Any, issues: Issues) -> Units:
    """The unit assignment of the project (``IfcProject.UnitsInContext``), checked and matched to format units."""
    units = Units()
    assignment = getattr(project, "UnitsInContext", None) if project is not None else None
    for unit in (assignment.Units or ()) if assignment is not None else ():
        unit_type = str(getattr(unit, "UnitType", "") or "")
        if unit_type not in _TYPES:
            continue
        resolved = resolve(unit, issues)
        if resolved is None:
            continue
        if resolved.dim != _TYPES[unit_type]:
            issues.problem(unit, f"is assigned as the {unit_type} but is not a unit of that kind")
            continue
        units.assigned[unit_type] = resolved
    length, force = units.si("LENGTHUNIT"), units.si("FORCEUNIT")
    length_name = _match(length, LENGTH_UNITS) if length is not None else "m"
    force_name = _match(force, FORCE_UNITS) if force is not None else "N"
    units.length, units.force = length_name or "m", force_name or "N"
    if length_name is None:
        units.notes.append(f"the length unit ({label(_unit_of(assignment, 'LENGTHUNIT'))}) is converted to m")
    if force_name is None:
        units.notes.append(f"the force unit ({label(_unit_of(assignment, 'FORCEUNIT'))}) is converted to N")
    temp = _unit_of(assignment, "THERMODYNAMICTEMPERATUREUNIT") if assignment is not None else None
    if "THERMODYNAMICTEMPERATUREUNIT" in units.assigned:
        factor = units.assigned["THERMODYNAMICTEMPERATUREUNIT"].factor
        if getattr(temp, "Name", None) == "DEGREE_CELSIUS":
            units.temperature = "degC"
        else:
            units.temperature = _match(factor, TEMPERATURE_UNITS) or "K"
            if _match(factor, TEMPERATURE_UNITS) is None:
                units.notes.append(f"the temperature unit ({label(temp)}) is converted to K")
    if length is None:
        units.notes.append("no LENGTHUNIT is assigned: lengths are read in metres (SI)")
    if force is None:
        units.notes.append("no FORCEUNIT is assigned: forces are read in newtons (SI)")
    if "MODULUSOFELASTICITYUNIT" not in units.assigned:
        units.notes.append("no MODULUSOFELASTICITYUNIT is assigned: E is read in force/length² of the file's units")
    return units


def _unit_of(assignment: Any, unit_type: str) -> Any:
    for unit in (assignment.Units or ()) if assignment is not None else ():
        if getattr(unit, "UnitType", None) == unit_type:
            return unit
    return None


_CTX = Context(prec=80)
_ROUND = Context(prec=40)  #: digits kept of a conversion with no exact decimal form


def _finite_decimal(x: Fraction) -> bool:
    den = x.denominator
    for p in (2, 5):
        while den % p == 0:
            den //= p
    return den == 1


def number_text(value: float, scale: Fraction) -> bytes:
    """The decimal text of a stored float, converted by ``scale``: the shortest round-trip text of the
    float times the exact factor, exact when that is a decimal of at most 40 digits, else rounded to 40."""
    text = repr(float(value))
    if scale == 1:
        return text.encode("ascii")
    exact = Fraction(text) * scale
    if _finite_decimal(exact):
        d = _CTX.divide(Decimal(exact.numerator), Decimal(exact.denominator))
    else:
        d = _ROUND.divide(Decimal(exact.numerator), Decimal(exact.denominator))
    d = _ROUND.plus(d).normalize(_ROUND) if len(d.as_tuple().digits) > 40 else d.normalize(_CTX)
    out = format(d, "f") if -8 <= d.adjusted() <= 16 else str(d).replace("E", "e")
    return out.encode("ascii")
