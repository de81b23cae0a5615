"""Stability and determinacy of a truss: Maxwell's count, the rank, mechanisms and states of self-stress.

The equilibrium matrix (Pellegrino & Calladine 1986, "Matrix analysis of
statically and kinematically indeterminate frameworks", Int. J. Solids
Structures 22(4)) is ``A = [Bᵀ | C]``: one column per member (Bᵀ, from
:func:`audit.stiffness.compatibility_matrix`) and one per reaction component
(its unit direction at its node), ``d·j`` rows.  With ρ = rank A:

* mechanisms (joint motions that stretch no member and break no support,
  rigid-body motions the supports leave free included) ``M = d·j − ρ``, the
  null space of Aᵀ;
* independent states of self-stress ``s = m + r − ρ``, the null space of A;

so ``s − M = m + r − d·j`` (Calladine's extended Maxwell rule).  The classical
count ``m + r − d·j`` (Maxwell 1864, "On the calculation of the equilibrium and
stiffness of frames") is reported as an indication only.

Reaction components ``r``: every restraint direction, and every spring of
non-zero stiffness (a spring stiffens the direction it acts along, so for
stability it removes a mechanism exactly as a restraint does; a zero spring
removes nothing and is not counted).

The rank is established

* ``"exact"`` up to :data:`EXACT_DOF_LIMIT` degrees of freedom: rational
  arithmetic on the input as written (coordinates ``Fraction(text)``; each
  member column is the unnormalised vector end − start, which has the same
  rank as the unit vector; restraint directions from their text, each column
  scaled to integers).  Full rank is proven by an LDLᵀ elimination of the
  integer Gram matrix modulo the prime 2³¹ − 1 (a non-zero determinant mod p
  is non-zero); a deficient rank, with its mechanisms, comes from
  python-flint's exact integer null space of Aᵀ (up to
  :data:`EXACT_UNSTABLE_LIMIT` dofs);
* ``"numerical"`` above that: when the restrained K was factorised (the
  factorisation refuses a scaled condition above 1e14) that is the evidence of
  no mechanism; otherwise the null space of the geometry-only Gram matrix
  ``G = A Aᵀ`` (unit member stiffness, unit reaction springs: a spread of EA/L
  neither hides nor fakes a mechanism) by shift-invert Lanczos with an SPD
  factor of ``G + |σ| I``, eigenvalues below :data:`ZERO_EIGEN_RELATIVE` · ‖G‖∞
  counted as zero and the gap to the first non-zero one reported.

Mechanisms are split into rigid-body motions the supports leave free (per
connected part) and internal mechanisms, named joint by joint, and internal
ones are tested for first-order stiffening by self-stress (Calladine &
Pellegrino 1991, "First-order infinitesimal mechanisms", Int. J. Solids
Structures 27(4)).  Typical mistakes ("traps") are recognised and explained.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Any

import numpy as np
import scipy.linalg as sla
import scipy.sparse as sp
import scipy.sparse.csgraph as csgraph
import scipy.sparse.linalg as spla

from audit import linsolve, stiffness
from audit.model import AXES, FloatArray, IntArray, Model
from audit.solve import SINGULAR_CONDITION, System

#: models with at most this many degrees of freedom get an exact rank
EXACT_DOF_LIMIT = 3000
#: geometry-only eigenvalues below this fraction of ‖G‖∞ count as zero (numerical path)
ZERO_EIGEN_RELATIVE = 1.0e-12
#: a joint's direction Gram matrix eigenvalue below this (unit vectors) is a missing direction
LOCAL_RANK_TOLERANCE = 1.0e-10
#: relative tolerance of the small dense rank decisions (rigid-body analysis, self-stress support)
SMALL_RANK_TOLERANCE = 1.0e-9
#: below this order the geometry-only matrix is decomposed densely
DENSE_EIGEN_LIMIT = 1200
#: at most this many mechanisms and states of self-stress are described one by one
DESCRIBE_LIMIT = 20
#: at most this many joints are listed in a mechanism's mode
MODE_JOINTS_LIMIT = 200
#: the first-order test runs for at most this many internal mechanisms (and 50 mechanisms in all)
ORDER_TEST_LIMIT = 12
#: the first-order test (it factorises the geometry-only matrix once more) runs up to this many dofs
ORDER_TEST_DOF_LIMIT = 200_000
#: exact self-stress basis up to this many columns of A; a dense float one up to DENSE_SELF_STRESS entries
EXACT_SELF_STRESS_COLUMNS = 400
DENSE_SELF_STRESS = 4_000_000


# ===================================================================== records
@dataclass(frozen=True)
class Trap:
    """A recognised mistake, explained in words."""

    kind: str  #: "no-supports", "unsupported-part", "isolated-joint", "parallel-reactions", ...
    message: str
    nodes: tuple[str, ...] = ()
    members: tuple[str, ...] = ()
    direction: tuple[float, ...] = ()
    point: tuple[float, ...] = ()

    def as_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {"kind": self.kind, "message": self.message}
        for key in ("nodes", "members", "direction", "point"):
            if getattr(self, key):
                out[key] = list(getattr(self, key))
        return out


@dataclass(frozen=True)
class Mechanism:
    """One mechanism of the basis: which joints move, and how."""

    kind: str  #: "rigid-body" or "internal"
    description: str
    joints: tuple[str, ...]  #: moving joints, largest movement first
    #: (joint, displacement) scaled so that the joint that moves most moves by 1
    mode: tuple[tuple[str, tuple[float, ...]], ...]
    order: str = ""  #: internal: "finite", "first-order infinitesimal", "not proven infinitesimal"
    trap: str = ""  #: kind of the trap it illustrates, if any
    trap_nodes: tuple[str, ...] = ()  #: the joints the trap names (e.g. the panel without a diagonal)

    def as_dict(self) -> dict[str, Any]:
        return {
            "kind": self.kind,
            "description": self.description,
            "joints": list(self.joints),
            "mode": {j: list(v) for j, v in self.mode},
            "order": self.order,
            "trap": self.trap,
        }


@dataclass(frozen=True)
class SelfStress:
    """One state of self-stress: members (and reactions) carrying a self-equilibrated set of forces."""

    members: tuple[str, ...]  #: largest force first
    forces: tuple[float, ...]  #: tension positive, scaled so that the largest |force| is 1
    reactions: tuple[str, ...]  #: e.g. "A x", "C dir(1,1)"

    def as_dict(self) -> dict[str, Any]:
        return {"members": list(self.members), "forces": list(self.forces), "reactions": list(self.reactions)}


@dataclass(frozen=True)
class StabilityReport:
    """Everything :func:`analyse` established.  ``as_dict`` holds the FORMAT.md ``stability`` block."""

    dim: int
    joints: int
    members: int
    reactions: int  #: r: restraint components plus springs of non-zero stiffness
    springs_counted: int
    springs_zero: int
    maxwell_count: int  #: m + r − d·j
    rank: int
    mechanisms: int
    rigid_body_mechanisms: int
    internal_mechanisms: int
    self_stress_states: int
    proof: str  #: "exact" or "numerical"
    method: str  #: how the rank was established, in words
    evidence: str  #: the numbers behind a numerical rank
    threshold: float | None  #: the numerical zero threshold used (relative), None when exact
    lower_bound_only: bool  #: the numerical search stopped before finding every zero mode
    components: int
    mechanism_list: tuple[Mechanism, ...] = ()
    self_stress_list: tuple[SelfStress, ...] = ()
    traps: tuple[Trap, ...] = ()
    order_test: dict[str, Any] = field(default_factory=dict)
    notes: tuple[str, ...] = ()

    @property
    def stable(self) -> bool:
        return self.mechanisms == 0

    @property
    def classification(self) -> str:
        if self.mechanisms:
            return "unstable"
        return "stable-indeterminate" if self.self_stress_states else "stable-determinate"

    def summary(self) -> str:
        how = "proven in exact arithmetic" if self.proof == "exact" else "established numerically"
        count = f"Maxwell count m + r − d·j = {self.maxwell_count}"
        if self.stable:
            det = (
                f"statically indeterminate to degree {self.self_stress_states}"
                if self.self_stress_states
                else "statically determinate"
            )
            return f"stable and {det}: rank {self.rank} = d·j, no mechanism ({how}; {count})"
        parts = []
        if self.rigid_body_mechanisms:
            parts.append(_plural(self.rigid_body_mechanisms, "rigid-body motion") + " left free by the supports")
        if self.internal_mechanisms:
            parts.append(_plural(self.internal_mechanisms, "internal mechanism"))
        at_least = "at least " if self.lower_bound_only else ""
        return (
            f"unstable: {at_least}{_plural(self.mechanisms, 'independent mechanism')} ({', '.join(parts)}), "
            f"rank {self.rank} < d·j = {self.dim * self.joints}, "
            f"{_plural(self.self_stress_states, 'state')} of self-stress ({how}; {count})"
        )

    def as_dict(self) -> dict[str, Any]:
        return {
            "maxwell_count": self.maxwell_count,
            "rank": self.rank,
            "mechanisms": self.mechanisms,
            "self_stress_states": self.self_stress_states,
            "classification": self.classification,
            "proof": self.proof,
            "summary": self.summary(),
            "counts": {
                "dimensions": self.dim,
                "joints": self.joints,
                "members": self.members,
                "reaction_components": self.reactions,
                "springs_counted_as_reactions": self.springs_counted,
                "zero_springs_not_counted": self.springs_zero,
            },
            "rigid_body_mechanisms": self.rigid_body_mechanisms,
            "internal_mechanisms": self.internal_mechanisms,
            "mechanism_count_is_lower_bound": self.lower_bound_only,
            "connected_parts": self.components,
            "method": self.method,
            "evidence": self.evidence,
            "threshold": self.threshold,
            "mechanisms_detail": [m.as_dict() for m in self.mechanism_list],
            "self_stress_detail": [s.as_dict() for s in self.self_stress_list],
            "traps": [t.as_dict() for t in self.traps],
            "first_order_test": dict(self.order_test),
            "notes": list(self.notes),
        }


def _plural(n: int, word: str) -> str:
    return f"{n} {word}{'' if n == 1 else 's'}"


# ============================================================= small helpers
@dataclass(frozen=True)
class _Constraints:
    """Reaction components: restraints, then springs of non-zero stiffness."""

    node: IntArray  #: (r,)
    dirs: FloatArray  #: (r, d) unit vectors
    labels: tuple[str, ...]  #: "A x", "C dir(1,1)", "D spring y"
    texts: tuple[tuple[str, ...] | None, ...]  #: decimal text of the raw direction, when known


def _constraints(model: Model) -> _Constraints:
    keep = np.flatnonzero(model.spring_k > 0)
    node = np.concatenate([model.restraint_node, model.spring_node[keep]]).astype(np.int64)
    dirs = np.vstack([model.restraint_dir.reshape(-1, model.dim), model.spring_dir[keep].reshape(-1, model.dim)])
    labels = [
        f"{model.node_ids[n]} {lab}"
        for n, lab in zip(model.restraint_node.tolist(), model.restraint_label, strict=False)
    ]
    labels += [f"{model.node_ids[model.spring_node[i]]} spring {_dir_word(model.spring_dir[i])}" for i in keep.tolist()]
    texts: list[tuple[str, ...] | None] = [
        model.restraint_dir_text[i] if i < len(model.restraint_dir_text) else None for i in range(model.n_restraints)
    ]
    texts += [model.spring_dir_text[i] if i < len(model.spring_dir_text) else None for i in keep.tolist()]
    return _Constraints(node, dirs, tuple(labels), tuple(texts))


def _dir_word(v: FloatArray) -> str:
    """An axis name for an axis direction, else the components."""
    v = np.asarray(v, dtype=np.float64)
    k = int(np.argmax(np.abs(v)))
    if abs(abs(v[k]) - 1.0) < 1e-12 and np.sum(np.abs(v)) - abs(v[k]) < 1e-12:
        return ("" if v[k] > 0 else "-") + AXES[k]
    return "(" + ", ".join(_num(c) for c in v) + ")"


def _num(x: float) -> str:
    x = float(x)
    return "0" if abs(x) < 5e-13 else f"{x:.4g}"


def _orth(M: FloatArray, tol: float = SMALL_RANK_TOLERANCE) -> FloatArray:
    """Orthonormal basis of the column space of M (rank decided relative to the largest singular value)."""
    if M.size == 0 or M.shape[1] == 0:
        return np.zeros((M.shape[0], 0))
    u, s, _ = np.linalg.svd(M, full_matrices=False)
    if s.size == 0 or s[0] == 0:
        return np.zeros((M.shape[0], 0))
    return u[:, s > tol * s[0]]


def _null(M: FloatArray, ncols: int, tol: float = SMALL_RANK_TOLERANCE) -> FloatArray:
    """Orthonormal basis (ncols, k) of the null space of the small dense matrix M (any number of rows)."""
    if M.size == 0:
        return np.eye(ncols)
    if M.shape[0] > ncols:
        M = np.asarray(np.linalg.qr(M, mode="r"))  # same null space, ncols rows
    _, s, vt = np.linalg.svd(M)
    top = s[0] if s.size else 0.0
    rank = int(np.sum(s > tol * max(top, 1e-300))) if top > 0 else 0
    return vt[rank:].T.copy()


# ============================================================ exact rank path
def _fractions(model: Model) -> list[list[Fraction]]:
    """Node coordinates as written (Fraction of the decimal text; the float's exact value if no text)."""
    if len(model.coords_text) == model.n_nodes:
        return [[Fraction(t) for t in row] for row in model.coords_text]
    return [[Fraction(float(c)) for c in row] for row in model.coords]


def _int_row(values: list[Fraction]) -> list[int]:
    den = 1
    for v in values:
        den = den * v.denominator // math.gcd(den, v.denominator)
    return [int(v * den) for v in values]


def _exact_rows(model: Model, cons: _Constraints) -> tuple[list[list[tuple[int, int]]], list[Fraction]]:
    """Rows of Aᵀ as sparse (dof, integer) lists: members (end − start), then reaction directions."""
    d = model.dim
    X = _fractions(model)
    rows: list[list[tuple[int, int]]] = []
    for s, e in model.conn.tolist():
        v = _int_row([X[e][a] - X[s][a] for a in range(d)])
        rows.append([(s * d + a, -v[a]) for a in range(d)] + [(e * d + a, v[a]) for a in range(d)])
    for i, n in enumerate(cons.node.tolist()):
        text = cons.texts[i]
        raw = (
            [Fraction(t) for t in text]
            if text is not None and len(text) == d
            else [Fraction(float(c)) for c in cons.dirs[i]]
        )
        v = _int_row(raw)
        rows.append([(n * d + a, v[a]) for a in range(d) if v[a]])
    flat = [x for row in X for x in row]
    return rows, flat


#: the prime of the modular rank test (2³¹ − 1: products of two residues fit in int64)
MODULUS = 2_147_483_647
#: the modular full-rank proof is attempted when d·j · bandwidth² is at most this (about 5 s)
EXACT_WORK_LIMIT = 2.0e8
#: above this many dofs a rank-deficient model is not given an exact null space (too slow): numerical instead
EXACT_UNSTABLE_LIMIT = 1500


def _full_rank_mod_p(nd: int, rows: list[list[tuple[int, int]]], max_work: float = math.inf) -> bool | str | None:
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


def _exact_nullspace_T(nd: int, rows: list[list[tuple[int, int]]]) -> tuple[int, FloatArray]:
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


def _exact_self_stress(nd: int, rows: list[list[tuple[int, int]]], s: int) -> FloatArray | None:
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


# ================================================ geometry-only Gram matrix
def _gram(model: Model, cons: _Constraints, extra_node: IntArray, extra_dir: FloatArray) -> sp.csr_matrix:
    """G = A Aᵀ with unit member columns and unit reaction columns (plus virtual ones): the geometry-only
    stiffness with unit EA/L, whose null space is exactly the mechanism space."""
    from dataclasses import replace

    node = np.concatenate([cons.node, extra_node]).astype(np.int64)
    dirs = np.vstack([cons.dirs, extra_dir.reshape(-1, model.dim)])
    ghost = replace(model, spring_node=node, spring_dir=dirs, spring_k=np.ones(node.size))
    return stiffness.assemble(ghost, member_stiffness=np.ones(model.n_members), springs=True)


def _equilibrium_matrix(model: Model, cons: _Constraints) -> sp.csr_matrix:
    """A (d·j, m + r) with unit member and reaction columns."""
    Bt = stiffness.compatibility_matrix(model).T.tocsc()
    d = model.dim
    rows = (cons.node[:, None] * d + np.arange(d)).ravel()
    cols = np.repeat(np.arange(cons.node.size), d)
    C = sp.csc_matrix((cons.dirs.ravel(), (rows, cols)), shape=(model.n_dofs, cons.node.size))
    return sp.hstack([Bt, C]).tocsr()


def _zero_modes(G: sp.csr_matrix) -> tuple[FloatArray, float, float, bool, str]:
    """(basis (n, z) of the numerical null space of PSD G, largest zero eigenvalue, smallest non-zero one,
    lower-bound flag, backend) by dense eigh or shift-invert Lanczos with an SPD factor of G + |σ| I."""
    n = G.shape[0]
    norm = float(abs(G).sum(axis=1).max()) if G.nnz else 1.0
    tol = ZERO_EIGEN_RELATIVE * norm
    if n <= DENSE_EIGEN_LIMIT:
        w, v = np.linalg.eigh(G.toarray())
        z = w < tol
        below = float(w[z].max()) if z.any() else 0.0
        above = float(w[~z].min()) if (~z).any() else math.inf
        return v[:, z], below, above, False, "dense eigh"
    sigma = -1.0e-8 * norm
    factor = linsolve.factorize((G - sigma * sp.eye(n, format="csr")).tocsr())
    op = spla.LinearOperator((n, n), matvec=factor.solve, dtype=np.float64)
    k = min(2, n - 2)
    while True:
        # zero modes are the dominant, well separated eigenvalues of (G − σI)⁻¹ and converge first; the
        # loose Lanczos tolerance only affects the non-zero Ritz values, and each zero mode is confirmed by
        # its own Rayleigh quotient vᵀ G v below
        w, v = spla.eigsh(G, k=k, sigma=sigma, which="LM", OPinv=op, tol=1e-8, ncv=min(n - 1, max(2 * k + 1, 10)))
        order = np.argsort(w)
        w, v = w[order], v[:, order]
        w = np.where(w < tol, np.einsum("ik,ik->k", v, np.asarray(G @ v)), w)
        z = w < tol
        if not z.all() or k >= min(n - 2, 512):
            break
        k = min(4 * k, n - 2, 512)
    below = float(w[z].max()) if z.any() else 0.0
    above = float(w[~z].min()) if (~z).any() else math.inf
    return v[:, z], below, above, bool(z.all()), f"shift-invert Lanczos ({factor.backend})"


# ========================================================= cheap pre-checks
@dataclass(frozen=True)
class _Local:
    node: int
    direction: FloatArray  #: (d,) unit direction the joint can move along
    n_members: int
    span_rank: int  #: rank of the directions of its members and reactions


def _local_deficiencies(model: Model, cons: _Constraints) -> list[_Local]:
    """Joints whose member and reaction directions span fewer than d directions (each missing direction
    is a mechanism: that joint alone moves, no member stretches to first order)."""
    d, n = model.dim, model.n_nodes
    G = np.zeros((n, d, d))
    deg = np.zeros(n, dtype=np.int64)
    if model.n_members:
        u = model.directions()
        nn = np.einsum("ei,ej->eij", u, u)
        np.add.at(G, model.conn[:, 0], nn)
        np.add.at(G, model.conn[:, 1], nn)
        np.add.at(deg, model.conn.ravel(), 1)
    if cons.node.size:
        np.add.at(G, cons.node, np.einsum("ei,ej->eij", cons.dirs, cons.dirs))
    # a joint is deficient exactly when its smallest Gram eigenvalue is ~0: check cheaply by the determinant
    # scale first, then decompose only the suspects
    w = np.linalg.eigvalsh(G)
    suspects = np.flatnonzero(w[:, 0] < LOCAL_RANK_TOLERANCE * np.maximum(w[:, -1], 1.0))
    out: list[_Local] = []
    for v in suspects.tolist():
        ww, vv = np.linalg.eigh(G[v])
        zero = ww < LOCAL_RANK_TOLERANCE * max(ww[-1], 1.0)
        rank = int(d - zero.sum())
        for c in np.flatnonzero(zero).tolist():
            out.append(_Local(v, _canonical(vv[:, c]), int(deg[v]), rank))
    return out


def _canonical(v: FloatArray) -> FloatArray:
    """Sign-fixed unit vector (largest component positive), tiny components cleaned."""
    v = np.where(np.abs(v) < 1e-13, 0.0, v)
    k = int(np.argmax(np.abs(v)))
    return v / np.linalg.norm(v) * (1.0 if v[k] > 0 else -1.0)


@dataclass(frozen=True)
class _Rigid:
    """The rigid-body motions one connected part can make without breaking its supports."""

    nodes: IntArray
    basis: FloatArray  #: (n_part * d, k) orthonormal displacement basis over the part's dofs
    translations: FloatArray  #: (d, t) directions of free translations
    rotations: tuple[tuple[FloatArray, FloatArray, float], ...]  #: (axis ω (unit; 2D: [±1]), point, pitch)
    n_reactions: int


def _rigid_motions(model: Model, cons: _Constraints, labels: IntArray, n_parts: int) -> list[_Rigid]:
    """Per connected part: its rigid-body motions (translations, rotations about its centroid) that satisfy
    every support on it, n · (t + ω × (x − x₀)) = 0 (common practice)."""
    d = model.dim
    order = np.argsort(labels, kind="stable")
    starts = np.searchsorted(labels[order], np.arange(n_parts + 1))
    cons_part = labels[cons.node] if cons.node.size else np.zeros(0, dtype=np.int64)
    out: list[_Rigid] = []
    for c in range(n_parts):
        nodes = order[starts[c] : starts[c + 1]]
        X = model.coords[nodes]
        x0 = X.mean(axis=0)
        rho = float(np.max(np.linalg.norm(X - x0, axis=1))) if nodes.size > 1 else 0.0
        scale = rho if rho > 0 else 1.0
        R = _rigid_columns(X - x0, d) / np.r_[np.ones(d), np.full(R_ROT[d], scale)]  # (n*d, d+rot)
        ci = np.flatnonzero(cons_part == c)
        Q = np.zeros((ci.size, R.shape[1]))
        if ci.size:
            pos = np.searchsorted(nodes, cons.node[ci])
            for j, (p, nrm) in enumerate(zip(pos.tolist(), cons.dirs[ci], strict=False)):
                Q[j] = nrm @ R[p * d : (p + 1) * d]
        Nq = _null(Q, R.shape[1])
        F = _orth(R @ Nq) if Nq.shape[1] else np.zeros((R.shape[0], 0))
        if F.shape[1] == 0:
            continue
        trans = _null(Q[:, :d], d) if ci.size else np.eye(d)
        rots: list[tuple[FloatArray, FloatArray, float]] = []
        if F.shape[1] > trans.shape[1]:
            # rotational part: coefficient vectors in null(Q) orthogonal to the free translations
            Pt = np.zeros((R.shape[1], trans.shape[1]))
            Pt[:d] = trans
            Nr = Nq - Pt @ (Pt.T @ Nq)
            omegas = _orth(Nr[d:]) if Nr.shape[1] else np.zeros((R_ROT[d], 0))
            for k in range(omegas.shape[1]):
                w = omegas[:, k]
                # the coefficient vector with this rotation: least squares within span(Nr)
                coef, *_ = np.linalg.lstsq(Nr[d:], w, rcond=None)
                a = Nr @ coef
                t, om = a[:d], a[d:] / scale
                rots.append(_axis(t, om, x0, d))
        out.append(_Rigid(nodes, F, trans, tuple(rots), int(ci.size)))
    return out


R_ROT = {2: 1, 3: 3}


def _rigid_columns(Xc: FloatArray, d: int) -> FloatArray:
    """(n*d, d + rot) translations then rotations ω × r (2D: ω about z)."""
    n = Xc.shape[0]
    cols = [np.tile(np.eye(d)[a], n) for a in range(d)]
    if d == 2:
        cols.append(np.column_stack([-Xc[:, 1], Xc[:, 0]]).ravel())
    else:
        for a in range(3):
            cols.append(np.cross(np.eye(3)[a], Xc).ravel())
    return np.column_stack(cols)


def _axis(t: FloatArray, om: FloatArray, x0: FloatArray, d: int) -> tuple[FloatArray, FloatArray, float]:
    """(unit axis, point on it, pitch) of the motion u(x) = t + ω × (x − x₀)."""
    if d == 2:
        w = float(om[0])
        p = np.array([x0[0] - t[1] / w, x0[1] + t[0] / w])
        return np.array([1.0 if w > 0 else -1.0]), p, 0.0
    w2 = float(om @ om)
    p = x0 + np.cross(om, t) / w2
    pitch = float(om @ t) / w2
    return _canonical(om), p, pitch


# =================================================================== analyse
def analyse(
    model: Model,
    system: System,
    factor: linsolve.Factor | None,
    *,
    condition: float | None = None,
    method: str = "auto",
    exact_limit: int = EXACT_DOF_LIMIT,
) -> StabilityReport:
    """Counts, rank, mechanisms, self-stress and traps of ``model``.

    Parameters
    ----------
    system
        The assembled system (its K_r was given to the factorisation).
    factor
        The factor of ``system.K_r``, or None when factorisation failed or was refused as singular.
    condition
        The scaled condition estimate of K_r behind ``factor``, if known (quoted as evidence).
    method
        ``"auto"`` (exact up to ``exact_limit`` dofs), ``"exact"`` or ``"numerical"`` (forces the
        numerical path, e.g. to cross-check it against the exact one).
    """
    d, j, m = model.dim, model.n_nodes, model.n_members
    nd = model.n_dofs
    cons = _constraints(model)
    r = int(cons.node.size)
    n_springs = int(model.spring_node.size)
    counted = int(np.sum(model.spring_k > 0))
    maxwell = m + r - d * j

    # cheap pre-checks: connected parts, their rigid-body freedom, deficient joints
    if m:
        graph = sp.coo_matrix((np.ones(m), (model.conn[:, 0], model.conn[:, 1])), shape=(j, j))
        n_parts, labels = csgraph.connected_components(graph, directed=False)
    else:
        n_parts, labels = j, np.arange(j)
    labels = np.asarray(labels, dtype=np.int64)
    rigid = _rigid_motions(model, cons, labels, int(n_parts))
    n_rigid = sum(p.basis.shape[1] for p in rigid)
    local = _local_deficiencies(model, cons)
    notes: list[str] = []

    use_exact = method == "exact" or (method == "auto" and nd <= exact_limit)
    lower_bound = False
    threshold: float | None = None
    M_basis: FloatArray | None = None
    full = None
    if use_exact:
        rows, _ = _exact_rows(model, cons)
        work = math.inf if method == "exact" else EXACT_WORK_LIMIT
        full = _full_rank_mod_p(nd, rows, work) if not local and n_rigid == 0 else False
        if len(model.coords_text) != j:
            notes.append("some coordinates had no decimal text: their float values were used exactly")
        if isinstance(full, str):
            use_exact = False
            notes.append(f"exact proof not attempted: {full}")
            full = None
        elif not full and nd > EXACT_UNSTABLE_LIMIT and method != "exact":
            use_exact = False
            notes.append(
                f"no exact full-rank proof; above {EXACT_UNSTABLE_LIMIT} dofs the null space is found numerically"
            )
    if use_exact:
        proof = "exact"
        evidence = "exact arithmetic on the input's decimal text"
        if full:
            rank, M_basis = nd, np.zeros((nd, 0))
            how = f"exact: the Gram matrix of the integer equilibrium matrix has full rank modulo {MODULUS}"
        else:
            rank, M_basis = _exact_nullspace_T(nd, rows)
            how = "exact rational rank of the equilibrium matrix (python-flint integer null space of Aᵀ)"
    elif factor is not None and not local and n_rigid == 0 and full is not False:
        rank, proof = nd, "numerical"
        cond = "" if condition is None or not np.isfinite(condition) else f" {condition:.3g}"
        how = "the SPD factorisation of the restrained stiffness succeeded"
        evidence = (
            f"factor ({factor.backend}) of the restrained K accepted: scaled condition estimate{cond} "
            f"<= {SINGULAR_CONDITION:.0e}; no joint lacks a direction and every part is supported"
        )
        threshold = 1.0 / SINGULAR_CONDITION
        M_basis = np.zeros((nd, 0))
    else:
        # numerical null space of the geometry-only Gram matrix, deficient joints restrained virtually
        proof = "numerical"
        vnode = np.array([loc.node for loc in local], dtype=np.int64)
        vdir = np.array([loc.direction for loc in local]).reshape(-1, d)
        G = _gram(model, cons, vnode, vdir)
        Z, below, above, lower_bound, backend = _zero_modes(G)
        L = np.zeros((nd, len(local)))
        for i, loc in enumerate(local):
            L[loc.node * d : (loc.node + 1) * d, i] = loc.direction
        M_basis = np.hstack([L, Z])
        rank = nd - M_basis.shape[1]
        threshold = ZERO_EIGEN_RELATIVE
        gap = "no zero eigenvalue" if Z.shape[1] == 0 else f"largest zero eigenvalue {below / _norm(G):.2e}"
        how = f"geometry-only Gram matrix A Aᵀ (unit EA/L), {backend}; {len(local)} deficient joint directions first"
        evidence = f"{gap}, smallest non-zero {above / _norm(G):.2e} (relative to ‖G‖∞), threshold {threshold:.0e}"
        if factor is not None:
            notes.append("the restrained stiffness was factorised although the pre-checks found a mechanism")
    mech = nd - rank
    s = m + r - rank
    n_rigid = min(n_rigid, mech)

    # self-stress basis (for naming and the first-order test), when small enough
    S_basis = _self_stress_basis(model, cons, s, use_exact)
    mechanisms, internal_basis = _name_mechanisms(model, rigid, local, M_basis, labels, mech - n_rigid)
    order: dict[str, Any] = {}
    if mech > n_rigid:
        order = _first_order(model, cons, M_basis, internal_basis, s, proof)
        verdicts = order.pop("verdicts", [])
        it = iter(verdicts)
        mechanisms = tuple(
            _with_order(mk, next(it, order["result"])) if mk.kind == "internal" else mk for mk in mechanisms
        )
    traps = _traps(model, cons, rigid, local, mechanisms, maxwell, mech, s, labels)
    stresses = _name_self_stress(model, cons, S_basis) if S_basis is not None else ()
    return StabilityReport(
        dim=d,
        joints=j,
        members=m,
        reactions=r,
        springs_counted=counted,
        springs_zero=n_springs - counted,
        maxwell_count=maxwell,
        rank=rank,
        mechanisms=mech,
        rigid_body_mechanisms=n_rigid,
        internal_mechanisms=mech - n_rigid,
        self_stress_states=s,
        proof=proof,
        method=how,
        evidence=evidence,
        threshold=threshold,
        lower_bound_only=lower_bound,
        components=int(n_parts),
        mechanism_list=mechanisms,
        self_stress_list=stresses,
        traps=traps,
        order_test=order,
        notes=tuple(notes),
    )


def _norm(G: sp.csr_matrix) -> float:
    return float(abs(G).sum(axis=1).max()) if G.nnz else 1.0


def _self_stress_basis(model: Model, cons: _Constraints, s: int, exact: bool) -> FloatArray | None:
    """(m + r, s) basis of member tensions and reactions of the states of self-stress, or None if too big."""
    ncols = model.n_members + cons.node.size
    if s == 0 or s > DESCRIBE_LIMIT * 5:
        return None
    if exact and ncols <= EXACT_SELF_STRESS_COLUMNS:
        rows, _ = _exact_rows(model, cons)
        q = _exact_self_stress(model.n_dofs, rows, s)
        if q is not None:
            # unnormalised columns carry force densities t/L (members) and ρ/|raw| (reactions)
            scale = np.concatenate([model.lengths(), _raw_norms(model, cons)])
            return _sparse_basis(q * scale[:, None])
    if ncols * model.n_dofs > DENSE_SELF_STRESS:
        return None
    A = _equilibrium_matrix(model, cons).toarray()
    vt = np.linalg.svd(A)[2]
    null = vt[A.shape[1] - s :].T if s else np.zeros((ncols, 0))
    return _sparse_basis(null)


def _raw_norms(model: Model, cons: _Constraints) -> FloatArray:
    """|raw direction| of each reaction's exact column (its decimal text scaled to integers)."""
    out = np.ones(cons.node.size)
    for i, text in enumerate(cons.texts):
        raw = [Fraction(t) for t in text] if text is not None and len(text) == model.dim else None
        if raw is None:
            raw = [Fraction(float(c)) for c in cons.dirs[i]]
        v = _int_row(raw)
        out[i] = math.sqrt(sum(float(c) ** 2 for c in v))
    return out


def _sparse_basis(N: FloatArray) -> FloatArray:
    """The same column space, in a reduced echelon form (1 at a pivot row, 0 at the others): sparser, readable."""
    if N.shape[1] == 0:
        return N
    _, _, piv = sla.qr(N.T, pivoting=True, mode="economic")
    P = piv[: N.shape[1]]
    out = N @ np.linalg.inv(N[P])
    out[np.abs(out) < 1e-10 * np.abs(out).max(axis=0)] = 0.0
    return out / np.abs(out).max(axis=0)


# ==================================================================== naming
def _joint_list(names: list[str], limit: int = 6) -> str:
    if len(names) <= limit:
        return ", ".join(names)
    return ", ".join(names[:limit]) + f" and {len(names) - limit} more"


def _mode(
    model: Model, u: FloatArray, nodes: IntArray | None = None
) -> tuple[tuple[str, ...], tuple[tuple[str, tuple[float, ...]], ...]]:
    """(moving joints by participation, mode scaled to a largest joint movement of 1) of a dof vector."""
    d = model.dim
    U = u.reshape(-1, d)
    amp = np.linalg.norm(U, axis=1)
    top = float(amp.max()) if amp.size else 0.0
    if top == 0.0:
        return (), ()
    moving = np.flatnonzero(amp > 1e-9 * top)
    moving = moving[np.argsort(-amp[moving], kind="stable")]
    U = U / top
    joints = tuple(model.node_ids[i] for i in moving.tolist())
    mode = tuple(
        (model.node_ids[i], tuple(round(float(c), 12) + 0.0 for c in U[i])) for i in moving[:MODE_JOINTS_LIMIT].tolist()
    )
    return joints, mode


def _movement_words(model: Model, u: FloatArray, limit: int = 6) -> str:
    """'joint C along x, joint D along (0.707, 0.707) (0.5), ...' for the joints that move most."""
    d = model.dim
    U = u.reshape(-1, d)
    amp = np.linalg.norm(U, axis=1)
    top = float(amp.max())
    moving = np.flatnonzero(amp > 1e-9 * top)
    moving = moving[np.argsort(-amp[moving], kind="stable")]
    words = []
    for i in moving[:limit].tolist():
        rel = amp[i] / top
        words.append(
            f"{model.node_ids[i]} along {_dir_word(U[i] / amp[i])}" + ("" if rel > 0.9995 else f" ({rel:.2g})")
        )
    more = f" and {moving.size - limit} more" if moving.size > limit else ""
    return ", ".join(words) + more


def _part_words(model: Model, nodes: IntArray, n_parts: int) -> str:
    if n_parts == 1:
        return "the structure"
    ids = [model.node_ids[i] for i in nodes.tolist()]
    return f"the part made of joint{'s' if len(ids) > 1 else ''} {_joint_list(ids)}"


def _rigid_mechanisms(model: Model, part: _Rigid, n_parts: int) -> list[Mechanism]:
    d = model.dim
    who = _part_words(model, part.nodes, n_parts)
    out: list[Mechanism] = []
    X = model.coords[part.nodes]
    for a in range(part.translations.shape[1]):
        t = _canonical(part.translations[:, a])
        u = np.zeros(model.n_dofs)
        for i in part.nodes.tolist():
            u[i * d : (i + 1) * d] = t
        joints, mode = _mode(model, u)
        out.append(Mechanism("rigid-body", f"{who} translates along {_dir_word(t)}", joints, mode))
    for axis, point, pitch in part.rotations:
        u = np.zeros(model.n_dofs)
        if d == 2:
            rel = X - point
            V = float(axis[0]) * np.column_stack([-rel[:, 1], rel[:, 0]])
            text = f"{who} rotates about the point ({_num(point[0])}, {_num(point[1])})"
        else:
            V = np.cross(axis, X - point) + pitch * axis
            text = (
                f"{who} rotates about the axis through ({', '.join(_num(c) for c in point)}) "
                f"along {_dir_word(axis)}" + ("" if abs(pitch) < 1e-9 else f" with pitch {_num(pitch)}")
            )
        for k, i in enumerate(part.nodes.tolist()):
            u[i * d : (i + 1) * d] = V[k]
        joints, mode = _mode(model, u)
        out.append(Mechanism("rigid-body", text, joints, mode))
    return out[: part.basis.shape[1]]


def _local_words(model: Model, loc: _Local, members: list[str], n_cons: int) -> tuple[str, str]:
    """(trap kind, description) of a joint that lacks a direction."""
    j = model.node_ids[loc.node]
    w = _dir_word(loc.direction)
    sup = " and its supports" if n_cons else ""
    if loc.n_members == 1:
        return "single-member-joint", (
            f"joint {j} hangs on member {members[0]} alone{sup}: it can move along {w}, across the member, "
            "without stretching it"
        )
    if loc.span_rank <= 1:
        return "collinear-joint", (
            f"joint {j} joins only collinear members ({_joint_list(members)}){sup}: it can move along {w}, "
            "across them, with no member stretching to first order"
        )
    return "coplanar-joint", (
        f"the members at joint {j} ({_joint_list(members)}){sup} all lie in one plane: it can move along {w}, "
        "out of that plane, with no member stretching to first order"
    )


class _Incidence:
    """Members at each joint (CSR over the joints, built once by sorting): ``members(v)``, ``neighbours(v)``."""

    def __init__(self, model: Model) -> None:
        ends = model.conn.ravel()
        self._order = np.argsort(ends, kind="stable")
        self._start = np.searchsorted(ends[self._order], np.arange(model.n_nodes + 1))
        self._model = model

    def member_index(self, v: int) -> IntArray:
        return self._order[self._start[v] : self._start[v + 1]] // 2

    def get(self, v: int, default: Any = None) -> list[str]:
        return [self._model.member_ids[e] for e in self.member_index(v).tolist()]

    def neighbours(self, v: int) -> set[int]:
        e = self.member_index(v)
        c = self._model.conn[e]
        return set(np.where(c[:, 0] == v, c[:, 1], c[:, 0]).tolist())


def _members_at(model: Model) -> _Incidence:
    return _Incidence(model)


def _panel(model: Model, u: FloatArray) -> tuple[tuple[int, int, int, int], tuple[int, int]] | None:
    """A four-joint panel (a, b, c, e) with neither diagonal whose diagonal would stretch in the mechanism u,
    the best-stretched diagonal (joints) with it; None when there is none."""
    d = model.dim
    U = u.reshape(-1, d)
    amp = np.linalg.norm(U, axis=1)
    top = float(amp.max())
    cand = np.flatnonzero(amp > 1e-6 * top)
    cand = cand[np.argsort(-amp[cand])][:60]
    inc = _Incidence(model)
    adj: dict[int, set[int]] = {}

    def near(v: int) -> set[int]:
        if v not in adj:
            adj[v] = inc.neighbours(v)
        return adj[v]

    best: tuple[float, tuple[int, int, int, int], tuple[int, int]] | None = None
    for a in cand.tolist():
        nb = sorted(near(a))
        for x in range(len(nb)):
            for y in range(x + 1, len(nb)):
                b, e = nb[x], nb[y]
                if e in near(b):
                    continue  # a triangle, not a panel
                for c in sorted(near(b) & near(e)):
                    if c == a or c in near(a):
                        continue
                    for p, q in ((a, c), (b, e)):
                        dx = model.coords[q] - model.coords[p]
                        rate = abs(float(dx @ (U[q] - U[p]))) / (float(np.linalg.norm(dx)) * top)
                        if rate > 1e-6 and (best is None or rate > best[0] + 1e-12):
                            best = (rate, (a, b, c, e), (p, q))
    return None if best is None else (best[1], best[2])


def _name_mechanisms(
    model: Model, rigid: list[_Rigid], local: list[_Local], M: FloatArray | None, labels: IntArray, n_internal: int
) -> tuple[tuple[Mechanism, ...], FloatArray | None]:
    """A described basis of the mechanism space: rigid-body motions per part, then internal mechanisms
    (deficient joints first, then the rest of the space, e.g. a panel without a diagonal).

    Returns the mechanisms and the internal basis (d·j, n_internal) when it was formed (None otherwise).
    """
    d, nd = model.dim, model.n_dofs
    n_parts = int(labels.max()) + 1 if labels.size else 0
    out: list[Mechanism] = []
    F_cols: list[FloatArray] = []
    for part in rigid:
        out.extend(_rigid_mechanisms(model, part, n_parts))
        if part.basis.shape[1] and len(F_cols) < 64:
            dofs = (part.nodes[:, None] * d + np.arange(d)).ravel()
            for k in range(part.basis.shape[1]):
                col = np.zeros(nd)
                col[dofs] = part.basis[:, k]
                F_cols.append(col)
    if n_internal <= 0:
        return tuple(out), None
    F = np.column_stack(F_cols) if F_cols else np.zeros((nd, 0))
    free_parts = {int(labels[p.nodes[0]]) for p in rigid if p.n_reactions == 0 or p.nodes.size <= 2}
    at = _members_at(model)
    cons_at: dict[int, int] = {}
    internal: list[FloatArray] = []
    for loc in local:
        if loc.n_members == 0 or int(labels[loc.node]) in free_parts:
            continue
        v = np.zeros(nd)
        v[loc.node * d : (loc.node + 1) * d] = loc.direction
        if F.shape[1]:
            v = v - F @ (F.T @ v)
            if np.linalg.norm(v) < 0.5:
                continue
        internal.append(v / np.linalg.norm(v))
        if len(out) < DESCRIBE_LIMIT + 10:
            kind, text = _local_words(model, loc, at.get(loc.node, []), cons_at.get(loc.node, 0))
            joints, mode = _mode(model, internal[-1])
            out.append(Mechanism("internal", text, joints, mode, trap=kind))
        if len(internal) >= n_internal:
            break
    rest = n_internal - len(internal)
    if rest > 0 and M is not None and M.shape[1] <= 400:
        known = _orth(np.column_stack([F, *internal])) if (F.shape[1] or internal) else np.zeros((nd, 0))
        R = M - known @ (known.T @ M) if known.shape[1] else M
        u, sv, _ = np.linalg.svd(R, full_matrices=False)
        keep = u[:, : min(rest, int(np.sum(sv > 1e-6 * max(1.0, sv[0] if sv.size else 0.0))))]
        for k in range(keep.shape[1]):
            v = keep[:, k]
            v = v * (1.0 if v[int(np.argmax(np.abs(v)))] > 0 else -1.0)
            internal.append(v)
            if len(out) >= DESCRIBE_LIMIT + 10:
                continue
            joints, mode = _mode(model, v)
            panel = _panel(model, v)
            if panel is not None:
                (a, b, c, e), (p, q) = panel
                ids = [model.node_ids[i] for i in (a, b, c, e)]
                text = (
                    f"panel {'–'.join(ids)} has no diagonal and can shear (joints {_movement_words(model, v)}); "
                    f"a member {model.node_ids[p]}–{model.node_ids[q]} would stop it"
                )
                out.append(Mechanism("internal", text, joints, mode, trap="missing-diagonal", trap_nodes=tuple(ids)))
            else:
                text = f"joints {_movement_words(model, v)} move with no member stretching to first order"
                out.append(Mechanism("internal", text, joints, mode))
    basis = np.column_stack(internal) if len(internal) == n_internal else None
    return tuple(out), basis


def _with_order(mk: Mechanism, verdict: str) -> Mechanism:
    from dataclasses import replace

    if not verdict:
        return mk
    return replace(mk, order=verdict, description=f"{mk.description} [{verdict}]")


def _first_order(
    model: Model, cons: _Constraints, M: FloatArray | None, D: FloatArray | None, s: int, proof: str
) -> dict[str, Any]:
    """Calladine & Pellegrino's product-force test of the internal mechanisms D (d·j, ℓ).

    For mechanisms d_i, d_j and a state of self-stress t the quadratic form is
    ``H_ij(t) = Σ_e t_e (Δd_i,e · Δd_j,e) / L_e`` (Δd the relative end displacement of member e): the
    work of the product forces.  Only the part of ``g_ij = (Δd_i · Δd_j / L)`` in the self-stress space
    (the null space of A) can be reached, so g_ij is projected onto it,
    ``r_ij = g_ij − Aᵀ (A Aᵀ + V Vᵀ)⁻¹ A g_ij`` (V: virtual supports that stop every mechanism; the
    normal equations then have a unique solution).  The mechanisms are first-order infinitesimal when a
    combination of those states makes H positive definite (Calladine & Pellegrino 1991, "First-order
    infinitesimal mechanisms", Int. J. Solids Structures 27(4), §3-4).  With no state of self-stress the
    columns of A are independent, the configuration is regular and every mechanism is finite (Asimow &
    Roth 1978, "The rigidity of graphs", Trans. AMS 245; recalled from memory).
    """
    if s == 0:
        return {
            "tested": True,
            "result": "finite",
            "reason": "no state of self-stress: the mechanisms are finite (regular configuration)",
            "proof": proof,
        }
    if model.n_dofs > ORDER_TEST_DOF_LIMIT:
        return {
            "tested": False,
            "result": "not proven infinitesimal",
            "reason": f"the product-force test is not run above {ORDER_TEST_DOF_LIMIT} dofs (one more factorisation)",
        }
    if D is None or M is None or M.shape[1] > 50 or D.shape[1] > ORDER_TEST_LIMIT:
        return {
            "tested": False,
            "result": "not proven infinitesimal",
            "reason": "too many mechanisms for the product-force test (or no basis formed)",
        }
    d, nd, m = model.dim, model.n_dofs, model.n_members
    ell = D.shape[1]
    _, _, piv = sla.qr(M.T, pivoting=True, mode="economic")
    dofs = piv[: M.shape[1]]
    vdir = np.eye(d)[dofs % d]
    G = _gram(model, cons, (dofs // d).astype(np.int64), vdir)
    factor = linsolve.factorize(G)
    A = _equilibrium_matrix(model, cons)
    L = model.lengths()
    Dd = [D[:, i].reshape(-1, d) for i in range(ell)]
    rel = [(Di[model.conn[:, 1]] - Di[model.conn[:, 0]]) for Di in Dd]
    pairs = [(i, k) for i in range(ell) for k in range(i, ell)]
    gs = np.zeros((m + cons.node.size, len(pairs)))
    for c, (i, k) in enumerate(pairs):
        gs[:m, c] = np.einsum("ea,ea->e", rel[i], rel[k]) / L
    Y = factor.solve(np.asarray(A @ gs))
    R = gs - np.asarray(A.T @ Y.reshape(nd, -1))
    gnorm = float(np.linalg.norm(gs, axis=0).max()) or 1.0
    S = _orth(R, 1e-8) if np.linalg.norm(R) > 1e-8 * gnorm else np.zeros((R.shape[0], 0))
    tol = 1e-8 * gnorm
    indiv = []
    for i in range(ell):
        c = pairs.index((i, i))
        indiv.append("first-order infinitesimal" if np.linalg.norm(R[:, c]) > math.sqrt(tol * gnorm) else "")
    if S.shape[1] == 0:
        return {
            "tested": True,
            "result": "not proven infinitesimal",
            "reason": f"{_plural(s, 'state')} of self-stress, none of which stiffens the mechanisms to first order",
            "proof": "numerical",
            "tolerance": tol,
        }
    Hs = []
    for k in range(S.shape[1]):
        H = np.zeros((ell, ell))
        for c, (i, q) in enumerate(pairs):
            H[i, q] = H[q, i] = float(S[:m, k] @ gs[:m, c])
        Hs.append(H)
    best, _beta = _max_min_eig(Hs)
    ok = best > tol
    verdicts = ["first-order infinitesimal" if ok or v else "not proven infinitesimal" for v in indiv]
    return {
        "tested": True,
        "result": "first-order infinitesimal" if ok else "not proven infinitesimal",
        "reason": (
            f"a state of self-stress stiffens every internal mechanism: smallest eigenvalue of the product-force "
            f"form {best:.3g} > tolerance {tol:.1e}"
            if ok
            else f"no combination of the {S.shape[1]} relevant states of self-stress was found that makes the "
            f"product-force form positive definite (best smallest eigenvalue {best:.3g}, tolerance {tol:.1e})"
        ),
        "proof": "numerical",
        "tolerance": tol,
        "relevant_self_stress_states": int(S.shape[1]),
        "verdicts": verdicts,
    }


def _max_min_eig(Hs: list[FloatArray]) -> tuple[float, FloatArray]:
    """max over unit β of λ_min(Σ β_k H_k): candidates ±basis, seeded random directions, then ascent."""
    q = len(Hs)
    rng = np.random.default_rng(20260101)
    cands = [np.eye(q)[k] * sgn for k in range(q) for sgn in (1.0, -1.0)]
    cands += [v / np.linalg.norm(v) for v in rng.standard_normal((64, q))]

    def score(b: FloatArray) -> tuple[float, FloatArray]:
        w, v = np.linalg.eigh(sum(bk * H for bk, H in zip(b, Hs, strict=False)))
        return float(w[0]), v[:, 0]

    best_b = max(cands, key=lambda b: score(b)[0])
    best = score(best_b)[0]
    step = 0.5
    for _ in range(200):
        _val, vec = score(best_b)
        grad = np.array([vec @ H @ vec for H in Hs])
        trial = best_b + step * grad
        trial /= np.linalg.norm(trial) or 1.0
        val = score(trial)[0]
        if val > best:
            best, best_b = val, trial
        else:
            step *= 0.5
            if step < 1e-6:
                break
    return best, best_b


def _traps(
    model: Model,
    cons: _Constraints,
    rigid: list[_Rigid],
    local: list[_Local],
    mechanisms: tuple[Mechanism, ...],
    maxwell: int,
    mech: int,
    s: int,
    labels: IntArray,
) -> tuple[Trap, ...]:
    """The typical mistakes behind the mechanisms, each explained in words."""
    d, j = model.dim, model.n_nodes
    n_parts = int(labels.max()) + 1 if labels.size else 0
    need = 3 if d == 2 else 6
    out: list[Trap] = []
    r = int(cons.node.size)
    if r == 0 and j:
        out.append(
            Trap("no-supports", f"the model has no supports at all: it can move as a rigid body ({need} motions)")
        )
    for part in rigid:
        ids = tuple(model.node_ids[i] for i in part.nodes.tolist())
        who = _part_words(model, part.nodes, n_parts)
        k = part.basis.shape[1]
        at_part = np.isin(cons.node, part.nodes)
        if part.nodes.size == 1 and not np.any(model.conn == part.nodes[0]):
            out.append(
                Trap(
                    "isolated-joint",
                    f"joint {ids[0]} is connected to no member"
                    + (
                        " and its supports do not hold it in every direction"
                        if part.n_reactions
                        else " and has no support"
                    )
                    + f": it can move freely ({_plural(k, 'direction')})",
                    nodes=ids,
                )
            )
            continue
        if part.n_reactions == 0:
            if r:
                out.append(
                    Trap(
                        "unsupported-part",
                        f"{who} is joined to the rest by no member and carried by no support: "
                        f"it can move as a rigid body ({_plural(k, 'motion')})",
                        nodes=ids,
                    )
                )
            continue
        dirs = cons.dirs[at_part]
        drank = int(np.linalg.matrix_rank(dirs, tol=1e-9)) if dirs.size else 0
        if part.n_reactions < need and n_parts == 1:
            out.append(
                Trap(
                    "too-few-reactions",
                    f"only {_plural(part.n_reactions, 'reaction component')}: a {d}D truss needs at least {need} "
                    f"to be held as a rigid body; {_plural(k, 'rigid-body motion')} left free",
                    nodes=ids,
                )
            )
        if part.translations.shape[1] and drank == 1 and part.n_reactions >= 2:
            t = _canonical(part.translations[:, 0])
            out.append(
                Trap(
                    "parallel-reactions",
                    f"all {part.n_reactions} reactions on {who} are parallel to {_dir_word(_canonical(dirs[0]))}: "
                    f"nothing resists a translation along {_dir_word(t)}",
                    direction=tuple(float(c) for c in t),
                )
            )
        elif part.translations.shape[1] and d == 3 and drank == 2 and part.n_reactions >= 3:
            t = _canonical(part.translations[:, 0])
            out.append(
                Trap(
                    "parallel-reactions",
                    f"all {part.n_reactions} reactions on {who} are parallel to one plane: nothing resists a "
                    f"translation along {_dir_word(t)}, normal to it",
                    direction=tuple(float(c) for c in t),
                )
            )
        if part.rotations and not part.translations.shape[1] and part.n_reactions >= (3 if d == 2 else 1):
            axis, point, _pitch = part.rotations[0]
            if d == 2:
                text = (
                    f"the lines of action of all {part.n_reactions} reactions on {who} pass through one point "
                    f"({_num(point[0])}, {_num(point[1])}): a rotation about it is free"
                )
            else:
                text = (
                    f"every reaction line on {who} meets (or is parallel to) the axis through "
                    f"({', '.join(_num(c) for c in point)}) along {_dir_word(axis)}: a rotation about that axis is free"
                )
            out.append(Trap("concurrent-reactions", text, point=tuple(float(c) for c in point)))
    plane_nodes = _plane_truss_in_3d(model, local)
    if plane_nodes is not None:
        normal, plane_free = plane_nodes
        free_ids = [model.node_ids[i] for i in plane_free]
        out.append(
            Trap(
                "plane-truss-as-3d",
                f"all {j} joints lie in one plane (normal {_dir_word(normal)}) but the model is 3D: nothing resists "
                f"motion out of that plane at joints {_joint_list(free_ids)} ({len(free_ids)} of {j}); "
                "enter it as a 2D model "
                f"or restrain those joints along {_dir_word(normal)}",
                nodes=tuple(free_ids),
                direction=tuple(float(c) for c in normal),
            )
        )
    skip = {int(labels[p.nodes[0]]) for p in rigid if p.n_reactions == 0}
    in_plane_trap = set(plane_nodes[1]) if plane_nodes is not None else set()
    at = _members_at(model)
    seen: set[int] = set()
    for loc in local:
        if loc.n_members == 0 or loc.node in seen or int(labels[loc.node]) in skip or loc.node in in_plane_trap:
            continue
        seen.add(loc.node)
        kind, text = _local_words(model, loc, at.get(loc.node, []), 0)
        out.append(
            Trap(
                kind,
                text,
                nodes=(model.node_ids[loc.node],),
                members=tuple(at.get(loc.node, [])),
                direction=tuple(float(c) for c in loc.direction),
            )
        )
    for mk in mechanisms:
        if mk.trap == "missing-diagonal":
            out.append(Trap("missing-diagonal", mk.description.split(" [")[0], nodes=mk.trap_nodes))
    if mech and maxwell >= 0:
        says = "a statically determinate, stable structure" if maxwell == 0 else f"{maxwell} redundant component(s)"
        out.append(
            Trap(
                "count-misleading",
                f"Maxwell's count m + r − d·j = {maxwell} suggests {says}, but the rank of the equilibrium matrix "
                f"shows {_plural(mech, 'mechanism')} and {_plural(s, 'state')} of self-stress: members (or "
                "supports) are redundant in one place and missing in another",
            )
        )
    return tuple(out)


def _plane_truss_in_3d(model: Model, local: list[_Local]) -> tuple[FloatArray, list[int]] | None:
    """(plane normal, joints free out of the plane) when a 3D model lies in one plane and is free out of it."""
    if model.dim != 3 or model.n_nodes < 3:
        return None
    Xc = model.coords - model.coords.mean(axis=0)
    _, sv, vt = np.linalg.svd(Xc, full_matrices=False)
    if sv[0] == 0 or sv[2] > 1e-9 * sv[0]:
        return None
    normal = _canonical(vt[2])
    nodes = sorted({loc.node for loc in local if loc.n_members and abs(float(loc.direction @ normal)) > 1 - 1e-6})
    return (normal, nodes) if nodes else None


def _name_self_stress(model: Model, cons: _Constraints, S: FloatArray) -> tuple[SelfStress, ...]:
    """Members (largest force first) and reactions of each state of self-stress in the basis S."""
    m = model.n_members
    out: list[SelfStress] = []
    for k in range(min(S.shape[1], DESCRIBE_LIMIT)):
        col = S[:, k]
        top = float(np.abs(col).max()) or 1.0
        col = col / top
        mem = np.flatnonzero(np.abs(col[:m]) > 1e-9)
        mem = mem[np.argsort(-np.abs(col[mem]), kind="stable")]
        rea = np.flatnonzero(np.abs(col[m:]) > 1e-9)
        out.append(
            SelfStress(
                members=tuple(model.member_ids[i] for i in mem.tolist()),
                forces=tuple(round(float(col[i]), 12) + 0.0 for i in mem.tolist()),
                reactions=tuple(cons.labels[i] for i in rea.tolist()),
            )
        )
    return tuple(out)


__all__ = [
    "DESCRIBE_LIMIT",
    "EXACT_DOF_LIMIT",
    "ZERO_EIGEN_RELATIVE",
    "Mechanism",
    "SelfStress",
    "StabilityReport",
    "Trap",
    "analyse",
]
