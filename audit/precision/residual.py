"""The exact residual ``r = f + f0 − K u − K_s u``, member by member in integer arithmetic.

The residual is never taken from the float-assembled K: it is summed member
by member from the exact input (:mod:`audit.precision.exact_model`),
vectorised over members with numpy object arrays of Python ints.  It is exact
but for the rounded ``1/L³`` and ``1/L`` (relative ``η``) and the floored
spring and length-error terms (one unit each), whose bound is returned with
it.  At a restrained node the residual is reduced exactly onto the free
directions (``r_w = Zᵀ r``, ``‖P_V r‖² = r_wᵀ (ZᵀZ)⁻¹ r_w``).

Why exact integers (measured on this machine, 2 cores): the member-wise
residual in Python ints vectorised over members costs 1.2–3 µs per member and
evaluation (2D grid, 10⁵–10⁶ members), but it works at any number of digits
with an exact error term, whereas double-double saturates at 30–31 digits
(22–24 when ill-conditioned), at or below the 30 digits asked for.  mpmath
(12–60 µs per member) and Fraction (5 µs per nonzero) were slower still.  So
the residual the proof uses is always this exact one; the refinement's
earlier residuals, which only steer, are taken in double-double with
error-free transformations (:mod:`~audit.precision.steering`; Ogita, Rump &
Oishi, SIAM J. Sci. Comput. 26(6), 2005) while the correction they give stays
far above that arithmetic's floor.  Measured on the 2D grid of 4.8·10⁵
members at 30 digits (load 3–4 on 2 cores): 0.40–0.66 s per exact evaluation
against 0.27–0.38 s per steering one, whose set-up (the coefficients and
loads in double-double, the node order) costs another 0.2–0.36 s once; 2 of
the 4 evaluations steer, so the residual stage went only from 2.0–2.8 s to
1.7–2.6 s there (in-process, alternating runs).  Summing member ends by
``np.add.reduceat`` over a node-sorted order was measured slower than
``np.add.at`` on object arrays (0.62 s against 0.52 s for 9.6·10⁵ entries)
and is not used.  Nor is a multi-word form in int64 words of 24 bits (the
members' residual vectorised in numpy, words as the last axis, node sums by
``np.bincount``): on a 4.8·10⁵-member grid at 30 digits (17 words for the
390-bit forces) it took 0.84 s against 0.68 s for the object arrays, since
gathering and scattering 17 words per entry costs more than Python's own
loops over 30-bit digits.  What the object arrays cost beyond their
arithmetic is released as it goes: the forces are formed and scattered one
component at a time, temporaries are dropped as soon as used, ``r`` is ``rm``
without springs, and the refinement drops one exact residual before forming
the next (on that grid, ``check`` at 30 digits: the precision stage's peak
1,400 -> 1,195 MiB, the whole process's 1,399 -> 1,261 MiB, medians of 3 by
``benchmarks/bench_check.py``).

The residual's floats are in units of :attr:`Scales.unit` (a power of ten
times a power of two chosen from the forces); the bounds are evaluated in
float64 in real units, so that unit must lie within ``2^±UNIT_RANGE``
(:func:`unit_in_range`), which fails only for forces below about 1e-200.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import mpmath
import numpy as np

from audit.model import FloatArray

from .exact_model import ExactModel, per_c_group
from .exact_numbers import ObjArray, abs_to_float_bound, ints_to_float
from .states import States


@dataclass(frozen=True)
class Scales:
    S: int  #: u = ints · 10^-ku · 2^-S
    ku: int
    e10f: int  #: forces (residual) = ints · 10^e10f · 2^e2f
    e2f: int
    Y: int  #: residual floats are in units of 10^e10f · 2^(e2f+Y)

    @property
    def unit(self) -> mpmath.mpf:
        return mpmath.mpf(10) ** self.e10f * mpmath.mpf(2) ** (self.e2f + self.Y)

    def res_float(self, ints: ObjArray) -> FloatArray:
        return ints_to_float(ints, 0, -self.Y)


def _scatter(n_nodes: int, s_idx: np.ndarray, e_idx: np.ndarray, F: np.ndarray) -> np.ndarray:
    """Σ over members of +F at the end node and −F at the start node (works for object and float arrays)."""
    out = np.zeros((n_nodes, *F.shape[1:]), dtype=F.dtype)
    np.add.at(out, e_idx, F)
    np.subtract.at(out, s_idx, F)
    return out


def _scatter_abs(n_nodes: int, s_idx: np.ndarray, e_idx: np.ndarray, F: FloatArray) -> FloatArray:
    """Σ over members of F at both end nodes (float), in the order of ``np.add.at`` at the end then the start nodes.

    One ``np.bincount`` per column over the end indices then the start indices: it adds the weights into
    zeroed bins in input order, the very sequence of float additions of ``np.add.at(out, e_idx, F)`` followed
    by ``np.add.at(out, s_idx, F)``, so the sums are bit-identical to those and 5–10× faster (common practice).
    """
    cols = F.reshape(F.shape[0], math.prod(F.shape[1:]))
    idx = np.concatenate([e_idx, s_idx])
    out = np.empty((n_nodes, cols.shape[1]))
    for j in range(cols.shape[1]):
        w = cols[:, j]
        out[:, j] = np.bincount(idx, np.concatenate([w, w]), minlength=n_nodes)
    return out.reshape((n_nodes, *F.shape[1:]))


def exact_rhs(ex: ExactModel, st: States, sc: Scales) -> tuple[ObjArray, FloatArray]:
    """Exact f + f0 of every state at the force scale, and its error bound (residual units)."""
    nn, d = ex.n_nodes, ex.dim
    ns = len(st.ids)
    a10 = -(st.kf + st.kc) - sc.e10f
    rhs = st.loads * (10**a10 << (-sc.e2f)) if ns else np.zeros((nn, d, 0), dtype=object)
    err = np.zeros((nn, d, ns))
    unit = sc.unit
    if st.has_temp and ex.h is not None:
        # f0 = EA·alpha·delta·v/L: EA·(alpha·delta)·h·v at 10^(-k_ea-kat-kc)·2^-Qh
        a10 = -ex.k_ea - st.kat - st.kc - sc.e10f
        b2 = -ex.Qh - sc.e2f
        coef = ex.EA * ex.h * (10**a10 << b2)
        T = coef[:, None] * st.temp  # (m, ns)
        Fm = T[:, None, :] * ex.v[:, :, None]
        rhs = rhs + _scatter(nn, ex.s_idx, ex.e_idx, Fm)
        # |T|·10^kx in float (exact integer scaling: 10^kx may be beyond the float range) times |v| in float
        Tf = np.abs(ints_to_float(T, ex.kx, -sc.Y))[:, None, :] * np.abs(ex.vf)[:, :, None]
        err += _scatter_abs(nn, ex.s_idx, ex.e_idx, Tf) * ex.eta * 1.01
    if st.has_lerr:
        # f0 = EA·err·v/L²: (EA·err·v / L2) at 10^(kx-k_ea-ke-kc), floored at the force scale (1 unit each)
        a10 = ex.kx - ex.k_ea - st.ke - st.kc - sc.e10f
        num = (ex.EA * (10**a10 << (-sc.e2f)))[:, None] * st.lerr  # (m, ns)
        Fm = (num[:, None, :] * ex.v[:, :, None]) // ex.L2[:, None, None]
        rhs = rhs + _scatter(nn, ex.s_idx, ex.e_idx, Fm)
        ones = (st.lerr != 0).astype(np.float64)[:, None, :] * np.ones((1, d, 1))
        err += _scatter_abs(nn, ex.s_idx, ex.e_idx, ones) * 2.0**-sc.Y
    del unit
    return rhs, err


def apply_K_err(ex: ExactModel, sc: Scales, p: ObjArray) -> FloatArray:
    """Bound (residual units) on |K̂u − K*u| from the rounded 1/L³: η·Σ_e |EA/L³·p_e|·|v_e| at both ends."""
    inv_unit = float(1 / sc.unit)
    if unit_in_range(float(sc.unit)):
        pf = abs_to_float_bound(p, -ex.kx - sc.ku, -sc.S)  # real, within 2^-50 (covered by the factor 1.02)
        mag = ex.cf[:, None] * pf  # real |EA/L³·p|
        absF = mag[:, None, :] * np.abs(ex.vf)[:, :, None]
        return _scatter_abs(ex.n_nodes, ex.s_idx, ex.e_idx, absF) * inv_unit * ex.eta * 1.02
    # forces near the float range's limits: p in units of the residual scale (exact integer scaling) instead
    pf = abs_to_float_bound(p, -ex.kx - sc.ku - sc.e10f, -sc.S - sc.e2f - sc.Y)
    absF = (ex.cf[:, None] * pf)[:, None, :] * np.abs(ex.vf)[:, :, None]
    return _scatter_abs(ex.n_nodes, ex.s_idx, ex.e_idx, absF) * ex.eta * 1.02


#: the residual unit (real force per residual unit) must lie in [2^-UNIT_RANGE, 2^UNIT_RANGE] for the bounds, which
#: are evaluated in float64 in real units; beyond it (forces below about 1e-200) they are not established
UNIT_RANGE = 960


def unit_in_range(unit: float) -> bool:
    """Whether a scale factor to real units is a float64 well inside the normal range (:data:`UNIT_RANGE`)."""
    return math.isfinite(unit) and 2.0**-UNIT_RANGE <= abs(unit) <= 2.0**UNIT_RANGE


def _apply_K(
    ex: ExactModel, sc: Scales, u: ObjArray, with_err: bool = True
) -> tuple[ObjArray, ObjArray | None, FloatArray, ObjArray]:
    """Members' K·u (exact for the rounded 1/L³), springs' K_s·u (floored; None without springs), error bound, p = v·Δu.

    ``with_err=False`` skips the members' part of the error bound (refinement steps that are not final).  The
    members' forces are formed and scattered one component at a time, and each temporary is dropped as soon
    as it is used: the object arrays alive at once (the peak memory) are about half of forming them all.
    """
    nn, d = ex.n_nodes, ex.dim
    ns = u.shape[2]
    if ex.s_idx.size:
        du = u[ex.e_idx] - u[ex.s_idx]  # (m, d, ns)
        p = (ex.v[:, :, None] * du).sum(axis=1)  # (m, ns) at 10^(-kx-ku)·2^-S
        del du
        a10 = ex.kx - ex.k_ea - sc.ku - sc.e10f
        b2 = -ex.Q - sc.S - sc.e2f
        cc = per_c_group(ex, ex.c, lambda c: c * (10**a10 << b2)) if (a10 or b2) else ex.c
        q = cc[:, None] * p
        Ku = np.zeros((nn, d, ns), dtype=object)
        for a in range(d):
            Fa = q * ex.v[:, a : a + 1]  # (m, ns)
            np.add.at(Ku[:, a], ex.e_idx, Fa)
            np.subtract.at(Ku[:, a], ex.s_idx, Fa)
            del Fa
        del q
        err = apply_K_err(ex, sc, p) if with_err else np.zeros((nn, d, ns))
    else:
        p = np.zeros((0, ns), dtype=object)
        Ku = np.zeros((nn, d, ns), dtype=object)
        err = np.zeros((nn, d, ns))
    Ks = None
    if ex.sp_node.size:
        Ks = np.zeros((nn, d, ns), dtype=object)
        a10 = -ex.kk - sc.ku - sc.e10f
        b2 = -sc.S - sc.e2f
        t = (ex.sp_raw[:, :, None] * u[ex.sp_node]).sum(axis=1)  # (n_sp, ns)
        coef = ex.sp_k * (10**a10 << b2)
        Fs = ((coef[:, None] * t)[:, None, :] * ex.sp_raw[:, :, None]) // ex.sp_raw2[:, None, None]
        np.add.at(Ks, ex.sp_node, Fs)
        cnt = np.zeros((nn, d, ns))
        np.add.at(cnt, ex.sp_node, np.ones(Fs.shape))
        err = err + cnt * 2.0**-sc.Y
    return Ku, Ks, err, p


def reduce_residual(
    ex: ExactModel, sc: Scales, r: ObjArray, err: FloatArray
) -> tuple[FloatArray, FloatArray, FloatArray, FloatArray]:
    """Reduced residual: returns (|ρ| + bound per global dof, float r_eff for the correction, node norms, ρ floats).

    Free nodes keep their global dofs; at a restrained node ρ is the exact
    projection of r on the free directions: r_w = Zᵀ r exactly, and
    ‖P_V r‖ = √(r_wᵀ (ZᵀZ)⁻¹ r_w).  The returned per-dof magnitude array
    carries, at restrained nodes, the node's projected norm (inclined) or the
    exact free-axis components (axis restraints), restrained axes zero.
    """
    _nn, d, ns = r.shape
    rf = sc.res_float(r)  # residual units
    mag = np.abs(rf) + err
    eff = rf.copy()
    if ex.rn.size:
        rw = (ex.Z[:, :, :, None] * r[ex.rn][:, :, None, :]).sum(axis=1)  # (n_rn, dim(col), ns): Σ_a Z[a, col] r[a]
        rwf = sc.res_float(rw)
        if np.any(ex.zshift):  # Zf = Z·D: use D·r_w so that Zf (ZfᵀZf)⁻¹ D r_w = Z (ZᵀZ)⁻¹ r_w
            for j, c in zip(*np.nonzero(ex.zshift), strict=True):
                rwf[j, c] = ints_to_float(rw[j, c], 0, -sc.Y - int(ex.zshift[j, c]))
        ew = np.einsum("nac,nas->ncs", np.abs(ex.Zf), err[ex.rn])
        # effective float residual in global components: Z (ZᵀZ)⁻¹ r_w (the reaction is projected out exactly)
        eff[ex.rn] = np.einsum("nac,ncs->nas", ex.Zf, np.einsum("ncb,nbs->ncs", ex.Ginv, rwf))
        node_mag = np.zeros((ex.rn.size, d, ns))
        for j in range(ex.rn.size):
            k = int(np.count_nonzero(np.abs(ex.Zf[j]).sum(axis=0)))
            if k == 0:
                continue
            if ex.inclined[j]:
                q = np.einsum("cs,cb,bs->s", rwf[j, :k], ex.Ginv[j, :k, :k], rwf[j, :k])
                nrm = np.sqrt(np.maximum(q, 0.0)) * (1 + 1e-12) + np.sqrt((err[ex.rn[j]] ** 2).sum(axis=0)) * 1.0001
                node_mag[j, :, :] = nrm[None, :] / np.sqrt(d)  # so that the node's squared sum equals nrm²
            else:
                # axis-aligned: columns are unit axes (possibly negated); |r_w| = |r| at the free axes
                axes = np.argmax(np.abs(ex.Zf[j, :, :k]), axis=0)
                node_mag[j, axes, :] = np.abs(rwf[j, :k]) + ew[j, :k]
        mag[ex.rn] = node_mag
    return mag, eff, rf, err


def exact_residual(
    ex: ExactModel, sc: Scales, rhs: ObjArray, rhs_err: FloatArray, u: ObjArray, with_err: bool = True
) -> tuple[Any, ...]:
    Ku, Ks, err, p = _apply_K(ex, sc, u, with_err)
    rm = np.subtract(rhs, Ku, out=Ku)  # in place: Ku's objects are released as the differences replace them
    r = rm - Ks if Ks is not None else rm  # without springs r is rm (the same array, never written to)
    err = err + rhs_err
    mag, eff, _rf, err = reduce_residual(ex, sc, r, err)
    return r, rm, mag, eff, err, p
