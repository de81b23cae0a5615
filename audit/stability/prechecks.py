"""Cheap pre-checks before the rank: reaction components, connected parts and joints that lack a direction."""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

import numpy as np
import scipy.sparse as sp
import scipy.sparse.csgraph as csgraph

from audit.model import FloatArray, IntArray, Model
from audit.stability.limits import EXACT_LOCAL_LIMIT, LOCAL_RANK_TOLERANCE
from audit.stability.linalg import canonical
from audit.stability.wording import dir_word


@dataclass(frozen=True)
class Constraints:
    """Reaction components: restraints, then springs of non-zero stiffness."""

    node: IntArray  #: (r,)
    dirs: FloatArray  #: (r, d) unit vectors
    labels: tuple[str, ...]  #: "A x", "C dir(1,1)", "D spring y"
    texts: tuple[tuple[str, ...] | None, ...]  #: decimal text of the raw direction, when known


def constraints(model: Model) -> Constraints:
    """The reaction components r: every restraint direction, then every spring of non-zero stiffness."""
    keep = np.flatnonzero(model.spring_k > 0)
    node = np.concatenate([model.restraint_node, model.spring_node[keep]]).astype(np.int64)
    dirs = np.vstack([model.restraint_dir.reshape(-1, model.dim), model.spring_dir[keep].reshape(-1, model.dim)])
    labels = [
        f"{model.node_ids[n]} {lab}"
        for n, lab in zip(model.restraint_node.tolist(), model.restraint_label, strict=False)
    ]
    labels += [f"{model.node_ids[model.spring_node[i]]} spring {dir_word(model.spring_dir[i])}" for i in keep.tolist()]
    texts: list[tuple[str, ...] | None] = [
        model.restraint_dir_text[i] if i < len(model.restraint_dir_text) else None for i in range(model.n_restraints)
    ]
    texts += [model.spring_dir_text[i] if i < len(model.spring_dir_text) else None for i in keep.tolist()]
    return Constraints(node, dirs, tuple(labels), tuple(texts))


def connected_parts(model: Model) -> tuple[int, IntArray]:
    """(number of connected parts, part label of each joint) of the member graph (a joint alone is a part)."""
    j, m = model.n_nodes, model.n_members
    if m:
        graph = sp.coo_matrix((np.ones(m), (model.conn[:, 0], model.conn[:, 1])), shape=(j, j))
        n_parts, labels = csgraph.connected_components(graph, directed=False)
    else:
        n_parts, labels = j, np.arange(j)
    return int(n_parts), np.asarray(labels, dtype=np.int64)


@dataclass(frozen=True)
class Local:
    """A direction a joint can move along with no member or reaction of its own resisting it."""

    node: int
    direction: FloatArray  #: (d,) unit direction the joint can move along
    n_members: int
    span_rank: int  #: rank of the directions of its members and reactions


@dataclass(frozen=True)
class NearDeficient:
    """A joint whose directions look deficient in floating point but span every direction exactly."""

    node: int
    ratio: float  #: smallest over largest eigenvalue of its direction Gram matrix (floating point)
    n_members: int


def local_deficiencies(model: Model, cons: Constraints) -> tuple[list[Local], list[NearDeficient]]:
    """Joints whose member and reaction directions span fewer than d directions (each missing direction
    is a mechanism: that joint alone moves, no member stretches to first order), and the joints that only
    look so in floating point.

    A joint is a suspect when the smallest eigenvalue of its direction Gram matrix Σ n nᵀ is below
    :data:`LOCAL_RANK_TOLERANCE` of the largest.  For up to :data:`EXACT_LOCAL_LIMIT` suspects the decision
    is then made in exact rational arithmetic on the same numbers as the exact rank (the decimal text of
    the coordinates and restraint directions, else the floats' exact values): the missing directions are
    the exact null space of the joint's direction rows, and a suspect whose rows have full rank d is not
    deficient at all (a joint between nearly collinear members: badly conditioned, not a mechanism; the
    stiffness health check reports the conditioning).  Common practice (method of joints: a joint needs
    members or reactions along d independent directions).
    """
    d, n = model.dim, model.n_nodes
    deg = np.bincount(model.conn.ravel(), minlength=n).astype(np.int64) if model.n_members else np.zeros(n, np.int64)
    # G = Σ n nᵀ over each joint's members (start ends, then end ends) and reactions, in that order: one
    # bincount per entry over the concatenated indices adds in input order, the same float additions as
    # np.add.at over the three in turn (so the same G); local_deficiencies 0.12 -> 0.08 s at 4.8·10⁵ members
    u = model.directions() if model.n_members else np.zeros((0, d))
    idx = np.concatenate([model.conn[:, 0], model.conn[:, 1], cons.node]).astype(np.int64)
    dirs = np.concatenate([u, u, cons.dirs.reshape(-1, d)])
    G = np.empty((n, d, d))
    for a in range(d):
        for b in range(a, d):
            G[:, a, b] = np.bincount(idx, dirs[:, a] * dirs[:, b], minlength=n) if idx.size else 0.0
            G[:, b, a] = G[:, a, b]
    # a joint is deficient exactly when its smallest Gram eigenvalue is ~0: all joints' eigenvalues at once
    # (batched 3 x 3 or 2 x 2), then only the suspects are decomposed or decided exactly
    w = np.linalg.eigvalsh(G)
    suspects = np.flatnonzero(w[:, 0] < LOCAL_RANK_TOLERANCE * np.maximum(w[:, -1], 1.0))
    rows = _JointRows(model, cons) if 0 < suspects.size <= EXACT_LOCAL_LIMIT else None
    out: list[Local] = []
    near: list[NearDeficient] = []
    for v in suspects.tolist():
        if rows is not None:
            missing = _exact_missing(rows.of(v), d)
            if not missing:
                near.append(NearDeficient(v, float(w[v, 0] / w[v, -1]) if w[v, -1] > 0 else 0.0, int(deg[v])))
                continue
            for direction in missing:
                out.append(Local(v, canonical(direction), int(deg[v]), d - len(missing)))
            continue
        ww, vv = np.linalg.eigh(G[v])
        zero = ww < LOCAL_RANK_TOLERANCE * max(ww[-1], 1.0)
        rank = int(d - zero.sum())
        for c in np.flatnonzero(zero).tolist():
            out.append(Local(v, canonical(vv[:, c]), int(deg[v]), rank))
    return out, near


class _JointRows:
    """Exact direction rows at a joint: members (other end − this end) and reaction directions, as Fractions.

    The numbers are those of :func:`audit.stability.exact.exact_rows`: coordinates from their decimal text
    when every joint has one, else the floats' exact values; reaction directions from their text.
    """

    def __init__(self, model: Model, cons: Constraints) -> None:
        self._model = model
        self._cons = cons
        self._text = len(model.coords_text) == model.n_nodes
        ends = model.conn.ravel()
        self._order = np.argsort(ends, kind="stable")
        self._start = np.searchsorted(ends[self._order], np.arange(model.n_nodes + 1))
        corder = np.argsort(cons.node, kind="stable")
        self._corder = corder
        self._cstart = np.searchsorted(cons.node[corder], np.arange(model.n_nodes + 1))

    def _x(self, i: int) -> list[Fraction]:
        if self._text:
            return [Fraction(t) for t in self._model.coords_text[i]]
        return [Fraction(float(c)) for c in self._model.coords[i]]

    def of(self, v: int) -> list[list[Fraction]]:
        d = self._model.dim
        xv = self._x(v)
        out: list[list[Fraction]] = []
        for k in self._order[self._start[v] : self._start[v + 1]].tolist():
            a, b = self._model.conn[k // 2].tolist()
            other = self._x(b if a == v else a)
            out.append([other[c] - xv[c] for c in range(d)])
        for i in self._corder[self._cstart[v] : self._cstart[v + 1]].tolist():
            text = self._cons.texts[i]
            if text is not None and len(text) == d:
                out.append([Fraction(t) for t in text])
            else:
                out.append([Fraction(float(c)) for c in self._cons.dirs[i]])
        return out


def _exact_missing(rows: list[list[Fraction]], d: int) -> list[FloatArray]:
    """Orthonormal float basis of the exact null space of the rational rows (k, d): the missing directions.

    Gauss-Jordan elimination in Fractions (exact), the null-space vectors from the free columns, then
    Gram-Schmidt in floating point (d ≤ 3).
    """
    R = [list(r) for r in rows if any(r)]
    pivots: list[int] = []
    top = 0
    for col in range(d):
        pr = next((i for i in range(top, len(R)) if R[i][col] != 0), None)
        if pr is None:
            continue
        R[top], R[pr] = R[pr], R[top]
        p = R[top][col]
        R[top] = [x / p for x in R[top]]
        for i in range(len(R)):
            if i != top and R[i][col] != 0:
                factor = R[i][col]
                R[i] = [a - factor * b for a, b in zip(R[i], R[top], strict=True)]
        pivots.append(col)
        top += 1
        if top == len(R):
            break
    free = [c for c in range(d) if c not in pivots]
    basis: list[FloatArray] = []
    for f in free:
        vec = [Fraction(0)] * d
        vec[f] = Fraction(1)
        for i, pc in enumerate(pivots):
            vec[pc] = -R[i][f]
        x = np.array([float(c) for c in vec])
        for b in basis:
            x = x - float(b @ x) * b
        basis.append(x / np.linalg.norm(x))
    return basis


def near_words(model: Model, near: NearDeficient) -> str:
    """The note for a joint that only looks deficient in floating point."""
    return (
        f"joint {model.node_ids[near.node]}: its members and reactions are nearly collinear (or coplanar) in "
        f"floating point (direction eigenvalue ratio {near.ratio:.1e}) but span every direction in exact "
        "arithmetic on the input: the joint lacks no direction (no ST115), it is only badly conditioned (see the "
        "stiffness health check)"
    )
