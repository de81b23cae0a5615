"""Steering residuals in double-double arithmetic, for refinement steps whose residual the proof does not use.

Only the final residual of the refinement enters the proof and the bounds, and it is always exact
(:func:`audit.precision.residual.exact_residual`).  The earlier residuals only steer the corrections:
:class:`SteeringResidual` evaluates ``r = f + f0 − K u`` member by member from the same exact input, in
double-double arithmetic vectorised over members (about 106 bits), with the error-free transformations
TwoSum, Split (Veltkamp) and TwoProduct of T. Ogita, S. M. Rump and S. Oishi, "Accurate sum and dot
product", *SIAM J. Sci. Comput.* 26(6), 2005, Algorithms 3.1–3.3 (after T. J. Dekker, "A floating-point
technique for extending the available precision", *Numer. Math.* 18, 1971).  Its error is below
:meth:`SteeringResidual.error_bound`, ``(D + 16)·2^-102`` times the sum of the absolute values of the
terms (``D`` the most member ends at one node), so a correction computed from it is as good as one from
the exact residual while the iterate's error is well above ``cond·(D + 16)·2^-102``
(:meth:`SteeringResidual.floor`); the refinement switches to exact residuals before that.

Scope: members and nodal right-hand sides (loads, temperature and length-error loads are already exact
in ``rhs``) with axis-aligned restraints, float-exact member vectors and magnitudes well inside the float
range; anything else (springs, inclined restraints, huge digits) is refined with exact residuals only.
"""

from __future__ import annotations

import numpy as np

from audit.model import FloatArray

from .exact_model import ExactModel, per_c_group
from .exact_numbers import ObjArray, float_to_ints, ints_to_float
from .residual import Scales

_SPLITTER = 134217729.0  # 2^27 + 1 (Veltkamp)
#: most member ends at one node for the padded (nodes × D) layout of the sums
MAX_DEPTH = 64


def two_sum(a: FloatArray, b: FloatArray) -> tuple[FloatArray, FloatArray]:
    """s + e = a + b exactly (Knuth; Ogita, Rump & Oishi 2005, Algorithm 3.1)."""
    s = a + b
    z = s - a
    return s, (a - (s - z)) + (b - z)


def split(a: FloatArray) -> tuple[FloatArray, FloatArray]:
    """a = hi + lo, each with at most 26 significant bits (Veltkamp; Ogita, Rump & Oishi 2005, Algorithm 3.2)."""
    c = _SPLITTER * a
    hi = c - (c - a)
    return hi, a - hi


def two_prod(a: FloatArray, b: FloatArray) -> tuple[FloatArray, FloatArray]:
    """x + y = a·b exactly (Dekker; Ogita, Rump & Oishi 2005, Algorithm 3.3)."""
    x = a * b
    ah, al = split(a)
    bh, bl = split(b)
    return x, al * bl - (((x - ah * bh) - al * bh) - ah * bl)


def two_prod_split(a: FloatArray, b: FloatArray, bh: FloatArray, bl: FloatArray) -> tuple[FloatArray, FloatArray]:
    """:func:`two_prod` with ``b = bh + bl`` split once beforehand (b is used in every evaluation)."""
    x = a * b
    ah, al = split(a)
    return x, al * bl - (((x - ah * bh) - al * bh) - ah * bl)


def dd_add(ah: FloatArray, al: FloatArray, bh: FloatArray, bl: FloatArray) -> tuple[FloatArray, FloatArray]:
    s, e = two_sum(ah, bh)
    e = e + (al + bl)
    hi = s + e
    return hi, e - (hi - s)


def dd_mul(ah: FloatArray, al: FloatArray, bh: FloatArray, bl: FloatArray) -> tuple[FloatArray, FloatArray]:
    x, y = two_prod(ah, bh)
    y = y + (ah * bl + al * bh)
    hi = x + y
    return hi, y - (hi - x)


def dd_mul_f(ah: FloatArray, al: FloatArray, b: FloatArray) -> tuple[FloatArray, FloatArray]:
    """(ah + al)·b for b with at most 26 significant bits (so that Split(b) = (b, 0))."""
    x = ah * b
    h, lo = split(ah)
    y = lo * b - (x - h * b)  # exact: h·b and lo·b are exact products (Dekker)
    y = y + al * b
    hi = x + y
    return hi, y - (hi - x)


def _v_float(ex: ExactModel) -> FloatArray:
    """``ex.v.astype(np.float64)``, from the int64 copy when there is one (the same correctly rounded floats)."""
    return ex.v64.astype(np.float64) if ex.v64 is not None else ex.v.astype(np.float64)


class OutOfRangeError(ValueError):
    """A number the double-double evaluation cannot hold (the caller takes the exact residual)."""


def ints_to_dd(a: ObjArray, e2: int) -> tuple[FloatArray, FloatArray]:
    """hi + lo ≈ a·2^e2 with |error| ≤ 2^-105·|a·2^e2| (hi correctly rounded, lo the rounded remainder).

    The remainder is formed only where ``hi ≠ 0``: a correctly rounded ``hi`` is 0 only for ``a = 0``, whose
    ``lo`` is 0 (sparse right-hand sides, e.g. loads at a few nodes, then cost little).
    """
    hi = ints_to_float(a, 0, 0)
    if hi.size and not float(np.max(np.abs(hi))) < 2.0**1000:
        raise OutOfRangeError("an integer beyond the float range")
    nz = hi != 0.0
    if nz.all():
        lo = ints_to_float(a - float_to_ints(hi), 0, e2)
    else:
        lo = np.zeros(hi.shape)
        if nz.any():
            lo[nz] = ints_to_float(a[nz] - float_to_ints(hi[nz]), 0, e2)
    return np.ldexp(hi, e2), lo


class SteeringResidual:
    """The residual ``f + f0 − K u`` in double-double, in residual units (:attr:`Scales.unit`)."""

    def __init__(self, ex: ExactModel, sc: Scales, rhs: ObjArray):
        self.ex, self.sc = ex, sc
        d = ex.dim
        m = ex.s_idx.size
        a10 = ex.kx - ex.k_ea - sc.ku - sc.e10f
        b2 = -ex.Q - sc.S - sc.e2f
        fac = 10**a10 << b2
        if m:  # once per group of equal c (ExactModel.c_groups): the same floats member by member
            c_hl = per_c_group(ex, ex.c, lambda c: np.stack(ints_to_dd(c * fac if fac != 1 else c, -sc.Y), axis=1))
            self.c_hi, self.c_lo = np.ascontiguousarray(c_hl[:, 0]), np.ascontiguousarray(c_hl[:, 1])
        else:
            self.c_hi, self.c_lo = np.zeros(0), np.zeros(0)
        self.c_sh, self.c_sl = split(self.c_hi)
        self.v = _v_float(ex) if m else np.zeros((0, d))
        self.rhs_hi, self.rhs_lo = ints_to_dd(rhs, -sc.Y)
        # member ends sorted by node, padded to (nodes, D): column j holds each node's j-th end
        ends = np.concatenate([ex.e_idx, ex.s_idx]).astype(np.int64)
        order = np.argsort(ends, kind="stable")
        se = ends[order]
        first = np.r_[True, se[1:] != se[:-1]] if se.size else np.zeros(0, dtype=bool)
        start = np.maximum.accumulate(np.where(first, np.arange(se.size), 0)) if se.size else se
        rank = np.arange(se.size) - start
        self.depth = int(rank.max()) + 1 if rank.size else 0
        # the slot (rank·nodes + node) of each member's end (first m) and start (last m) in the padded layout
        slot = np.empty(se.size, dtype=np.int64)
        slot[order] = rank * ex.n_nodes + se
        self.slot_end, self.slot_start = slot[:m], slot[m:]

    @staticmethod
    def supported(ex: ExactModel) -> bool:
        """Whether the model is within this evaluator's scope (see the module docstring)."""
        if ex.sp_node.size or np.any(ex.inclined) or np.any(ex.zshift):
            return False
        if ex.s_idx.size and np.bincount(np.concatenate([ex.s_idx, ex.e_idx])).max() > MAX_DEPTH:
            return False  # a hub node: the padded layout would be too large
        if ex.s_idx.size:
            try:
                vi = _v_float(ex)
            except OverflowError:
                return False
            if float(np.max(np.abs(vi))) > 2.0**26:
                return False
        return True

    @staticmethod
    def to_dd(u: ObjArray) -> tuple[FloatArray, FloatArray] | None:
        """The iterate in double-double (None when beyond the float range)."""
        try:
            return ints_to_dd(u, 0)
        except OutOfRangeError:
            return None

    def _terms(
        self, udd: tuple[FloatArray, FloatArray], with_bound: bool = True
    ) -> tuple[FloatArray, FloatArray, FloatArray | None]:
        """Members' forces F = c·(v·Δu)·v in double-double (m, dim, ns) and |F| summed terms for the bound."""
        ex = self.ex
        uh, ul = udd
        dh, dl = dd_add(uh[ex.e_idx], ul[ex.e_idx], -uh[ex.s_idx], -ul[ex.s_idx])
        v = self.v[:, :, None]
        ph, pl = dd_mul_f(dh[:, 0], dl[:, 0], v[:, 0])
        for a in range(1, ex.dim):
            th, tl = dd_mul_f(dh[:, a], dl[:, a], v[:, a])
            ph, pl = dd_add(ph, pl, th, tl)
        x, y = two_prod_split(ph, self.c_hi[:, None], self.c_sh[:, None], self.c_sl[:, None])
        y = y + (ph * self.c_lo[:, None] + pl * self.c_hi[:, None])
        qh = x + y
        ql = y - (qh - x)
        fh, fl = dd_mul_f(qh[:, None, :], ql[:, None, :], v)
        if not with_bound:
            return fh, fl, None
        absq = np.abs(self.c_hi[:, None]) * (np.abs(v) * (np.abs(uh[ex.e_idx]) + np.abs(uh[ex.s_idx]))).sum(axis=1)
        return fh, fl, absq[:, None, :] * np.abs(v)

    def evaluate(
        self, u: ObjArray, udd: tuple[FloatArray, FloatArray] | None = None, with_bound: bool = True
    ) -> tuple[FloatArray, FloatArray | None] | None:
        """(r rounded to float64, bound on |r − r_exact|) per dof in residual units, or None out of range.

        ``udd`` is u in double-double when the caller keeps it (else it is converted from the exact u); the
        bound then also covers its representation error only as far as that is 2^-104·|u| per entry.

        ``r_exact`` is the members' residual of :func:`audit.precision.residual.exact_residual` (the
        rounded 1/L³ included); None when a magnitude leaves ``2^±800`` (Split could overflow, low parts
        could lose digits): the caller then takes the exact residual.
        """
        ex = self.ex
        rh, rl = self.rhs_hi.copy(), self.rhs_lo.copy()
        tot = np.abs(self.rhs_hi)
        if ex.s_idx.size:
            if udd is None:
                udd = self.to_dd(u)
                if udd is None:
                    return None
            fh, fl, fabs = self._terms(udd, with_bound)
            nn, d, ns = rh.shape
            # r = rhs − K u: −F at the end node, +F at the start node; each member end written once into its
            # slot (one index array, no gather by member: the same padded arrays, 2 × 50 ms less per evaluation)
            gh = np.zeros((self.depth * nn, d, ns))
            gl = np.zeros((self.depth * nn, d, ns))
            gh[self.slot_end] = -fh
            gh[self.slot_start] = fh
            gl[self.slot_end] = -fl
            gl[self.slot_start] = fl
            gh = gh.reshape(self.depth, nn, d, ns)
            gl = gl.reshape(self.depth, nn, d, ns)
            for j in range(self.depth):
                rh, rl = dd_add(rh, rl, gh[j], gl[j])
            if fabs is not None:  # refinement steps need only the residual: the bound is for the tests and callers
                ga = np.zeros((self.depth * nn, d, ns))
                ga[self.slot_end] = fabs
                ga[self.slot_start] = fabs
                tot = tot + ga.reshape(self.depth, nn, d, ns).sum(axis=0)
            nz = np.abs(self.c_hi[self.c_hi != 0])
            if nz.size and float(nz.min()) < 2.0**-800:
                return None
        top = float(np.max(np.abs(rh), initial=0.0)) if not with_bound else float(np.max(tot, initial=0.0))
        if not top < 2.0**800 or not np.all(np.isfinite(rh)):
            return None
        return rh + rl, (tot * ((self.depth + 16) * 2.0**-102) if with_bound else None)

    def floor(self, cond: float) -> float:
        """Relative error of the iterate below which the steering residual no longer steers (estimate)."""
        return cond * (self.depth + 16) * 2.0**-102
