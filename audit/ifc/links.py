"""The relationships of an IFC file, read once into tables keyed by entity id.

ifcopenshell answers an inverse attribute (``ConnectedBy``, ``AssignedToStructuralItem``,
``HasAssociations``, ``IsGroupedBy`` ...) by a search of its own, and a named attribute through a
Python lookup of the attribute's kind; on a model of 10^5 members those two costs are most of the
reading time.  Reading every relationship of a kind once, by attribute position, and looking
entities up by id afterwards makes the traversal linear with a small constant.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any


def attr_index(file: Any, entity: str, attribute: str) -> int:
    """Position of an attribute of an entity in the file's schema (inherited attributes come first)."""
    import ifcopenshell

    decl = ifcopenshell.ifcopenshell_wrapper.schema_by_name(file.schema).declaration_by_name(entity).as_entity()
    if decl is None:
        raise KeyError(entity)
    return int(decl.attribute_index(attribute))


@dataclass
class Links:
    #: member id -> [(point or other connection, the IfcRelConnectsStructuralMember)]
    member_conns: dict[int, list[tuple[Any, Any]]] = field(default_factory=dict)
    #: activity (action, reaction) id -> the item it acts on (IfcRelConnectsStructuralActivity)
    activity_target: dict[int, Any] = field(default_factory=dict)
    #: group id -> [(object, the IfcRelAssignsToGroup or ...ByFactor)]
    group_objects: dict[int, list[tuple[Any, Any]]] = field(default_factory=dict)
    #: object id -> the material definition associated with it (IfcRelAssociatesMaterial)
    material_of: dict[int, Any] = field(default_factory=dict)
    #: object id -> its IfcGeneralProfileProperties (IFC2X3's IfcRelAssociatesProfileProperties)
    profile_properties_of: dict[int, Any] = field(default_factory=dict)
    #: material / profile definition id -> its property sets (IfcMaterialProperties, IfcProfileProperties)
    properties_of: dict[int, list[Any]] = field(default_factory=dict)


def read_links(file: Any) -> Links:
    links = Links()
    rel = "IfcRelConnectsStructuralMember"
    member_i, conn_i = (
        attr_index(file, rel, "RelatingStructuralMember"),
        attr_index(file, rel, "RelatedStructuralConnection"),
    )
    for r in file.by_type(rel):
        m, c = r.get_argument(member_i), r.get_argument(conn_i)
        if m is not None and c is not None:
            links.member_conns.setdefault(m.id(), []).append((c, r))
    rel = "IfcRelConnectsStructuralActivity"
    item_i, act_i = attr_index(file, rel, "RelatingElement"), attr_index(file, rel, "RelatedStructuralActivity")
    for r in file.by_type(rel):
        item, act = r.get_argument(item_i), r.get_argument(act_i)
        if item is not None and act is not None:
            links.activity_target.setdefault(act.id(), item)
    rel = "IfcRelAssignsToGroup"
    objs_i, group_i = attr_index(file, rel, "RelatedObjects"), attr_index(file, rel, "RelatingGroup")
    for r in file.by_type(rel):
        group = r.get_argument(group_i)
        if group is None:
            continue
        bucket = links.group_objects.setdefault(group.id(), [])
        bucket.extend((obj, r) for obj in r.get_argument(objs_i) or ())
    rel = "IfcRelAssociatesMaterial"
    objs_i, mat_i = attr_index(file, rel, "RelatedObjects"), attr_index(file, rel, "RelatingMaterial")
    for r in file.by_type(rel):
        mat = r.get_argument(mat_i)
        for obj in r.get_argument(objs_i) or ():
            links.material_of.setdefault(obj.id(), mat)
    if file.schema == "IFC2X3":
        rel = "IfcRelAssociatesProfileProperties"
        objs_i, props_i = attr_index(file, rel, "RelatedObjects"), attr_index(file, rel, "RelatingProfileProperties")
        for r in file.by_type(rel):
            props = r.get_argument(props_i)
            for obj in r.get_argument(objs_i) or ():
                links.profile_properties_of.setdefault(obj.id(), props)
    for kind, owner in (("IfcMaterialProperties", "Material"), ("IfcProfileProperties", "ProfileDefinition")):
        try:
            owner_i = attr_index(file, kind, owner)
        except Exception:  # the entity is not in this schema (IFC2X3 has no IfcMaterialProperties of this form)
            continue
        for ps in file.by_type(kind):
            target = ps.get_argument(owner_i)
            if target is not None:
                links.properties_of.setdefault(target.id(), []).append(ps)
    return links
