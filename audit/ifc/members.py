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


def _pset(owner: Any, name: str) -> dict[str, Any]:
    """Single-value properties of the property set ``name`` attached to ``owner`` (HasProperties)."""
    out: dict[str, Any] = {}
    for ps in getattr(owner, "HasProperties", None) or ():
        if ps.Name != name:
            continue
        for prop in ps.Properties or ():
            if prop.is_a("IfcPropertySingleValue") and prop.NominalValue is not None:
                out[prop.Name] = prop
    return out


def _profile_of(member: Any) -> Any:
    """The one IfcMaterialProfile of a member (or the relating material definition when it is not one)."""
    for rel in member.HasAssociations or ():
        if not rel.is_a("IfcRelAssociatesMaterial"):
            continue
        mat = rel.RelatingMaterial
        if mat.is_a("IfcMaterialProfileSetUsage"):
            mat = mat.ForProfileSet
        if mat is not None and mat.is_a("IfcMaterialProfileSet"):
            profiles = list(mat.MaterialProfiles or [])
            return profiles[0] if len(profiles) == 1 else ("several", mat)
        return mat
    return None


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


def read_members(
    members: list[Any], ends: Callable[[Any], tuple[str, str] | None], units: Units, issues: Issues
) -> MemberRead:
    out = MemberRead()
    mkeys, skeys = _Keys(), _Keys()
    no_e: dict[int, list[Any]] = {}
    no_a: dict[int, list[Any]] = {}
    for member in members:
        name = member.Name
        if not name:
            issues.problem(member, "has no Name (the member's id)")
        if str(member.PredefinedType) == "RIGID_JOINED_MEMBER":
            out.rigid.append(member)
        both = ends(member)
        row: dict[str, Any] = {"id": name or f"#{member.id()}"}
        if both is not None:
            row["start"], row["end"] = both
        if str(member.PredefinedType) in BEHAVIOUR:
            out.kinds.setdefault(str(member.PredefinedType), []).append(member)
            row["behaviour"] = BEHAVIOUR[str(member.PredefinedType)]
        profile = _profile_of(member)
        if isinstance(profile, tuple):
            issues.problem(member, f"its material profile set {label(profile[1])} does not hold exactly one profile")
        elif profile is None:
            issues.problem(member, "has no material profile (IfcRelAssociatesMaterial -> IfcMaterialProfileSetUsage)")
        elif not profile.is_a("IfcMaterialProfile"):
            issues.problem(member, f"its material {label(profile)} is not a material profile set (no section area)")
        else:
            material, section = profile.Material, profile.Profile
            if material is None:
                issues.problem(profile, f"names no material (member {name!r})")
            else:
                key, new = mkeys.key(material, material.Name)
                if new:
                    props = _pset(material, "Pset_MaterialMechanical")
                    entry: dict[str, bytes] = {}
                    if "YoungModulus" in props:
                        e = _quantity(props["YoungModulus"], MODULUS, "MODULUSOFELASTICITYUNIT", units, issues)
                        if e is not None:
                            entry["E"] = e
                    if "ThermalExpansionCoefficient" in props:
                        a = _quantity(
                            props["ThermalExpansionCoefficient"],
                            PER_DEGREE,
                            "THERMALEXPANSIONCOEFFICIENTUNIT",
                            units,
                            issues,
                        )
                        if a is not None:
                            entry["alpha"] = a
                    density = _pset(material, "Pset_MaterialCommon").get("MassDensity")
                    if density is not None:
                        w = _unit_weight(density, units, issues)
                        if w is not None:
                            entry["unit_weight"] = w
                    out.materials[key] = entry
                    out.material_entity[key] = material
                if "E" not in out.materials[key]:
                    no_e.setdefault(material.id(), [material]).append(member)
                row["material"] = key
            if section is None:
                issues.problem(profile, f"names no profile (member {name!r})")
            else:
                key, new = skeys.key(section, section.ProfileName)
                if new:
                    props = _pset(section, "Pset_ProfileMechanical") or _pset(profile, "Pset_ProfileMechanical")
                    sentry: dict[str, bytes] = {}
                    if "CrossSectionArea" in props:
                        a = _quantity(props["CrossSectionArea"], AREA, "AREAUNIT", units, issues)
                        if a is not None:
                            sentry["A"] = a
                    out.sections[key] = sentry
                    out.section_entity[key] = section
                if "A" not in out.sections[key]:
                    no_a.setdefault(section.id(), [section]).append(member)
                row["section"] = key
        out.rows.append(row)
        out.entities.append(member)
    for what, missing in (
        ("Pset_MaterialMechanical.YoungModulus (E)", no_e),
        ("Pset_ProfileMechanical.CrossSectionArea (A)", no_a),
    ):
        for owner, *users in missing.values():
            shown = ", ".join(label(u) for u in users[:3]) + (f" and {len(users) - 3} more" if len(users) > 3 else "")
            issues.problem(owner, f"has no {what}, needed by {shown}")
    return out
