"""Reading one IFC file: open it, pick the analysis model, read its parts, hand the tree to the format.

The parts are read by their own modules (units, joints, members, supports, loads, results); every
problem found names its entity, and all of them are raised together.  The model's items are the
point connections and curve members assigned to the analysis model (``IfcRelAssignsToGroup``), plus
the connections its members are connected to; a file with one analysis model and nothing assigned to
it uses every structural item in the file (with a note).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from ..errors import InputError, Problem
from ..sources import SourceRead
from .geometry import Joint, Placements, Positions, read_joint
from .links import Links, attr_index, read_links
from .loads import read_loads
from .members import read_members
from .notes import NOTE_ASSIGNMENT, NOTE_IGNORED, NOTE_INEXACT, NOTE_UNITS
from .places import Issues, label
from .results import read_results
from .supports import Support, read_support
from .tree import assemble
from .units import LENGTH, QUANTITY, read_units

#: schemas whose structural analysis entities the reader knows
SCHEMAS = ("IFC4", "IFC4X3", "IFC4X3_ADD2", "IFC2X3")
MAX_BYTES = 1024 * 1024 * 1024


def _open(path: Path) -> Any:
    import ifcopenshell  # imported here: only an IFC source pays for it

    name = str(path)
    try:
        size = path.stat().st_size
    except OSError as exc:
        raise InputError([Problem("$", f"cannot read the file: {exc.strerror or exc}")], name) from None
    if size > MAX_BYTES:
        raise InputError([Problem("$", f"input is too large: {size} bytes, the limit is {MAX_BYTES}")], name)
    try:
        file = ifcopenshell.open(name)
    except Exception as exc:  # ifcopenshell raises its own errors for anything unreadable
        raise InputError([Problem("$", f"not a readable IFC file ({exc})")], name) from None
    if file.schema not in SCHEMAS:
        raise InputError([Problem("$", f"IFC schema {file.schema} is not read; use IFC4 or IFC2X3")], name)
    return file


def _pick_model(file: Any, model_name: str | None, name: str) -> Any:
    models = list(file.by_type("IfcStructuralAnalysisModel"))
    listed = ", ".join(repr(m.Name or f"#{m.id()}") for m in models)
    if not models:
        raise InputError([Problem("$", "the file holds no IfcStructuralAnalysisModel (no analysis model)")], name)
    if model_name is not None:
        hits = [m for m in models if m.Name == model_name]
        if len(hits) != 1:
            why = "no analysis model is named" if not hits else "several analysis models are named"
            raise InputError([Problem("$", f"{why} {model_name!r}; the file holds {listed}")], name)
        return hits[0]
    if len(models) > 1:
        msg = f"the file holds {len(models)} analysis models ({listed}): choose one with --ifc-model NAME"
        raise InputError([Problem("$", msg)], name)
    return models[0]


def _items(model: Any, file: Any, issues: Issues, links: Links) -> tuple[list[Any], list[Any]]:
    conns: dict[int, Any] = {}
    members: dict[int, Any] = {}
    for obj, _rel in links.group_objects.get(model.id(), ()):
        kind = obj.is_a()
        if kind == "IfcStructuralPointConnection":
            conns[obj.id()] = obj
        elif kind in ("IfcStructuralCurveMember", "IfcStructuralCurveMemberVarying"):
            members[obj.id()] = obj
    if not conns and not members and len(file.by_type("IfcStructuralAnalysisModel")) == 1:
        conns = {c.id(): c for c in file.by_type("IfcStructuralPointConnection")}
        members = {m.id(): m for m in file.by_type("IfcStructuralCurveMember")}
        if conns or members:
            issues.note(
                NOTE_ASSIGNMENT,
                "nothing is assigned to the analysis model: every structural item of the file is read",
                model,
            )
    for mid in members:
        for c, _rel in links.member_conns.get(mid, ()):
            if c.id() not in conns and c.is_a("IfcStructuralPointConnection"):
                conns[c.id()] = c
    return sorted(conns.values(), key=lambda e: e.id()), sorted(members.values(), key=lambda e: e.id())


class _Ends:
    """The two joint names of each member, and the rigid end connections seen."""

    def __init__(self, joints: dict[int, Joint], issues: Issues, links: Links, file: Any) -> None:
        self.joints = joints
        self.issues = issues
        self.links = links
        self.rigid: list[Any] = []
        self.condition_i = attr_index(file, "IfcRelConnectsStructuralMember", "AppliedCondition")

    def __call__(self, member: Any) -> tuple[str, str] | None:
        conns = []
        for c, rel in self.links.member_conns.get(member.id(), ()):
            if c.id() not in self.joints and not c.is_a("IfcStructuralPointConnection"):
                continue
            conns.append(c)
            cond = rel.get_argument(self.condition_i)
            if cond is not None and cond.is_a("IfcBoundaryNodeCondition"):
                for a in "XYZ":
                    v = getattr(cond, f"RotationalStiffness{a}", None)
                    v = getattr(v, "wrappedValue", v)
                    if v is True or (isinstance(v, float) and v > 0):
                        self.rigid.append(member)
                        break
        if not conns:
            self.issues.problem(member, "names no point connection (no IfcRelConnectsStructuralMember)")
            return None
        if len(conns) != 2:
            shown = ", ".join(label(c) for c in conns)
            self.issues.problem(member, f"is connected to {len(conns)} point connections ({shown}); a bar needs two")
            return None
        names = []
        for c in conns:
            j = self.joints.get(c.id())
            if j is None:
                return None  # its geometry problem is already reported
            names.append(j.name)
        return names[0], names[1]


def read_ifc(path: str | Path, *, model_name: str | None = None) -> SourceRead:
    """Read an IFC structural analysis model into the neutral model (see :mod:`audit.ifc`)."""
    path = Path(path)
    name = str(path)
    file = _open(path)
    model = _pick_model(file, model_name, name)
    issues = Issues(name)
    others = [m for m in file.by_type("IfcStructuralAnalysisModel") if m.id() != model.id()]
    if others:
        listed = ", ".join(repr(m.Name or f"#{m.id()}") for m in others)
        issues.note(NOTE_ASSIGNMENT, f"this analysis model was read; the file also holds {listed}", model)
    projects = file.by_type("IfcProject")
    units = read_units(projects[0] if projects else None, issues)
    for text in units.notes:
        issues.note(NOTE_UNITS, text, projects[0] if projects else "")
    links = read_links(file)
    conns, members = _items(model, file, issues, links)
    placements = Placements()
    length_scale = units.scale(LENGTH, "LENGTHUNIT")
    joints: dict[int, Joint] = {}
    pos = Positions(file)
    for c in conns:
        name = c.get_argument(pos.name)
        if not name:
            issues.problem(c, "has no Name (the joint's id)")
        j = read_joint(c, name or f"#{c.id()}", length_scale, placements, issues, pos)
        if j is not None:
            joints[c.id()] = j
    ends = _Ends(joints, issues, links, file)
    mem = read_members(members, ends, units, issues, links, file)
    supports: list[Support] = []
    for c in conns:
        s = read_support(c, units, issues)
        if s is not None and (s.restrain or s.springs or s.rotations):
            supports.append(s)
    loads = read_loads(model, file, set(joints), units, placements, issues, links)
    results = read_results(model, file, units, placements, issues, links)
    for kind in ("IfcStructuralSurfaceMember", "IfcStructuralCurveConnection", "IfcStructuralSurfaceConnection"):
        count = len(file.by_type(kind))
        if count:
            loads.ignored[kind] = loads.ignored.get(kind, 0) + count
    for kind, count in sorted(loads.ignored.items()):
        issues.note(NOTE_IGNORED, f"{count} × {kind} not read (a pin-jointed truss model has no place for it)")
    for dim in sorted(units.inexact):
        issues.note(
            NOTE_INEXACT,
            f"{QUANTITY.get(dim, 'values')} converted to the model's units ({units.length}, {units.force}) with a "
            "factor that has no exact decimal form (rounded to 40 significant digits)",
        )
    issues.raise_if_any()
    built = assemble(file, model, joints, mem, ends.rigid, supports, loads, results, units, issues)
    return built
