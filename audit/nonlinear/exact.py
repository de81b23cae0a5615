"""The high-precision path of a non-linear model: each state's final active structure, refined and proven.

For every solved state the *active model* is built: the structure without its
slack members (linear from then on), with the state's own actions (a load
case, or a combination and the cases it combines), the self weight of every
member (slack ones included) turned into explicit nodal loads from the input's
decimal texts.  :func:`audit.precision.analyse` refines and proves it as any
linear model; the answer is mapped back (a slack member's force is exactly 0).

The proof then covers the active set: the sign of every active non-linear
member's force, and the sign of every slack member's change of length
``e = B u − δ0`` (its free elongation counted), each established with its
proven bound (``|N| > bound``; ``|e| > Σ|n_a|(bound_start,a + bound_end,a)``
plus the float rounding of the evaluation).  A case whose active set is not
established this way keeps its numbers but is reported ``not_established``,
with the members that could not be decided.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from audit import stiffness
from audit.model import CaseResults, LoadCase, Model, Results
from audit.selfweight import self_weight_load_texts, self_weight_loads

from .records import SOLVED, StateOutcome

_U = 2.0**-52


def _reduced_case(model: Model, lc: LoadCase, new_index: dict[int, int]) -> LoadCase:
    keep = np.array(sorted(new_index), dtype=np.int64)
    loads, load_text = lc.loads, lc.load_text
    if lc.has_self_weight:
        loads = loads + self_weight_loads(model, lc)
        load_text = load_text + self_weight_load_texts(model, lc)
    return replace(
        lc,
        loads=loads,
        load_text=load_text,
        temperature=lc.temperature[keep],
        length_error=lc.length_error[keep],
        temperature_text=tuple((new_index[j], t) for j, t in lc.temperature_text if j in new_index),
        length_error_text=tuple((new_index[j], t) for j, t in lc.length_error_text if j in new_index),
        self_weight=0.0,
        self_weight_text="",
        self_weight_direction=(),
        self_weight_direction_text=(),
    )


def active_model(model: Model, state: StateOutcome) -> tuple[Model, np.ndarray]:
    """The linear model of one state's active structure, and the indices of the members it keeps."""
    keep = np.flatnonzero(state.active)
    new_index = {int(j): i for i, j in enumerate(keep.tolist())}
    ci = model.case_index(state.case_id)
    if ci is not None:
        cases: tuple[LoadCase, ...] = (_reduced_case(model, model.load_cases[ci], new_index),)
        combos: tuple = ()
    else:
        comb = model.combinations[model.combination_index(state.case_id)]  # type: ignore[index]
        used = sorted({c for c, _f, _t in comb.factors})
        where = {c: i for i, c in enumerate(used)}
        cases = tuple(_reduced_case(model, model.load_cases[c], new_index) for c in used)
        combos = (replace(comb, factors=tuple((where[c], f, t) for c, f, t in comb.factors)),)

    def pick(texts: tuple[str, ...]) -> tuple[str, ...]:
        return tuple(texts[j] for j in keep.tolist()) if texts else ()

    sub = replace(
        model,
        member_ids=tuple(model.member_ids[j] for j in keep.tolist()),
        conn=model.conn[keep],
        E=model.E[keep],
        A=model.A[keep],
        alpha=model.alpha[keep],
        E_text=pick(model.E_text),
        A_text=pick(model.A_text),
        alpha_text=pick(model.alpha_text),
        unit_weight=np.zeros(0),
        unit_weight_text=(),
        behaviour=np.zeros(0, dtype=np.int64),
        load_cases=cases,
        combinations=combos,
        results=None,
        stiffness=None,
    )
    return sub, keep


def _reduced_results(results: Results | None, case_id: str, keep: np.ndarray) -> Results | None:
    if results is None:
        return None
    cr = results.case(case_id)
    if cr is None:
        return None
    sub: CaseResults = replace(cr, axial_forces=cr.axial_forces[keep], axial_force_quantum=cr.axial_force_quantum[keep])
    return replace(results, cases=(sub,))


def _expand(values: np.ndarray, keep: np.ndarray, m: int, fill: object = 0.0) -> np.ndarray:
    out = np.empty(m, dtype=values.dtype)
    out[:] = fill
    out[keep] = values
    return out


def _expand_reported(reported, keep: np.ndarray, m: int):
    """The reported proof with the per-member quantity over every member (slack ones: not judged here)."""
    quantities = []
    for q in reported.quantities:
        if q.name == "axial_forces":  # the per-member quantity
            q = replace(
                q,
                verdict=_expand(q.verdict, keep, m, 0),
                difference=_expand(q.difference, keep, m, np.nan),
                bound=_expand(np.asarray(q.bound, dtype=np.float64), keep, m, 0.0),
                quantum=_expand(np.asarray(q.quantum, dtype=np.float64), keep, m, 0.0),
            )
        quantities.append(q)
    return replace(reported, quantities=tuple(quantities))


def _active_set_proof(model: Model, state: StateOutcome, cp, d0: np.ndarray) -> tuple[bool, str]:
    """Whether the bounds establish the state's active set; the members they leave undecided, in words."""
    codes = model.behaviour_codes()
    nl = codes != 0
    if cp.bound_axial is None or cp.bound_dof is None:
        return False, "the active set is not proven: no bounds were established"
    undecided: list[str] = []
    n = cp.axial_forces
    weak_active = nl & state.active & ~(codes * n > cp.bound_axial)
    undecided += [f"{model.member_ids[i]} (force)" for i in np.flatnonzero(weak_active)[:10].tolist()]
    B = stiffness.compatibility_matrix(model)
    u = cp.displacements.reshape(-1)
    e = B @ u - d0
    bd = np.asarray(cp.bound_dof, dtype=np.float64).reshape(-1)
    eb = abs(B) @ bd + 4 * _U * (abs(B) @ np.abs(u) + np.abs(d0) + np.abs(e))
    weak_slack = nl & ~state.active & ~(codes * e < -eb)
    undecided += [f"{model.member_ids[i]} (length change)" for i in np.flatnonzero(weak_slack)[:10].tolist()]
    total = int(weak_active.sum() + weak_slack.sum())
    if total:
        more = f" and {total - len(undecided)} more" if total > len(undecided) else ""
        return False, "the active set is not proven: the bounds leave the sign of " + ", ".join(undecided) + more
    return True, ""


def nonlinear_precision(model: Model, solution, results: Results | None, digits: int):
    """A :class:`~audit.precision.PrecisionReport` over the solved states of a non-linear model."""
    from audit import precision
    from audit.precision.exact_numbers import Fixed
    from audit.precision.records import PrecisionReport
    from audit.solve import build_system, factorize_system, solve_with

    from . import state_actions

    rep = solution.nonlinear
    d0_of = {cid: d0 for cid, _f, d0, _g in state_actions(model)}
    m = model.n_members
    cases = []
    reports = []
    for st in rep.states:
        if st.status != SOLVED:
            continue
        sub, keep = active_model(model, st)
        system = build_system(sub)
        factor, cond = factorize_system(sub, system)
        pr = precision.analyse(
            sub,
            system,
            factor,
            solve_with(sub, system, factor, cond),
            _reduced_results(results, st.case_id, keep),
            digits,
        )
        reports.append(pr)
        cp = pr.case(st.case_id)
        if cp is None:
            continue
        fx = cp.axial_forces_exact
        cp = replace(
            cp,
            axial_forces=_expand(cp.axial_forces, keep, m),
            axial_forces_exact=Fixed(_expand(fx.ints, keep, m, 0), fx.e10, fx.e2),
            bound_axial=_expand(cp.bound_axial, keep, m) if cp.bound_axial is not None else None,
        )
        cp = replace(cp, reported=_expand_reported(cp.reported, keep, m))
        proven, why = _active_set_proof(model, st, cp, d0_of[st.case_id])
        if not proven:
            reason = (cp.reason + "; " if cp.reason else "") + why
            cp = replace(cp, status="not_established", reason=reason)
        cases.append(cp)
    unsolved = tuple((s.case_id, s.message) for s in rep.unsolved)
    if not reports:
        return PrecisionReport(
            digits=digits,
            cases=(),
            lambda_lo=None,
            lambda_lo_scaled=None,
            lambda_method="none",
            lambda_reason="no state has a solution",
            condition_estimate=float("nan"),
            condition_upper=None,
            condition_scaled=float("nan"),
            data_precision=float("nan"),
            data_precision_source="none",
            from_text=True,
            method="per state, on its final active structure",
            timings=(),
            unsolved=unsolved,
        )
    lams = [r.lambda_lo for r in reports]
    first = reports[0]
    return PrecisionReport(
        digits=digits,
        cases=tuple(cases),
        lambda_lo=None if any(v is None for v in lams) else min(lams),  # type: ignore[type-var]
        lambda_lo_scaled=None,
        lambda_method=first.lambda_method,
        lambda_reason=first.lambda_reason,
        condition_estimate=max(r.condition_estimate for r in reports),
        condition_upper=None,
        condition_scaled=max(r.condition_scaled for r in reports),
        data_precision=first.data_precision,
        data_precision_source=first.data_precision_source,
        from_text=all(r.from_text for r in reports),
        method="per state, on its final active structure: " + first.method,
        timings=tuple(("total", sum(dict(r.timings).get("total", 0.0) for r in reports)) for _ in (0,)),
        certificate=first.certificate,
        unsolved=unsolved,
    )
