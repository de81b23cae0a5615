"""Rigid-body motions each connected part can make without breaking its supports."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from audit.model import FloatArray, IntArray, Model
from audit.stability.linalg import canonical, null_space, orth
from audit.stability.prechecks import Constraints


@dataclass(frozen=True)
class Rigid:
    """The rigid-body motions one connected part can make without breaking its supports."""

    nodes: IntArray
    basis: FloatArray  #: (n_part * d, k) orthonormal displacement basis over the part's dofs
    translations: FloatArray  #: (d, t) directions of free translations
    rotations: tuple[tuple[FloatArray, FloatArray, float], ...]  #: (axis ω (unit; 2D: [±1]), point, pitch)
    n_reactions: int


def rigid_motions(model: Model, cons: Constraints, labels: IntArray, n_parts: int) -> list[Rigid]:
    """Per connected part: its rigid-body motions (translations, rotations about its centroid) that satisfy
    every support on it, n · (t + ω × (x − x₀)) = 0 (common practice)."""
    d = model.dim
    order = np.argsort(labels, kind="stable")
    starts = np.searchsorted(labels[order], np.arange(n_parts + 1))
    cons_part = labels[cons.node] if cons.node.size else np.zeros(0, dtype=np.int64)
    out: list[Rigid] = []
    for c in range(n_parts):
        nodes = order[starts[c] : starts[c + 1]]
        X = model.coords[nodes]
        x0 = X.mean(axis=0)
        rho = float(np.max(np.linalg.norm(X - x0, axis=1))) if nodes.size > 1 else 0.0
        scale = rho if rho > 0 else 1.0
        R = _rigid_columns(X - x0, d) / np.r_[np.ones(d), np.full(R_ROT[d], scale)]  # (n*d, d+rot)
        ci = np.flatnonzero(cons_part == c)
        Q = np.zeros((ci.size, R.shape[1]))
        if ci.size:
            pos = np.searchsorted(nodes, cons.node[ci])
            for j, (p, nrm) in enumerate(zip(pos.tolist(), cons.dirs[ci], strict=False)):
                Q[j] = nrm @ R[p * d : (p + 1) * d]
        Nq = null_space(Q, R.shape[1])
        F = orth(R @ Nq) if Nq.shape[1] else np.zeros((R.shape[0], 0))
        if F.shape[1] == 0:
            continue
        trans = null_space(Q[:, :d], d) if ci.size else np.eye(d)
        rots: list[tuple[FloatArray, FloatArray, float]] = []
        if F.shape[1] > trans.shape[1]:
            # rotational part: coefficient vectors in null(Q) orthogonal to the free translations
            Pt = np.zeros((R.shape[1], trans.shape[1]))
            Pt[:d] = trans
            Nr = Nq - Pt @ (Pt.T @ Nq)
            omegas = orth(Nr[d:]) if Nr.shape[1] else np.zeros((R_ROT[d], 0))
            for k in range(omegas.shape[1]):
                w = omegas[:, k]
                # the coefficient vector with this rotation: least squares within span(Nr)
                coef, *_ = np.linalg.lstsq(Nr[d:], w, rcond=None)
                a = Nr @ coef
                t, om = a[:d], a[d:] / scale
                rots.append(_axis(t, om, x0, d))
        out.append(Rigid(nodes, F, trans, tuple(rots), int(ci.size)))
    return out


R_ROT = {2: 1, 3: 3}


def _rigid_columns(Xc: FloatArray, d: int) -> FloatArray:
    """(n*d, d + rot) translations then rotations ω × r (2D: ω about z)."""
    n = Xc.shape[0]
    cols = [np.tile(np.eye(d)[a], n) for a in range(d)]
    if d == 2:
        cols.append(np.column_stack([-Xc[:, 1], Xc[:, 0]]).ravel())
    else:
        for a in range(3):
            cols.append(np.cross(np.eye(3)[a], Xc).ravel())
    return np.column_stack(cols)


def _axis(t: FloatArray, om: FloatArray, x0: FloatArray, d: int) -> tuple[FloatArray, FloatArray, float]:
    """(unit axis, point on it, pitch) of the motion u(x) = t + ω × (x − x₀)."""
    if d == 2:
        w = float(om[0])
        p = np.array([x0[0] - t[1] / w, x0[1] + t[0] / w])
        return np.array([1.0 if w > 0 else -1.0]), p, 0.0
    w2 = float(om @ om)
    p = x0 + np.cross(om, t) / w2
    pitch = float(om @ t) / w2
    return canonical(om), p, pitch
