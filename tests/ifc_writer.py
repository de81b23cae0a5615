"""Write a neutral-format model as an IFC4 structural analysis model, through ifcopenshell's entity API.

Used by the IFC tests and the IFC reading benchmark: each published case is written in SI, mm/kN
and ft/kip units (E, area and spring stiffness in their own assigned units: Pa / MPa / ksi, m² / mm²
/ in², N/m / kN/m / kip/in), so that reading it back must convert every quantity correctly.  Length
errors have no IFC entity; a model with them cannot be written (the tests drop those cases).
"""

from __future__ import annotations

from fractions import Fraction
from typing import Any

import ifcopenshell
import ifcopenshell.guid
import numpy as np

from audit.model import FORCE_UNITS, LENGTH_UNITS, TEMPERATURE_UNITS

#: name -> (length, force, modulus, area, stiffness, temperature) factors to SI, and the format units
SYSTEMS: dict[str, dict[str, Any]] = {
    "si": {"length": Fraction(1), "force": Fraction(1), "E": Fraction(1), "A": Fraction(1), "k": Fraction(1),
           "temperature": "degC"},
    "mm_kN": {"length": Fraction(1, 1000), "force": Fraction(1000), "E": Fraction(10**6), "A": Fraction(1, 10**6),
              "k": Fraction(1000), "temperature": "degC"},
    "ft_kip": {"length": LENGTH_UNITS["ft"], "force": FORCE_UNITS["kip"],
               "E": FORCE_UNITS["kip"] / LENGTH_UNITS["in"] ** 2, "A": LENGTH_UNITS["in"] ** 2,
               "k": FORCE_UNITS["kip"] / LENGTH_UNITS["in"], "temperature": "degF"},
}  # fmt: skip

AXES = ("x", "y", "z")


BEHAVIOUR = {"linear": "PIN_JOINED_MEMBER", "tension_only": "TENSION_MEMBER", "compression_only": "COMPRESSION_MEMBER"}
GRAVITY = Fraction("9.80665")


class NotRepresentableError(ValueError):
    """The model uses something IFC has no entity for (a length error, non-orthogonal restraints)."""


class _Writer:
    def __init__(self, system: str) -> None:
        self.f = ifcopenshell.file(schema="IFC4")
        self.system = system
        self.c = self.f.create_entity

    def root(self, kind: str, **kw: Any) -> Any:
        return self.c(kind, GlobalId=ifcopenshell.guid.new(), **kw)

    # ------------------------------------------------------------------ units
    def units(self) -> Any:
        c = self.c
        dims = c("IfcDimensionalExponents", 0, 0, 0, 0, 0, 0, 0)
        metre = c("IfcSIUnit", UnitType="LENGTHUNIT", Name="METRE")
        newton = c("IfcSIUnit", UnitType="FORCEUNIT", Name="NEWTON")
        sq_metre = c("IfcSIUnit", UnitType="AREAUNIT", Name="SQUARE_METRE")

        def conv(unit_type: str, name: str, factor: str, of: Any, exps: tuple[int, ...]) -> Any:
            value = c("IfcMeasureWithUnit", self.f.create_entity("IfcReal", float(factor)), of)
            d = c("IfcDimensionalExponents", *exps)
            return c("IfcConversionBasedUnit", Dimensions=d, UnitType=unit_type, Name=name, ConversionFactor=value)

        def derived(unit_type: str, *elements: tuple[Any, int]) -> Any:
            els = [c("IfcDerivedUnitElement", Unit=u, Exponent=e) for u, e in elements]
            return c("IfcDerivedUnit", Elements=els, UnitType=unit_type)

        if self.system == "si":
            length, force, area = metre, newton, sq_metre
            temp = c("IfcSIUnit", UnitType="THERMODYNAMICTEMPERATUREUNIT", Name="DEGREE_CELSIUS")
            modulus = derived("MODULUSOFELASTICITYUNIT", (newton, 1), (metre, -2))
            stiff = derived("LINEARSTIFFNESSUNIT", (newton, 1), (metre, -1))
        elif self.system == "mm_kN":
            length = c("IfcSIUnit", UnitType="LENGTHUNIT", Prefix="MILLI", Name="METRE")
            force = c("IfcSIUnit", UnitType="FORCEUNIT", Prefix="KILO", Name="NEWTON")
            area = c("IfcSIUnit", UnitType="AREAUNIT", Prefix="MILLI", Name="SQUARE_METRE")
            temp = c("IfcSIUnit", UnitType="THERMODYNAMICTEMPERATUREUNIT", Name="DEGREE_CELSIUS")
            mpa = c("IfcSIUnit", UnitType="PRESSUREUNIT", Prefix="MEGA", Name="PASCAL")
            modulus = derived("MODULUSOFELASTICITYUNIT", (mpa, 1))
            stiff = derived("LINEARSTIFFNESSUNIT", (force, 1), (metre, -1))
        else:
            length = conv("LENGTHUNIT", "foot", "0.3048", metre, (1, 0, 0, 0, 0, 0, 0))
            inch = conv("LENGTHUNIT", "inch", "0.0254", metre, (1, 0, 0, 0, 0, 0, 0))
            force = conv("FORCEUNIT", "kip", "4448.2216152605", newton, (1, 1, -2, 0, 0, 0, 0))
            area = conv("AREAUNIT", "square inch", "0.00064516", sq_metre, (2, 0, 0, 0, 0, 0, 0))
            kelvin = c("IfcSIUnit", UnitType="THERMODYNAMICTEMPERATUREUNIT", Name="KELVIN")
            value = c("IfcMeasureWithUnit", self.f.create_entity("IfcReal", 5 / 9), kelvin)
            temp = c("IfcConversionBasedUnitWithOffset", Dimensions=c("IfcDimensionalExponents", 0, 0, 0, 0, 1, 0, 0),
                     UnitType="THERMODYNAMICTEMPERATUREUNIT", Name="degree Fahrenheit", ConversionFactor=value,
                     ConversionOffset=-459.67)  # fmt: skip
            modulus = derived("MODULUSOFELASTICITYUNIT", (force, 1), (inch, -2))
            stiff = derived("LINEARSTIFFNESSUNIT", (force, 1), (inch, -1))
        del dims
        return c("IfcUnitAssignment", Units=[length, force, area, temp, modulus, stiff])


def _convert(value: Any, factor: Fraction) -> float:
    return float(Fraction(str(value)) * factor)


def _frame(dirs: list[np.ndarray]) -> np.ndarray | None:
    """Rows: local x, y, z holding the given directions as axes, or None when they are the global axes."""
    if all(np.count_nonzero(d) == 1 for d in dirs):
        return None
    x = dirs[0] / np.linalg.norm(dirs[0])
    rest = [d / np.linalg.norm(d) for d in dirs[1:]]
    for d in rest:
        if abs(float(d @ x)) > 1e-12 and abs(abs(float(d @ x)) - 1) > 1e-12:
            raise NotRepresentableError("restraint directions at one joint are not orthogonal")
    y = rest[0] if rest else (np.array([0.0, 0.0, 1.0]) if abs(x[2]) < 0.9 else np.array([1.0, 0.0, 0.0]))
    if not rest:
        y = y - (y @ x) * x
        y /= np.linalg.norm(y)
    z = np.cross(x, y)
    return np.array([x, y, z])


def write_ifc(doc: dict[str, Any], system: str = "si", *, plane_type: bool = True, assign: bool = True) -> Any:
    """An IFC4 file (an ``ifcopenshell.file``) holding ``doc``, a neutral model parsed by ``json.load``.

    ``plane_type``: a 2D model is an ``IN_PLANE_LOADING_2D`` analysis model (else ``LOADING_3D``, and
    the reader must detect the plane).  ``assign``: assign the items to the analysis model.
    """
    w = _Writer(system)
    c, f = w.c, w.f
    sysu = SYSTEMS[system]
    units = doc["units"]
    lf = LENGTH_UNITS[units["length"]] / sysu["length"]
    ff = FORCE_UNITS[units["force"]] / sysu["force"]
    ef = FORCE_UNITS[units["force"]] / LENGTH_UNITS[units["length"]] ** 2 / sysu["E"]
    af = LENGTH_UNITS[units["length"]] ** 2 / sysu["A"]
    kf = FORCE_UNITS[units["force"]] / LENGTH_UNITS[units["length"]] / sysu["k"]
    tf = TEMPERATURE_UNITS[units.get("temperature", "degC")] / TEMPERATURE_UNITS[sysu["temperature"]]
    dim = doc["dimensions"]
    origin = c("IfcCartesianPoint", (0.0, 0.0, 0.0))
    world = c("IfcAxis2Placement3D", Location=origin)
    ctx = c(
        "IfcGeometricRepresentationContext",
        ContextType="Model",
        CoordinateSpaceDimension=3,
        WorldCoordinateSystem=world,
    )
    project = w.root("IfcProject", Name="test project", RepresentationContexts=[ctx], UnitsInContext=w.units())
    placement = c("IfcLocalPlacement", RelativePlacement=world)
    model = w.root(
        "IfcStructuralAnalysisModel",
        Name=doc.get("title") or "model",
        PredefinedType="IN_PLANE_LOADING_2D" if dim == 2 and plane_type else "LOADING_3D",
        OrientationOf2DPlane=c("IfcAxis2Placement3D", Location=origin) if dim == 2 and plane_type else None,
        SharedPlacement=placement,
    )
    w.root("IfcRelDeclares", RelatingContext=project, RelatedDefinitions=[model])

    def node_id(v: Any) -> str:
        return str(v)

    conns: dict[str, Any] = {}
    vertices: dict[str, Any] = {}
    xyz: dict[str, np.ndarray] = {}
    for nd in doc["nodes"]:
        p = tuple(_convert(nd[a], lf) if a in nd else 0.0 for a in AXES)
        vp = c("IfcVertexPoint", c("IfcCartesianPoint", p))
        rep = c("IfcTopologyRepresentation", ctx, "Reference", "Vertex", [vp])
        conn = w.root("IfcStructuralPointConnection", Name=node_id(nd["id"]), ObjectPlacement=placement,
                      Representation=c("IfcProductDefinitionShape", Representations=[rep]))  # fmt: skip
        conns[node_id(nd["id"])] = conn
        vertices[node_id(nd["id"])] = vp
        xyz[node_id(nd["id"])] = np.array(p)
    for sup in doc.get("supports", []):
        dirs: list[np.ndarray] = []
        kinds: list[Any] = []
        for r in sup.get("restrain", []):
            dirs.append(_vec(r, dim))
            kinds.append(True)
        for s in sup.get("springs", []):
            dirs.append(_vec(s, dim))
            kinds.append(_convert(s["stiffness"], kf))
        frame = _frame(dirs)
        values: list[Any] = [False, False, False]
        for d, k in zip(dirs, kinds, strict=True):
            axis = int(np.argmax(np.abs(frame @ d))) if frame is not None else int(np.flatnonzero(d)[0])
            values[axis] = k
        cond = c(
            "IfcBoundaryNodeCondition",
            Name=f"support {sup['node']}",
            **{f"TranslationalStiffness{a}": _stiffness(f, v) for a, v in zip("XYZ", values, strict=True)},
            **{f"RotationalStiffness{a}": f.create_entity("IfcBoolean", False) for a in "XYZ"},
        )
        conn = conns[node_id(sup["node"])]
        conn.AppliedCondition = cond
        if frame is not None:
            conn.ConditionCoordinateSystem = c(
                "IfcAxis2Placement3D", Location=origin,
                Axis=c("IfcDirection", tuple(float(v) for v in frame[2])),
                RefDirection=c("IfcDirection", tuple(float(v) for v in frame[0])),
            )  # fmt: skip

    # materials and sections: one profile set per (E source, A source) pair
    materials: dict[str, Any] = {}
    profiles: dict[str, Any] = {}

    def material(key: str, entry: dict[str, Any]) -> Any:
        if key not in materials:
            m = c("IfcMaterial", Name=key)
            e = f.create_entity("IfcModulusOfElasticityMeasure", _convert(entry["E"], ef))
            props = [c("IfcPropertySingleValue", Name="YoungModulus", NominalValue=e)]
            if "alpha" in entry:
                a = float(Fraction(str(entry["alpha"])) / tf)
                props.append(c("IfcPropertySingleValue", Name="ThermalExpansionCoefficient",
                               NominalValue=f.create_entity("IfcThermalExpansionCoefficientMeasure", a)))  # fmt: skip
            c("IfcMaterialProperties", Name="Pset_MaterialMechanical", Properties=props, Material=m)
            if "unit_weight" in entry:  # weight per volume -> mass density in kg/m^3 (standard gravity)
                rho = float(Fraction(str(entry["unit_weight"])) * FORCE_UNITS[units["force"]]
                            / LENGTH_UNITS[units["length"]] ** 3 / GRAVITY)  # fmt: skip
                density = f.create_entity("IfcMassDensityMeasure", rho)
                c("IfcMaterialProperties", Name="Pset_MaterialCommon", Material=m,
                  Properties=[c("IfcPropertySingleValue", Name="MassDensity", NominalValue=density)])  # fmt: skip
            materials[key] = m
        return materials[key]

    def profile(key: str, entry: dict[str, Any]) -> Any:
        if key not in profiles:
            p = c("IfcProfileDef", ProfileType="AREA", ProfileName=key)
            area = f.create_entity("IfcAreaMeasure", _convert(entry["A"], af))
            c("IfcProfileProperties", Name="Pset_ProfileMechanical", ProfileDefinition=p,
              Properties=[c("IfcPropertySingleValue", Name="CrossSectionArea", NominalValue=area)])  # fmt: skip
            profiles[key] = p
        return profiles[key]

    sets: dict[tuple[str, str], list[Any]] = {}
    set_parts: dict[tuple[str, str], tuple[Any, Any]] = {}
    members: dict[str, Any] = {}
    for m in doc["members"]:
        mid = str(m["id"])
        mkey = m["material"] if "E" not in m and "material" in m else f"E of {mid}"
        skey = m["section"] if "A" not in m and "section" in m else f"A of {mid}"
        mat_entry = dict(doc.get("materials", {}).get(m.get("material"), {}))
        if "E" in m:
            mat_entry = {k: m[k] for k in ("E", "alpha", "unit_weight") if k in m}
        sec_entry = {"A": m["A"]} if "A" in m else doc["sections"][m["section"]]
        s, e = node_id(m["start"]), node_id(m["end"])
        edge = c("IfcEdge", vertices[s], vertices[e])
        rep = c("IfcTopologyRepresentation", ctx, "Reference", "Edge", [edge])
        d = xyz[e] - xyz[s]
        axis = (
            np.array([0.0, 0.0, 1.0])
            if np.linalg.norm(np.cross(d, [0, 0, 1])) > 1e-9 * np.linalg.norm(d)
            else np.array([0.0, 1.0, 0.0])
        )
        shape = c("IfcProductDefinitionShape", Representations=[rep])
        member = w.root("IfcStructuralCurveMember", Name=mid, ObjectPlacement=placement,
                        PredefinedType=BEHAVIOUR.get(m.get("behaviour", "linear")), Representation=shape,
                        Axis=c("IfcDirection", tuple(axis)))  # fmt: skip
        for end in (s, e):
            w.root(
                "IfcRelConnectsStructuralMember",
                RelatingStructuralMember=member,
                RelatedStructuralConnection=conns[end],
            )
        members[mid] = member
        sets.setdefault((mkey, skey), []).append(member)
        set_parts[(mkey, skey)] = (material(mkey, mat_entry), profile(skey, sec_entry))
    for key, objs in sets.items():
        mat, prof = set_parts[key]
        mp = c("IfcMaterialProfile", Name=f"{key[0]} / {key[1]}", Material=mat, Profile=prof)
        ps = c("IfcMaterialProfileSet", Name=f"{key[0]} / {key[1]}", MaterialProfiles=[mp])
        w.root(
            "IfcRelAssociatesMaterial",
            RelatedObjects=objs,
            RelatingMaterial=c("IfcMaterialProfileSetUsage", ForProfileSet=ps),
        )
    if assign:
        w.root("IfcRelAssignsToGroup", RelatedObjects=[*conns.values(), *members.values()], RelatingGroup=model)

    groups: dict[str, Any] = {}
    for lc in doc.get("load_cases", []):
        if lc.get("length_errors"):
            raise NotRepresentableError("length errors have no IFC entity")
        g = w.root("IfcStructuralLoadCase", Name=str(lc["id"]), Description=lc.get("title"), PredefinedType="LOAD_CASE",
                   ActionType="NOTDEFINED", ActionSource="NOTDEFINED")  # fmt: skip
        groups[str(lc["id"])] = g
        if "self_weight" in lc:
            sw = lc["self_weight"]
            d = np.array(
                [float(v) for v in sw.get("direction", [0, -1] if dim == 2 else [0, 0, -1])] + [0.0] * (3 - dim)
            )
            g.SelfWeightCoefficients = tuple(float(v) for v in float(sw["factor"]) * d / np.linalg.norm(d))
        acts = []
        for ld in lc.get("loads", []):
            force = c(
                "IfcStructuralLoadSingleForce", **{f"Force{a.upper()}": _convert(ld.get(f"f{a}", 0), ff) for a in AXES}
            )
            act = w.root(
                "IfcStructuralPointAction",
                Name=f"{lc['id']} at {ld['node']}",
                AppliedLoad=force,
                GlobalOrLocal="GLOBAL_COORDS",
            )
            w.root(
                "IfcRelConnectsStructuralActivity",
                RelatingElement=conns[node_id(ld["node"])],
                RelatedStructuralActivity=act,
            )
            acts.append(act)
        for sd in lc.get("support_displacements", []):
            if "direction" in sd:
                raise NotRepresentableError("a settlement along an inclined restraint")
            disp = c("IfcStructuralLoadSingleDisplacement",
                     **{f"Displacement{a.upper()}": _convert(sd.get(a, 0), lf) for a in AXES})  # fmt: skip
            act = w.root(
                "IfcStructuralPointAction",
                Name=f"{lc['id']} at {sd['node']}",
                AppliedLoad=disp,
                GlobalOrLocal="GLOBAL_COORDS",
            )
            w.root(
                "IfcRelConnectsStructuralActivity",
                RelatingElement=conns[node_id(sd["node"])],
                RelatedStructuralActivity=act,
            )
            acts.append(act)
        for tc in lc.get("temperature_changes", []):
            temp = c("IfcStructuralLoadTemperature", DeltaTConstant=float(Fraction(str(tc["delta"])) * tf))
            act = w.root("IfcStructuralCurveAction", Name=f"{lc['id']} on {tc['member']}", AppliedLoad=temp,
                         GlobalOrLocal="LOCAL_COORDS", PredefinedType="CONST")  # fmt: skip
            w.root(
                "IfcRelConnectsStructuralActivity",
                RelatingElement=members[str(tc["member"])],
                RelatedStructuralActivity=act,
            )
            acts.append(act)
        if acts:
            w.root("IfcRelAssignsToGroup", RelatedObjects=acts, RelatingGroup=g)
    combos = []
    for cb in doc.get("combinations", []):
        g = w.root("IfcStructuralLoadGroup", Name=str(cb["id"]), PredefinedType="LOAD_COMBINATION",
                   ActionType="NOTDEFINED", ActionSource="NOTDEFINED")  # fmt: skip
        groups[str(cb["id"])] = g
        combos.append(g)
        for case, factor in cb["factors"].items():
            w.root(
                "IfcRelAssignsToGroupByFactor",
                RelatedObjects=[groups[str(case)]],
                RelatingGroup=g,
                Factor=float(factor),
            )
    # the standard allows LoadedBy to list only the top-level groups: the cases are then found by type
    top = combos or [g for k, g in groups.items()]
    if top:
        model.LoadedBy = top
    if "results" in doc:
        model.HasResults = _results(w, doc, conns, members, groups, lf, ff)
    return f


def _results(w: _Writer, doc: dict[str, Any], conns: dict[str, Any], members: dict[str, Any],
             groups: dict[str, Any], lf: Fraction, ff: Fraction) -> list[Any]:  # fmt: skip
    c = w.c
    res = doc["results"]
    if "units" in res:
        lf = lf * LENGTH_UNITS[res["units"]["length"]] / LENGTH_UNITS[doc["units"]["length"]]
        ff = ff * FORCE_UNITS[res["units"]["force"]] / FORCE_UNITS[doc["units"]["force"]]
    sign = -1 if res.get("sign_convention") == "compression_positive" else 1
    out = []
    for cid, body in res["cases"].items():
        g = w.root("IfcStructuralResultGroup", Name=f"results of {cid}", TheoryType="FIRST_ORDER_THEORY",
                   ResultForLoadGroup=groups[str(cid)], IsLinear=True)  # fmt: skip
        items = []
        for kind, entity, prefix, factor in (
            ("reactions", "IfcStructuralLoadSingleForce", "Force", ff),
            ("displacements", "IfcStructuralLoadSingleDisplacement", "Displacement", lf),
        ):
            for node, comps in body.get(kind, {}).items():
                load = c(entity, **{f"{prefix}{a.upper()}": _convert(v, factor) for a, v in comps.items()})
                r = w.root(
                    "IfcStructuralPointReaction", Name=f"{kind} {node}", AppliedLoad=load, GlobalOrLocal="GLOBAL_COORDS"
                )
                w.root(
                    "IfcRelConnectsStructuralActivity", RelatingElement=conns[str(node)], RelatedStructuralActivity=r
                )
                items.append(r)
        for mid, n in body.get("axial_forces", {}).items():
            load = c("IfcStructuralLoadSingleForce", ForceX=sign * _convert(n, ff))
            r = w.root(
                "IfcStructuralCurveReaction",
                Name=f"N {mid}",
                AppliedLoad=load,
                GlobalOrLocal="LOCAL_COORDS",
                PredefinedType="CONST",
            )
            w.root("IfcRelConnectsStructuralActivity", RelatingElement=members[str(mid)], RelatedStructuralActivity=r)
            items.append(r)
        if items:
            w.root("IfcRelAssignsToGroup", RelatedObjects=items, RelatingGroup=g)
        out.append(g)
    return out


def _vec(r: Any, dim: int) -> np.ndarray:
    if isinstance(r, str):
        v = np.zeros(3)
        v[AXES.index(r)] = 1.0
        return v
    if "axis" in r:
        return _vec(r["axis"], dim)
    d = [float(x) for x in r["direction"]] + [0.0] * (3 - dim)
    return np.array(d)


def _stiffness(f: Any, v: Any) -> Any:
    if isinstance(v, bool):
        return f.create_entity("IfcBoolean", v)
    return f.create_entity("IfcLinearStiffnessMeasure", float(v))


def convert_doc(doc: dict[str, Any], system: str) -> dict[str, Any]:
    """The same model in the unit system's length and force units, every number the float64 that the IFC file
    stores for it (so that the two carry the same numbers and the same printed digits)."""
    sysu = SYSTEMS[system]
    names = {"si": ("m", "N"), "mm_kN": ("mm", "kN"), "ft_kip": ("ft", "kip")}[system]
    units = doc["units"]
    lf = LENGTH_UNITS[units["length"]] / LENGTH_UNITS[names[0]]
    ff = FORCE_UNITS[units["force"]] / FORCE_UNITS[names[1]]
    tf = TEMPERATURE_UNITS[units.get("temperature", "degC")] / TEMPERATURE_UNITS[sysu["temperature"]]
    ef, kf = ff / lf**2, ff / lf

    def num(v: Any, k: Fraction) -> float:
        return float(Fraction(str(v)) * k)

    out = dict(doc)
    out["units"] = {"length": names[0], "force": names[1]}
    if "temperature" in units:
        out["units"]["temperature"] = sysu["temperature"]
    out["nodes"] = [{k: (num(v, lf) if k in AXES else v) for k, v in nd.items()} for nd in doc["nodes"]]
    out["materials"] = {
        n: {k: num(v, ef if k == "E" else 1 / tf) for k, v in m.items()} for n, m in doc.get("materials", {}).items()
    }
    out["sections"] = {n: {"A": num(s["A"], lf**2)} for n, s in doc.get("sections", {}).items()}
    factors = {"E": ef, "A": lf**2, "alpha": 1 / tf}
    out["members"] = [{k: (num(v, factors[k]) if k in factors else v) for k, v in m.items()} for m in doc["members"]]
    sups = []
    for s in doc.get("supports", []):
        s = dict(s)
        if "springs" in s:
            s["springs"] = [{**sp, "stiffness": num(sp["stiffness"], kf)} for sp in s["springs"]]
        sups.append(s)
    out["supports"] = sups
    cases = []
    for lc in doc.get("load_cases", []):
        lc = dict(lc)
        if "loads" in lc:
            lc["loads"] = [{k: (num(v, ff) if k.startswith("f") else v) for k, v in ld.items()} for ld in lc["loads"]]
        if "support_displacements" in lc:
            lc["support_displacements"] = [
                {k: (num(v, lf) if k in AXES else v) for k, v in sd.items()} for sd in lc["support_displacements"]
            ]
        if "temperature_changes" in lc:
            lc["temperature_changes"] = [{**t, "delta": num(t["delta"], tf)} for t in lc["temperature_changes"]]
        cases.append(lc)
    out["load_cases"] = cases
    if "results" in doc:
        res = doc["results"]
        rl, rf = lf, ff
        if "units" in res:
            rl = LENGTH_UNITS[res["units"]["length"]] / LENGTH_UNITS[names[0]]
            rf = FORCE_UNITS[res["units"]["force"]] / FORCE_UNITS[names[1]]
        sign = -1 if res.get("sign_convention") == "compression_positive" else 1
        body: dict[str, Any] = {}
        for cid, case in res["cases"].items():
            body[cid] = {}
            for kind, k in (("displacements", rl), ("reactions", rf)):
                if kind in case:
                    body[cid][kind] = {n: {a: num(v, k) for a, v in comps.items()} for n, comps in case[kind].items()}
            if "axial_forces" in case:
                body[cid]["axial_forces"] = {m: sign * num(v, rf) for m, v in case["axial_forces"].items()}
        out["results"] = {"cases": body}
    return out
