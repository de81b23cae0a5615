"""Names the mechanism basis joint by joint: rigid-body motions per part, deficient joints, open panels."""

from __future__ import annotations

from typing import Any

import numpy as np

from audit.model import FloatArray, IntArray, Model
from audit.stability.limits import DESCRIBE_LIMIT, MODE_JOINTS_LIMIT
from audit.stability.linalg import canonical, orth
from audit.stability.prechecks import Local
from audit.stability.report import Mechanism
from audit.stability.rigid import Rigid
from audit.stability.wording import dir_word, joint_list, num


def _mode(
    model: Model, u: FloatArray, nodes: IntArray | None = None
) -> tuple[tuple[str, ...], tuple[tuple[str, tuple[float, ...]], ...]]:
    """(moving joints by participation, mode scaled to a largest joint movement of 1) of a dof vector."""
    d = model.dim
    U = u.reshape(-1, d)
    amp = np.linalg.norm(U, axis=1)
    top = float(amp.max()) if amp.size else 0.0
    if top == 0.0:
        return (), ()
    moving = np.flatnonzero(amp > 1e-9 * top)
    moving = moving[np.argsort(-amp[moving], kind="stable")]
    U = U / top
    joints = tuple(model.node_ids[i] for i in moving.tolist())
    mode = tuple(
        (model.node_ids[i], tuple(round(float(c), 12) + 0.0 for c in U[i])) for i in moving[:MODE_JOINTS_LIMIT].tolist()
    )
    return joints, mode


def _movement_words(model: Model, u: FloatArray, limit: int = 6) -> str:
    """'joint C along x, joint D along (0.707, 0.707) (0.5), ...' for the joints that move most."""
    d = model.dim
    U = u.reshape(-1, d)
    amp = np.linalg.norm(U, axis=1)
    top = float(amp.max())
    moving = np.flatnonzero(amp > 1e-9 * top)
    moving = moving[np.argsort(-amp[moving], kind="stable")]
    words = []
    for i in moving[:limit].tolist():
        rel = amp[i] / top
        words.append(f"{model.node_ids[i]} along {dir_word(U[i] / amp[i])}" + ("" if rel > 0.9995 else f" ({rel:.2g})"))
    more = f" and {moving.size - limit} more" if moving.size > limit else ""
    return ", ".join(words) + more


def part_words(model: Model, nodes: IntArray, n_parts: int) -> str:
    """'the structure', or 'the part made of joints ...' when there are several parts."""
    if n_parts == 1:
        return "the structure"
    ids = [model.node_ids[i] for i in nodes.tolist()]
    return f"the part made of joint{'s' if len(ids) > 1 else ''} {joint_list(ids)}"


def _rigid_mechanisms(model: Model, part: Rigid, n_parts: int) -> list[Mechanism]:
    d = model.dim
    who = part_words(model, part.nodes, n_parts)
    out: list[Mechanism] = []
    X = model.coords[part.nodes]
    for a in range(part.translations.shape[1]):
        t = canonical(part.translations[:, a])
        u = np.zeros(model.n_dofs)
        for i in part.nodes.tolist():
            u[i * d : (i + 1) * d] = t
        joints, mode = _mode(model, u)
        out.append(Mechanism("rigid-body", f"{who} translates along {dir_word(t)}", joints, mode))
    for axis, point, pitch in part.rotations:
        u = np.zeros(model.n_dofs)
        if d == 2:
            rel = X - point
            V = float(axis[0]) * np.column_stack([-rel[:, 1], rel[:, 0]])
            text = f"{who} rotates about the point ({num(point[0])}, {num(point[1])})"
        else:
            V = np.cross(axis, X - point) + pitch * axis
            text = (
                f"{who} rotates about the axis through ({', '.join(num(c) for c in point)}) "
                f"along {dir_word(axis)}" + ("" if abs(pitch) < 1e-9 else f" with pitch {num(pitch)}")
            )
        for k, i in enumerate(part.nodes.tolist()):
            u[i * d : (i + 1) * d] = V[k]
        joints, mode = _mode(model, u)
        out.append(Mechanism("rigid-body", text, joints, mode))
    return out[: part.basis.shape[1]]


def local_words(model: Model, loc: Local, members: list[str], n_cons: int) -> tuple[str, str]:
    """(trap kind, description) of a joint that lacks a direction."""
    j = model.node_ids[loc.node]
    w = dir_word(loc.direction)
    sup = " and its supports" if n_cons else ""
    if loc.n_members == 1:
        return "single-member-joint", (
            f"joint {j} hangs on member {members[0]} alone{sup}: it can move along {w}, across the member, "
            "without stretching it"
        )
    if loc.span_rank <= 1:
        return "collinear-joint", (
            f"joint {j} joins only collinear members ({joint_list(members)}){sup}: it can move along {w}, "
            "across them, with no member stretching to first order"
        )
    return "coplanar-joint", (
        f"the members at joint {j} ({joint_list(members)}){sup} all lie in one plane: it can move along {w}, "
        "out of that plane, with no member stretching to first order"
    )


class _Incidence:
    """Members at each joint (CSR over the joints, built once by sorting): ``members(v)``, ``neighbours(v)``."""

    def __init__(self, model: Model) -> None:
        ends = model.conn.ravel()
        self._order = np.argsort(ends, kind="stable")
        self._start = np.searchsorted(ends[self._order], np.arange(model.n_nodes + 1))
        self._model = model

    def member_index(self, v: int) -> IntArray:
        return self._order[self._start[v] : self._start[v + 1]] // 2

    def get(self, v: int, default: Any = None) -> list[str]:
        return [self._model.member_ids[e] for e in self.member_index(v).tolist()]

    def neighbours(self, v: int) -> set[int]:
        e = self.member_index(v)
        c = self._model.conn[e]
        return set(np.where(c[:, 0] == v, c[:, 1], c[:, 0]).tolist())


def members_at(model: Model) -> _Incidence:
    """The members at each joint: ``members_at(model).get(v)`` lists their ids."""
    return _Incidence(model)


def _panel(model: Model, u: FloatArray) -> tuple[tuple[int, int, int, int], tuple[int, int]] | None:
    """A four-joint panel (a, b, c, e) with neither diagonal whose diagonal would stretch in the mechanism u,
    the best-stretched diagonal (joints) with it; None when there is none."""
    d = model.dim
    U = u.reshape(-1, d)
    amp = np.linalg.norm(U, axis=1)
    top = float(amp.max())
    cand = np.flatnonzero(amp > 1e-6 * top)
    cand = cand[np.argsort(-amp[cand])][:60]
    inc = _Incidence(model)
    adj: dict[int, set[int]] = {}

    def near(v: int) -> set[int]:
        if v not in adj:
            adj[v] = inc.neighbours(v)
        return adj[v]

    best: tuple[float, tuple[int, int, int, int], tuple[int, int]] | None = None
    for a in cand.tolist():
        nb = sorted(near(a))
        for x in range(len(nb)):
            for y in range(x + 1, len(nb)):
                b, e = nb[x], nb[y]
                if e in near(b):
                    continue  # a triangle, not a panel
                for c in sorted(near(b) & near(e)):
                    if c == a or c in near(a):
                        continue
                    for p, q in ((a, c), (b, e)):
                        dx = model.coords[q] - model.coords[p]
                        rate = abs(float(dx @ (U[q] - U[p]))) / (float(np.linalg.norm(dx)) * top)
                        if rate > 1e-6 and (best is None or rate > best[0] + 1e-12):
                            best = (rate, (a, b, c, e), (p, q))
    return None if best is None else (best[1], best[2])


def name_mechanisms(
    model: Model, rigid: list[Rigid], local: list[Local], M: FloatArray | None, labels: IntArray, n_internal: int
) -> tuple[tuple[Mechanism, ...], FloatArray | None]:
    """A described basis of the mechanism space: rigid-body motions per part, then internal mechanisms
    (deficient joints first, then the rest of the space, e.g. a panel without a diagonal).

    Returns the mechanisms and the internal basis (d·j, n_internal) when it was formed (None otherwise).
    """
    d, nd = model.dim, model.n_dofs
    n_parts = int(labels.max()) + 1 if labels.size else 0
    out: list[Mechanism] = []
    F_cols: list[FloatArray] = []
    for part in rigid:
        out.extend(_rigid_mechanisms(model, part, n_parts))
        if part.basis.shape[1] and len(F_cols) < 64:
            dofs = (part.nodes[:, None] * d + np.arange(d)).ravel()
            for k in range(part.basis.shape[1]):
                col = np.zeros(nd)
                col[dofs] = part.basis[:, k]
                F_cols.append(col)
    if n_internal <= 0:
        return tuple(out), None
    F = np.column_stack(F_cols) if F_cols else np.zeros((nd, 0))
    free_parts = {int(labels[p.nodes[0]]) for p in rigid if p.n_reactions == 0 or p.nodes.size <= 2}
    at = members_at(model)
    cons_at: dict[int, int] = {}
    internal: list[FloatArray] = []
    for loc in local:
        if loc.n_members == 0 or int(labels[loc.node]) in free_parts:
            continue
        v = np.zeros(nd)
        v[loc.node * d : (loc.node + 1) * d] = loc.direction
        if F.shape[1]:
            v = v - F @ (F.T @ v)
            if np.linalg.norm(v) < 0.5:
                continue
        internal.append(v / np.linalg.norm(v))
        if len(out) < DESCRIBE_LIMIT + 10:
            kind, text = local_words(model, loc, at.get(loc.node, []), cons_at.get(loc.node, 0))
            joints, mode = _mode(model, internal[-1])
            out.append(Mechanism("internal", text, joints, mode, trap=kind))
        if len(internal) >= n_internal:
            break
    rest = n_internal - len(internal)
    if rest > 0 and M is not None and M.shape[1] <= 400:
        known = orth(np.column_stack([F, *internal])) if (F.shape[1] or internal) else np.zeros((nd, 0))
        R = M - known @ (known.T @ M) if known.shape[1] else M
        u, sv, _ = np.linalg.svd(R, full_matrices=False)
        keep = u[:, : min(rest, int(np.sum(sv > 1e-6 * max(1.0, sv[0] if sv.size else 0.0))))]
        for k in range(keep.shape[1]):
            v = keep[:, k]
            v = v * (1.0 if v[int(np.argmax(np.abs(v)))] > 0 else -1.0)
            internal.append(v)
            if len(out) >= DESCRIBE_LIMIT + 10:
                continue
            joints, mode = _mode(model, v)
            panel = _panel(model, v)
            if panel is not None:
                (a, b, c, e), (p, q) = panel
                ids = [model.node_ids[i] for i in (a, b, c, e)]
                text = (
                    f"panel {'–'.join(ids)} has no diagonal and can shear (joints {_movement_words(model, v)}); "
                    f"a member {model.node_ids[p]}–{model.node_ids[q]} would stop it"
                )
                out.append(Mechanism("internal", text, joints, mode, trap="missing-diagonal", trap_nodes=tuple(ids)))
            else:
                text = f"joints {_movement_words(model, v)} move with no member stretching to first order"
                out.append(Mechanism("internal", text, joints, mode))
    basis = np.column_stack(internal) if len(internal) == n_internal else None
    return tuple(out), basis
