"""An inclined support entered along another direction in the source (DX113): an axis for the model's
inclined roller, or another angle; the direction is fitted.

A node with one restraint along n (a roller in 2D, a slider on a line's normal in 3D) restrained along n'
instead: with the model's restraint held, a settlement g along n and a support force λ n' at the node
(unit responses from one block solve with the existing factor) are chosen so that the model's restraint
carries nothing and the node does not move along n'::

    n·P_b + g n·P_S + λ (n·P_z(n') − n·n') = 0,      n'·u_b + g n'·u_S + λ n'·u_z(n') = 0

(P the support force at the node, ``_b`` the model's answer, ``_S`` per unit settlement, ``_z(n')`` per unit
force along n').  The direction n' is fitted by a scan of directions (every 0.5° in 2D, then a golden-section
refinement; a spherical grid in 3D), each judged by the largest residual over its allowance.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import scipy.sparse as sp

from audit.checks import _common as cm
from audit.checks.diagnosis.base import CHECK_ID, RANK_STRUCTURAL, Cause
from audit.checks.diagnosis.block import Prediction
from audit.checks.diagnosis.fit import Problem
from audit.findings import Location, Severity
from audit.model import AXES, FloatArray
from audit.rules import Rule

RULES = (
    Rule(
        "DX113",
        Severity.WARNING,
        "an inclined support entered along an axis or at another angle in the source: the fitted direction",
        CHECK_ID,
    ),
)

#: directions scanned on the sphere in 3D
SPHERE = 1500


def _directions(d: int) -> FloatArray:
    if d == 2:
        t = np.deg2rad(np.arange(0.0, 180.0, 0.5))
        return np.column_stack([np.cos(t), np.sin(t)])
    i = np.arange(SPHERE) + 0.5
    phi = np.arccos(1.0 - i / SPHERE)  # a hemisphere (n' and −n' are the same support)
    th = np.pi * (1.0 + 5.0**0.5) * i
    pts = np.column_stack([np.cos(th) * np.sin(phi), np.sin(th) * np.sin(phi), np.cos(phi)])
    return np.vstack([np.eye(3), pts])


class _Node:
    """The unit responses at one single-restraint node, and the change of the rows for any direction n'."""

    def __init__(self, pb: Problem, node: int, r: int, S: FloatArray, Z: FloatArray) -> None:
        d = pb.model.dim
        self.pb, self.node, self.r = pb, node, r
        self.n = pb.model.restraint_dir[r]
        self.X = np.column_stack([S, Z])  # settlement along n, then unit forces along each axis
        dofs = node * d + np.arange(d)
        self.u = self.X[dofs]  # (d, 1 + d)
        self.P = pb.solver.forces_on_rows(self.X, dofs)  # (d, 1 + d), support force at the node
        self.u_b = pb.base.U[node]
        self.P_b = pb.base.R[node]
        self.cols = pb.resp.columns(self.X)

    def coefficients(self, dirs: FloatArray) -> FloatArray:
        """(m, 1 + d) coefficients of the unit responses for m directions (NaN where singular)."""
        n = self.n
        uS, uZ = self.u[:, 0], self.u[:, 1:]
        PS, PZ = self.P[:, 0], self.P[:, 1:]
        a11 = np.full(dirs.shape[0], n @ PS)
        a12 = dirs @ (PZ.T @ n) - dirs @ n
        a21 = dirs @ uS
        a22 = np.einsum("ij,jk,ik->i", dirs, uZ, dirs)
        b1 = np.full(dirs.shape[0], -(n @ self.P_b))
        b2 = -(dirs @ self.u_b)
        det = a11 * a22 - a12 * a21
        scale = np.abs(a11 * a22) + np.abs(a12 * a21)
        with np.errstate(all="ignore"):
            g = (b1 * a22 - a12 * b2) / det
            lam = (a11 * b2 - a21 * b1) / det
        bad = ~(np.abs(det) > 1e-12 * scale)
        coef = np.column_stack([g, lam[:, None] * dirs])
        coef[bad] = np.nan
        return coef

    def scores(self, dirs: FloatArray) -> tuple[FloatArray, FloatArray]:
        rows = self.pb.rows
        coef = self.coefficients(dirs)
        change = self.cols @ np.nan_to_num(coef).T  # (n_rows, m)
        res = np.abs(rows.e[:, None] - change / rows.a[:, None])
        s = np.max(res, axis=0) if len(rows) else np.zeros(dirs.shape[0])
        s[np.isnan(coef).any(axis=1)] = np.inf
        return s, coef


def _fit_direction(nd: _Node, d: int) -> tuple[FloatArray, FloatArray, float]:
    dirs = _directions(d)
    s, _c = nd.scores(dirs)
    j = int(np.argmin(s))
    best = dirs[j]
    if d == 2:
        t0 = np.arctan2(best[1], best[0])
        lo, hi = t0 - np.deg2rad(0.5), t0 + np.deg2rad(0.5)
        g = (5.0**0.5 - 1.0) / 2.0
        for _ in range(40):
            m1, m2 = hi - g * (hi - lo), lo + g * (hi - lo)
            s1 = nd.scores(np.array([[np.cos(m1), np.sin(m1)]]))[0][0]
            s2 = nd.scores(np.array([[np.cos(m2), np.sin(m2)]]))[0][0]
            if s1 <= s2:
                hi = m2
            else:
                lo = m1
        t = 0.5 * (lo + hi)
        cand = np.array([[np.cos(t), np.sin(t)], best])
        sc, _c = nd.scores(cand)
        best = cand[int(np.argmin(sc))]
    sc, coef = nd.scores(best[None, :])
    return best, coef[0], float(sc[0])


def candidates(pb: Problem) -> list[Cause]:
    model, solver, d = pb.model, pb.solver, pb.model.dim
    if model.n_restraints == 0:
        return []
    counts = np.bincount(model.restraint_node, minlength=model.n_nodes)
    single = [
        int(r)
        for r in range(model.n_restraints)
        if counts[model.restraint_node[r]] == 1 and not np.any(model.spring_node == model.restraint_node[r])
    ]
    if not single:
        return []
    if pb.obs.has_reactions:
        gap = [
            float(
                np.nanmax(
                    np.abs(
                        np.nan_to_num(pb.obs.reactions[model.restraint_node[r]]) - pb.base.R[model.restraint_node[r]]
                    )
                )
            )
            for r in single
        ]
        single = [single[i] for i in np.argsort(-np.asarray(gap), kind="stable")]
    single = single[: pb.limit]
    S = sp.csc_matrix(pb.ctx.system.U_p[:, single])
    K = pb.ctx.system
    Ssol = solver.displacements(-(K.K @ S + K.K_springs @ S)) + S.toarray()
    dofs = [(int(model.restraint_node[r]) * d + a) for r in single for a in range(d)]
    Zall = solver.dof_columns(dofs)
    out: list[Cause] = []
    for i, r in enumerate(single):
        node = int(model.restraint_node[r])
        nd = _Node(pb, node, r, Ssol[:, i], Zall[:, i * d : (i + 1) * d])
        direction, coef, _score = _fit_direction(nd, d)
        if not np.all(np.isfinite(coef)) or abs(abs(float(direction @ nd.n)) - 1.0) <= 1e-9:
            continue
        fixed = nd.cols @ coef
        if not np.any(fixed):
            continue
        nid = model.node_ids[node]
        axis = [AXES[a] for a in range(d) if abs(abs(direction[a]) - 1.0) <= 1e-6]
        x = nd.X @ coef

        def describe(
            _t: FloatArray,
            nid: str = nid,
            direction: FloatArray = direction,
            axis: list[str] = axis,
            n: FloatArray = nd.n,
        ) -> tuple[str, tuple[tuple[str, Any], ...]]:
            vec = "(" + ", ".join(cm.fmt(float(v)) for v in direction) + ")"
            mvec = "(" + ", ".join(cm.fmt(float(v)) for v in n) + ")"
            how = f"entered along {axis[0]}" if axis else f"at another angle, along {vec}"
            extra = ""
            if d == 2:
                extra = f" ({cm.fmt(float(np.degrees(np.arctan2(direction[1], direction[0]))) % 180.0)}° from x)"
            return (
                f"the support at node {nid}, restrained along {mvec} in the model, is {how} in the source{extra}",
                (
                    ("node", nid),
                    ("model_direction", [float(v) for v in n]),
                    ("fitted_direction", [float(v) for v in direction]),
                ),
            )

        out.append(
            Cause(
                code="DX113",
                location=Location(node=nid),
                rank=RANK_STRUCTURAL,
                key=("inclined", r),
                apply=lambda pred, _t, x=x: pred.plus(pb.resp.full(x)),
                describe=describe,
                fixed=fixed,
                plain=lambda _t, axis=axis: bool(axis),
            )
        )
    return out


__all__ = ["RULES", "Prediction", "candidates"]
