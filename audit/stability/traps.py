"""The classic traps behind a mechanism (no supports, parallel or concurrent reactions, ...), in words."""

from __future__ import annotations

import numpy as np

from audit.model import FloatArray, IntArray, Model
from audit.stability.linalg import canonical
from audit.stability.naming import local_words, members_at, part_words
from audit.stability.prechecks import Constraints, Local
from audit.stability.report import Mechanism, Trap
from audit.stability.rigid import Rigid
from audit.stability.wording import dir_word, joint_list, num, plural


def find_traps(
    model: Model,
    cons: Constraints,
    rigid: list[Rigid],
    local: list[Local],
    mechanisms: tuple[Mechanism, ...],
    maxwell: int,
    mech: int,
    s: int,
    labels: IntArray,
    at_least: bool = False,
) -> tuple[Trap, ...]:
    """The typical mistakes behind the mechanisms, each explained in words.

    ``at_least``: ``mech`` and ``s`` are lower bounds only (a capped numerical search).
    """
    d, j = model.dim, model.n_nodes
    n_parts = int(labels.max()) + 1 if labels.size else 0
    need = 3 if d == 2 else 6
    out: list[Trap] = []
    r = int(cons.node.size)
    if r == 0 and j:
        out.append(
            Trap("no-supports", f"the model has no supports at all: it can move as a rigid body ({need} motions)")
        )
    for part in rigid:
        ids = tuple(model.node_ids[i] for i in part.nodes.tolist())
        who = part_words(model, part.nodes, n_parts)
        k = part.basis.shape[1]
        at_part = np.isin(cons.node, part.nodes)
        if part.nodes.size == 1 and not np.any(model.conn == part.nodes[0]):
            out.append(
                Trap(
                    "isolated-joint",
                    f"joint {ids[0]} is connected to no member"
                    + (
                        " and its supports do not hold it in every direction"
                        if part.n_reactions
                        else " and has no support"
                    )
                    + f": it can move freely ({plural(k, 'direction')})",
                    nodes=ids,
                )
            )
            continue
        if part.n_reactions == 0:
            if r:
                out.append(
                    Trap(
                        "unsupported-part",
                        f"{who} is joined to the rest by no member and carried by no support: "
                        f"it can move as a rigid body ({plural(k, 'motion')})",
                        nodes=ids,
                    )
                )
            continue
        dirs = cons.dirs[at_part]
        drank = int(np.linalg.matrix_rank(dirs, tol=1e-9)) if dirs.size else 0
        if part.n_reactions < need and n_parts == 1:
            out.append(
                Trap(
                    "too-few-reactions",
                    f"only {plural(part.n_reactions, 'reaction component')}: a {d}D truss needs at least {need} "
                    f"to be held as a rigid body; {plural(k, 'rigid-body motion')} left free",
                    nodes=ids,
                )
            )
        if part.translations.shape[1] and drank == 1 and part.n_reactions >= 2:
            t = canonical(part.translations[:, 0])
            out.append(
                Trap(
                    "parallel-reactions",
                    f"all {part.n_reactions} reactions on {who} are parallel to {dir_word(canonical(dirs[0]))}: "
                    f"nothing resists a translation along {dir_word(t)}",
                    direction=tuple(float(c) for c in t),
                )
            )
        elif part.translations.shape[1] and d == 3 and drank == 2 and part.n_reactions >= 3:
            t = canonical(part.translations[:, 0])
            out.append(
                Trap(
                    "parallel-reactions",
                    f"all {part.n_reactions} reactions on {who} are parallel to one plane: nothing resists a "
                    f"translation along {dir_word(t)}, normal to it",
                    direction=tuple(float(c) for c in t),
                )
            )
        if part.rotations and not part.translations.shape[1] and part.n_reactions >= (3 if d == 2 else 1):
            axis, point, _pitch = part.rotations[0]
            if d == 2:
                text = (
                    f"the lines of action of all {part.n_reactions} reactions on {who} pass through one point "
                    f"({num(point[0])}, {num(point[1])}): a rotation about it is free"
                )
            else:
                text = (
                    f"every reaction line on {who} meets (or is parallel to) the axis through "
                    f"({', '.join(num(c) for c in point)}) along {dir_word(axis)}: a rotation about that axis is free"
                )
            out.append(Trap("concurrent-reactions", text, point=tuple(float(c) for c in point)))
    plane_nodes = _plane_truss_in_3d(model, local)
    if plane_nodes is not None:
        normal, plane_free = plane_nodes
        free_ids = [model.node_ids[i] for i in plane_free]
        out.append(
            Trap(
                "plane-truss-as-3d",
                f"all {j} joints lie in one plane (normal {dir_word(normal)}) but the model is 3D: nothing resists "
                f"motion out of that plane at joints {joint_list(free_ids)} ({len(free_ids)} of {j}); "
                "enter it as a 2D model "
                f"or restrain those joints along {dir_word(normal)}",
                nodes=tuple(free_ids),
                direction=tuple(float(c) for c in normal),
            )
        )
    skip = {int(labels[p.nodes[0]]) for p in rigid if p.n_reactions == 0}
    in_plane_trap = set(plane_nodes[1]) if plane_nodes is not None else set()
    at = members_at(model)
    seen: set[int] = set()
    for loc in local:
        if loc.n_members == 0 or loc.node in seen or int(labels[loc.node]) in skip or loc.node in in_plane_trap:
            continue
        seen.add(loc.node)
        kind, text = local_words(model, loc, at.get(loc.node, []), 0)
        out.append(
            Trap(
                kind,
                text,
                nodes=(model.node_ids[loc.node],),
                members=tuple(at.get(loc.node, [])),
                direction=tuple(float(c) for c in loc.direction),
            )
        )
    for mk in mechanisms:
        if mk.trap == "missing-diagonal":
            out.append(Trap("missing-diagonal", mk.description.split(" [")[0], nodes=mk.trap_nodes))
    if mech and maxwell >= 0:
        bound = "at least " if at_least else ""
        says = "a statically determinate, stable structure" if maxwell == 0 else f"{maxwell} redundant component(s)"
        out.append(
            Trap(
                "count-misleading",
                f"Maxwell's count m + r − d·j = {maxwell} suggests {says}, but the rank of the equilibrium matrix "
                f"shows {bound}{plural(mech, 'mechanism')} and {bound}{plural(s, 'state')} of self-stress: "
                "members (or supports) are redundant in one place and missing in another",
            )
        )
    return tuple(out)


def _plane_truss_in_3d(model: Model, local: list[Local]) -> tuple[FloatArray, list[int]] | None:
    """(plane normal, joints free out of the plane) when a 3D model lies in one plane and is free out of it."""
    if model.dim != 3 or model.n_nodes < 3:
        return None
    Xc = model.coords - model.coords.mean(axis=0)
    _, sv, vt = np.linalg.svd(Xc, full_matrices=False)
    if sv[0] == 0 or sv[2] > 1e-9 * sv[0]:
        return None
    normal = canonical(vt[2])
    nodes = sorted({loc.node for loc in local if loc.n_members and abs(float(loc.direction @ normal)) > 1 - 1e-6})
    return (normal, nodes) if nodes else None
