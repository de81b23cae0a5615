"""One member's EA different in the source (DX104), or the member left out of its model (DX111).

The response to one unit of extra axial force t in member m is ``U −z, N −k∘(B z) + e_m`` with
``z = K⁻¹ b`` (b the member's compatibility row), from the existing factor; the stiffness change follows as
``Δk = t / (bᵀu − δ0 − t bᵀz)``, by the Sherman–Morrison formula (Sherman & Morrison, *Ann. Math. Statist.*
21 (1950) 124; Golub & Van Loan, *Matrix Computations*, 4th ed., §2.1.4; section recalled from memory).
A change that makes ``1 + Δk bᵀz`` vanish would make the source's structure a mechanism: that is evidence
against the candidate, never a division.

:func:`member_candidates` is the single-cause search (bounded, :class:`Search`); :func:`candidates` gives the
same causes to the multi-cause fit (:mod:`audit.checks.diagnosis.fit`).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from audit.checks import _common as cm
from audit.checks.compatibility import compatible_forces, implied_ea
from audit.checks.diagnosis.base import CHECK_ID, RANK_STRUCTURAL, Cause
from audit.checks.diagnosis.block import (
    Candidate,
    Evaluator,
    Needs,
    Prediction,
    Search,
    Superposition,
    colmax,
    reaction_rows,
)
from audit.checks.diagnosis.fit import Plan, Problem
from audit.context import Context
from audit.findings import Location, Severity
from audit.model import CaseResults, FloatArray
from audit.rules import Rule

#: |1 + Δk bᵀz| at most this share of its terms: the changed structure is a mechanism
MECHANISM = 1e-9

RULES = (
    Rule("DX104", Severity.WARNING, "one member's EA in the source differs from the model's", CHECK_ID),
    Rule(
        "DX111",
        Severity.WARNING,
        "a member is left out of (or inactive in) the source's model: the numbers fit the model without it",
        CHECK_ID,
    ),
)


# ----------------------------------------------------------------- 2. one member's EA
def member_candidates(
    ctx: Context,
    ev: Evaluator,
    obs: CaseResults,
    base: Prediction,
    solver: Superposition,
    d0: FloatArray,
    search: Search | None = None,
) -> list[Candidate]:
    """One candidate per suspect member (at most ``max_candidates``), with the EA that fits the results best.

    The suspects are the members whose reported force disagrees with the compatibility of the reported
    displacements (worst first), else those whose force or elongation differs most from the recomputation.
    All their responses come from one block solve; the fit of t and the bounds are reduced over all
    quantities as matrix products, and only the candidates that may explain the results (or be the closest)
    are evaluated one by one (:class:`Search`).
    """
    search = search if search is not None else Search()
    model, tol = ctx.model, ctx.tolerances
    compat_ea = np.full(model.n_members, np.nan)
    if obs.has_displacements and obs.has_axial_forces:
        Nc, qc, mech = compatible_forces(model, obs, d0, solver.B)
        j = cm.judge(
            obs.axial_forces,
            Nc,
            cm.quantum_or_zero(obs.axial_force_quantum, obs.axial_forces) + qc,
            cm.scale_of(obs.axial_forces),
            tol,
        )
        compat_ea = implied_ea(model, obs.axial_forces, mech)
        ranked = np.flatnonzero(j.failed)
        ranked = ranked[np.argsort(-np.abs(j.difference[ranked]), kind="stable")]
    else:
        if obs.has_axial_forces:
            miss = np.abs(np.nan_to_num(obs.axial_forces - base.N))
        else:
            dU = np.nan_to_num(obs.displacements - base.U).reshape(-1)
            miss = np.abs(solver.B @ dU)
        ranked = np.argsort(-miss, kind="stable")
        ranked = ranked[miss[ranked] > 0]
    cands = ranked[: tol.max_candidates]
    if cands.size == 0:
        return []
    c = cands.size
    cols = np.arange(c)
    B, k = solver.B, solver.k
    Z = solver.member_columns(cands)  # z = K⁻¹ b per candidate: one block solve (kept for the fit)
    # the unit responses (one unit of extra force t in member m): U −z, N −k∘(B z) + e_m, R masked Bᵀ N
    rows_R, at_R = reaction_rows(ev, solver)
    on_mask = solver.mask[rows_R // model.dim]
    weights = _fit_weights(obs, base, ev.actions)
    nmax, btn, num_n, den_n = solver.force_stats(Z, rows_R, -1.0, (cands, cols), weights.get("N"))
    uR = np.where(on_mask[:, None], btn, 0.0)
    num, den = _fit_sums(weights, Z, uR, rows_R, num_n, den_n)
    with np.errstate(divide="ignore", invalid="ignore"):
        t = np.where(den > 0.0, num / den, np.nan)
    beta = (B[cands] @ Z)[cols, cols]
    e0 = B @ base.U.reshape(-1)
    strain = e0[cands] - d0[cands]
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        denom = strain - t * beta
        dk = t / denom
        ea_new = (k[cands] + dk) * solver.L[cands]
        tsm = dk * strain / (1.0 + dk * beta)
    ok = np.isfinite(t) & (denom != 0.0) & np.isfinite(ea_new) & (ea_new > 0)
    keep = np.flatnonzero(ok)
    if keep.size == 0:
        return []
    tk = tsm[keep]
    rU, rN = ev.rows("U"), ev.rows("N")
    dN_S = -k[rN, None] * (B[rN] @ Z[:, keep])
    dN_S[rN[:, None] == cands[keep][None, :]] += 1.0
    sub = {
        "U": base.U.reshape(-1)[rU, None] - Z[rU][:, keep] * tk,
        "N": base.N[rN, None] + dN_S * tk,
        "R": base.R.reshape(-1)[rows_R[at_R], None] + uR[at_R][:, keep] * tk,
    }
    at = np.abs(tk)
    pmax = {
        "U": ev.base_max["U"] + at * colmax(Z)[keep],
        "N": ev.base_max["N"] + at * nmax[keep],
        "R": ev.base_max["R"] + at * colmax(uR)[keep],
    }
    lbs = ev.lower_bounds(sub, pmax)

    def exact(j: int) -> float:
        col, m = int(keep[j]), int(cands[keep[j]])
        z = Z[:, col]
        dN = -k * (B @ z)
        dN[m] += 1.0
        unit = solver.response(-z, dN, np.zeros_like(z))
        pred = sherman_morrison_member(base, unit, float(strain[col]), float(beta[col]), float(dk[col]))
        return np.inf if pred is None else ev.worst(pred)

    worst, done = search.settle(lbs, exact)
    out = []
    for jj, col in enumerate(keep.tolist()):
        m = int(cands[col])
        ea = float(model.E[m] * model.A[m])
        en = float(ea_new[col])
        data: list[tuple[str, Any]] = [
            ("member", model.member_ids[m]),
            ("model_EA", ea),
            ("implied_EA", en),
            ("EA_ratio", en / ea),
            ("extra_force", float(t[col])),
        ]
        if np.isfinite(compat_ea[m]):
            data.append(("compatibility_EA", float(compat_ea[m])))
        out.append(
            Candidate(
                code="DX111" if abs(en / ea) <= LEFT_OUT else "DX104",
                message=(
                    f"member {model.member_ids[m]} is left out of the source's model (or inactive in it): the "
                    f"reported numbers fit the model without it (its reported force {_reported_obs(obs, m)})"
                    if abs(en / ea) <= LEFT_OUT
                    else f"member {model.member_ids[m]}'s axial stiffness in the source is {cm.fmt(en / ea)}× the "
                    f"model's (the reported results fit EA = {cm.fmt(en)} against {cm.fmt(ea)}"
                    f"{_hint(en / ea) or ': wrong section or material'})"
                ),
                location=Location(member=model.member_ids[m]),
                worst=float(worst[jj]),
                data=tuple(data),
                exact=bool(done[jj]),
            )
        )
    return out


def _fit_weights(
    obs: CaseResults, base: Prediction, actions: cm.CaseActions
) -> dict[str, tuple[FloatArray, FloatArray]]:
    """Per kind, the weights ``((r − b)/s², ok/s²)`` of the least-squares amplitude t of ``base + t·unit``
    against the reported values r, ``t = Σ_kinds Σ_ok (r − b)·u / s² / Σ_kinds Σ_ok u² / s²``.

    Each kind's scale s is the largest |b| but at least the case's own scale from its actions (loads, free
    elongations), as in the Evaluator: a kind whose values are all rounding noise (the reactions of a
    self-equilibrated temperature case) must not dominate the fit through a tiny scale.
    """
    weights: dict[str, tuple[FloatArray, FloatArray]] = {}
    for key, rep, has, b, floor in (
        ("U", obs.displacements, obs.has_displacements, base.U, actions.length_scale),
        ("N", obs.axial_forces, obs.has_axial_forces, base.N, actions.force_scale),
        ("R", obs.reactions, obs.has_reactions, base.R, actions.force_scale),
    ):
        if not has:
            continue
        r, bb = np.ravel(rep), np.ravel(b)
        ok = np.isfinite(r)
        s = max(cm.scale_of(bb), floor)
        if s == 0 or not ok.any():
            continue
        weights[key] = (np.where(ok, r - bb, 0.0) / s**2, ok.astype(np.float64) / s**2)
    return weights


def _fit_sums(
    weights: dict[str, tuple[FloatArray, FloatArray]],
    Z: FloatArray,
    uR: FloatArray,
    rows_R: Any,
    num_n: FloatArray,
    den_n: FloatArray,
) -> tuple[FloatArray, FloatArray]:
    """Numerators and denominators of the fitted t of every member candidate (unit U = −z, R on rows_R)."""
    num = np.zeros(Z.shape[1])
    den = np.zeros(Z.shape[1])
    if "U" in weights:
        w, o = weights["U"]
        num -= w @ Z
        den += np.einsum("i,ij,ij->j", o, Z, Z)
    if "N" in weights:
        num += num_n
        den += den_n
    if "R" in weights:
        w, o = weights["R"]
        num += w[rows_R] @ uR
        den += np.einsum("i,ij,ij->j", o[rows_R], uR, uR)
    return num, den


def sherman_morrison_member(
    base: Prediction, unit: Prediction, strain: float, beta: float, dk: float
) -> Prediction | None:
    """The solution with one member's stiffness k changed to k + Δk, from the rank-one update of K.

    ``(K + Δk b bᵀ)⁻¹ = K⁻¹ − Δk z zᵀ / (1 + Δk bᵀz)`` (Sherman–Morrison), applied to the loads with the
    member's initial-strain term; the result is ``base + t · unit`` with
    ``t = Δk (bᵀu − δ0) / (1 + Δk bᵀz)`` (``strain`` = bᵀu − δ0, ``beta`` = bᵀz).

    None when ``1 + Δk bᵀz`` vanishes (to ``MECHANISM`` relative): K + Δk b bᵀ is singular, the changed
    structure a mechanism (a member of a statically determinate truss removed, Δk = −k).
    """
    den = 1.0 + dk * beta
    if not np.isfinite(den) or abs(den) <= MECHANISM * (1.0 + abs(dk * beta)):
        return None  # with that stiffness the source's structure would be a mechanism: evidence, not a division
    return base.plus(unit, dk * strain / den)


# ----------------------------------------------------------------- for the multi-cause fit
#: an EA ratio within this of 0 is a member left out (DX111)
LEFT_OUT = 0.02
#: EA ratios a hand-off mistake typically produces (a decimal place, a unit, a doubled or halved section)
PLAIN_RATIOS = (0.0, 0.001, 0.01, 0.1, 0.5, 2.0, 10.0, 100.0, 1000.0)


def _suspects(pb: Problem) -> Any:
    """Members to try, most suspect first: those whose reported force disagrees with the compatibility of the
    reported displacements, else those whose force or elongation differs most from the recomputation."""
    model, obs, tol, base = pb.model, pb.obs, pb.tol, pb.base
    d0 = pb.actions.free_elongation
    if obs.has_displacements and obs.has_axial_forces:
        Nc, qc, _mech = compatible_forces(model, obs, d0, pb.solver.B)
        j = cm.judge(
            obs.axial_forces,
            Nc,
            cm.quantum_or_zero(obs.axial_force_quantum, obs.axial_forces) + qc,
            cm.scale_of(obs.axial_forces),
            tol,
        )
        miss = np.where(j.failed, np.abs(np.nan_to_num(j.difference)), 0.0)
    elif obs.has_axial_forces:
        miss = np.abs(np.nan_to_num(obs.axial_forces - base.N))
    else:
        miss = np.abs(pb.solver.B @ np.nan_to_num(obs.displacements - base.U).reshape(-1))
    ranked = np.argsort(-miss, kind="stable")
    return ranked[miss[ranked] > 0][: pb.limit]


def plan(pb: Problem) -> Plan:
    """The suspect members (:func:`_suspects`) and their columns ``z = K⁻¹ b``."""
    cands = _suspects(pb)
    return Plan(Needs(members=tuple(int(m) for m in cands)), cands)


def candidates(pb: Problem, planned: Plan | None = None) -> list[Cause]:
    """Each suspect member's EA, fitted (its extra axial force t), as one column of the fit."""
    model, solver = pb.model, pb.solver
    cands = (planned if planned is not None else plan(pb)).data
    if cands.size == 0:
        return []
    B, k = solver.B, solver.k
    Z = solver.member_columns(cands)  # one block solve for the suspects not solved already
    cols = pb.resp.columns(-Z, (cands, np.arange(cands.size)))
    beta = np.asarray((B[cands] @ Z)[np.arange(cands.size), np.arange(cands.size)]).ravel()
    strain = (B @ pb.base.U.reshape(-1))[cands] - pb.actions.free_elongation[cands]
    cache: dict[int, Prediction] = {}
    out: list[Cause] = []
    for c, m in enumerate(cands.tolist()):
        if not np.any(cols[:, c]):
            continue
        z = Z[:, c]  # a view: Z is never written

        def unit(m: int = m, z: FloatArray = z) -> Prediction:
            if m not in cache:
                cache[m] = pb.resp.full(-z, extra_member=m)
            return cache[m]

        def ratio(th: FloatArray, m: int = m, c: int = c) -> tuple[float, float]:
            t = float(th[0])
            with np.errstate(all="ignore"):
                dk = t / (strain[c] - t * beta[c])
            return float((k[m] + dk) / k[m]), float(1.0 + dk * beta[c])

        def valid(th: FloatArray, ratio: Any = ratio) -> bool:
            r, den = ratio(th)
            return bool(np.isfinite(r)) and r > -LEFT_OUT and abs(den) > MECHANISM

        def plain(th: FloatArray, ratio: Any = ratio) -> bool:
            r, _den = ratio(th)
            return any(abs(r - p) <= max(LEFT_OUT, 0.005 * p) for p in PLAIN_RATIOS)

        def describe(th: FloatArray, m: int = m, ratio: Any = ratio) -> tuple[str, tuple[tuple[str, Any], ...]]:
            r, _den = ratio(th)
            mid = model.member_ids[m]
            ea = float(model.E[m] * model.A[m])
            data = (
                ("member", mid),
                ("model_EA", ea),
                ("implied_EA", r * ea),
                ("EA_ratio", r),
                ("extra_force", float(th[0])),
            )
            if abs(r) <= LEFT_OUT:
                return (
                    f"member {mid} is left out of the source's model (or inactive in it): the reported numbers fit "
                    f"the model without it (its reported force {_reported(pb, m)})",
                    data,
                )
            return (
                f"member {mid}'s axial stiffness in the source is {cm.fmt(r)}× the model's (the reported results fit "
                f"EA = {cm.fmt(r * ea)} against {cm.fmt(ea)}{_hint(r) or ': wrong section or material'})",
                data,
            )

        out.append(
            Cause(
                code="DX104",
                code_of=lambda th, ratio=ratio: "DX111" if abs(ratio(th)[0]) <= LEFT_OUT else "DX104",
                location=Location(member=model.member_ids[m]),
                rank=RANK_STRUCTURAL,
                key=("member", m),
                apply=lambda pred, th, unit=unit: pred.plus(unit(), float(th[0])),
                describe=describe,
                cols=cols[:, [c]],
                valid=valid,
                plain=plain,
            )
        )
    return out


def _reported(pb: Problem, m: int) -> str:
    return _reported_obs(pb.obs, m)


def _reported_obs(obs: CaseResults, m: int) -> str:
    if not obs.has_axial_forces or not np.isfinite(obs.axial_forces[m]):
        return "is missing"
    return f"is {cm.fmt(float(obs.axial_forces[m]))}"


def _hint(r: float) -> str:
    for p, words in (
        (0.1, "a section one decimal place out"),
        (10.0, "a section one decimal place out"),
        (0.01, "two decimal places out"),
        (100.0, "two decimal places out"),
        (0.001, "a unit slip of 1000"),
        (1000.0, "a unit slip of 1000"),
        (2.0, "doubled"),
        (0.5, "halved"),
    ):
        if abs(r / p - 1.0) <= 0.01:
            return f": {words}"
    return ""
