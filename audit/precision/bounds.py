"""Proven error bounds and backward errors from the exact residual and the certified λ_lo.

**Bounds** (Rump 2006 for λ_S, see :mod:`audit.certify`): with ``λ_S`` a
certified lower bound on the smallest eigenvalue of the power-of-two scaled
exact restrained stiffness ``S* = Σ K_r* Σ``, ``ρ`` the exact reduced
residual (in an orthonormal basis of the free directions) and ``e = d* − d``:

* energy norm: ``eᵀK*e = ρᵀK*⁻¹ρ = (Σρ)ᵀS*⁻¹(Σρ) ≤ ‖Σρ‖₂²/λ_S =: Φ``;
* displacements: ``‖e‖₂ ≤ ‖ρ‖₂/λ_lo`` with ``λ_lo = λ_S·min σ⁻²`` (the
  smallest eigenvalue of the restrained K), and per degree of freedom
  ``|e_i| ≤ σ_i·‖Σρ‖₂/λ_S``;
* member forces: ``Φ ≥ eᵀK*e ≥ k_e δ_e²`` (every member's strain energy is
  part of the total) with ``δ_e`` the member's elongation error, so
  ``|ΔN_e| = k_e|δ_e| ≤ √(k_e Φ)``, ``k_e = E_eA_e/L_e``;
* reactions: ``|ΔR_{j,a}| ≤ Σ_{e at j} |ΔN_e|``.

The residual's own error bound is added to ``|ρ|`` before the norms are taken.

**Backward error** of the reported displacements (Oettli & Prager 1964,
"Compatibility of approximate solution of linear equations with given error
bounds for coefficients and right-hand sides", *Numer. Math.* 6, 405–409):
``ω = max_i |ρ_i| / (|K||d| + |f|)_i``, the smallest relative change of the
stiffness entries and loads that makes the reported displacements exact;
compared with the relative rounding quantum of the input's decimal texts
(:func:`input_precision`).

Without a certified λ_lo (the size policy of :mod:`audit.certify`, or a
failed certificate) nothing is proven: the case is ``not_established`` with
the reason, and the digits the refinement reached are reported as an
estimate (``estimated_digits``), not as proven.
"""

from __future__ import annotations

import itertools
import math

import mpmath
import numpy as np
import scipy.sparse as sp

from audit import certify
from audit.model import FloatArray, Model, Results
from audit.solve import System

from .exact_model import ExactModel
from .exact_numbers import (
    Fixed,
    ObjArray,
    U,
    float_exact_to_scale,
    ints_to_float,
    round_scaled,
    scale_float,
    text_quantum,
)
from .records import CasePrecision, QuantityProof, ReportedProof
from .refinement import Refined, assemble_u
from .residual import Scales, exact_residual, unit_in_range
from .states import States


def input_precision(model: Model) -> tuple[float, str]:
    """Smallest relative rounding quantum of the input texts (E, A, non-zero loads, coordinates over lengths)."""
    best, src = float("inf"), "none"

    def consider(q: float, what: str) -> None:
        nonlocal best, src
        if np.isfinite(q) and q < best:
            best, src = q, what

    for name, texts in (("E", model.E_text), ("A", model.A_text)):
        if texts:
            uniq = {t: text_quantum(t) / abs(float(t)) for t in set(texts) if float(t) != 0}
            if uniq:
                consider(min(uniq.values()), name)
    loads = [t for lc in model.load_cases for (*_k, t) in lc.load_text if float(t) != 0]
    if loads:
        consider(min(text_quantum(t) / abs(float(t)) for t in set(loads)), "loads")
    if model.coords_text and model.n_members:
        flat = list(itertools.chain.from_iterable(model.coords_text))
        cache = {t: text_quantum(t) for t in set(flat)}
        q = np.fromiter(map(cache.__getitem__, flat), dtype=np.float64, count=len(flat)).reshape(
            len(model.coords_text), -1
        )
        qn = np.sqrt((q**2).sum(axis=1))
        consider(float(np.min((qn[model.conn[:, 0]] + qn[model.conn[:, 1]]) / model.lengths())), "coordinates")
    return best, src


def classify(
    rep: FloatArray, q: FloatArray, hp: FloatArray, b: FloatArray, mask: np.ndarray, name: str
) -> QuantityProof:
    """Verdict per entry: within rounding iff |rep − hp| + b ≤ q, beyond iff |rep − hp| − b > q (proven either way).

    ``b`` is the proven bound |hp − exact|; the float evaluation of the
    difference is covered by a relative u on each term.
    """
    diff = np.abs(rep - hp)
    slack = b + U * np.abs(hp) + U * diff
    with np.errstate(invalid="ignore"):
        within = mask & (diff + slack <= q * (1 - U))
        beyond = mask & (diff - slack > q * (1 + U))
    verdict = np.where(mask, 3, 0).astype(np.int8)
    verdict[within] = 1
    verdict[beyond] = 2
    return QuantityProof(name, verdict, np.where(mask, diff, np.nan), b, q)


OUT_OF_RANGE = (
    "the forces are too close to the limits of the float64 range (residual unit outside 2^±960) for the bounds, "
    "which are evaluated in float64, to be established"
)


def _omega(ex: ExactModel, mag_real: FloatArray, den: FloatArray) -> float:
    """Oettli–Prager ω = max_i |ρ_i| / (|K||d| + |f|)_i (restrained nodes: node-wise norms)."""
    num = mag_real.copy()
    dd = den.copy()
    if ex.rn.size:
        for j, node in enumerate(ex.rn.tolist()):
            if ex.inclined[j]:
                num[node] = np.sqrt((num[node] ** 2).sum(axis=0))
                dd[node] = np.sqrt((dd[node] ** 2).sum(axis=0))
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(num > 0, num / dd, 0.0)
    return float(np.max(ratio, initial=0.0))


def _norm_scaled(cert: certify.RestrainedBound, system: System, ex: ExactModel, mag: FloatArray) -> tuple[float, float]:
    """(‖Σρ‖₂, ‖ρ‖₂) in residual units from the per-dof magnitudes."""
    sig = cert.sig_glob
    m2 = mag**2
    return float(np.sqrt((sig[..., None] ** 2 * m2).sum(axis=(0, 1))).max()), float(np.sqrt(m2.sum(axis=(0, 1))).max())


def _estimated_digits(ref: Refined, digits: int) -> int:
    """Digits reached by the refinement's own estimate, not proven.

    In iterative refinement the size of a correction estimates the error of
    the iterate it corrects (Higham 2002, §12.1); the error left after the
    last correction is estimated as that size times the observed contraction
    (the refinement's stopping rule): ``h_k · min(1, h_k / h_{k−1})`` with
    ``h`` the relative corrections.
    """
    h = ref.history
    if not h or h[-1] == 0.0:
        return digits
    err = h[-1] * min(1.0, h[-1] / h[-2]) if len(h) >= 2 and h[-2] > 0 else h[-1]
    if err == 0.0:
        return digits
    return max(0, math.floor(-math.log10(err)))


def case_record(
    model: Model,
    system: System,
    ex: ExactModel,
    st: States,
    sc: Scales,
    rhs: ObjArray,
    rhs_err: FloatArray,
    ref: Refined,
    cert: certify.RestrainedBound,
    i: int,
    digits: int,
    unit: float,
    dprec: float,
    results: Results | None,
    Kabs: sp.csr_matrix,
) -> CasePrecision:
    nn, d = ex.n_nodes, ex.dim
    cid = st.ids[i]
    u = ref.it.u[:, :, i]
    disp = Fixed(u, -sc.ku, -sc.S)
    uf = disp.to_float()
    # axial forces N = EA·p/L² − EA·alpha·delta − EA·err/L
    e10s = [ex.kx - ex.k_ea - sc.ku]
    if st.has_temp:
        e10s.append(-ex.k_ea - st.kat - st.kc)
    if st.has_lerr:
        e10s.append(ex.kx - ex.k_ea - st.ke - st.kc)
    e10N = min(e10s)
    e2N = -sc.S - ex.Q
    m = ex.s_idx.size
    if m:
        p = ref.p[:, i]
        # EA·p·10^k·2^b // L² with the power of two as a shift (the same integers, cheaper than a multiplication)
        k10, b2 = ex.kx - ex.k_ea - sc.ku - e10N, -sc.S - e2N
        t = ex.EA * p
        if k10:
            t = t * 10**k10
        if b2:
            t = np.left_shift(t, b2)
        N = t // ex.L2
        del t
        if st.has_temp:
            N = N - ex.EA * st.temp[:, i] * (10 ** (-ex.k_ea - st.kat - st.kc - e10N) << (-e2N))
        if st.has_lerr:
            hh = ex.h if ex.h is not None else np.frompyfunc(math.isqrt, 1, 1)((1 << (2 * ex.Qh)) // ex.L2)
            N = N - ex.EA * st.lerr[:, i] * hh * (10 ** (ex.kx - ex.k_ea - st.ke - st.kc - e10N) << (-ex.Qh - e2N))
    else:
        N = np.zeros(0, dtype=object)
    axial = Fixed(N, e10N, e2N)
    Nf = axial.to_float()
    sup = np.zeros(nn, dtype=bool)
    sup[system.supported_nodes] = True
    R = np.zeros((nn, d), dtype=object)
    R[sup] = -ref.rm[sup, :, i]  # reactions at the supported nodes only (0 elsewhere)
    reac = Fixed(R, sc.e10f, sc.e2f)
    Rf = reac.to_float()
    mag = ref.mag[:, :, i : i + 1]
    sig_norm, plain_norm = _norm_scaled(cert, system, ex, mag)
    fabs = np.abs(ints_to_float(rhs[:, :, i], sc.e10f, sc.e2f))  # |f| in float, for both backward errors
    den = (Kabs @ np.abs(uf).reshape(-1)).reshape(nn, d) + fabs
    in_range = unit_in_range(unit)
    omega_own = _omega(ex, mag[:, :, 0] * unit, den) if in_range else None
    reason = ""
    bound = bound_dof = bound_ax = bound_re = energy = None
    proven_digits = None
    if not in_range:
        reason = OUT_OF_RANGE
    elif st.inclined_settlement[i]:
        reason = "a settlement along an inclined restraint is rounded in the exact path; bounds not established"
    elif cert.lam_s is None:
        reason = "λ_lo could not be certified: " + cert.reason
    else:
        lam = cert.lam_s
        smax = float(np.max(cert.sigma))
        b_units = sig_norm / lam
        bound = float(min(smax * b_units, plain_norm / cert.lam_k if cert.lam_k else np.inf) * unit) * 1.0001
        bound_dof = cert.sig_glob * b_units * unit * 1.0001
        energy = (sig_norm * unit) ** 2 / lam * 1.0001
        bound_ax = np.sqrt(ex.kf_member * energy) * 1.0001 + 2 * float(mpmath.mpf(10) ** e10N * mpmath.mpf(2) ** e2N)
        if st.has_lerr and m:
            lerr_f = np.abs(ints_to_float(st.lerr[:, i], -(st.ke + st.kc), 0))
            bound_ax = bound_ax + 2 * ex.eta * ex.kf_member * lerr_f
        acc = np.zeros(nn)
        if m:
            np.add.at(acc, ex.s_idx, bound_ax)
            np.add.at(acc, ex.e_idx, bound_ax)
        bound_re = np.where(sup[:, None], acc[:, None] + ref.err[:, :, i] * unit, 0.0) * 1.0001
        scale = float(np.max(np.abs(uf), initial=0.0))
        if bound == 0.0:
            proven_digits = digits
        elif scale > 0:
            proven_digits = max(0, math.floor(-math.log10(bound / scale)))
        else:
            proven_digits = 0
    status = "proven" if bound is not None else "not_established"
    estimated = _estimated_digits(ref, digits) if in_range else None
    rep = _reported(
        model,
        system,
        ex,
        st,
        sc,
        rhs,
        rhs_err,
        cert,
        i,
        unit,
        dprec,
        results,
        Kabs,
        uf,
        Nf,
        Rf,
        bound_dof,
        bound_ax,
        bound_re,
        ref.it.up[:, :, i : i + 1],
        fabs,
    )
    return CasePrecision(
        case_id=cid,
        displacements=uf,
        axial_forces=Nf,
        reactions=Rf,
        displacements_exact=disp,
        axial_forces_exact=axial,
        reactions_exact=reac,
        digits=digits,
        lambda_lo=cert.lam_k,
        proven_digits=proven_digits,
        estimated_digits=estimated,
        bound=bound,
        bound_dof=bound_dof,
        bound_axial=bound_ax,
        bound_reaction=bound_re,
        energy_bound=energy,
        backward_error=omega_own,
        iterations=ref.iterations,
        converged=ref.converged,
        status=status,
        reason=reason if status != "proven" else ("" if ref.converged else "refinement stopped before the target"),
        reported=rep,
    )


def _reported(
    model: Model,
    system: System,
    ex: ExactModel,
    st: States,
    sc: Scales,
    rhs: ObjArray,
    rhs_err: FloatArray,
    cert: certify.RestrainedBound,
    i: int,
    unit: float,
    dprec: float,
    results: Results | None,
    Kabs: sp.csr_matrix,
    uf: FloatArray,
    Nf: FloatArray,
    Rf: FloatArray,
    bound_dof: FloatArray | None,
    bound_ax: FloatArray | None,
    bound_re: FloatArray | None,
    it_up: ObjArray,
    fabs: FloatArray,
) -> ReportedProof:
    """Proof status of the reported results of state ``i`` against the exact solution (``fabs``: |f| in float)."""
    cid = st.ids[i]
    cr = results.case(cid) if results is not None else None
    if cr is None:
        return ReportedProof("not_reported", "no reported results for this case", None, None, None, None)
    quantities: list[QuantityProof] = []
    nn, d = ex.n_nodes, ex.dim
    if bound_dof is not None:
        if cr.has_displacements:
            mask = np.isfinite(cr.displacements)
            quantities.append(classify(cr.displacements, cr.displacement_quantum, uf, bound_dof, mask, "displacements"))
        if cr.has_axial_forces and bound_ax is not None:
            mask = np.isfinite(cr.axial_forces)
            quantities.append(classify(cr.axial_forces, cr.axial_force_quantum, Nf, bound_ax, mask, "axial_forces"))
        if cr.has_reactions and bound_re is not None:
            sup = np.zeros(nn, dtype=bool)
            sup[system.supported_nodes] = True
            mask = np.isfinite(cr.reactions) & sup[:, None]
            quantities.append(classify(cr.reactions, cr.reaction_quantum, Rf, bound_re, mask, "reactions"))
    qs = tuple(quantities)
    if not cr.has_displacements:
        return ReportedProof("not_reported", "displacements not reported", None, None, None, None, qs)
    drep = np.array(cr.displacements, dtype=np.float64)
    need = np.ones((nn, d), dtype=bool)
    if ex.rn.size:
        need[ex.rn] = np.abs(ex.Zf).sum(axis=2) > 0  # components that move at restrained nodes
    if not np.all(np.isfinite(drep[need])):
        return ReportedProof("incomplete", "some free displacements are not reported", None, None, None, None, qs)
    # fill unreported restrained components with the prescribed values
    up_i = np.zeros((0, d))
    if ex.rn.size:
        up_i = ints_to_float(it_up[:, :, 0], -sc.ku, -sc.S)
        blk = drep[ex.rn]
        blk[~np.isfinite(blk)] = up_i[~np.isfinite(blk)]
        drep[ex.rn] = blk
    ints, conv_err = float_exact_to_scale(drep, sc.ku, sc.S)
    u_free = ints[:, :, None]  # assemble_u copies it
    w = np.zeros((ex.rn.size, d, 1), dtype=object)
    if ex.rn.size:
        wf = np.einsum("ncb,nb->nc", ex.Zpinv, drep[ex.rn] - up_i)
        w = round_scaled(wf, sc.ku, sc.S, scale_float(sc.ku, sc.S))[:, :, None]
    um = assemble_u(ex, u_free, w, it_up)
    dev = np.zeros((nn, d))  # u_free is the reported ints: they differ only at restrained nodes
    if ex.rn.size:
        dev[ex.rn] = ints_to_float(ints[ex.rn][:, :, None] - um[ex.rn], -sc.ku, -sc.S)[:, :, 0]
    dev = np.abs(dev) + conv_err * float(mpmath.mpf(10) ** -sc.ku * mpmath.mpf(2) ** -sc.S)
    _r, _rm, mag, _eff, _err, _p = exact_residual(ex, sc, rhs[:, :, i : i + 1], rhs_err[:, :, i : i + 1], um)
    umf = ints_to_float(um[:, :, 0], -sc.ku, -sc.S)
    den = (Kabs @ np.abs(umf).reshape(-1)).reshape(nn, d) + fabs
    if not unit_in_range(unit):
        return ReportedProof("not_established", OUT_OF_RANGE, None, None, None, None, qs)
    omega = _omega(ex, mag[:, :, 0] * unit, den)
    good = bool(omega <= max(dprec, float64_floor(Kabs, umf, den))) if np.isfinite(dprec) else None
    if st.inclined_settlement[i] or cert.lam_s is None or bound_dof is None:
        why = "λ_lo not certified" if cert.lam_s is None else "inclined settlement rounded"
        return ReportedProof("not_established", why, None, None, omega, good, qs)
    sig_norm, plain_norm = _norm_scaled(cert, system, ex, mag)
    smax = float(np.max(cert.sigma))
    e_m = min(smax * sig_norm / cert.lam_s, plain_norm / cert.lam_k if cert.lam_k else np.inf) * unit
    bound = float(e_m + np.sqrt((dev**2).sum())) * 1.0001
    own = float(np.sqrt((bound_dof**2).sum()))
    lower = float(np.sqrt(((drep - uf) ** 2).sum())) * (1 - 1e-12) - own
    return ReportedProof("evaluated", "", bound, max(lower, 0.0), omega, good, qs)


def float64_floor(Kabs: sp.csr_matrix, u: FloatArray, den: FloatArray) -> float:
    """The componentwise backward error a correct float64 solution may still show.

    A normwise backward-stable float64 solve leaves a residual ‖r‖∞ ≲ γ_2k ‖K‖∞ ‖d‖∞, k the most nonzeros in
    a row of K (Higham, *Accuracy and Stability of Numerical Algorithms*, 2nd ed., §3.1 for γ_n = nu/(1−nu),
    Thms 7.1 and 7.3 for the normwise and componentwise (Oettli–Prager) backward errors).  Measured
    componentwise, that residual is at most γ_2k ‖K‖∞ ‖d‖∞ / min_i (|K||d| + |f|)_i.  Input texts given to 17
    digits claim a data precision finer than float64 can honour; below this floor the audit cannot call a
    reported solution worse than the data allow.
    """
    if Kabs.shape[0] == 0:
        return 0.0
    k = int(np.diff(Kabs.indptr).max())
    nu = 2 * k * 2.0**-53
    gamma = nu / (1.0 - nu)
    norm_k = float(np.max(Kabs @ np.ones(Kabs.shape[1])))
    norm_d = float(np.max(np.abs(u))) if u.size else 0.0
    d = np.asarray(den, dtype=np.float64).ravel()
    d = d[d > 0]
    if d.size == 0 or norm_d == 0.0:
        return gamma
    return max(gamma, gamma * norm_k * norm_d / float(d.min()))
