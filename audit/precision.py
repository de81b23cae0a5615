"""High-precision recomputation from the input as written, with proven error bounds.

What this module does, per load case and combination ("state"):

1. **Exact input.**  Every coordinate, E, A, alpha, load, temperature
   change, length error, settlement, spring stiffness and direction, and
   combination factor is read from its decimal text into an integer with a
   common power-of-ten scale per kind of quantity (``Model.*_text``; the
   shortest float repr is used only where a text is missing, and the report
   says so).  Member vectors ``v``, squared lengths ``L²`` and the load
   vectors are then exact integers.  The only irrational numbers are
   ``1/L³`` (stiffness ``EA/L · n nᵀ = EA·v vᵀ/L³``) and ``1/L``
   (temperature loads); they are computed with Python's exact integer
   square root to ``P`` bits, with a relative error below ``2^-(P+8)`` that
   is carried as an explicit bound.

2. **Mixed-precision iterative refinement** (Higham, *Accuracy and
   Stability of Numerical Algorithms*, 2nd ed., §12.1 and Algorithm 12.1):
   the float64 factor of ``K_r`` that the engine already has is re-used for
   every correction; the residual ``r = f + f0 − K u − K_s u`` is computed
   member by member in exact integer arithmetic (vectorised over members
   with numpy object arrays of Python ints) from the exact input, never
   from the float-assembled K.  Supports: at each restrained node the
   displacement is ``u = u_p + Z w`` with Z an *integer* basis of the
   directions left free (cross products of the restraint directions'
   decimal digits), so every iterate meets the constraints exactly; the
   float factor's orthonormal basis only steers the corrections.

3. **Proof** (Rump 2006, see :mod:`audit.certify`): a certified lower bound
   ``λ_S`` on the smallest eigenvalue of the power-of-two scaled exact
   restrained stiffness ``S* = Σ K_r* Σ`` (the float matrix's certificate
   minus a proven bound on the distance between the float-assembled and the
   exact matrix).  With ``ρ`` the exact reduced residual (in an orthonormal
   basis of the free directions) and ``e = d* − d``:

   * energy norm: ``eᵀK*e = ρᵀK*⁻¹ρ = (Σρ)ᵀS*⁻¹(Σρ) ≤ ‖Σρ‖₂²/λ_S =: Φ``;
   * displacements: ``‖e‖₂ ≤ ‖ρ‖₂/λ_lo`` with ``λ_lo = λ_S·min σ⁻²`` (the
     smallest eigenvalue of the restrained K), and per degree of freedom
     ``|e_i| ≤ σ_i·‖Σρ‖₂/λ_S``;
   * member forces: ``Φ ≥ eᵀK*e ≥ k_e δ_e²`` (every member's strain energy
     is part of the total) with ``δ_e`` the member's elongation error, so
     ``|ΔN_e| = k_e|δ_e| ≤ √(k_e Φ)``, ``k_e = E_eA_e/L_e``; without
     scaling this is ``√(E_eA_e/L_e)·‖ρ‖₂/√λ_lo``;
   * reactions: ``|ΔR_{j,a}| ≤ Σ_{e at j} |ΔN_e|``.

   The residual's own error bound (irrational ``1/L³``, roundings of
   spring terms) is added to ``|ρ|`` before the norms are taken.

4. **Backward error** of the reported displacements (Oettli & Prager 1964,
   "Compatibility of approximate solution of linear equations with given
   error bounds for coefficients and right-hand sides", *Numer. Math.* 6,
   405–409): ``ω = max_i |ρ_i| / (|K||d| + |f|)_i``, the smallest relative
   change of the stiffness entries and loads that makes the reported
   displacements exact; compared with the relative rounding quantum of the
   input's decimal texts.

Why exact integers (measured on this machine, 2 cores): the member-wise
residual in Python ints vectorised over members costs 1.2–3 µs per member
and evaluation (2D grid, 10⁵–10⁶ members), 1–4× the vectorised
double-double figure in SOLVERS.md (47–90 ns per stored nonzero, 16 stored
entries per 2D member), but it works at any number of digits with an exact
error term (only 1/L³ and 1/L are rounded, at P bits), whereas double-double
saturates at 30–31 digits (22–24 when ill-conditioned), at or below the 30
digits asked for.  mpmath (12–60 µs per member) and Fraction (5 µs per
nonzero) were slower still.  A refinement to 30 digits takes 2–4
evaluations.

Convergence: with exact residuals the refinement contracts whenever the
scaled condition × u ≪ 1, which :func:`audit.solve.factorize_system`
enforces (scaled condition < 10¹⁴).  Should it still stall (each correction
more than half the previous), it stops and the digits actually proven are
reported (check code HP104); there is no dense high-precision fallback.

Limits (stated in the report): digits from 4 to :data:`MAX_DIGITS`; a
sparse certificate is attempted for n ≤ :data:`audit.certify.SPARSE_LIMIT`
reduced dofs and an engine factor of at most
:data:`audit.certify.MAX_FACTOR_NONZEROS` nonzeros (memory); a settlement
along an inclined restraint is rounded (its state's bounds are then not
established).

Measured (``benchmarks/bench_precision.py``, 2 shared cores, PARDISO as
the engine's factor): 2D grid of 10⁶ members, refinement to 30 digits
0.5–0.7× and certificate (CHOLMOD) 1.1–1.8× the engine's factorisation
with its condition estimate, peak 5.1 GiB; 3D lattice of 3·10⁵ members,
0.12× and 4.1×, peak 11.2 GiB.  The target of "no more than one extra
factorisation" is met by the refinement, not by the certificate.
"""

from __future__ import annotations

import math
import re
import time
from collections.abc import Sequence
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Any

import mpmath
import numpy as np
import scipy.sparse as sp

from audit import certify, linsolve
from audit.model import FloatArray, Model, Results
from audit.solve import Solution, System, build_system, factorize_system, solve_with

DEFAULT_DIGITS = 30
MAX_DIGITS = 100
U = 2.0**-53
ObjArray = np.ndarray  #: numpy object array of Python ints


# ======================================================================= exact numbers
def _decimal_k(fr: Fraction) -> int:
    """Smallest k with fr·10^k an integer (fr must be a decimal fraction)."""
    d = fr.denominator
    a = (d & -d).bit_length() - 1
    rest = d >> a
    b = 0
    while rest % 5 == 0:
        rest //= 5
        b += 1
    if rest != 1:
        raise ValueError(f"{fr} is not a decimal fraction")
    return max(a, b)


def decimal_ints(texts: Sequence[str]) -> tuple[ObjArray, int]:
    """Integers M_i and one k with value_i = M_i · 10^-k exactly (texts parsed once each)."""
    parsed: dict[str, Fraction] = {t: Fraction(t) for t in set(texts)}
    k = max((_decimal_k(f) for f in parsed.values()), default=0)
    p = 10**k
    as_int = {t: f.numerator * (p // f.denominator) for t, f in parsed.items()}
    out = np.empty(len(texts), dtype=object)
    out[:] = [as_int[t] for t in texts]
    return out, k


_NUMBER = re.compile(r"^[+-]?(\d*)(?:\.(\d*))?(?:[eE]([+-]?\d+))?$")


def text_quantum(text: str) -> float:
    """Half a unit in the last written digit of a decimal text ("2.1e8" -> 5e6)."""
    m = _NUMBER.match(text.strip())
    if not m:
        return float("nan")
    frac = len(m.group(2) or "")
    exp = int(m.group(3) or 0)
    return 0.5 * 10.0 ** (exp - frac)


def _texts(texts: Sequence[str], values: FloatArray) -> tuple[list[str], bool]:
    """The decimal texts, or the shortest repr of each float when the model carries no texts."""
    flat = np.asarray(values, dtype=np.float64).reshape(-1)
    if len(texts) == flat.size and flat.size:
        return list(texts), True
    return [repr(float(x)) for x in flat], flat.size == 0


def ints_to_float(ints: ObjArray, e10: int, e2: int) -> FloatArray:
    """Correctly rounded float64 of ints·10^e10·2^e2 (up to one ulp when e10 < 0)."""
    a = np.asarray(ints, dtype=object)
    if a.size == 0:
        return np.zeros(a.shape)
    shift = 0
    if e10 > 0:
        a = a * 10**e10
    elif e10 < 0:
        den = 10 ** (-e10)
        shift = 64 + den.bit_length()
        a = (a * (1 << shift)) // den
    try:
        f = a.astype(np.float64)
    except OverflowError:
        big = max(abs(int(x)) for x in a.reshape(-1)).bit_length()
        a = a // (1 << (big - 1000))
        shift -= big - 1000
        f = a.astype(np.float64)
    return np.ldexp(f, e2 - shift)


def float_to_ints(y: FloatArray) -> ObjArray:
    """Exact Python ints of an integer-valued float array."""
    y = np.asarray(y, dtype=np.float64)
    out = np.empty(y.shape, dtype=object)
    small = np.abs(y) < 2.0**62
    out[small] = y[small].astype(np.int64).astype(object)
    if (~small).any():
        m, e = np.frexp(y[~small])
        mi = (m * 2.0**53).astype(np.int64).astype(object)
        out[~small] = mi * (np.ones(mi.shape, dtype=object) << (e - 53).astype(object))
    return out


def float_exact_to_scale(x: FloatArray, k10: int, s2: int) -> tuple[ObjArray, FloatArray]:
    """floor(x·10^k10·2^s2) as ints (exact when possible) and the per-entry conversion error in units of the scale."""
    x = np.asarray(x, dtype=np.float64)
    m, e = np.frexp(x)
    mi = (m * 2.0**53).astype(np.int64).astype(object) * 10**k10
    sh = (e.astype(np.int64) - 53 + s2).astype(object)
    out = np.empty(x.shape, dtype=object)
    err = np.zeros(x.shape)
    pos = (e.astype(np.int64) - 53 + s2) >= 0
    one = np.ones(x.shape, dtype=object)
    out[pos] = mi[pos] * (one[pos] << sh[pos])
    neg = ~pos
    if neg.any():
        out[neg] = mi[neg] // (one[neg] << (-sh[neg]))
        err[neg] = 1.0
    return out, err


@dataclass(frozen=True)
class Fixed:
    """High-precision values ints·10^e10·2^e2 (exact dyadic-decimal numbers)."""

    ints: ObjArray
    e10: int
    e2: int

    def to_float(self) -> FloatArray:
        return ints_to_float(self.ints, self.e10, self.e2)

    def to_mpf(self, dps: int) -> ObjArray:
        """mpmath mpf values at ``dps`` decimal digits (object array of the same shape)."""
        with mpmath.workdps(dps + 10):
            scale = mpmath.mpf(10) ** self.e10 * mpmath.mpf(2) ** self.e2
            out = np.empty(self.ints.shape, dtype=object)
            flat = out.reshape(-1)
            for i, v in enumerate(self.ints.reshape(-1)):
                flat[i] = mpmath.mpf(int(v)) * scale
        return out

    def to_fractions(self) -> ObjArray:
        """Exact values as fractions.Fraction (object array)."""
        scale = Fraction(10) ** self.e10 * Fraction(2) ** self.e2
        out = np.empty(self.ints.shape, dtype=object)
        out.reshape(-1)[:] = [Fraction(int(v)) * scale for v in self.ints.reshape(-1)]
        return out

    def to_strings(self, digits: int) -> ObjArray:
        vals = self.to_mpf(digits)
        out = np.empty(vals.shape, dtype=object)
        out.reshape(-1)[:] = [mpmath.nstr(v, digits, strip_zeros=False) for v in vals.reshape(-1)]
        return out


# ======================================================================= the exact model
@dataclass(frozen=True)
class _Exact:
    dim: int
    n_nodes: int
    s_idx: np.ndarray  #: (m,) start node
    e_idx: np.ndarray  #: (m,) end node
    v: ObjArray  #: (m, dim) member vectors at 10^-kx
    vf: FloatArray  #: (m, dim) float of v
    L2: ObjArray  #: (m,) squared lengths at 10^-2kx
    EA: ObjArray  #: (m,) E·A at 10^-k_ea
    c: ObjArray  #: (m,) EA·g ≈ EA/L³ at 10^(3kx-k_ea)·2^-Q
    cf: FloatArray  #: (m,) EA/L³ in float (for bounds)
    kf_member: FloatArray  #: (m,) EA/L, rounded up by a relative 1e-9
    h: ObjArray | None  #: (m,) ≈ 2^Qh / sqrt(L2) (1/L = h·2^-Qh·10^kx), None without temperature loads
    kx: int
    k_ea: int
    Q: int
    Qh: int
    eta: float  #: relative error bound of g and h
    rn: np.ndarray  #: (n_rn,) restrained nodes
    Z: ObjArray  #: (n_rn, dim, dim) integer free-direction bases (zero columns padded)
    Zf: FloatArray
    Zpinv: FloatArray  #: (n_rn, dim, dim) pseudo-inverse of Zf
    Ginv: FloatArray  #: (n_rn, dim, dim) (ZᵀZ)^-1 padded
    inclined: np.ndarray  #: (n_rn,) bool
    free_node: np.ndarray  #: (n_nodes,) bool: node has no restraint
    sp_node: np.ndarray  #: (n_springs,)
    sp_k: ObjArray  #: at 10^-kk
    sp_raw: ObjArray  #: (n_springs, dim) integer direction digits
    sp_raw2: ObjArray  #: (n_springs,) |raw|²
    kk: int
    from_text: bool  #: every input number came from its decimal text
    coord_dev: FloatArray  #: (n_nodes,) bound on ‖float coords − exact coords‖₂
    rel_ea: FloatArray  #: (m,) bound on the relative error of the float E·A against the exact
    sp_eps: FloatArray  #: (n_springs,) relative error bound of the float spring matrices


def _null_basis(C: list[list[int]], dim: int) -> list[list[int]] | None:
    """Integer basis of {x : C x = 0} by cross products; None if the rank is not 1..dim."""
    rows = [r for r in C if any(r)]
    if not rows:
        return None
    a = rows[0]
    if dim == 2:
        if all(a[0] * b[1] - a[1] * b[0] == 0 for b in rows):
            return [[-a[1], a[0]]]
        return []

    def cross(p: list[int], q: list[int]) -> list[int]:
        return [p[1] * q[2] - p[2] * q[1], p[2] * q[0] - p[0] * q[2], p[0] * q[1] - p[1] * q[0]]

    second = next((b for b in rows if any(cross(a, b))), None)
    if second is None:
        k = int(np.argmin([abs(x) for x in a]))
        ek = [0, 0, 0]
        ek[k] = 1
        b1 = cross(a, ek)
        return [b1, cross(a, b1)]
    n = cross(a, second)
    if any(sum(n[i] * r[i] for i in range(3)) for r in rows):
        return []
    return [n]


def _exact_model(model: Model, P: int, with_temperature: bool) -> _Exact:
    d, m = model.dim, model.n_members
    ctext, ok_c = _texts([t for row in model.coords_text for t in row], model.coords)
    X, kx = decimal_ints(ctext)
    X = X.reshape(model.n_nodes, d)
    s_idx, e_idx = model.conn[:, 0].copy(), model.conn[:, 1].copy()
    v = X[e_idx] - X[s_idx]
    L2 = (v * v).sum(axis=1) if m else np.zeros(0, dtype=object)
    Et, ok_e = _texts(model.E_text, model.E)
    At, ok_a = _texts(model.A_text, model.A)
    E, kE = decimal_ints(Et)
    A, kA = decimal_ints(At)
    EA = E * A
    k_ea = kE + kA
    if m:
        bmax = max(int(x).bit_length() for x in L2)
        bmin = min(int(x).bit_length() for x in L2) - 1
    else:
        bmax = bmin = 1
    Q = P + 12 + (3 * bmax + 1) // 2
    R = max(0, P + 12 - (3 * bmin) // 2)
    isqrt = np.frompyfunc(math.isqrt, 1, 1)
    if m:
        w = isqrt((L2 * L2 * L2) * (1 << (2 * R)))
        g = (1 << (Q + R)) // w
    else:
        g = np.zeros(0, dtype=object)
    c = EA * g
    vf = ints_to_float(v, -kx, 0) if m else np.zeros((0, d))
    Lf = np.sqrt((vf * vf).sum(axis=1))
    EAf = ints_to_float(EA, -k_ea, 0) if m else np.zeros(0)
    Qh = P + 12 + (bmax + 1) // 2
    h = None
    if with_temperature and m:
        h = isqrt((1 << (2 * Qh)) // L2)
    # restrained nodes and their integer bases
    dtext, ok_d = _texts([t for row in model.restraint_dir_text for t in row], model.restraint_dir)
    Craw, _kd = decimal_ints(dtext)
    Craw = Craw.reshape(model.n_restraints, d) if model.n_restraints else np.zeros((0, d), dtype=object)
    rn = np.unique(model.restraint_node).astype(np.int64)
    n_rn = rn.size
    Z = np.zeros((n_rn, d, d), dtype=object)
    inclined = np.zeros(n_rn, dtype=bool)
    for j, node in enumerate(rn.tolist()):
        rows = [[int(x) for x in Craw[r]] for r in np.flatnonzero(model.restraint_node == node)]
        basis = _null_basis(rows, d)
        if basis is None:
            raise ValueError(f"restraint directions at node {model.node_ids[node]} are zero")
        inclined[j] = any(sum(1 for x in r if x != 0) > 1 for r in rows)
        for col, b in enumerate(basis):
            g = math.gcd(*b)
            Z[j, :, col] = [x // g for x in b]  # axis restraints then give unit columns
    Zf = Z.astype(np.float64)
    Zpinv = np.zeros_like(Zf)
    Ginv = np.zeros_like(Zf)
    for j in range(n_rn):
        k = int(np.count_nonzero(np.abs(Zf[j]).sum(axis=0)))
        if k:
            zz = Zf[j, :, :k]
            Zpinv[j, :k, :] = np.linalg.pinv(zz)
            Ginv[j, :k, :k] = np.linalg.inv(zz.T @ zz)
    free_node = np.ones(model.n_nodes, dtype=bool)
    free_node[rn] = False
    ns = int(model.spring_node.size)
    kt, ok_k = _texts(model.spring_k_text, model.spring_k)
    sk, kk = decimal_ints(kt)
    stext, ok_s = _texts([t for row in model.spring_dir_text for t in row], model.spring_dir)
    sraw, _ks = decimal_ints(stext)
    sraw = sraw.reshape(ns, d) if ns else np.zeros((0, d), dtype=object)
    return _Exact(
        dim=d,
        n_nodes=model.n_nodes,
        s_idx=s_idx,
        e_idx=e_idx,
        v=v,
        vf=vf,
        L2=L2,
        EA=EA,
        c=c,
        cf=EAf / Lf**3 if m else np.zeros(0),
        kf_member=EAf / Lf * (1 + 1e-9) if m else np.zeros(0),
        h=h,
        kx=kx,
        k_ea=k_ea,
        Q=Q,
        Qh=Qh,
        eta=2.0 ** -(P + 8),
        rn=rn,
        Z=Z,
        Zf=Zf,
        Zpinv=Zpinv,
        Ginv=Ginv,
        inclined=inclined,
        free_node=free_node,
        sp_node=model.spring_node.astype(np.int64),
        sp_k=sk,
        sp_raw=sraw,
        sp_raw2=(sraw * sraw).sum(axis=1) if ns else np.zeros(0, dtype=object),
        kk=kk,
        from_text=ok_c and ok_e and ok_a and ok_d and ok_k and ok_s,
        coord_dev=_dev_norm(model.coords, ints_to_float(X, -kx, 0)),
        rel_ea=_rel_dev(model.E, ints_to_float(E, -kE, 0)) + _rel_dev(model.A, ints_to_float(A, -kA, 0)),
        sp_eps=_spring_eps(model, sk, kk, sraw),
    )


def _dev_norm(approx: FloatArray, exact_rounded: FloatArray) -> FloatArray:
    """Per row: bound on ‖approx − exact‖₂ given the correctly rounded exact values (|x − fl(x)| ≤ u|fl(x)|)."""
    dev = np.abs(approx - exact_rounded) + U * np.abs(exact_rounded)
    return np.sqrt((dev**2).sum(axis=1)) * 1.01 if dev.size else np.zeros(dev.shape[0])


def _rel_dev(approx: FloatArray, exact_rounded: FloatArray) -> FloatArray:
    if approx.size == 0:
        return np.zeros(0)
    return (np.abs(approx - exact_rounded) / np.abs(exact_rounded) + U) * 1.01


def _spring_eps(model: Model, sk: ObjArray, kk: int, sraw: ObjArray) -> FloatArray:
    if not model.spring_node.size:
        return np.zeros(0)
    rawf = sraw.astype(np.float64)
    unit = rawf / np.linalg.norm(rawf, axis=1)[:, None]
    ddev = np.max(np.abs(model.spring_dir - unit), axis=1) + 4 * U
    return 1.1 * (_rel_dev(model.spring_k, ints_to_float(sk, -kk, 0)) + 3 * ddev + 8 * U)


# ======================================================================= states (cases and combinations)
@dataclass(frozen=True)
class _States:
    ids: tuple[str, ...]
    loads: ObjArray  #: (n_nodes, dim, ns) at 10^-(kf+kc)
    temp: ObjArray  #: (m, ns) alpha·delta at 10^-(ka+kt+kc)
    lerr: ObjArray  #: (m, ns) at 10^-(ke+kc)
    settle: ObjArray  #: (n_restraints, ns) at 10^-(kg+kc)
    kf: int
    kat: int
    ke: int
    kg: int
    kc: int
    has_temp: bool
    has_lerr: bool
    inclined_settlement: tuple[bool, ...]
    abs_load: FloatArray  #: (n_nodes, dim, ns) |f| in float


def _states(model: Model) -> _States:
    d, nn, m, nr = model.dim, model.n_nodes, model.n_members, model.n_restraints
    lcs = model.load_cases

    def texts(attr: str) -> list[str]:
        return [t for lc in lcs for (*_k, t) in getattr(lc, attr)]

    fl_all, kf = decimal_ints(texts("load_text"))
    t_all, kt = decimal_ints(texts("temperature_text"))
    e_all, ke = decimal_ints(texts("length_error_text"))
    g_all, kg = decimal_ints(texts("settlement_text"))
    a_texts, _ok = _texts(model.alpha_text, model.alpha)
    alpha, ka = decimal_ints(a_texts)
    fac_texts = [t for cb in model.combinations for (_i, _f, t) in cb.factors]
    fac_all, kc = decimal_ints(fac_texts)
    nc = len(lcs)
    F = np.zeros((nn, d, nc), dtype=object)
    Tm = np.zeros((m, nc), dtype=object)
    Em = np.zeros((m, nc), dtype=object)
    G = np.zeros((nr, nc), dtype=object)
    pos = {"load_text": 0, "temperature_text": 0, "length_error_text": 0, "settlement_text": 0}
    for i, lc in enumerate(lcs):
        for node, axis, _t in lc.load_text:
            F[node, axis, i] += fl_all[pos["load_text"]]
            pos["load_text"] += 1
        for mem, _t in lc.temperature_text:
            Tm[mem, i] += t_all[pos["temperature_text"]]
            pos["temperature_text"] += 1
        for mem, _t in lc.length_error_text:
            Em[mem, i] += e_all[pos["length_error_text"]]
            pos["length_error_text"] += 1
        for r, _t in lc.settlement_text:
            G[r, i] += g_all[pos["settlement_text"]]
            pos["settlement_text"] += 1
    TA = Tm * alpha[:, None] if m else Tm
    one = 10**kc
    cols_f = [F[:, :, i] * one for i in range(nc)]
    cols_t = [TA[:, i] * one for i in range(nc)]
    cols_e = [Em[:, i] * one for i in range(nc)]
    cols_g = [G[:, i] * one for i in range(nc)]
    ids = [lc.id for lc in lcs]
    j = 0
    for cb in model.combinations:
        f = np.zeros((nn, d), dtype=object)
        t = np.zeros(m, dtype=object)
        e = np.zeros(m, dtype=object)
        g = np.zeros(nr, dtype=object)
        for ci, _v, _t in cb.factors:
            w = fac_all[j]
            j += 1
            f = f + F[:, :, ci] * w
            t = t + TA[:, ci] * w
            e = e + Em[:, ci] * w
            g = g + G[:, ci] * w
        cols_f.append(f)
        cols_t.append(t)
        cols_e.append(e)
        cols_g.append(g)
        ids.append(cb.id)
    ns = len(ids)
    loads = np.stack(cols_f, axis=2) if ns else np.zeros((nn, d, 0), dtype=object)
    temp = np.stack(cols_t, axis=1) if ns else np.zeros((m, 0), dtype=object)
    lerr = np.stack(cols_e, axis=1) if ns else np.zeros((m, 0), dtype=object)
    settle = np.stack(cols_g, axis=1) if ns else np.zeros((nr, 0), dtype=object)
    incl_r = np.array([sum(1 for x in r if float(x) != 0.0) > 1 for r in model.restraint_dir], dtype=bool)
    incl_settle = tuple(bool(np.any((settle[:, i] != 0) & incl_r)) if nr else False for i in range(ns))
    return _States(
        ids=tuple(ids),
        loads=loads,
        temp=temp,
        lerr=lerr,
        settle=settle,
        kf=kf,
        kat=ka + kt,
        ke=ke,
        kg=kg,
        kc=kc,
        has_temp=bool(np.any(temp != 0)) if temp.size else False,
        has_lerr=bool(np.any(lerr != 0)) if lerr.size else False,
        inclined_settlement=incl_settle,
        abs_load=np.abs(ints_to_float(loads, -(kf + kc), 0)) if loads.size else np.zeros(loads.shape),
    )


# ======================================================================= the residual operator
@dataclass(frozen=True)
class _Scales:
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
    out = np.zeros((n_nodes, *F.shape[1:]))
    np.add.at(out, e_idx, F)
    np.add.at(out, s_idx, F)
    return out


def _rhs(ex: _Exact, st: _States, sc: _Scales) -> tuple[ObjArray, FloatArray]:
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
        Tf = np.abs(ints_to_float(T, 0, -sc.Y))[:, None, :] * np.abs(ex.vf)[:, :, None] * 10.0**ex.kx
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


def _apply_K_err(ex: _Exact, sc: _Scales, p: ObjArray) -> FloatArray:
    """Bound (residual units) on |K̂u − K*u| from the rounded 1/L³: η·Σ_e |EA/L³·p_e|·|v_e| at both ends."""
    pf = np.abs(ints_to_float(p, -ex.kx - sc.ku, -sc.S))  # real
    mag = ex.cf[:, None] * pf  # real |EA/L³·p|
    absF = mag[:, None, :] * np.abs(ex.vf)[:, :, None]
    return _scatter_abs(ex.n_nodes, ex.s_idx, ex.e_idx, absF) * float(1 / sc.unit) * ex.eta * 1.02


def _apply_K(
    ex: _Exact, sc: _Scales, u: ObjArray, with_err: bool = True
) -> tuple[ObjArray, ObjArray, FloatArray, ObjArray]:
    """Members' K·u (exact for the rounded 1/L³), springs' K_s·u (floored), error bound, and p = v·Δu.

    ``with_err=False`` skips the members' part of the error bound (refinement steps that are not final).
    """
    nn, d = ex.n_nodes, ex.dim
    ns = u.shape[2]
    if ex.s_idx.size:
        du = u[ex.e_idx] - u[ex.s_idx]  # (m, d, ns)
        p = (ex.v[:, :, None] * du).sum(axis=1)  # (m, ns) at 10^(-kx-ku)·2^-S
        a10 = ex.kx - ex.k_ea - sc.ku - sc.e10f
        b2 = -ex.Q - sc.S - sc.e2f
        cc = ex.c * (10**a10 << b2) if (a10 or b2) else ex.c
        q = cc[:, None] * p
        Fm = q[:, None, :] * ex.v[:, :, None]
        Ku = _scatter(nn, ex.s_idx, ex.e_idx, Fm)
        err = _apply_K_err(ex, sc, p) if with_err else np.zeros((nn, d, ns))
    else:
        p = np.zeros((0, ns), dtype=object)
        Ku = np.zeros((nn, d, ns), dtype=object)
        err = np.zeros((nn, d, ns))
    Ks = np.zeros((nn, d, ns), dtype=object)
    if ex.sp_node.size:
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


def _reduce(
    ex: _Exact, sc: _Scales, r: ObjArray, err: FloatArray
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


# ======================================================================= refinement
@dataclass(frozen=True)
class _Iterate:
    u: ObjArray  #: (n_nodes, dim, ns) displacements at the u scale, meeting every restraint exactly
    w: ObjArray  #: (n_rn, dim, ns) free-direction coordinates at restrained nodes
    up: ObjArray  #: (n_rn, dim, ns) prescribed part at restrained nodes


def _prescribed(model: Model, system: System, ex: _Exact, st: _States, sc: _Scales) -> ObjArray:
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
            up[:, :, i] = float_to_ints(np.rint(upf * 10.0**sc.ku * 2.0**sc.S))
    return up


def _assemble_u(ex: _Exact, u_free: ObjArray, w: ObjArray, up: ObjArray) -> ObjArray:
    u = u_free.copy()
    if ex.rn.size:
        u[ex.rn] = up + (ex.Z[:, :, :, None] * w[:, None, :, :]).sum(axis=2)
    return u


def _start(ex: _Exact, sc: _Scales, U0: FloatArray, up: ObjArray) -> _Iterate:
    """Iterate from float displacements (n_nodes, dim, ns), projected exactly onto the restraints."""
    conv = 10.0**sc.ku * 2.0**sc.S
    u_free = float_to_ints(np.rint(U0 * conv))
    w = np.zeros((ex.rn.size, ex.dim, U0.shape[2]), dtype=object)
    if ex.rn.size:
        upf = ints_to_float(up, -sc.ku, -sc.S) if up.size else np.zeros(up.shape)
        wf = np.einsum("ncb,nbs->ncs", ex.Zpinv, U0[ex.rn] - upf)
        w = float_to_ints(np.rint(wf * conv))
    return _Iterate(_assemble_u(ex, u_free, w, up), w, up)


@dataclass(frozen=True)
class _Refined:
    it: _Iterate
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


def _residual(
    ex: _Exact, sc: _Scales, rhs: ObjArray, rhs_err: FloatArray, u: ObjArray, with_err: bool = True
) -> tuple[Any, ...]:
    Ku, Ks, err, p = _apply_K(ex, sc, u, with_err)
    rm = rhs - Ku
    r = rm - Ks
    err = err + rhs_err
    mag, eff, _rf, err = _reduce(ex, sc, r, err)
    return r, rm, mag, eff, err, p


def _refine(
    ex: _Exact,
    system: System,
    factor: linsolve.Factor,
    sc: _Scales,
    rhs: ObjArray,
    rhs_err: FloatArray,
    it: _Iterate,
    digits: int,
) -> _Refined:
    """Mixed-precision iterative refinement (Higham 2002, §12.1): float64 corrections, exact residuals."""
    nn, d, ns = it.u.shape
    conv = float(sc.unit * mpmath.mpf(10) ** sc.ku * mpmath.mpf(2) ** sc.S)
    target = 10.0 ** -(digits + 3)
    history: list[float] = []
    t_res = t_sol = 0.0
    maxit = 4 + digits // 5
    converged = stalled = False
    u, w = it.u, it.w
    k = 0
    for k in range(maxit + 1):
        t0 = time.perf_counter()
        r, rm, mag, eff, err, p = _residual(ex, sc, rhs, rhs_err, u, with_err=False)
        t_res += time.perf_counter() - t0
        # stop when the last correction, or the error predicted after it (size × observed contraction), is
        # below the target; the residual just computed is the one the proof uses
        predicted = history[-1] * min(1.0, history[-1] / history[-2]) if len(history) >= 2 else np.inf
        if history and (history[-1] <= target or predicted <= target):
            converged = True
            break
        if len(history) >= 3 and history[-1] > 0.5 * history[-2] and history[-2] > 0.5 * history[-3]:
            stalled = True
            break
        if k == maxit:
            break
        t0 = time.perf_counter()
        b = system.T.T @ eff.reshape(nn * d, ns)
        dw = np.asarray(factor.solve(b if ns > 1 else b[:, 0])).reshape(-1, ns)
        du = (system.T @ dw).reshape(nn, d, ns)
        t_sol += time.perf_counter() - t0
        step = float_to_ints(np.rint(du * conv))
        uf_scale = max(1.0, float(np.max(np.abs(ints_to_float(u, 0, 0)))) if u.size else 1.0)
        size = float(np.max(np.abs(du * conv))) / uf_scale if du.size else 0.0
        history.append(size)
        if size == 0.0:
            converged = True
            break
        u_free = u + step
        if ex.rn.size:
            dwn = np.einsum("ncb,nbs->ncs", ex.Zpinv, du[ex.rn])
            w = w + float_to_ints(np.rint(dwn * conv))
        u = _assemble_u(ex, u_free, w, it.up)
    t0 = time.perf_counter()
    err = err + (_apply_K_err(ex, sc, p) if ex.s_idx.size else 0.0)
    mag, _eff, _rf, err = _reduce(ex, sc, r, err)
    t_res += time.perf_counter() - t0
    return _Refined(
        it=_Iterate(u, w, it.up),
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
    )


def _assembly_data(model: Model, ex: _Exact) -> certify.AssemblyData:
    return certify.AssemblyData(
        n_nodes=ex.n_nodes,
        dim=ex.dim,
        s_idx=ex.s_idx,
        e_idx=ex.e_idx,
        lengths=np.sqrt((ex.vf**2).sum(axis=1)) if ex.s_idx.size else np.zeros(0),
        coord_dev=ex.coord_dev,
        rel_ea=ex.rel_ea,
        k_member=ex.kf_member,
        sp_node=ex.sp_node,
        sp_abs=ex.sp_eps * model.spring_k if ex.sp_node.size else np.zeros(0),
        rn=ex.rn,
        Z=ex.Z,
        inclined=ex.inclined,
    )


# ======================================================================= report records
def _bound_value(x: float | None) -> float | None:
    return None if x is None or not np.isfinite(x) else float(x)


@dataclass(frozen=True)
class QuantityProof:
    """Per reported quantity (displacements, axial forces or reactions) of one case.

    ``verdict`` per entry: 0 not reported, 1 proven within its printed
    rounding of the exact solution, 2 proven beyond its printed rounding,
    3 undecided (our proven bound is too wide to tell).
    """

    name: str
    verdict: np.ndarray  #: int8, shape of the quantity
    difference: FloatArray  #: |reported − recomputed|
    bound: FloatArray  #: proven |recomputed − exact|
    quantum: FloatArray  #: half unit in the last printed digit

    def counts(self) -> dict[str, int]:
        return {
            "reported": int(np.count_nonzero(self.verdict)),
            "within_rounding": int(np.count_nonzero(self.verdict == 1)),
            "beyond_rounding": int(np.count_nonzero(self.verdict == 2)),
            "undecided": int(np.count_nonzero(self.verdict == 3)),
        }


@dataclass(frozen=True)
class ReportedProof:
    """What is proven about the reported displacements of one case."""

    status: str  #: "evaluated", "incomplete", "not_reported", "not_established"
    reason: str
    bound: float | None  #: proven ‖d* − d_reported‖₂ (None when not established)
    distance_lower: float | None  #: proven ‖d* − d_reported‖₂ ≥ this
    backward_error: float | None  #: Oettli–Prager ω
    as_good_as_data: bool | None  #: ω ≤ the input data's relative rounding quantum
    quantities: tuple[QuantityProof, ...] = ()

    def as_dict(self) -> dict[str, Any]:
        return {
            "status": self.status,
            "reason": self.reason,
            "bound_to_exact": self.bound,
            "distance_lower_bound": self.distance_lower,
            "backward_error": self.backward_error,
            "as_good_as_data": self.as_good_as_data,
            "quantities": {q.name: q.counts() for q in self.quantities},
        }


@dataclass(frozen=True)
class CasePrecision:
    """High-precision answer of one load case or combination, with its proof status."""

    case_id: str
    displacements: FloatArray  #: (n_nodes, dim) float64 rounded from the high-precision answer
    axial_forces: FloatArray  #: (m,)
    reactions: FloatArray  #: (n_nodes, dim), zero away from supports
    displacements_exact: Fixed
    axial_forces_exact: Fixed
    reactions_exact: Fixed
    digits: int  #: digits requested
    lambda_lo: float | None
    proven_digits: int | None  #: normwise digits proven for the displacements (None: not established)
    bound: float | None  #: proven ‖d* − d‖₂ for our displacements
    bound_dof: FloatArray | None  #: (n_nodes, dim) proven |d* − d| per dof
    bound_axial: FloatArray | None  #: (m,) proven |N* − N|
    bound_reaction: FloatArray | None  #: (n_nodes, dim)
    energy_bound: float | None  #: proven (d*−d)ᵀK(d*−d)
    backward_error: float | None  #: Oettli–Prager ω of our own answer
    iterations: int
    converged: bool
    status: str  #: "proven" or "not_established"
    reason: str
    reported: ReportedProof

    @property
    def displacements_hp(self) -> ObjArray:
        """(n_nodes, dim) mpmath values at the requested digits."""
        return self.displacements_exact.to_mpf(self.digits)

    @property
    def axial_forces_hp(self) -> ObjArray:
        return self.axial_forces_exact.to_mpf(self.digits)

    @property
    def reactions_hp(self) -> ObjArray:
        return self.reactions_exact.to_mpf(self.digits)

    def as_dict(self) -> dict[str, Any]:
        return {
            "case": self.case_id,
            "status": self.status,
            "reason": self.reason,
            "digits_requested": self.digits,
            "digits_proven": self.proven_digits,
            "bound_displacements": self.bound,
            "bound_axial_forces_max": _bound_value(float(np.max(self.bound_axial, initial=0.0)))
            if self.bound_axial is not None
            else None,
            "energy_bound": self.energy_bound,
            "backward_error": self.backward_error,
            "iterations": self.iterations,
            "converged": self.converged,
            "reported": self.reported.as_dict(),
        }


@dataclass(frozen=True)
class PrecisionReport:
    """Model-wide outcome of the high-precision recomputation (see the module docstring)."""

    digits: int
    cases: tuple[CasePrecision, ...]
    lambda_lo: float | None  #: proven λ_min of the exact restrained K
    lambda_lo_scaled: float | None  #: proven λ_min of Σ K_r Σ (Σ powers of two)
    lambda_method: str
    lambda_reason: str
    condition_estimate: float  #: λ_max/λ_min estimate (2-norm) of the restrained K, Ritz values
    condition_upper: float | None  #: proven upper bound of the 2-norm condition number
    condition_scaled: float  #: 1-norm estimate of the diagonally scaled K_r (from audit.solve)
    data_precision: float  #: smallest relative rounding quantum among the input texts
    data_precision_source: str
    from_text: bool
    method: str
    timings: tuple[tuple[str, float], ...]
    certificate: dict[str, Any] = field(default_factory=dict)

    def case(self, case_id: str) -> CasePrecision | None:
        for c in self.cases:
            if c.case_id == case_id:
                return c
        return None

    def as_dict(self) -> dict[str, Any]:
        proven = [c.proven_digits for c in self.cases if c.proven_digits is not None]
        return {
            "status": "proven" if self.cases and all(c.status == "proven" for c in self.cases) else "not_established",
            "digits_requested": self.digits,
            "digits_proven_min": min(proven) if proven else None,
            "method": self.method,
            "input": "decimal texts" if self.from_text else "float repr (some texts missing)",
            "lambda_lo": self.lambda_lo,
            "lambda_lo_scaled": self.lambda_lo_scaled,
            "lambda_certificate": self.lambda_method,
            "lambda_reason": self.lambda_reason,
            "condition_estimate": _bound_value(self.condition_estimate),
            "condition_upper_bound": self.condition_upper,
            "condition_scaled_estimate": _bound_value(self.condition_scaled),
            "data_precision": _bound_value(self.data_precision),
            "data_precision_source": self.data_precision_source,
            "certificate": self.certificate,
            "cases": [c.as_dict() for c in self.cases],
        }


# ======================================================================= analysis
def _data_precision(model: Model) -> tuple[float, str]:
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
        cache = {t: text_quantum(t) for t in {t for row in model.coords_text for t in row}}
        q = np.array([[cache[t] for t in row] for row in model.coords_text])
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


def _omega(ex: _Exact, mag_real: FloatArray, den: FloatArray) -> float:
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


def _norm_scaled(cert: certify.RestrainedBound, system: System, ex: _Exact, mag: FloatArray) -> tuple[float, float]:
    """(‖Σρ‖₂, ‖ρ‖₂) in residual units from the per-dof magnitudes."""
    sig = cert.sig_glob
    m2 = mag**2
    return float(np.sqrt((sig[..., None] ** 2 * m2).sum(axis=(0, 1))).max()), float(np.sqrt(m2.sum(axis=(0, 1))).max())


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
) -> PrecisionReport:
    """Recompute every case to ``digits`` significant digits and prove error bounds (module docstring).

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
    st = _states(model)
    ex = _exact_model(model, P, st.has_temp)
    nn, d, ns = model.n_nodes, model.dim, len(st.ids)
    timings.append(("exact_input", time.perf_counter() - t0))
    U0 = np.zeros((nn, d, ns))
    for i, cid in enumerate(st.ids):
        cs = solution.case(cid)
        if cs is not None:
            U0[:, :, i] = cs.displacements
    ku = st.kg + st.kc
    umax = float(np.max(np.abs(U0), initial=0.0)) or 1.0
    S = max(0, P + 12 - math.floor(math.log2(umax * 10.0**ku)))
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
    sc = _Scales(S=S, ku=ku, e10f=e10f, e2f=e2f, Y=Y)
    rhs, rhs_err = _rhs(ex, st, sc)
    up = _prescribed(model, system, ex, st, sc)
    start = _start(ex, sc, U0, up)
    timings.append(("setup", time.perf_counter() - t0))
    ref = _refine(ex, system, factor, sc, rhs, rhs_err, start, digits) if ns else None
    timings.append(("refinement_residuals", ref.seconds_residual if ref else 0.0))
    timings.append(("refinement_solves", ref.seconds_solve if ref else 0.0))
    cert = certify.certify_restrained(
        system,
        factor,
        _assembly_data(model, ex),
        sparse_limit=sparse_limit,
        dense_limit=dense_limit,
        max_factor_nonzeros=max_factor_nonzeros,
    )
    timings.append(("certificate", cert.seconds))
    t1 = time.perf_counter()
    dprec, dsrc = _data_precision(model)
    unit = sc.unit
    unit_f = float(unit)
    cases = tuple(
        _case_record(model, system, ex, st, sc, rhs, rhs_err, ref, cert, i, digits, unit_f, dprec, results, Kabs)
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
        certificate=cert.certificate.as_dict() | {"assembly_error_bound_scaled": _bound_value(cert.eta_s)},
    )


def _case_record(
    model: Model,
    system: System,
    ex: _Exact,
    st: _States,
    sc: _Scales,
    rhs: ObjArray,
    rhs_err: FloatArray,
    ref: _Refined,
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
        N = (ex.EA * p * (10 ** (ex.kx - ex.k_ea - sc.ku - e10N) << (-sc.S - e2N))) // ex.L2
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
    R = -ref.rm[:, :, i]
    R[~sup] = 0
    reac = Fixed(R, sc.e10f, sc.e2f)
    Rf = reac.to_float()
    mag = ref.mag[:, :, i : i + 1]
    sig_norm, plain_norm = _norm_scaled(cert, system, ex, mag)
    den = (Kabs @ np.abs(uf).reshape(-1)).reshape(nn, d) + np.abs(ints_to_float(rhs[:, :, i], sc.e10f, sc.e2f))
    omega_own = _omega(ex, mag[:, :, 0] * unit, den)
    reason = ""
    bound = bound_dof = bound_ax = bound_re = energy = None
    proven_digits = None
    if st.inclined_settlement[i]:
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
    ex: _Exact,
    st: _States,
    sc: _Scales,
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
) -> ReportedProof:
    """Proof status of the reported results of state ``i`` against the exact solution."""
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
    u_free = ints.copy()[:, :, None]
    w = np.zeros((ex.rn.size, d, 1), dtype=object)
    if ex.rn.size:
        conv = 10.0**sc.ku * 2.0**sc.S
        w = float_to_ints(np.rint(np.einsum("ncb,nb->nc", ex.Zpinv, drep[ex.rn] - up_i) * conv))[:, :, None]
    um = _assemble_u(ex, u_free, w, it_up)
    dev = ints_to_float(ints[:, :, None] - um, -sc.ku, -sc.S)[:, :, 0]
    dev = np.abs(dev) + conv_err * float(mpmath.mpf(10) ** -sc.ku * mpmath.mpf(2) ** -sc.S)
    _r, _rm, mag, _eff, _err, _p = _residual(ex, sc, rhs[:, :, i : i + 1], rhs_err[:, :, i : i + 1], um)
    umf = ints_to_float(um[:, :, 0], -sc.ku, -sc.S)
    den = (Kabs @ np.abs(umf).reshape(-1)).reshape(nn, d) + np.abs(ints_to_float(rhs[:, :, i], sc.e10f, sc.e2f))
    omega = _omega(ex, mag[:, :, 0] * unit, den)
    good = bool(omega <= dprec) if np.isfinite(dprec) else None
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


# ======================================================================= solve --digits N
@dataclass(frozen=True)
class ExactCase:
    """One case's high-precision answer as exact fractions (the refined iterate, not rounded).

    Shaped like :class:`audit.solve.CaseSolution`, so that
    ``audit.exchange.dump_results(model, cases, digits=N)`` rounds each exact
    value once, half-to-even.  The values are proven to ``proven_digits``
    digits relative to the case's largest displacement (``precision`` holds
    the per-entry bounds); an entry much smaller than that has fewer correct
    significant digits.
    """

    case_id: str
    displacements: ObjArray  #: (n_nodes, dim) Fraction
    axial_forces: ObjArray  #: (m,) Fraction
    reactions: ObjArray  #: (n_nodes, dim) Fraction
    proven_digits: int | None
    precision: CasePrecision


def solve_high_precision(
    model: Model, digits: int = DEFAULT_DIGITS, backend: str = "auto"
) -> tuple[tuple[ExactCase, ...], PrecisionReport]:
    """Solve every case and combination to ``digits`` significant digits, with the proof status.

    Returns one :class:`ExactCase` per load case then combination (file
    order) and the :class:`PrecisionReport`.  Raises
    ``audit.errors.UnsolvableError`` for a mechanism, like
    :func:`audit.solve.solve_model`.
    """
    system = build_system(model)
    factor, cond = factorize_system(model, system, backend)
    solution = solve_with(model, system, factor, cond)
    report = analyse(model, system, factor, solution, None, digits=digits)
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


__all__ = [
    "DEFAULT_DIGITS",
    "MAX_DIGITS",
    "CasePrecision",
    "ExactCase",
    "Fixed",
    "PrecisionReport",
    "QuantityProof",
    "ReportedProof",
    "analyse",
    "classify",
    "decimal_ints",
    "solve_high_precision",
    "text_quantum",
]
