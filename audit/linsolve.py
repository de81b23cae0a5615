"""Sparse factorisation of the restrained (symmetric positive definite) stiffness.

One :class:`Factor` serves every use: solves for all load cases, iterative
refinement, condition estimates, shift-invert.  Backends, chosen
automatically in this order unless asked for by name:

* ``pardiso``: Intel MKL PARDISO through the optional package pypardiso, as a
  real symmetric positive definite matrix (``mtype = 2``, upper triangle in
  CSR, zero-based indices, nested-dissection ordering).  It is called through
  the MKL entry point directly, so that each solve costs only the forward and
  backward substitution (pypardiso's own ``solve`` re-checks, copies and
  re-indexes the matrix on every call);
* ``cholmod``: SuiteSparse CHOLMOD (supernodal Cholesky) as bundled in the
  wheels of the optional package cvxopt (``cvxopt.cholmod``): no system
  libraries, wheels for x86-64 and ARM, 60 MB instead of MKL's 1 GB;
* ``splu``: scipy's SuperLU with the minimum-degree ordering of Aᵀ + A, no
  off-diagonal pivoting and symmetric mode, which keeps the symmetric
  structure of K (always available, pure scipy).

Measured on 2 cores (``benchmarks/bench_solvers.py``): on a 3D lattice of
10⁵ members PARDISO factorises about 2x faster than CHOLMOD and 12-20x
faster than SuperLU; on small and 2D models the three are within a factor
of two of each other.  All three are direct: no iterative solver is
offered, because a stiffness contrast of 10⁸ between members stops the
usual preconditioned CG from converging (smoothed-aggregation AMG: no
convergence in 2,000 iterations with 5 % of the members 10⁸ times stiffer,
measured on this class of machine), and an unconverged answer would then
be passed off as a recomputation.

A symmetric matrix is assumed; ``pardiso`` reads only its upper triangle,
``cholmod`` only its lower one.  A matrix that is not positive definite raises
:class:`numpy.linalg.LinAlgError` when the backend detects it.  Rounding can
hide a singular matrix (a zero pivot becomes a tiny positive one), so a
caller must still estimate the condition (``audit.solve.condition_estimate``).
The factor reports which backend ran (``Factor.backend``) and, when the
preferred one failed, why (``Factor.note``).
"""

from __future__ import annotations

import contextlib
import ctypes
import functools
import glob
import os
import sys
import weakref
from collections.abc import Generator
from dataclasses import dataclass
from typing import Any, Protocol

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from audit.model import FloatArray

#: the backends, most preferred first
BACKENDS = ("pardiso", "cholmod", "splu")

#: PARDISO's error codes (Intel oneMKL Developer Reference, "pardiso", table of error values)
_PARDISO_ERRORS = {
    -1: "input inconsistent",
    -2: "not enough memory",
    -3: "reordering problem",
    -4: "zero or negative pivot: the matrix is not positive definite",
    -5: "unclassified (internal) error",
    -6: "reordering failed",
    -7: "diagonal matrix is singular",
    -8: "32-bit integer overflow problem",
    -9: "not enough memory for out-of-core solver",
    -10: "error opening out-of-core files",
    -11: "read/write error with out-of-core files",
}


class Factor(Protocol):
    """A factorised square matrix: ``solve(b)`` returns x with K x = b, for b of shape (n,) or (n, k)."""

    backend: str  #: "pardiso" or "splu"
    n: int  #: order of the matrix
    note: str  #: why a preferred backend was not used ("" when it was)
    #: Ritz estimates (λ_min, λ_max) of the factorised matrix, when :func:`audit.solve.factorize_system` made them
    ritz_estimates: tuple[float, float] | None

    def solve(self, b: FloatArray) -> FloatArray: ...

    def solve_block(self, b: FloatArray) -> FloatArray:
        """Like :meth:`solve`, every column in one call of the backend (the caller gathered them on purpose)."""
        ...


# --------------------------------------------------------------------- splu
@dataclass
class SpluFactor:
    """scipy SuperLU factor of K (rows and columns permuted by the symmetric ordering)."""

    lu: spla.SuperLU | None  #: None only for a 0 x 0 matrix
    n: int
    backend: str = "splu"
    note: str = ""
    ritz_estimates: tuple[float, float] | None = None

    def solve(self, b: FloatArray) -> FloatArray:
        b = np.asarray(b, dtype=np.float64)
        _check_rhs(b, self.n)
        if b.size == 0:
            return np.zeros(b.shape)
        assert self.lu is not None
        return np.asarray(self.lu.solve(b))

    solve_block = solve  # SuperLU solves a block of columns in one call anyway

    def pivots(self) -> FloatArray:
        """|U_ii| of the factor (in the permuted order)."""
        return np.abs(self.lu.U.diagonal()) if self.lu is not None else np.zeros(0)


def _splu(K: sp.csr_matrix, note: str = "") -> SpluFactor:
    try:
        lu = spla.splu(
            sp.csc_matrix(K),
            permc_spec="MMD_AT_PLUS_A",
            diag_pivot_thresh=0.0,
            options={"SymmetricMode": True},
        )
    except RuntimeError as exc:  # "Factor is exactly singular"
        raise np.linalg.LinAlgError(str(exc)) from None
    return SpluFactor(lu=lu, n=K.shape[0], note=note)


# ------------------------------------------------------------------ pardiso
class PardisoError(RuntimeError):
    """PARDISO returned an error other than a non-positive pivot."""

    def __init__(self, code: int) -> None:
        self.code = code
        super().__init__(f"PARDISO error {code}: {_PARDISO_ERRORS.get(code, 'unknown')}")


def _pardiso_iparm() -> np.ndarray:
    """PARDISO control parameters for a real SPD matrix (iparm, 1-based numbers as in the MKL manual).

    iparm(1) = 1 values given here; (2) = 2 METIS nested dissection;
    (10) = 13 pivot perturbation 1e-13 (used by indefinite types only);
    (11), (13) = 0 no scaling or matching (an SPD matrix needs none);
    (18) = -1 report the factor's nonzeros; (35) = 1 zero-based indices, so
    that scipy's CSR arrays are passed without a copy.  All others 0
    (defaults).  Intel oneMKL Developer Reference, "pardiso iparm parameter".
    """
    iparm = np.zeros(64, dtype=np.int32)
    iparm[0] = 1
    iparm[1] = 2
    iparm[9] = 13
    iparm[17] = -1
    iparm[34] = 1
    return iparm


def _upper_csr(K: sp.csr_matrix) -> sp.csr_matrix:
    """Upper triangle (diagonal included) of a CSR matrix with sorted indices, with int32 indices.

    A vectorised row mask: several times faster than ``scipy.sparse.triu``,
    which goes through COO and sorts again.
    """
    n = K.shape[0]
    rows = np.repeat(np.arange(n, dtype=np.int32), np.diff(K.indptr))
    keep = K.indices >= rows
    indptr = np.zeros(n + 1, dtype=np.int32)
    np.cumsum(np.bincount(rows[keep], minlength=n), out=indptr[1:])
    indices = np.ascontiguousarray(K.indices[keep], dtype=np.int32)
    data = np.ascontiguousarray(K.data[keep], dtype=np.float64)
    return sp.csr_matrix((data, indices, indptr), shape=K.shape)


@dataclass
class _PardisoHandle:
    """What one call of MKL's ``pardiso`` needs: entry point, handle, parameters and the matrix (upper CSR)."""

    entry: Any  #: ctypes function bound to mkl_rt's pardiso (set up by pypardiso)
    pt: np.ndarray  #: (64,) int64 PARDISO's internal handle
    iparm: np.ndarray  #: (64,) int32 control parameters
    A: sp.csr_matrix  #: upper triangle, int32 zero-based indices
    perm: np.ndarray  #: (0,) int32 unused user permutation

    def call(self, phase: int, b: np.ndarray | None = None) -> np.ndarray | None:
        """Run ``phase`` (12 analyse + factorise, 33 solve, -1 release); b (n, nrhs) Fortran-ordered."""
        c_int32_p = ctypes.POINTER(ctypes.c_int32)
        c_double_p = ctypes.POINTER(ctypes.c_double)
        n = self.A.shape[0] if phase >= 0 else 0
        nrhs = 1 if b is None else b.shape[1]
        rhs = np.zeros(0) if b is None else b
        x = np.zeros(0) if b is None else np.empty(b.shape, order="F")  # PARDISO writes every entry
        err = ctypes.c_int32(0)
        self.entry(
            self.pt.ctypes.data_as(ctypes.POINTER(ctypes.c_int64)),
            ctypes.byref(ctypes.c_int32(1)),  # maxfct
            ctypes.byref(ctypes.c_int32(1)),  # mnum
            ctypes.byref(ctypes.c_int32(2)),  # mtype: real symmetric positive definite
            ctypes.byref(ctypes.c_int32(phase)),
            ctypes.byref(ctypes.c_int32(n)),
            self.A.data.ctypes.data_as(c_double_p),
            self.A.indptr.ctypes.data_as(c_int32_p),
            self.A.indices.ctypes.data_as(c_int32_p),
            self.perm.ctypes.data_as(c_int32_p),
            ctypes.byref(ctypes.c_int32(nrhs)),
            self.iparm.ctypes.data_as(c_int32_p),
            ctypes.byref(ctypes.c_int32(0)),  # msglvl: silent
            rhs.ctypes.data_as(c_double_p),
            x.ctypes.data_as(c_double_p),
            ctypes.byref(err),
        )
        if err.value == -4:
            raise np.linalg.LinAlgError(
                f"PARDISO found a zero or negative pivot at equation {int(self.iparm[29])}: "
                "the matrix is not positive definite"
            )
        if err.value == -2:
            raise MemoryError("PARDISO ran out of memory")
        if err.value != 0:
            raise PardisoError(err.value)
        return x if b is not None else None


#: MKL's conditional numerical reproducibility mode, set before MKL is loaded unless the user chose one
MKL_CBWR_DEFAULT = "AUTO"


def _reproducible_mkl() -> None:
    """Ask MKL for the same floats run after run (``MKL_CBWR=AUTO``), unless ``MKL_CBWR`` is already set.

    Without it PARDISO's threaded factorisation and solves sum in an order that
    changes from run to run, and the last digits of the float results (the
    condition estimate, the backward error, the refinement's iterates) with
    them, so two runs of ``check`` on a grid of 2·10⁴ members gave different
    JSON reports.  Intel's oneMKL Developer Guide (Linux), "Reproducibility
    Conditions" and "Specifying Code Branches": with a CNR branch set and a
    fixed number of threads, results are reproducible from run to run.  AUTO
    keeps the processor's own code path: measured on the 3D lattice of
    197,190 members, factorise 6.2-6.3 s with AUTO against 6.6-8.1 s unset and
    11.2-12.9 s with COMPATIBLE; but a solve of one column costs about 3x
    (0.13 s against 0.043 s, 2D grid of 480,800 members; see
    :data:`_BLOCK_RHS` and README, Performance).  MKL reads the
    variable when it is loaded, so it is set before pypardiso loads it; a
    process that loaded MKL earlier keeps its own mode.
    """
    os.environ.setdefault("MKL_CBWR", MKL_CBWR_DEFAULT)


@functools.cache
def _pardiso_entry() -> Any:
    """MKL's ``pardiso`` as a ctypes function, located once per process.

    pypardiso looks for ``mkl_rt`` with ``ctypes.util.find_library`` and then
    by a recursive search of the whole environment, twice (once at import);
    0.45 s in all.  The MKL wheel puts the library in ``<prefix>/lib``, so
    look there first and hand pypardiso the path through its
    ``PYPARDISO_MKL_RT`` variable (restored afterwards).
    """
    found = sorted(glob.glob(f"{sys.prefix}/lib/libmkl_rt.so*") + glob.glob(f"{sys.prefix}/Library/bin/mkl_rt*.dll"))
    _reproducible_mkl()
    saved = os.environ.get("PYPARDISO_MKL_RT")
    if saved is None and found:
        os.environ["PYPARDISO_MKL_RT"] = min(found, key=len)
    try:
        import pypardiso  # builds a solver at import, so the path must be set before

        return pypardiso.PyPardisoSolver(mtype=2)._mkl_pardiso
    finally:
        if saved is None:
            os.environ.pop("PYPARDISO_MKL_RT", None)


def _release(handle: _PardisoHandle) -> None:
    """Free PARDISO's internal memory of one factor (phase -1)."""
    with contextlib.suppress(Exception):  # releasing must never raise, e.g. at interpreter exit
        handle.call(-1)


#: from this many right-hand sides on, PARDISO solves them as one block, below it column by column.
#: Measured on a 2D grid of 480,800 members, 2 cores (AMD EPYC), MKL 2026.2.1: without MKL's
#: reproducibility branch one column 0.043 s, a block of 2 columns 0.13 s, of 4 0.14 s, of 8
#: 0.15 s; with MKL_CBWR=AUTO (set by _reproducible_mkl) 0.13, 0.18, 0.20 and 0.25 s, so that
#: blocks from 2 columns on would be faster (the certificate stage 1.26-1.30 s -> 0.82-0.86 s),
#: but they raised the whole check's peak memory from 1,220-1,230 MiB to 1,280 MiB (2 runs of 3), 1.50x the
#: floor's, the limit of the target; so the blocks start at 8 (an earlier machine, 2D grid of 10⁶
#: members, no branch: one column 0.18 s, a block of 4 1.24 s, of 8 1.28 s).  Chains of dependent solves that
#: do not depend on each other share their calls through solve_in_lockstep, which always sends one block.
_BLOCK_RHS = 8


class PardisoFactor:
    """MKL PARDISO factor of an SPD matrix, factorised once; every solve re-uses it.

    The factor lives in PARDISO's own memory; it is released (phase -1) when
    this object is garbage-collected.
    """

    backend = "pardiso"
    note = ""
    ritz_estimates: tuple[float, float] | None = None

    def __init__(self, K: sp.csr_matrix) -> None:
        self.n = int(K.shape[0])
        A = _upper_csr(K)
        if not np.diff(A.indptr).all():
            # an empty row crashes PARDISO; it also means the matrix is singular
            raise np.linalg.LinAlgError("a row of the matrix has no entry on or above the diagonal")
        self._h = _PardisoHandle(_pardiso_entry(), np.zeros(64, np.int64), _pardiso_iparm(), A, np.zeros(0, np.int32))
        self._h.call(12)
        self._finalizer = weakref.finalize(self, _release, self._h)

    @property
    def factor_nonzeros(self) -> int:
        """Nonzeros of the Cholesky factor, as reported by PARDISO (iparm(18))."""
        return int(self._h.iparm[17])

    @property
    def peak_memory_kib(self) -> int:
        """PARDISO's peak memory for analysis and factorisation, KiB: max(iparm(15), iparm(16) + iparm(17))."""
        ip = self._h.iparm
        return int(max(ip[14], ip[15] + ip[16]))

    def solve(self, b: FloatArray) -> FloatArray:
        b = np.asarray(b, dtype=np.float64)
        _check_rhs(b, self.n)
        if b.size == 0:
            return np.zeros(b.shape)
        B = b.reshape(self.n, -1)
        if B.shape[1] < _BLOCK_RHS:
            # one column at a time: measured faster than PARDISO's block solve for few columns
            X: np.ndarray = np.empty(B.shape, order="F")
            for j in range(B.shape[1]):
                x = self._h.call(33, np.asfortranarray(B[:, j : j + 1]))
                assert x is not None
                X[:, j] = x[:, 0]
        else:
            # PARDISO reads and writes column-major blocks: a C-ordered block is copied once on the
            # way in; the solution is returned column-major as PARDISO wrote it (no copy on the way out)
            xb = self._h.call(33, np.asfortranarray(B))
            assert xb is not None
            X = xb
        return X.reshape(b.shape) if b.ndim == 2 else X[:, 0]

    def solve_block(self, b: FloatArray) -> FloatArray:
        """Every column in one PARDISO call, however few (:func:`solve_in_lockstep` gathers them)."""
        b = np.asarray(b, dtype=np.float64)
        _check_rhs(b, self.n)
        if b.size == 0:
            return np.zeros(b.shape)
        X = self._h.call(33, np.asfortranarray(b.reshape(self.n, -1)))
        assert X is not None
        return X.reshape(b.shape) if b.ndim == 2 else X[:, 0]


# ------------------------------------------------------------------ cholmod
class CholmodFactor:
    """CHOLMOD factor (cvxopt's bundled SuiteSparse) of an SPD matrix; reads the lower triangle."""

    backend = "cholmod"
    note = ""
    ritz_estimates: tuple[float, float] | None = None

    def __init__(self, K: sp.csr_matrix) -> None:
        import cvxopt
        import cvxopt.cholmod

        self.n = int(K.shape[0])
        self._cvxopt = cvxopt
        self._cholmod = cvxopt.cholmod
        L = sp.tril(K, format="coo")
        A = cvxopt.spmatrix(L.data, L.row.astype(np.int64), L.col.astype(np.int64), size=K.shape)
        cvxopt.cholmod.options["supernodal"] = 2  # always supernodal
        try:
            self._F = cvxopt.cholmod.symbolic(A)
            cvxopt.cholmod.numeric(A, self._F)
        except ArithmeticError as exc:  # CHOLMOD's "not positive definite"
            raise np.linalg.LinAlgError(f"CHOLMOD: the matrix is not positive definite ({exc})") from None

    def solve(self, b: FloatArray) -> FloatArray:
        b = np.asarray(b, dtype=np.float64)
        _check_rhs(b, self.n)
        if b.size == 0:
            return np.zeros(b.shape)
        x = self._cvxopt.matrix(np.asfortranarray(b.reshape(self.n, -1)))
        self._cholmod.solve(self._F, x)
        return np.array(x).reshape(b.shape)

    solve_block = solve  # CHOLMOD solves a block of columns in one call anyway


# --------------------------------------------------------------- lockstep
#: a chain of dependent solves: yields a block of right-hand sides (n,) or (n, k), is sent their solution
#: (same shape), and returns its result (``StopIteration.value``)
SolveChain = Generator[FloatArray, FloatArray, Any]


def solve_in_lockstep(factor: Factor, chains: list[SolveChain]) -> list[Any]:
    """Run independent chains of solves side by side, one backend call per round for all their columns.

    Each chain asks for its next solve only once it has the previous answer (an
    iterative estimator), so chains cannot be merged into one block; but
    chains that do not depend on each other can share each round.  With MKL's
    reproducibility branch a PARDISO call of one column costs about as much as
    one of four (2D grid of 480,800 members, 2 cores, Intel Xeon: one column
    0.16 s, two 0.21 s, four 0.17-0.27 s, eight 0.28-0.34 s; ``_BLOCK_RHS``),
    so a round of several chains costs little more than one chain's step.
    Returns each chain's result, in the order given.
    """
    solve = getattr(factor, "solve_block", factor.solve)
    results: list[Any] = [None] * len(chains)
    pending: dict[int, np.ndarray] = {}

    def advance(i: int, answer: np.ndarray | None) -> None:
        try:
            rhs = next(chains[i]) if answer is None else chains[i].send(answer)
        except StopIteration as stop:
            results[i] = stop.value
            pending.pop(i, None)
            return
        pending[i] = np.asarray(rhs, dtype=np.float64)

    for i in range(len(chains)):
        advance(i, None)
    while pending:
        order = sorted(pending)
        blocks = [pending[i].reshape(factor.n, -1) for i in order]
        X = np.asarray(solve(blocks[0] if len(blocks) == 1 else np.hstack(blocks))).reshape(factor.n, -1)
        start = 0
        for i, blk in zip(order, blocks, strict=True):
            k = blk.shape[1]
            answer = X[:, start : start + k]
            start += k
            advance(i, answer.reshape(pending[i].shape))
    return results


# ------------------------------------------------------------------- select
def _check_rhs(b: np.ndarray, n: int) -> None:
    if b.ndim not in (1, 2) or b.shape[0] != n:
        raise ValueError(f"right-hand side of shape {b.shape} does not match a matrix of order {n}")


def available_backends() -> tuple[str, ...]:
    """Backends usable on this machine, most preferred first (``splu`` always)."""
    names = []
    try:
        _pardiso_entry()
        names.append("pardiso")
    except Exception:  # depends on the machine: no pypardiso, no MKL, not x86-64
        pass
    try:
        import cvxopt.cholmod  # noqa: F401

        names.append("cholmod")
    except Exception:  # optional package not installed
        pass
    names.append("splu")
    return tuple(names)


def factorize(K: sp.spmatrix, backend: str = "auto") -> Factor:
    """Factorise the symmetric positive definite matrix K.

    Parameters
    ----------
    K
        Square sparse matrix, symmetric (``pardiso`` reads the upper triangle only).
    backend
        ``"auto"`` (the first of :func:`available_backends`), ``"pardiso"``,
        ``"cholmod"`` or ``"splu"``.  ``pardiso`` and ``cholmod`` fall back to
        ``splu`` when the library is missing or fails for a reason other than
        the matrix (the reason is kept in ``Factor.note``).

    Raises
    ------
    numpy.linalg.LinAlgError
        when the backend finds K singular or not positive definite.
    ValueError
        for an unknown backend or a non-square matrix.
    """
    if backend not in ("auto", *BACKENDS):
        raise ValueError(f"unknown solver backend {backend!r}; available: {', '.join(available_backends())}")
    K = sp.csr_matrix(K, dtype=np.float64)
    if K.shape[0] != K.shape[1]:
        raise ValueError(f"the matrix must be square, not {K.shape}")
    if not K.has_sorted_indices:
        K = K.copy()
        K.sort_indices()
    if backend == "auto":
        backend = available_backends()[0]
    if backend in ("pardiso", "cholmod") and K.shape[0] > 0:
        try:
            return PardisoFactor(K) if backend == "pardiso" else CholmodFactor(K)
        except (np.linalg.LinAlgError, MemoryError):
            raise
        except Exception as exc:  # library missing or broken: the pure path still works
            return _splu(K, note=f"{backend} unavailable ({type(exc).__name__}: {exc}); used splu")
    if K.shape[0] == 0:
        return SpluFactor(lu=None, n=0)
    return _splu(K)


__all__ = [
    "BACKENDS",
    "CholmodFactor",
    "Factor",
    "PardisoError",
    "PardisoFactor",
    "SpluFactor",
    "available_backends",
    "factorize",
    "solve_in_lockstep",
]
