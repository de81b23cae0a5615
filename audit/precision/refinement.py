"""Mixed-precision iterative refinement with an exact final residual (Higham 2002, §12.1 and Algorithm 12.1).

N. J. Higham, *Accuracy and Stability of Numerical Algorithms*, 2nd ed.
(SIAM 2002): the float64 factor of ``K_r`` that the engine already has is
re-used for every correction; the residual the proof uses, and every residual
from the first one at which the refinement could stop on, is exact
(:func:`audit.precision.residual.exact_residual`).  Earlier residuals only
steer: they are taken in double-double (:mod:`audit.precision.steering`)
while the next correction (the last one times the observed contraction) is
more than 10× that arithmetic's worst-case floor ``cond·(D+16)·2^-102``;
whatever they give, the stopping rule below is judged again on corrections
from exact residuals before the refinement stops.  The iterate stays on the
integer grid of the u scale and meets every restraint exactly (``u = u_p +
Z w``); the float factor's orthonormal basis only steers the corrections.

Convergence: with exact residuals the refinement contracts whenever the
scaled condition × u ≪ 1, which :func:`audit.solve.factorize_system` enforces
(scaled condition < 10¹⁴).  It stops when the last correction, or the error
predicted after it (size × observed contraction), is below 10^-(digits+3),
and when it stalls (each correction more than half the previous); the digits
actually proven are then reported (check code HP104).  A refinement to 30
digits takes 2–4 evaluations.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass
from fractions import Fraction

import mpmath
import numpy as np

from audit import linsolve
from audit.model import FloatArray, Model
from audit.solve import System

from .exact_model import ExactModel
from .exact_numbers import ObjArray, float_to_ints, ints_to_float, round_scaled, scale_float
from .residual import Scales, apply_K_err, exact_residual, reduce_residual
from .states import States
from .steering import OutOfRangeError, SteeringResidual, dd_add, ints_to_dd

#: placeholder for an exact residual's arrays released before the next one is computed
_DROPPED: ObjArray = np.zeros(0, dtype=object)


@dataclass(frozen=True)
class Iterate:
    u: ObjArray  #: (n_nodes, dim, ns) displacements at the u scale, meeting every restraint exactly
    w: ObjArray  #: (n_rn, dim, ns) free-direction coordinates at restrained nodes
    up: ObjArray  #: (n_rn, dim, ns) prescribed part at restrained nodes
    #: (n_nodes, dim, ns) u as float64 exactly at the free nodes (the start rounded on the float grid), else None
    uf: FloatArray | None = None


def prescribed_part(model: Model, system: System, ex: ExactModel, st: States, sc: Scales) -> ObjArray:
    """u_p at restrained nodes: exact for axis restraints; rounded (flagged) for inclined ones."""
    d, ns = ex.dim, len(st.ids)
    up = np.zeros((ex.rn.size, d, ns), dtype=object)
    if not ex.rn.size:
        return up
    where = {int(n): j for j, n in enumerate(ex.rn.tolist())}
    for r in range(model.n_restraints):
        if not np.any(st.settle[r] != 0):
            continue
        j = where[int(model.restraint_node[r])]
        dirv = model.restraint_dir[r]
        nz = np.flatnonzero(dirv != 0.0)
        if nz.size == 1:
            a = int(nz[0])
            sign = 1 if dirv[a] > 0 else -1
            up[j, a, :] = up[j, a, :] + st.settle[r] * (sign << sc.S)
    for i in range(ns):
        if st.inclined_settlement[i]:
            g = ints_to_float(st.settle[:, i], -sc.ku, 0)
            upf = (system.U_p @ g).reshape(-1, d)[ex.rn]
            up[:, :, i] = round_scaled(upf, sc.ku, sc.S, scale_float(sc.ku, sc.S))
    return up


def assemble_u(ex: ExactModel, u_free: ObjArray, w: ObjArray, up: ObjArray) -> ObjArray:
    u = u_free.copy()
    if ex.rn.size:
        u[ex.rn] = up + (ex.Z[:, :, :, None] * w[:, None, :, :]).sum(axis=2)
    return u


def start_iterate(ex: ExactModel, sc: Scales, U0: FloatArray, up: ObjArray) -> Iterate:
    """Iterate from float displacements (n_nodes, dim, ns), projected exactly onto the restraints."""
    conv = scale_float(sc.ku, sc.S)
    grid = None  # round_scaled's float path: rint(U0·conv), which the ints equal exactly
    if (
        conv is not None
        and math.isfinite(conv)
        and conv > 0
        and float(np.max(np.abs(U0), initial=0.0)) * conv < 2.0**1000
    ):
        grid = np.rint(U0 * conv)
    u_free = float_to_ints(grid) if grid is not None else round_scaled(U0, sc.ku, sc.S, conv)
    w = np.zeros((ex.rn.size, ex.dim, U0.shape[2]), dtype=object)
    if ex.rn.size:
        upf = ints_to_float(up, -sc.ku, -sc.S) if up.size else np.zeros(up.shape)
        wf = np.einsum("ncb,nbs->ncs", ex.Zpinv, U0[ex.rn] - upf)
        w = round_scaled(wf, sc.ku, sc.S, conv)
    return Iterate(assemble_u(ex, u_free, w, up), w, up, grid)


def _start_dd(ex: ExactModel, it: Iterate) -> tuple[FloatArray, FloatArray] | None:
    """``ints_to_dd(it.u, 0)`` (None out of range) from the float start: the same floats, no big-int conversion.

    At free nodes u is the integer-valued float ``uf`` exactly (hi = uf, lo = 0); restrained nodes are converted
    from the exact ints as :func:`~audit.precision.steering.ints_to_dd` does.
    """
    if it.uf is None:
        return SteeringResidual.to_dd(it.u)
    hi = it.uf + 0.0  # as ints_to_float of the ints: −0.0 (rint of a small negative) becomes +0.0
    lo = np.zeros(hi.shape)
    if ex.rn.size:
        try:
            hi[ex.rn], lo[ex.rn] = ints_to_dd(it.u[ex.rn], 0)
        except OutOfRangeError:
            return None
    if hi.size and not float(np.max(np.abs(hi))) < 2.0**1000:
        return None
    return hi, lo


@dataclass(frozen=True)
class Refined:
    it: Iterate
    r: ObjArray  #: final exact residual f + f0 − K u − K_s u (force scale)
    rm: ObjArray  #: members-only f + f0 − K u (reactions are −rm at supports)
    mag: FloatArray  #: |ρ| + bound per dof (residual units)
    err: FloatArray
    p: ObjArray
    iterations: int
    history: tuple[float, ...]  #: relative size of each correction
    converged: bool
    stalled: bool
    seconds_residual: float
    seconds_solve: float
    steering_residuals: int = 0  #: residuals taken in double-double (steering only)
    exact_residuals: int = 0  #: exact residuals (the last one is the proof's)


def _relative_step(du: FloatArray, step: ObjArray, u: ObjArray, conv: float | None) -> float:
    """max|correction| / max(1, max|u|) at the u scale: in float64 when in range, else from the exact integers."""
    if not du.size:
        return 0.0
    with np.errstate(over="ignore"):
        uf_scale = max(1.0, float(np.max(np.abs(ints_to_float(u, 0, 0)))) if u.size else 1.0)
    if conv is not None and math.isfinite(uf_scale):
        return float(np.max(np.abs(du * conv))) / uf_scale
    top = max((abs(int(x)) for x in step.reshape(-1)), default=0)
    base = max(1, max((abs(int(x)) for x in u.reshape(-1)), default=0))
    return float(Fraction(top, base))


def _reduce_float(ex: ExactModel, rf: FloatArray) -> FloatArray:
    """The float residual for the correction, axis-aligned restraints projected out (as in ``reduce_residual``)."""
    eff = rf.copy()
    if ex.rn.size:
        rwf = np.einsum("nac,nas->ncs", ex.Zf, rf[ex.rn])
        eff[ex.rn] = np.einsum("nac,ncs->nas", ex.Zf, np.einsum("ncb,nbs->ncs", ex.Ginv, rwf))
    return eff


def _advance_dd(
    ex: ExactModel, udd: tuple[FloatArray, FloatArray] | None, du: FloatArray, conv: float | None, u: ObjArray
) -> tuple[FloatArray, FloatArray] | None:
    """u + step in double-double: the step is the float ``rint(du·conv)`` exactly (``round_scaled``'s float path).

    Restrained nodes are taken again from the exact u (``u_p + Z w``); None (the caller converts the exact u)
    when the step was rounded on the exact path.
    """
    if udd is None or conv is None or not float(np.max(np.abs(du), initial=0.0)) * conv < 2.0**1000:
        return None
    hi, lo = dd_add(udd[0], udd[1], np.rint(du * conv), np.zeros(du.shape))
    if ex.rn.size:
        try:
            hi[ex.rn], lo[ex.rn] = ints_to_dd(u[ex.rn], 0)
        except OutOfRangeError:
            return None
    return hi, lo


def refine(
    ex: ExactModel,
    system: System,
    factor: linsolve.Factor,
    sc: Scales,
    rhs: ObjArray,
    rhs_err: FloatArray,
    it: Iterate,
    digits: int,
    cond: float = float("nan"),
) -> Refined:
    """Mixed-precision iterative refinement (Higham 2002, §12.1): float64 corrections, exact final residual.

    With ``cond`` (the scaled condition estimate) the residuals that only steer are taken in double-double
    (:mod:`~audit.precision.steering`) while the correction they give stays far above that arithmetic's
    floor; every residual from the first one at which the refinement could stop on is exact.
    """
    nn, d, ns = it.u.shape
    c10, c2 = sc.e10f + sc.ku, sc.e2f + sc.Y + sc.S  # correction (residual units) -> u ints
    conv_mp = float(sc.unit * mpmath.mpf(10) ** sc.ku * mpmath.mpf(2) ** sc.S)
    conv = conv_mp if math.isfinite(conv_mp) and conv_mp > 0 and abs(math.log2(conv_mp)) < 900 else None
    target = 10.0 ** -(digits + 3)
    history: list[float] = []
    t_res = t_sol = 0.0
    steered = exact_count = 0
    maxit = 4 + digits // 5
    converged = stalled = False
    u, w = it.u, it.w
    steer = None
    if math.isfinite(cond) and SteeringResidual.supported(ex):
        try:
            steer = SteeringResidual(ex, sc, rhs)
        except OutOfRangeError:  # numbers beyond the float range: exact residuals only
            steer = None
    floor = steer.floor(cond) if steer is not None else 1.0
    udd: tuple[FloatArray, FloatArray] | None = None  # u in double-double, while steering
    last_exact = True  # the last correction came from an exact residual
    k = 0
    for k in range(maxit + 1):
        # stop when the last correction, or the error predicted after it (size × observed contraction), is
        # below the target; the residual computed then is exact, and it is the one the proof uses
        predicted = history[-1] * min(1.0, history[-1] / history[-2]) if len(history) >= 2 else np.inf
        # only a correction from an exact residual may stop the refinement (whatever the steering ones said)
        may_stop = bool(history) and last_exact and (history[-1] <= target or predicted <= target)
        stall = len(history) >= 3 and history[-1] > 0.5 * history[-2] and history[-2] > 0.5 * history[-3]
        # the next correction (about the error of u: last size × contraction, the first one squared) must stay
        # 10× above the double-double floor (a worst-case bound) for a steering residual to give it
        nxt = predicted if len(history) >= 2 else (history[-1] ** 2 if history else 1.0)
        t0 = time.perf_counter()
        fast = None
        near = bool(history) and (history[-1] <= target or predicted <= target)
        if steer is not None and not (near or stall or k == maxit) and nxt > 10 * floor:
            if udd is None:
                udd = _start_dd(ex, it) if u is it.u else steer.to_dd(u)
            fast = steer.evaluate(u, udd, with_bound=False) if udd is not None else None
            if fast is None:
                steer = None
        last_exact = fast is None
        if fast is not None:
            eff = _reduce_float(ex, fast[0])
            steered += 1
        else:
            r = rm = p = _DROPPED  # the last exact residual's arrays go before the next one is formed (peak memory)
            r, rm, mag, eff, err, p = exact_residual(ex, sc, rhs, rhs_err, u, with_err=False)
            exact_count += 1
        t_res += time.perf_counter() - t0
        if fast is None:
            if may_stop:
                converged = True
                break
            if stall:
                stalled = True
                break
            if k == maxit:
                break
        t0 = time.perf_counter()
        b = system.T.T @ eff.reshape(nn * d, ns)
        dw = np.asarray(factor.solve(b if ns > 1 else b[:, 0])).reshape(-1, ns)
        du = (system.T @ dw).reshape(nn, d, ns)
        t_sol += time.perf_counter() - t0
        step = round_scaled(du, c10, c2, conv)
        size = _relative_step(du, step, u, conv)
        history.append(size)
        if size == 0.0 and fast is not None:  # judged again from the exact residual of the same u
            history.pop()
            steer = None
            continue
        if size == 0.0:
            converged = True
            break
        u_free = u + step
        if ex.rn.size:
            dwn = np.einsum("ncb,nbs->ncs", ex.Zpinv, du[ex.rn])
            w = w + round_scaled(dwn, c10, c2, conv)
        u = assemble_u(ex, u_free, w, it.up)
        udd = _advance_dd(ex, udd, du, conv, u) if steer is not None else None
    t0 = time.perf_counter()
    err = err + (apply_K_err(ex, sc, p) if ex.s_idx.size else 0.0)
    mag, _eff, _rf, err = reduce_residual(ex, sc, r, err)
    t_res += time.perf_counter() - t0
    return Refined(
        it=Iterate(u, w, it.up),
        r=r,
        rm=rm,
        mag=mag,
        err=err,
        p=p,
        iterations=len(history),
        history=tuple(history),
        converged=converged,
        stalled=stalled,
        seconds_residual=t_res,
        seconds_solve=t_sol,
        steering_residuals=steered,
        exact_residuals=exact_count,
    )
