"""Cheap pre-checks before the rank: reaction components, connected parts and joints that lack a direction."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
import scipy.sparse.csgraph as csgraph

from audit.model import FloatArray, IntArray, Model
from audit.stability.limits import LOCAL_RANK_TOLERANCE
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


def local_deficiencies(model: Model, cons: Constraints) -> list[Local]:
    """Joints whose member and reaction directions span fewer than d directions (each missing direction
    is a mechanism: that joint alone moves, no member stretches to first order)."""
    d, n = model.dim, model.n_nodes
    G = np.zeros((n, d, d))
    deg = np.zeros(n, dtype=np.int64)
    if model.n_members:
        u = model.directions()
        nn = np.einsum("ei,ej->eij", u, u)
        np.add.at(G, model.conn[:, 0], nn)
        np.add.at(G, model.conn[:, 1], nn)
        np.add.at(deg, model.conn.ravel(), 1)
    if cons.node.size:
        np.add.at(G, cons.node, np.einsum("ei,ej->eij", cons.dirs, cons.dirs))
    # a joint is deficient exactly when its smallest Gram eigenvalue is ~0: check cheaply by the determinant
    # scale first, then decompose only the suspects
    w = np.linalg.eigvalsh(G)
    suspects = np.flatnonzero(w[:, 0] < LOCAL_RANK_TOLERANCE * np.maximum(w[:, -1], 1.0))
    out: list[Local] = []
    for v in suspects.tolist():
        ww, vv = np.linalg.eigh(G[v])
        zero = ww < LOCAL_RANK_TOLERANCE * max(ww[-1], 1.0)
        rank = int(d - zero.sum())
        for c in np.flatnonzero(zero).tolist():
            out.append(Local(v, canonical(vv[:, c]), int(deg[v]), rank))
    return out
