"""Entry points: :func:`analyse` (the engine's factor → :class:`PrecisionReport`) and :func:`solve_high_precision`.

:func:`analyse` chooses the working precision ``P`` (bits) from the digits
asked for and the scaled condition estimate, and the scales: displacements
``u = ints·10^-ku·2^-S`` (``ku`` the settlements' and factors' decimal
exponent, ``S`` so that the largest is about ``2^(P+12)``) and forces
``ints·10^e10f·2^e2f``; then it runs the refinement
(:mod:`~audit.precision.refinement`), the certificate
(:func:`audit.certify.certify_restrained`) and the bounds
(:mod:`~audit.precision.bounds`) for every state.
"""

from __future__ import annotations

import math
import time

import numpy as np
import scipy.sparse as sp

from audit import certify, linsolve
from audit.model import Model, Results
from audit.solve import Solution, System, build_system, factorize_system, solve_with
from audit.timing import Timings, stage

from .bounds import case_record, input_precision
from .exact_model import assembly_data, exact_model
from .exact_numbers import floor_log2_scaled
from .records import ExactCase, PrecisionReport, bound_value
from .refinement import prescribed_part, refine, start_iterate
from .residual import Scales, exact_rhs
from .states import load_states

#: digits asked for when none are given
DEFAULT_DIGITS = 30
#: most digits that may be asked for
MAX_DIGITS = 100


def analyse(
    model: Model,
    system: System,
    factor: linsolve.Factor,
    solution: Solution,
    results: Results | None,
    digits: int = DEFAULT_DIGITS,
    *,
    sparse_limit: int = certify.SPARSE_LIMIT,
    dense_limit: int = certify.DENSE_LIMIT,
    max_factor_nonzeros: int = certify.MAX_FACTOR_NONZEROS,
    certificate_budget: float = certify.CERTIFICATE_BUDGET,
    certificate_free_nonzeros: int = certify.CERTIFICATE_FREE_NONZEROS,
) -> PrecisionReport:
    """Recompute every case to ``digits`` significant digits and prove error bounds (:mod:`audit.precision`).

    ``factor`` must be the float64 factor of ``system.K_r`` (it is re-used for
    every refinement step and for the Ritz estimates).
    """
    if not 4 <= digits <= MAX_DIGITS:
        raise ValueError(f"digits must be between 4 and {MAX_DIGITS}, got {digits}")
    timings: list[tuple[str, float]] = []
    t0 = time.perf_counter()
    cond_scaled = float(solution.condition_estimate)
    cond_bits = math.ceil(math.log2(cond_scaled)) if np.isfinite(cond_scaled) and cond_scaled > 1 else 30
    P = math.ceil(digits * math.log2(10)) + cond_bits + 40
    st = load_states(model)
    ex = exact_model(model, P, st.has_temp)
    nn, d, ns = model.n_nodes, model.dim, len(st.ids)
    timings.append(("exact_input", time.perf_counter() - t0))
    U0 = np.zeros((nn, d, ns))
    for i, cid in enumerate(st.ids):
        cs = solution.case(cid)
        if cs is not None:
            U0[:, :, i] = cs.displacements
    ku = st.kg + st.kc
    umax = float(np.max(np.abs(U0), initial=0.0)) or 1.0
    S = max(0, P + 12 - floor_log2_scaled(umax, ku))
    if np.any(ex.zshift):  # free directions with huge integer bases: finer u grid so that Z·w resolves them
        S += int(ex.zshift.max()) + 64
    e10s = [ex.kx - ex.k_ea - ku, -(st.kf + st.kc)]
    if st.has_temp:
        e10s.append(-ex.k_ea - st.kat - st.kc)
    if st.has_lerr:
        e10s.append(ex.kx - ex.k_ea - st.ke - st.kc)
    if ex.sp_node.size:
        e10s.append(-ex.kk - ku)
    e10f = min(e10s)
    e2f = min(-ex.Q - S, -ex.Qh)
    Kabs = abs(sp.csr_matrix(system.K + system.K_springs))
    fref = float(np.max(Kabs @ np.abs(U0).reshape(nn * d, ns), initial=0.0)) or 1.0
    Y = max(0, math.floor(math.log2(fref) - (P + 150) - e10f * math.log2(10) - e2f))
    sc = Scales(S=S, ku=ku, e10f=e10f, e2f=e2f, Y=Y)
    rhs, rhs_err = exact_rhs(ex, st, sc)
    up = prescribed_part(model, system, ex, st, sc)
    start = start_iterate(ex, sc, U0, up)
    timings.append(("setup", time.perf_counter() - t0))
    ref = refine(ex, system, factor, sc, rhs, rhs_err, start, digits, cond_scaled) if ns else None
    timings.append(("refinement_residuals", ref.seconds_residual if ref else 0.0))
    timings.append(("refinement_solves", ref.seconds_solve if ref else 0.0))
    cert = certify.certify_restrained(
        system,
        factor,
        assembly_data(model, ex),
        sparse_limit=sparse_limit,
        dense_limit=dense_limit,
        max_factor_nonzeros=max_factor_nonzeros,
        budget=certificate_budget,
        free_nonzeros=certificate_free_nonzeros,
    )
    timings.append(("certificate", cert.seconds))
    t1 = time.perf_counter()
    dprec, dsrc = input_precision(model)
    unit = sc.unit
    unit_f = float(unit)
    cases = tuple(
        case_record(model, system, ex, st, sc, rhs, rhs_err, ref, cert, i, digits, unit_f, dprec, results, Kabs)
        for i in range(ns)
        if ref is not None
    )
    timings.append(("bounds_and_reported", time.perf_counter() - t1))
    timings.append(("total", time.perf_counter() - t0))
    cond_est = cert.lam_max_est / cert.lam_est if cert.lam_est > 0 else float("inf")
    cond_up = cert.norm_upper / cert.lam_k if cert.lam_k else None
    return PrecisionReport(
        digits=digits,
        cases=cases,
        lambda_lo=cert.lam_k,
        lambda_lo_scaled=cert.lam_s,
        lambda_method=cert.certificate.method,
        lambda_reason=cert.reason,
        condition_estimate=cond_est,
        condition_upper=cond_up,
        condition_scaled=cond_scaled,
        data_precision=dprec,
        data_precision_source=dsrc,
        from_text=ex.from_text,
        method=(
            f"mixed-precision refinement: {factor.backend} float64 factor, residuals member by member in exact "
            f"integer arithmetic with 1/L³ to {P} bits; λ_lo by {cert.certificate.method} (Rump 2006)"
        ),
        timings=tuple(timings),
        certificate=cert.certificate.as_dict()
        | {"assembly_error_bound_scaled": bound_value(cert.eta_s)}
        | ({"size_policy": cert.plan.as_dict()} if cert.plan is not None else {}),
    )


def solve_high_precision(
    model: Model, digits: int = DEFAULT_DIGITS, backend: str = "auto", timings: Timings | None = None
) -> tuple[tuple[ExactCase, ...], PrecisionReport]:
    """Solve every case and combination to ``digits`` significant digits, with the proof status.

    Returns one :class:`ExactCase` per load case then combination (file
    order) and the :class:`PrecisionReport`.  Raises
    ``audit.errors.UnsolvableError`` for a mechanism, like
    :func:`audit.solve.solve_model`.  ``timings`` (optional) receives the
    stages ``build``, ``factorise``, ``recompute``, ``refine`` and ``certificate``.
    """
    with stage(timings, "build"):
        system = build_system(model)
    with stage(timings, "factorise"):
        factor, cond = factorize_system(model, system, backend)
    with stage(timings, "recompute"):
        solution = solve_with(model, system, factor, cond)
    t0 = time.perf_counter()
    if solution.nonlinear is not None:  # each state on its final active structure
        from audit.nonlinear.exact import nonlinear_precision

        report = nonlinear_precision(model, solution, None, digits)
    else:
        report = analyse(model, system, factor, solution, None, digits=digits)
    if timings is not None:
        cert = dict(report.timings).get("certificate", 0.0)
        timings.add("refine", time.perf_counter() - t0 - cert)
        timings.add("certificate", cert)
    cases = tuple(
        ExactCase(
            case_id=c.case_id,
            displacements=c.displacements_exact.to_fractions(),
            axial_forces=c.axial_forces_exact.to_fractions(),
            reactions=c.reactions_exact.to_fractions(),
            proven_digits=c.proven_digits,
            precision=c,
        )
        for c in report.cases
    )
    return cases, report
