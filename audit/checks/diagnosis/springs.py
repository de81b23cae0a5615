"""A spring support of another stiffness in the source (DX114), fitted.

A spring of stiffness k_s along the unit vector d at a node adds ``k_s d dᵀ`` to K; a change Δk is a rank-one
update like a member's (:mod:`audit.checks.diagnosis.members`): the response to one unit of extra spring force
t is ``U −z`` with ``z = K⁻¹ d`` (one block solve with the existing factor for every spring), and
``Δk = t / (dᵀu − t dᵀz)``.
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
from audit.model import FloatArray
from audit.rules import Rule

RULES = (
    Rule(
        "DX114", Severity.WARNING, "a spring support of another stiffness in the source: the fitted stiffness", CHECK_ID
    ),
)

#: stiffness ratios a hand-off mistake typically produces (a unit or a decimal place)
PLAIN_RATIOS = (0.0, 0.001, 0.01, 0.1, 0.5, 2.0, 10.0, 100.0, 1000.0)


def candidates(pb: Problem) -> list[Cause]:
    model, solver = pb.model, pb.solver
    ns = int(model.spring_node.shape[0])
    if ns == 0:
        return []
    d = model.dim
    order = np.arange(ns)
    if pb.obs.has_reactions:
        gap = np.array(
            [np.nanmax(np.abs(np.nan_to_num(pb.obs.reactions[n]) - pb.base.R[n])) for n in model.spring_node.tolist()]
        )
        order = np.argsort(-gap, kind="stable")
    order = order[: pb.limit]
    rows = (model.spring_node[order][:, None] * d + np.arange(d)).ravel()
    cols_i = np.repeat(np.arange(order.size), d)
    D = sp.csc_matrix((model.spring_dir[order].ravel(), (rows, cols_i)), shape=(model.n_dofs, order.size))
    Z = solver.displacements(D)
    cols = pb.resp.columns(-Z)
    beta = np.asarray((D.T @ Z).diagonal()).ravel()
    strain = np.asarray(D.T @ pb.base.U.reshape(-1)).ravel()
    out: list[Cause] = []
    for c, s in enumerate(order.tolist()):
        if not np.any(cols[:, c]):
            continue
        ks = float(model.spring_k[s])
        nid = model.node_ids[int(model.spring_node[s])]
        z = Z[:, c]  # a view: Z is never written

        def ratio(th: FloatArray, c: int = c, ks: float = ks) -> float:
            t = float(th[0])
            with np.errstate(all="ignore"):
                dk = t / (strain[c] - t * beta[c])
            return float((ks + dk) / ks)

        def describe(
            th: FloatArray, ratio: Any = ratio, ks: float = ks, nid: str = nid
        ) -> tuple[str, tuple[tuple[str, Any], ...]]:
            r = ratio(th)
            return (
                f"the spring at node {nid} is {cm.fmt(r)}× as stiff in the source (k = {cm.fmt(r * ks)} against the "
                f"model's {cm.fmt(ks)})",
                (("node", nid), ("model_k", ks), ("fitted_k", r * ks), ("k_ratio", r)),
            )

        def apply(pred: Prediction, th: FloatArray, z: FloatArray = z) -> Prediction:
            return pred.plus(pb.resp.full(-z), float(th[0]))

        out.append(
            Cause(
                code="DX114",
                location=Location(node=nid),
                rank=RANK_STRUCTURAL,
                key=("spring", s),
                apply=apply,
                describe=describe,
                cols=cols[:, [c]],
                valid=lambda th, ratio=ratio: bool(np.isfinite(ratio(th))) and ratio(th) > -0.02,
                plain=lambda th, ratio=ratio: any(abs(ratio(th) - p) <= max(0.02, 0.005 * p) for p in PLAIN_RATIOS),
            )
        )
    return out
