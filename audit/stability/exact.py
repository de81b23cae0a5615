"""Exact rank and null spaces: integer equilibrium matrix, modular Gram elimination, python-flint."""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import scipy.sparse as sp
import scipy.sparse.csgraph as csgraph

from audit.model import FloatArray, Model
from audit.stability.limits import MODULUS
from audit.stability.prechecks import Constraints


def _fractions(model: Model) -> list[list[Fraction]]:
    """Node coordinates as written (Fraction of the decimal text; the float's exact value if no text)."""
    if len(model.coords_text) == model.n_nodes:
        return [[Fraction(t) for t in row] for row in model.coords_text]
    return [[Fraction(float(c)) for c in row] for row in model.coords]


def int_row(values: list[Fraction]) -> list[int]:
    """The same direction scaled to integers (times the least common denominator)."""
    den = 1
    for v in values:
        den = den * v.denominator // math.gcd(den, v.denominator)
    return [int(v * den) for v in values]


def exact_rows(model: Model, cons: Constraints) -> tuple[list[list[tuple[int, int]]], list[Fraction]]:
    """Rows of Aᵀ as sparse (dof, integer) lists: members (end − start), then reaction directions."""
    d = model.dim
    X = _fractions(model)
    rows: list[list[tuple[int, int]]] = []
    for s, e in model.conn.tolist():
        v = int_row([X[e][a] - X[s][a] for a in range(d)])
        rows.append([(s * d + a, -v[a]) for a in range(d)] + [(e * d + a, v[a]) for a in range(d)])
    for i, n in enumerate(cons.node.tolist()):
        text = cons.texts[i]
        raw = (
            [Fraction(t) for t in text]
            if text is not None and len(text) == d
            else [Fraction(float(c)) for c in cons.dirs[i]]
        )
        v = int_row(raw)
        rows.append([(n * d + a, v[a]) for a in range(d) if v[a]])
    flat = [x for row in X for x in row]
    return rows, flat


def full_rank_mod_p(nd: int, rows: list[list[tuple[int, int]]], max_work: float = math.inf) -> bool | str | None:
    """True when A has full row rank d·j, proven by the Gram matrix G = Ã Ãᵀ modulo p.

    Ã has integer columns (scaled members and reactions), G = Ã Ãᵀ has the rank of Ã over the rationals
    (real matrices), and rank(G mod p) ≤ rank(G) over Q (a minor that is non-zero mod p is non-zero).  So
    a G mod p whose LDLᵀ elimination (reverse Cuthill-McKee order, no pivoting) meets no zero pivot proves
    rank A = d·j exactly.  Returns False when the elimination meets a zero pivot whose column is zero (the
    rational Schur complements are positive semidefinite, where a zero pivot means a zero column: a
    deficiency, or a prime that divides a minor), None when a zero pivot meets a non-zero column (the
    prime divides a pivot: inconclusive), and a sentence (not attempted) when the band elimination would
    take more than ``max_work`` operations.  Common practice of modular rank computation (e.g. von zur
    Gathen & Gerhard, *Modern Computer Algebra*, 3rd ed., ch. 5, recalled from memory).
    """
    p = MODULUS
    if nd == 0:
        return True
    width = max((len(r) for r in rows), default=0)
    if width == 0:
        return False
    idx = np.zeros((len(rows), width), dtype=np.int64)
    val = np.zeros((len(rows), width), dtype=np.int64)
    for i, entries in enumerate(rows):
        for k, (dof, v) in enumerate(entries):
            idx[i, k], val[i, k] = dof, v % p
    ii = np.repeat(idx, width, axis=1).ravel()
    jj = np.tile(idx, (1, width)).ravel()
    vv = (np.repeat(val, width, axis=1) * np.tile(val, (1, width)) % p).ravel()
    pattern = sp.coo_matrix((np.ones(vv.size), (ii, jj)), shape=(nd, nd)).tocsr()
    perm = csgraph.reverse_cuthill_mckee(pattern, symmetric_mode=True)
    inv = np.empty(nd, dtype=np.int64)
    inv[perm] = np.arange(nd)
    ii, jj = inv[ii], inv[jj]
    band = int(np.max(np.abs(ii - jj))) if ii.size else 0
    if float(nd) * band * band > max_work:
        return f"the modular elimination would take {float(nd) * band * band:.2g} operations (limit {max_work:.0e})"
    W = np.zeros((nd, nd), dtype=np.int64)
    np.add.at(W, (ii, jj), vv)  # sums of at most a few hundred residues: no overflow
    W %= p
    for k in range(nd):
        e = min(nd, k + band + 1)
        piv = int(W[k, k])
        if piv == 0:
            return False if not W[k, k + 1 : e].any() else None
        lead = W[k, k + 1 : e]
        f = lead * pow(piv, p - 2, p) % p
        block = W[k + 1 : e, k + 1 : e]
        block -= (lead[:, None] * f[None, :]) % p
        block %= p
    return True


def exact_nullspace_T(nd: int, rows: list[list[tuple[int, int]]]) -> tuple[int, FloatArray]:
    """(rank of A, float basis (nd, k) of the exact null space of Aᵀ), by python-flint's integer null space."""
    import flint

    if not rows:
        return 0, np.eye(nd)
    dense = [0] * (len(rows) * nd)
    for i, row in enumerate(rows):
        base = i * nd
        for dof, v in row:
            dense[base + dof] += v
    M = flint.fmpz_mat(len(rows), nd, dense)
    N, nullity = M.nullspace()
    basis = np.zeros((nd, nullity))
    for c in range(nullity):
        col = [int(N[i, c]) for i in range(nd)]
        big = max(abs(v) for v in col) or 1
        basis[:, c] = [float(Fraction(v, big)) for v in col]
    return nd - nullity, basis


def exact_self_stress(nd: int, rows: list[list[tuple[int, int]]], s: int) -> FloatArray | None:
    """Float basis (m + r, s) of the exact null space of A (columns = unnormalised member vectors).

    The entries are force densities t/L; the caller converts to forces.
    """
    import flint

    ncols = len(rows)
    dense = [0] * (nd * ncols)
    for j, row in enumerate(rows):
        for dof, v in row:
            dense[dof * ncols + j] += v
    N, nullity = flint.fmpz_mat(nd, ncols, dense).nullspace()
    if nullity != s:
        return None
    out = np.zeros((ncols, s))
    for c in range(s):
        col = [int(N[i, c]) for i in range(ncols)]
        big = max(abs(v) for v in col) or 1
        out[:, c] = [float(Fraction(v, big)) for v in col]
    return out
