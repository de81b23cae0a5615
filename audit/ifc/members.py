"""Members: ``IfcStructuralCurveMember`` between two point connections, with E, alpha and A.

The ends are the two ``IfcStructuralPointConnection`` s the member is connected to through
``IfcRelConnectsStructuralMember`` (in the order of the member's edge when its topology names the same
vertices, else in the order of the relationships).  E and alpha come from the material's
``Pset_MaterialMechanical`` (``YoungModulus``, ``ThermalExpansionCoefficient``), A from the profile's
``Pset_ProfileMechanical.CrossSectionArea``, both reached through the member's material profile set
(``IfcRelAssociatesMaterial`` -> ``IfcMaterialProfileSetUsage`` / ``IfcMaterialProfileSet`` /
``IfcMaterialProfile``).  A property's own ``Unit`` wins over the project's assigned unit.

A member meant to carry bending (``RIGID_JOINED_MEMBER``, or an end connection that fixes rotations)
is still read, as a bar: the reader notes that the model is audited as a pin-jointed truss.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Any

from .links import Links, attr_index
from .places import Issues, label
from .units import AREA, DENSITY, GRAVITY, MODULUS, PER_DEGREE, UNIT_WEIGHT, Unit, Units, number_text, resolve

#: curve member types that carry one sense of axial force only (FORMAT.md additions: ``behaviour``)
BEHAVIOUR = {"CABLE": "tension_only", "TENSION_MEMBER": "tension_only", "COMPRESSION_MEMBER": "compression_only"}


@dataclass
class MemberRead:
    materials: dict[str, dict[str, bytes]] = field(default_factory=dict)
    sections: dict[str, dict[str, bytes]] = field(default_factory=dict)
    rows: list[dict[str, Any]] = field(default_factory=list)
    entities: list[Any] = field(default_factory=list)
    material_entity: dict[str, Any] = field(default_factory=dict)
    section_entity: dict[str, Any] = field(default_factory=dict)
    rigid: list[Any] = field(default_factory=list)
    kinds: dict[str, list[Any]] = field(default_factory=dict)  #: predefined type -> members (cables, ...)
    no_e: dict[int, list[Any]] = field(default_factory=dict)  #: material id -> [material, members needing E]
    no_a: dict[int, list[Any]] = field(default_factory=dict)  #: profile id -> [profile, members needing A]


def _pset(owner: Any, name: str, links: Links) -> dict[str, Any]:
    """Single-value properties of the property set ``name`` attached to ``owner`` (HasProperties)."""
    out: dict[str, Any] = {}
    for ps in links.properties_of.get(owner.id(), ()):
        if getattr(ps, "Name", None) != name:  # IFC2X3's typed material properties have no Name
            continue
        for prop in ps.Properties or ():
            if prop.is_a("IfcPropertySingleValue") and prop.NominalValue is not None:
                out[prop.Name] = prop
    return out


def _profile_of(mat: Any) -> Any:
    """The one IfcMaterialProfile of a material definition (or the definition itself when it is not a profile set)."""
    if mat is None:
        return None
    if mat.is_a("IfcMaterialProfileSetUsage"):
        mat = mat.ForProfileSet
    if mat is not None and mat.is_a("IfcMaterialProfileSet"):
        profiles = list(mat.MaterialProfiles or [])
        return profiles[0] if len(profiles) == 1 else ("several", mat)
    return mat


class _Keys:
    """JSON names for materials and sections: the entity's name, made unique by its id when shared."""

    def __init__(self) -> None:
        self.by_id: dict[int, str] = {}
        self.used: set[str] = set()

    def key(self, entity: Any, name: str | None) -> tuple[str, bool]:
        k = self.by_id.get(entity.id())
        if k is not None:
            return k, False
        k = name or f"#{entity.id()}"
        if k in self.used:
            k = f"{k} (#{entity.id()})"
        self.used.add(k)
        self.by_id[entity.id()] = k
        return k, True


def _quantity(prop: Any, dim: tuple[int, int, int, int], unit_type: str, units: Units, issues: Issues) -> bytes | None:
    value = getattr(prop.NominalValue, "wrappedValue", None)
    if not isinstance(value, (int, float)) or isinstance(value, bool):
        issues.problem(prop, "is not a number")
        return None
    own = resolve(prop.Unit, issues) if getattr(prop, "Unit", None) is not None else None
    return number_text(float(value), units.scale(dim, unit_type, own))


def _unit_weight(prop: Any, units: Units, issues: Issues) -> bytes | None:
    """Weight per volume from ``Pset_MaterialCommon.MassDensity``: density times standard gravity."""
    value = getattr(prop.NominalValue, "wrappedValue", None)
    if not isinstance(value, (int, float)) or isinstance(value, bool):
        issues.problem(prop, "is not a number")
        return None
    own = (
        resolve(prop.Unit, issues) if getattr(prop, "Unit", None) is not None else units.assigned.get("MASSDENSITYUNIT")
    )
    density = own.factor if own is not None and own.dim == DENSITY else Fraction(1)  # kg/m^3 when none is assigned
    return number_text(float(value), units.scale(UNIT_WEIGHT, None, Unit(density * GRAVITY, UNIT_WEIGHT)))


def _properties(
    mat_def: Any,
    section_props: Any,
    out: MemberRead,
    mkeys: _Keys,
    skeys: _Keys,
    units: Units,
    issues: Issues,
    links: Links,
) -> tuple[dict[str, str], tuple[Any, str] | None, list[tuple[Any, dict[int, list[Any]]]]]:
    """The material and section keys of one material definition (read once for every member sharing it),
    a problem to report at each such member (entity or None for the member itself, message), and the
    property owners that lack E or A."""
    profile = _profile_of(mat_def)
    if isinstance(profile, tuple):
        return {}, (None, f"its material profile set {label(profile[1])} does not hold exactly one profile"), []
    if profile is None:
        return {}, (None, "has no material profile (IfcRelAssociatesMaterial -> IfcMaterialProfileSetUsage)"), []
    refs: dict[str, str] = {}
    owners: list[tuple[Any, dict[int, list[Any]]]] = []
    if profile.is_a("IfcMaterial"):  # IFC2X3: a material, and the section through IfcRelAssociatesProfileProperties
        if section_props is None:
            why = "has no section area (no material profile set, and no IfcRelAssociatesProfileProperties)"
            return {}, (None, why), []
        material, section = profile, section_props
    elif not profile.is_a("IfcMaterialProfile"):
        return {}, (None, f"its material {label(profile)} is not a material profile set (no section area)"), []
    else:
        material, section = profile.Material, profile.Profile
    if material is None:
        issues.problem(profile, "names no material")
    else:
        key, new = mkeys.key(material, material.Name)
        if new:
            out.materials[key] = _material_entry(material, units, issues, links)
            out.material_entity[key] = material
        if "E" not in out.materials[key]:
            owners.append((material, out.no_e))
        refs["material"] = key
    if section is None:
        issues.problem(profile, "names no profile")
    else:
        key, new = skeys.key(section, section.ProfileName)
        if new:
            sentry: dict[str, bytes] = {}
            if section.is_a("IfcGeneralProfileProperties"):  # IFC2X3
                area = getattr(section, "CrossSectionArea", None)
                if area is not None:
                    sentry["A"] = number_text(float(area), units.scale(AREA, "AREAUNIT"))
            else:
                props = _pset(section, "Pset_ProfileMechanical", links) or _pset(
                    profile, "Pset_ProfileMechanical", links
                )
                if "CrossSectionArea" in props:
                    a = _quantity(props["CrossSectionArea"], AREA, "AREAUNIT", units, issues)
                    if a is not None:
                        sentry["A"] = a
            out.sections[key] = sentry
            out.section_entity[key] = section
        if "A" not in out.sections[key]:
            owners.append((section, out.no_a))
        refs["section"] = key
    return refs, None, owners


def _material_entry(material: Any, units: Units, issues: Issues, links: Links) -> dict[str, bytes]:
    props = _pset(material, "Pset_MaterialMechanical", links)
    entry: dict[str, bytes] = {}
    if "YoungModulus" in props:
        e = _quantity(props["YoungModulus"], MODULUS, "MODULUSOFELASTICITYUNIT", units, issues)
        if e is not None:
            entry["E"] = e
    if "ThermalExpansionCoefficient" in props:
        prop = props["ThermalExpansionCoefficient"]
        a = _quantity(prop, PER_DEGREE, "THERMALEXPANSIONCOEFFICIENTUNIT", units, issues)
        if a is not None:
            entry["alpha"] = a
    for typed in links.properties_of.get(material.id(), ()):  # IFC2X3: IfcMechanicalMaterialProperties
        if typed.is_a("IfcMechanicalMaterialProperties"):
            for key, dim, unit_type in (
                ("YoungModulus", MODULUS, "MODULUSOFELASTICITYUNIT"),
                ("ThermalExpansionCoefficient", PER_DEGREE, "THERMALEXPANSIONCOEFFICIENTUNIT"),
            ):
                value = getattr(typed, key, None)
                if isinstance(value, float):
                    entry.setdefault(
                        "E" if key == "YoungModulus" else "alpha", number_text(value, units.scale(dim, unit_type))
                    )
    density = _pset(material, "Pset_MaterialCommon", links).get("MassDensity")
    if density is not None:
        w = _unit_weight(density, units, issues)
        if w is not None:
            entry["unit_weight"] = w
    return entry


def read_members(
    members: list[Any],
    ends: Callable[[Any], tuple[str, str] | None],
    units: Units,
    issues: Issues,
    links: Links,
    file: Any,
) -> MemberRead:
    out = MemberRead()
    mkeys, skeys = _Keys(), _Keys()
    name_i = attr_index(file, "IfcStructuralCurveMember", "Name")
    type_i = attr_index(file, "IfcStructuralCurveMember", "PredefinedType")
    outcomes: dict[tuple[int, int], Any] = {}
    for member in members:
        mid = member.id()
        name = member.get_argument(name_i)
        kind = member.get_argument(type_i)
        if not name:
            issues.problem(member, "has no Name (the member's id)")
        if kind == "RIGID_JOINED_MEMBER":
            out.rigid.append(member)
        both = ends(member)
        row: dict[str, Any] = {"id": name or f"#{mid}"}
        if both is not None:
            row["start"], row["end"] = both
        if kind in BEHAVIOUR:
            out.kinds.setdefault(kind, []).append(member)
            row["behaviour"] = BEHAVIOUR[kind]
        mat_def = links.material_of.get(mid)
        section_props = links.profile_properties_of.get(mid)
        key_def = (mat_def.id() if mat_def is not None else 0, section_props.id() if section_props is not None else 0)
        outcome = outcomes.get(key_def)
        if outcome is None:
            outcome = outcomes[key_def] = _properties(mat_def, section_props, out, mkeys, skeys, units, issues, links)
        refs, problem, owners = outcome
        if problem:
            issues.problem(member if problem[0] is None else problem[0], problem[1])
        row.update(refs)
        for owner, missing in owners:
            missing.setdefault(owner.id(), [owner]).append(member)
        out.rows.append(row)
        out.entities.append(member)
    for what, missing in (
        ("Pset_MaterialMechanical.YoungModulus (E)", out.no_e),
        ("Pset_ProfileMechanical.CrossSectionArea (A)", out.no_a),
    ):
        for owner, *users in missing.values():
            shown = ", ".join(label(u) for u in users[:3]) + (f" and {len(users) - 3} more" if len(users) > 3 else "")
            issues.problem(owner, f"has no {what}, needed by {shown}")
    return out
