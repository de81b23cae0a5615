"""The model as written, in exact integers: member vectors, L², E·A, 1/L³ to P bits, free-direction bases.

Every coordinate, E, A, spring stiffness and direction is read from its
decimal text (``Model.*_text``; the shortest float repr only where a text is
missing, and :attr:`ExactModel.from_text` says so).  Member vectors ``v`` and
squared lengths ``L²`` are then exact integers.  The only irrational numbers
are ``1/L³`` (stiffness ``EA/L·n nᵀ = EA·v vᵀ/L³``) and ``1/L`` (temperature
and length-error loads); they are computed with Python's exact integer square
root to ``P`` bits, with a relative error below ``η = 2^-(P+8)`` carried as an
explicit bound.

Supports: at each restrained node the displacement is ``u = u_p + Z w`` with Z
an *integer* basis of the directions left free (cross products of the
restraint directions' decimal digits), so every iterate meets the constraints
exactly.  When the digits of one direction span more than 60 bits (``[1e-320,
1]``) the float copy of Z is scaled by powers of two per column
(:attr:`ExactModel.zshift`).  A spring of stiffness 0 adds nothing and is left
out.  :func:`assembly_data` hands the certificate the bounds on how far the
float data the engine assembled from lie from these exact numbers.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from audit import certify
from audit.model import FloatArray, Model

from .exact_numbers import ObjArray, U, decimal_ints, ints_to_float, ints_to_float_rows, texts_or_repr


@dataclass(frozen=True)
class ExactModel:
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
    Zf: FloatArray  #: Z·D in float, D = diag(2^-zshift) per column (D = I unless Z has entries beyond 2^60)
    zshift: np.ndarray  #: (n_rn, dim) int: the power-of-two column scaling of Zf
    Zpinv: FloatArray  #: (n_rn, dim, dim) pseudo-inverse of Z (unscaled)
    Ginv: FloatArray  #: (n_rn, dim, dim) (ZfᵀZf)^-1 padded
    inclined: np.ndarray  #: (n_rn,) bool
    free_node: np.ndarray  #: (n_nodes,) bool: node has no restraint
    sp_node: np.ndarray  #: (n_springs,)
    sp_k: ObjArray  #: at 10^-kk (springs of stiffness 0 left out)
    sp_kf: FloatArray  #: (n_springs,) the float stiffness
    sp_raw: ObjArray  #: (n_springs, dim) integer direction digits
    sp_raw2: ObjArray  #: (n_springs,) |raw|²
    kk: int
    from_text: bool  #: every input number came from its decimal text
    coord_dev: FloatArray  #: (n_nodes,) bound on ‖float coords − exact coords‖₂
    rel_ea: FloatArray  #: (m,) bound on the relative error of the float E·A against the exact
    sp_eps: FloatArray  #: (n_springs,) relative error bound of the float spring matrices
    #: members with equal (E·A, L²), hence equal ``c``: (a first member of each group, the group of each member),
    #: or None when not grouped (functions of ``c`` alone may be evaluated once per group: :func:`per_c_group`)
    c_groups: tuple[np.ndarray, np.ndarray] | None = None
    v64: np.ndarray | None = None  #: (m, dim) v as int64 when the coordinates allow (float conversions from it)


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


def _vectors(
    X: ObjArray, s_idx: np.ndarray, e_idx: np.ndarray
) -> tuple[ObjArray, ObjArray, np.ndarray | None, np.ndarray | None]:
    """Member vectors v = X_end − X_start and squared lengths L² (exact), in int64 when the coordinates allow.

    The last two items are v and L² in int64 (None when computed in Python ints).
    """
    m, d = s_idx.size, X.shape[1]
    if not m:
        return np.zeros((0, d), dtype=object), np.zeros(0, dtype=object), None, None
    try:
        Xi = X.astype(np.int64)
    except OverflowError:
        Xi = None
    if Xi is not None and (not Xi.size or int(np.max(np.abs(Xi))) < 2**29):  # |v| < 2^30, L² < 3·2^60: exact
        vi = Xi[e_idx] - Xi[s_idx]
        l2 = (vi * vi).sum(axis=1)
        return vi.astype(object), l2.astype(object), vi, l2
    v = X[e_idx] - X[s_idx]
    return v, (v * v).sum(axis=1), None, None


def _per_distinct(vals: ObjArray, fn: Callable[[int], int], keys: np.ndarray | None = None) -> ObjArray:
    """fn applied to each entry of an integer array, evaluated once per distinct value (``keys``: vals in int64)."""
    if keys is None:
        try:
            keys = vals.astype(np.int64)
        except OverflowError:
            keys = None
    if keys is not None:
        uniq, inv = np.unique(keys, return_inverse=True)
        out = np.empty(uniq.size, dtype=object)
        out[:] = [fn(int(x)) for x in uniq.tolist()]
        return out[inv.reshape(-1)]
    cache: dict[int, int] = {}
    res = np.empty(vals.size, dtype=object)
    res[:] = [cache[x] if x in cache else cache.setdefault(x, fn(x)) for x in map(int, vals.tolist())]
    return res


def _pair_groups(EA: ObjArray, L2: ObjArray, l2: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray] | None:
    """Members with equal (E·A, L²): (first member of each group, group of each member), or None.

    None when the integers do not fit int64 keys or when the groups would save little (more than m/4 of
    them): grouping then costs more than it saves.  On the 2D grid of 4.8·10⁵ members (3 groups) it costs
    about 30 ms and saves the 4.8·10⁵ products ``E·A·g`` and the double-double conversion of ``c``.
    """
    m = EA.size
    if m < 64:
        return None
    try:
        ea = EA.astype(np.int64)
        l2 = L2.astype(np.int64) if l2 is None else l2
    except OverflowError:
        return None
    if int(ea.min()) < 0 or int(l2.min()) < 0:
        return None
    span = int(l2.max()) + 1
    if int(ea.max()) * span >= 2**62:  # the combined key would not fit int64
        return None
    first, group = np.unique(ea * span + l2, return_index=True, return_inverse=True)[1:]
    if first.size > m // 4:
        return None
    return first, group.reshape(-1)


def per_c_group(ex: ExactModel, c: ObjArray, fn: Callable[[ObjArray], ObjArray]) -> ObjArray:
    """``fn(c)`` for an elementwise ``fn`` of a per-member array that is a function of ``ex.c`` alone.

    With :attr:`ExactModel.c_groups` ``fn`` is evaluated on one member per group and gathered: the same
    values entry by entry, since members of one group have equal ``c``.  The representatives hold every
    distinct value of the array, so a decision ``fn`` takes on the whole array (a range check, a fast path
    for all entries or none: :func:`~audit.precision.exact_numbers.ints_to_float`) is the same on them.
    """
    if ex.c_groups is None:
        return fn(c)
    first, group = ex.c_groups
    return fn(c[first])[group]


def exact_model(model: Model, P: int, with_temperature: bool) -> ExactModel:
    d, m = model.dim, model.n_members
    ctext, ok_c = texts_or_repr([t for row in model.coords_text for t in row], model.coords)
    X, kx = decimal_ints(ctext)
    X = X.reshape(model.n_nodes, d)
    s_idx, e_idx = model.conn[:, 0].copy(), model.conn[:, 1].copy()
    v, L2, v64, l2_64 = _vectors(X, s_idx, e_idx)
    Et, ok_e = texts_or_repr(model.E_text, model.E)
    At, ok_a = texts_or_repr(model.A_text, model.A)
    E, kE = decimal_ints(Et)
    A, kA = decimal_ints(At)
    EA = E * A
    k_ea = kE + kA
    if m:
        bmax = int(L2.max()).bit_length()  # bit_length is monotone: no per-member call
        bmin = int(L2.min()).bit_length() - 1
    else:
        bmax = bmin = 1
    Q = P + 12 + (3 * bmax + 1) // 2
    R = max(0, P + 12 - (3 * bmin) // 2)
    if m:
        num, sh = 1 << (Q + R), 2 * R
        g = _per_distinct(L2, lambda x: num // math.isqrt((x * x * x) << sh), l2_64)
    else:
        g = np.zeros(0, dtype=object)
    groups = _pair_groups(EA, L2, l2_64) if m else None
    c = EA * g if groups is None else (EA[groups[0]] * g[groups[0]])[groups[1]]  # equal (EA, L²): equal c
    if not m:
        vf = np.zeros((0, d))
    elif v64 is not None and kx <= 22:  # ints_to_float's fast path: |v| < 2^30 is a float exactly, one division
        vf = v64.astype(np.float64)
        vf = vf / 10.0**kx if kx else vf
    else:
        vf = ints_to_float(v, -kx, 0)
    Lf = np.sqrt((vf * vf).sum(axis=1))
    if not m:
        EAf = np.zeros(0)
    elif groups is not None:  # equal E·A in a group: the representatives hold every distinct value
        EAf = ints_to_float(EA[groups[0]], -k_ea, 0)[groups[1]]
    else:
        EAf = ints_to_float(EA, -k_ea, 0)
    Qh = P + 12 + (bmax + 1) // 2
    h = None
    if with_temperature and m:
        num_h = 1 << (2 * Qh)
        h = _per_distinct(L2, lambda x: math.isqrt(num_h // x), l2_64)
    # restrained nodes and their integer bases
    dtext, ok_d = texts_or_repr([t for row in model.restraint_dir_text for t in row], model.restraint_dir)
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
            gz = math.gcd(*b)
            Z[j, :, col] = [x // gz for x in b]  # axis restraints then give unit columns
    Zf, zshift = _scaled_columns(Z)
    Zpinv = np.zeros_like(Zf)
    Ginv = np.zeros_like(Zf)
    for j in range(n_rn):
        k = int(np.count_nonzero(np.abs(Zf[j]).sum(axis=0)))
        if k:
            zz = Zf[j, :, :k]
            Zpinv[j, :k, :] = np.ldexp(np.linalg.pinv(zz), -zshift[j, :k, None])  # pinv(Z D)·… = D⁻¹ pinv(Z)
            Ginv[j, :k, :k] = np.linalg.inv(zz.T @ zz)
    free_node = np.ones(model.n_nodes, dtype=bool)
    free_node[rn] = False
    ns = int(model.spring_node.size)
    kt, ok_k = texts_or_repr(model.spring_k_text, model.spring_k)
    sk, kk = decimal_ints(kt)
    stext, ok_s = texts_or_repr([t for row in model.spring_dir_text for t in row], model.spring_dir)
    sraw, _ks = decimal_ints(stext)
    sraw = sraw.reshape(ns, d) if ns else np.zeros((0, d), dtype=object)
    keep = np.array([int(x) != 0 for x in sk], dtype=bool)  # a spring of stiffness 0 adds nothing
    return ExactModel(
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
        zshift=zshift,
        Zpinv=Zpinv,
        Ginv=Ginv,
        inclined=inclined,
        free_node=free_node,
        sp_node=model.spring_node.astype(np.int64)[keep],
        sp_k=sk[keep],
        sp_kf=np.asarray(model.spring_k, dtype=np.float64)[keep],
        sp_raw=sraw[keep],
        sp_raw2=(sraw[keep] * sraw[keep]).sum(axis=1) if ns else np.zeros(0, dtype=object),
        kk=kk,
        from_text=ok_c and ok_e and ok_a and ok_d and ok_k and ok_s,
        coord_dev=_dev_norm(model.coords, ints_to_float(X, -kx, 0)),
        rel_ea=_rel_dev(model.E, ints_to_float(E, -kE, 0)) + _rel_dev(model.A, ints_to_float(A, -kA, 0)),
        sp_eps=_spring_eps(model, sk, kk, sraw)[keep],
        c_groups=groups,
        v64=v64,
    )


def _scaled_columns(Z: ObjArray) -> tuple[FloatArray, np.ndarray]:
    """Float Z·D with D = diag(2^-t) per column, t = max(0, bits − 60) of the column's largest entry.

    Directions written with very different exponents (``[1e-320, 1]``) give
    integer bases beyond the float range; the scaled columns keep the
    direction, and callers undo D where a length matters.
    """
    n_rn, d, _k = Z.shape
    shift = np.zeros((n_rn, d), dtype=np.int64)
    if Z.size:
        bits = np.frompyfunc(lambda x: abs(int(x)).bit_length(), 1, 1)(Z).astype(np.int64)  # (n_rn, d, cols)
        shift = np.maximum(bits.max(axis=1) - 60, 0)
    if not np.any(shift):
        return Z.astype(np.float64), shift
    Zs = np.empty(Z.shape, dtype=np.float64)
    for j in range(n_rn):
        for c in range(d):
            Zs[j, :, c] = ints_to_float(Z[j, :, c], 0, -int(shift[j, c]))
    return Zs, shift


def _dev_norm(approx: FloatArray, exact_rounded: FloatArray) -> FloatArray:
    """Per row: bound on ‖approx − exact‖₂ given the correctly rounded exact values (|x − fl(x)| ≤ u|fl(x)|)."""
    dev = np.abs(approx - exact_rounded) + U * np.abs(exact_rounded)
    return np.sqrt((dev**2).sum(axis=1)) * 1.01 if dev.size else np.zeros(dev.shape[0])


def _rel_dev(approx: FloatArray, exact_rounded: FloatArray) -> FloatArray:
    """Bound on |approx − exact| / |exact| (0 where both are zero, inf where only the exact value is)."""
    if approx.size == 0:
        return np.zeros(0)
    diff = np.abs(approx - exact_rounded)
    den = np.abs(exact_rounded)
    safe = np.where(den > 0, den, 1.0)
    rel = np.where(den > 0, diff / safe, np.where(diff > 0, np.inf, 0.0))
    return (rel + U) * 1.01


def _spring_eps(model: Model, sk: ObjArray, kk: int, sraw: ObjArray) -> FloatArray:
    if not model.spring_node.size:
        return np.zeros(0)
    rawf = ints_to_float_rows(sraw)
    unit = rawf / np.linalg.norm(rawf, axis=1)[:, None]
    ddev = np.max(np.abs(model.spring_dir - unit), axis=1) + 4 * U
    return 1.1 * (_rel_dev(model.spring_k, ints_to_float(sk, -kk, 0)) + 3 * ddev + 8 * U)


def assembly_data(model: Model, ex: ExactModel) -> certify.AssemblyData:
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
        sp_abs=ex.sp_eps * ex.sp_kf if ex.sp_node.size else np.zeros(0),
        rn=ex.rn,
        Z=ex.Z,
        inclined=ex.inclined,
    )
