"""The machinery the diagnosis judges its candidate causes with: predictions, responses by superposition
with the existing factor (block solves, member-chunked reductions), the exact figure of a prediction and
lower bounds of it for many candidates at once, and the search that decides which candidates need the exact
figure.  See :mod:`audit.checks.diagnosis` for the method and :mod:`audit.checks._diagnosis_causes` for the
causes.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np
import scipy.sparse as sp

from audit import stiffness
from audit.checks import _common as cm
from audit.checks.equilibrium import joint_residuals
from audit.context import Context
from audit.findings import Location
from audit.model import CaseResults, FloatArray, Model

#: when no candidate explains the data, at most this many more exact evaluations per family look for the
#: closest one (for the DX001 message); each costs a full-size evaluation, 0.07 s at 10⁶ members
CLOSEST_EVALUATIONS = 8


@dataclass(frozen=True)
class Prediction:
    """What the reported values should be if a candidate cause is the right one."""

    U: FloatArray  #: (n_nodes, dim)
    N: FloatArray  #: (n_members,)
    R: FloatArray  #: (n_nodes, dim)

    def plus(self, other: Prediction, t: float = 1.0) -> Prediction:
        return Prediction(self.U + t * other.U, self.N + t * other.N, self.R + t * other.R)


@dataclass(frozen=True)
class Candidate:
    code: str
    message: str
    location: Location
    #: largest |difference|/allowed over every reported quantity after the correction; when ``exact`` is
    #: False, a lower bound of it (from a sample of the quantities), enough to show the candidate fails and
    #: is not the closest one
    worst: float
    data: tuple[tuple[str, Any], ...]
    exact: bool = True


#: quantities of each kind in the sample the lower bounds are taken over (the worst of the base comparison)
SAMPLE = 2048
#: relative slack on the lower bounds, for the rounding of the block products against the column ones
SLACK = 1e-9
#: members per chunk when a block of responses is reduced over all members (bounds the memory held)
CHUNK = 1 << 16
#: right-hand sides per call of the factor's solve, at least (its copies of the block are bounded by this many
#: columns or by ``SOLVE_BUDGET``, whichever allows more)
SOLVE_COLUMNS = 16
#: entries (float64) of one copy of a block of right-hand sides: a call of the factor's solve takes as many
#: columns as fit in it (16 MiB × 8), since a direct solve reads the whole factor once per call and more
#: columns per call cost less each (PARDISO, 2 cores: 3-D lattice of 2·10⁵ members, 50 ms for one column,
#: 21 ms per column in a block of 16, 15 ms in a block of 32; ``benchmarks/bench_diagnosis.py``)
SOLVE_BUDGET = 1 << 24


@dataclass(frozen=True)
class Needs:
    """Columns a family will ask the :class:`Superposition` for, so that they are solved in one block."""

    members: tuple[int, ...] = ()  #: ``K⁻¹ b`` of these members (:meth:`Superposition.member_columns`)
    dofs: tuple[int, ...] = ()  #: ``K⁻¹ e`` of unit forces on these global dofs (:meth:`Superposition.dof_columns`)
    restraints: tuple[int, ...] = ()  #: unit settlements of these restraints (:meth:`Superposition.settlements`)

    def __or__(self, other: Needs) -> Needs:
        return Needs(self.members + other.members, self.dofs + other.dofs, self.restraints + other.restraints)


def block_widths(total: int, n_rows: int) -> list[int]:
    """Widths of the calls a block of ``total`` right-hand sides of ``n_rows`` is solved in: as few calls as
    ``SOLVE_COLUMNS`` / ``SOLVE_BUDGET`` allow, of equal widths (a narrow remainder would cost a call of its
    own at the full price of reading the factor)."""
    if total <= 0:
        return []
    per = max(SOLVE_COLUMNS, SOLVE_BUDGET // max(n_rows, 1))
    calls = -(-total // per)
    base, extra = divmod(total, calls)
    return [base + (1 if i < extra else 0) for i in range(calls)]


class Superposition:
    """Responses of the model by superposition with the existing factor of the restrained K."""

    def __init__(self, ctx: Context) -> None:
        assert ctx.factor is not None
        self.model = ctx.model
        self.T = ctx.system.T
        self.U_p = ctx.system.U_p
        self.system = ctx.system
        self.factor = ctx.factor
        self.B = stiffness.compatibility_matrix(ctx.model)
        self.L = ctx.model.lengths()
        self.k = ctx.model.E * ctx.model.A / self.L  #: EA/L, as Model.axial_stiffness
        self.mask = np.zeros(ctx.model.n_nodes, dtype=bool)
        self.mask[ctx.system.supported_nodes] = True
        self._chunks: list[tuple[int, int, Any]] | None = None
        #: the last block solved by :meth:`prefetch`: (members, dofs, restraints, columns in that order)
        self._blocks: tuple[list[int], list[int], list[int], FloatArray] | None = None
        self._free: Any

    def displacements(self, F: FloatArray) -> FloatArray:
        """(n_dofs, c) displacements under global load columns F (dense or sparse; restraints held): one
        block solve.  Without inclined supports T only selects the free dofs, and is applied as a selection."""
        free = self._free_rows()
        if F.ndim == 1:
            return self.displacements(F.reshape(-1, 1)).ravel()
        if sp.issparse(F):
            F = sp.csc_matrix(F)
        out = np.zeros((self.T.shape[0], F.shape[1]))
        # a few wide calls (block_widths): the solve's own copies of the block stay within SOLVE_BUDGET
        c0 = 0
        for width in block_widths(F.shape[1], self.T.shape[1]):
            Fc = F[:, c0 : c0 + width]
            if free is None:
                rhs = self.T.T @ Fc
                rhs = rhs.toarray() if sp.issparse(rhs) else np.asarray(rhs)
                out[:, c0 : c0 + rhs.shape[1]] = self.T @ self.factor.solve(rhs).reshape(rhs.shape)
            else:
                rhs = self._free_part(Fc) if sp.issparse(Fc) else np.asarray(Fc)[free]
                out[free, c0 : c0 + rhs.shape[1]] = self.factor.solve(rhs).reshape(rhs.shape)
            c0 += width
        return out

    def prefetch(self, needs: Needs) -> None:
        """Solve every column of ``needs`` not solved before in one block (a few wide calls of the factor's
        solve instead of one or more per family); later calls of :meth:`member_columns`, :meth:`dof_columns`
        and :meth:`settlements` read them.  The numbers are those of the separate solves (each column is the
        same right-hand side solved with the same factor)."""
        mz: dict[int, FloatArray] = self.__dict__.setdefault("_member_z", {})
        dz: dict[int, FloatArray] = self.__dict__.setdefault("_dof_z", {})
        sz: dict[int, FloatArray] = self.__dict__.setdefault("_settle_z", {})
        ms = sorted({int(m) for m in needs.members} - mz.keys())
        ds = sorted({int(i) for i in needs.dofs} - dz.keys())
        rs = sorted({int(r) for r in needs.restraints} - sz.keys())
        if not (ms or ds or rs):
            return
        nd = self.T.shape[0]
        parts = [self.B[ms].T.tocsc()] if ms else []
        if ds:
            parts.append(sp.csc_matrix((np.ones(len(ds)), (ds, np.arange(len(ds)))), shape=(nd, len(ds))))
        if rs:
            parts.append(self._settlement_rhs(rs))
        Z = self.displacements(sp.hstack(parts, format="csc"))
        if rs:
            Z[:, len(ms) + len(ds) :] += self.U_p[:, rs].toarray()
        Z.setflags(write=False)  # the caches hold views of it
        self._blocks = (ms, ds, rs, Z)
        for c, key in enumerate([*ms, *ds, *rs]):
            (mz if c < len(ms) else dz if c < len(ms) + len(ds) else sz)[key] = Z[:, c]

    def _settlement_rhs(self, restraints: list[int]) -> Any:
        """``−(K + K_springs) S`` for unit settlements S of ``restraints`` (their restrained part)."""
        S = sp.csc_matrix(self.U_p[:, restraints])
        return sp.csc_matrix(-(self.system.K @ S + self.system.K_springs @ S))

    def settlements(self, restraints: Any) -> FloatArray:
        """(n_dofs, len(restraints)) displacements under a unit settlement of each restraint (the others held):
        ``S − K⁻¹ (K + K_springs) S``, one block solve for those not solved before (:meth:`prefetch`)."""
        cache: dict[int, FloatArray] = self.__dict__.setdefault("_settle_z", {})
        rs = [int(r) for r in restraints]
        todo = sorted(set(rs) - cache.keys())
        if todo:
            Z = self.displacements(self._settlement_rhs(todo)) + self.U_p[:, todo].toarray()
            Z.setflags(write=False)
            for c, r in enumerate(todo):
                cache[r] = Z[:, c]
            if todo == rs:
                return Z
        return self._stacked(cache, rs, 2)

    def _stacked(self, cache: dict[int, FloatArray], keys: list[int], kind: int) -> FloatArray:
        """The cached columns of ``keys`` side by side: a view of the prefetched block when they lie in it
        as one run in that order, else a stacked copy."""
        if not keys:
            return np.zeros((self.T.shape[0], 0))
        if self._blocks is not None:
            ms, ds, rs, Z = self._blocks
            own = (ms, ds, rs)[kind]
            if keys[0] in own:
                i = own.index(keys[0])
                if own[i : i + len(keys)] == keys:
                    at = (0, len(ms), len(ms) + len(ds))[kind] + i
                    return Z[:, at : at + len(keys)]
        return np.column_stack([cache[k] for k in keys])

    def member_columns(self, members: Any) -> FloatArray:
        """(n_dofs, len(members)) ``z = K⁻¹ b`` of each member's compatibility row b: one block solve for the
        members not solved before by this object (the single-cause search and the multi-cause fit share them)."""
        cache: dict[int, FloatArray] = self.__dict__.setdefault("_member_z", {})
        todo = [int(m) for m in members if int(m) not in cache]
        if todo:
            Z = self.displacements(self.B[todo].T.toarray())
            Z.setflags(write=False)  # the cache holds views of it
            for c, m in enumerate(todo):
                cache[m] = Z[:, c]
            if todo == [int(m) for m in members]:
                return Z  # every column new, in the order asked: no stacked copy
        return self._stacked(cache, [int(m) for m in members], 0)

    def dof_columns(self, dofs: Any) -> FloatArray:
        """(n_dofs, len(dofs)) ``K⁻¹ e`` of a unit force on each global dof (restraints held): one block solve
        for the dofs not solved before (loads, supports added and inclined supports share them)."""
        cache: dict[int, FloatArray] = self.__dict__.setdefault("_dof_z", {})
        todo = sorted({int(i) for i in dofs if int(i) not in cache})
        if todo:
            E = sp.csc_matrix((np.ones(len(todo)), (todo, np.arange(len(todo)))), shape=(self.T.shape[0], len(todo)))
            Z = self.displacements(E)
            Z.setflags(write=False)  # the cache holds views of it
            for c, i in enumerate(todo):
                cache[i] = Z[:, c]
            if todo == [int(i) for i in dofs]:
                return Z  # every column new, in the order asked: no stacked copy
        return self._stacked(cache, [int(i) for i in dofs], 1)

    def joint_residuals(self, loads: FloatArray, obs: CaseResults) -> tuple[FloatArray, FloatArray, FloatArray]:
        """:func:`audit.checks.equilibrium.joint_residuals` of the reported results, once per (loads, results)
        pair (the balance test and the load candidates of both searches read the same)."""
        memo: dict[tuple[int, int], Any] = self.__dict__.setdefault("_residuals", {})
        key = (id(loads), id(obs))
        if key not in memo:
            # the pair is held, so that the ids stay valid
            memo[key] = (loads, obs, joint_residuals(self.model, loads, obs, self.B))
        return memo[key][2]

    def _free_part(self, F: Any) -> FloatArray:
        """The free rows of sparse load columns as a dense column-major block (the layout the factor's solve
        reads), written entry by entry: no sparse row selection and no copy into column-major order."""
        free = self._free_rows()
        if not hasattr(self, "_free_pos"):
            self._free_pos = np.full(self.T.shape[0], -1, dtype=np.int64)
            self._free_pos[free] = np.arange(free.size)
        Fo = sp.coo_matrix(F)
        Fo.sum_duplicates()
        at = self._free_pos[Fo.row]
        keep = at >= 0
        rhs = np.zeros((free.size, F.shape[1]), order="F")
        rhs[at[keep], Fo.col[keep]] = Fo.data[keep]
        return rhs

    def _free_rows(self) -> Any:
        """The global dof of each reduced dof when T is a pure selection (one 1 per row and column), else None."""
        if not hasattr(self, "_free"):
            T = sp.csr_matrix(self.T)
            self._free = None
            if T.nnz == T.shape[1] and np.all(T.data == 1.0) and np.all(np.diff(T.indptr) <= 1):
                rows = np.repeat(np.arange(T.shape[0]), np.diff(T.indptr))
                free = np.empty(T.shape[1], dtype=np.int64)
                free[T.indices] = rows
                if T.shape[1] == 0 or int(np.bincount(T.indices, minlength=T.shape[1]).max()) == 1:
                    self._free = free
        return self._free

    def columns_of(self, rows_R: Any) -> Any:
        """B's columns of the flat dof indices ``rows_R`` (CSR, all members), once per distinct ``rows_R`` (the
        fit's responses read the same reaction rows for every family)."""
        memo: dict[bytes, Any] = self.__dict__.setdefault("_columns_of", {})
        key = np.asarray(rows_R, dtype=np.int64).tobytes()
        if key not in memo:
            if not hasattr(self, "_Bc"):
                self._Bc = self.B.tocsc()  # column slices of CSC are cheap
            memo[key] = self._Bc[:, np.asarray(rows_R, dtype=np.int64)].tocsr()
        return memo[key]

    def forces_on_rows(self, X: FloatArray, rows_R: Any) -> FloatArray:
        """``Bᵀ (k∘(B X))`` on the flat dof indices ``rows_R``, from the members that meet them only."""
        BR = self.columns_of(rows_R)
        members = np.flatnonzero(np.diff(BR.indptr))
        if members.size == 0:
            return np.zeros((len(rows_R), X.shape[1]))
        Y = self.k[members, None] * (self.B[members] @ X)
        return np.asarray(BR[members].T @ Y)

    def response(self, dU: FloatArray, dN: FloatArray, dF: FloatArray, mask: cm.BoolArray | None = None) -> Prediction:
        """Prediction increment from a displacement increment, member force increment and load increment."""
        m = self.mask if mask is None else mask
        d = self.model.dim
        dR = (self.B.T @ dN - dF).reshape(-1, d)
        dR[~m] = 0.0
        return Prediction(dU.reshape(-1, d), dN, dR)

    def chunks(self) -> list[tuple[int, int, Any]]:
        if self._chunks is None:
            n = self.model.n_members
            self._chunks = [(i, min(i + CHUNK, n), self.B[i : min(i + CHUNK, n)]) for i in range(0, n, CHUNK)]
        return self._chunks

    def force_stats(
        self,
        X: FloatArray,
        rows_R: Any,
        sign: float = 1.0,
        extra: tuple[Any, Any] | None = None,
        weights: tuple[FloatArray, FloatArray] | None = None,
    ) -> tuple[FloatArray, FloatArray, FloatArray, FloatArray]:
        """Reductions over all members of the member-force columns ``Y = sign · k∘(B X) (+1 at extra)``,
        one member chunk at a time (the (n_members, c) matrix is never held).

        Returns (column max |Y|, ``Bᵀ Y`` on the flat dof indices ``rows_R``, ``w·Y`` and ``o·Y²`` for
        ``weights = (w, o)``, zeros without).  ``extra = (members, columns)`` adds 1 at those entries (the
        unit extra force of the member candidates).
        """
        c = X.shape[1]
        colmax = np.zeros(c)
        BR = self.columns_of(rows_R) if len(rows_R) else None
        btn = np.zeros((len(rows_R), c))
        num = np.zeros(c)
        den = np.zeros(c)
        for i0, i1, Bc in self.chunks():
            Y = Bc @ X
            Y *= (sign * self.k[i0:i1])[:, None]
            if extra is not None:
                sel = (extra[0] >= i0) & (extra[0] < i1)
                Y[extra[0][sel] - i0, extra[1][sel]] += 1.0
            colmax = np.maximum(colmax, np.maximum(np.max(Y, axis=0), -np.min(Y, axis=0)))
            if BR is not None:
                btn += BR[i0:i1].T @ Y
            if weights is not None:
                num += weights[0][i0:i1] @ Y
                den += np.einsum("i,ij,ij->j", weights[1][i0:i1], Y, Y)
        return colmax, btn, num, den


def colmax(X: FloatArray) -> FloatArray:
    """Column max |X| of an (n, c) matrix (0 for no rows)."""
    if X.shape[0] == 0:
        return np.zeros(X.shape[1])
    return np.maximum(np.max(X, axis=0), -np.min(X, axis=0))


class Evaluator:
    """Largest |reported − predicted| / allowed over every reported quantity, for many candidate predictions.

    The same rule as :func:`audit.checks.recompute.compare_case` (scales per kind from the prediction and the
    case's actions), with the reported values, quanta and masks prepared once.

    :meth:`worst` is the exact figure for one full prediction.  :meth:`lower_bounds` gives, for a block of
    candidates at once, a lower bound of it from the predictions on a sample of the reported quantities (the
    ``SAMPLE`` worst of each kind in the base comparison) and an upper bound of each prediction's largest
    |value| (the allowance grows with the scale, so a larger scale can only lower the ratio).  A candidate
    whose bound exceeds 1 fails without its exact figure being needed.
    """

    def __init__(
        self, model: Model, actions: cm.CaseActions, obs: CaseResults, tol: Any, base: Prediction | None = None
    ) -> None:
        self.tol = tol
        self.actions = actions
        self.parts = []
        self.sample: dict[str, tuple[Any, Any]] = {}
        self.base_max: dict[str, float] = {}
        load_scale = cm.scale_of(actions.loads)
        self.action_scale = {
            "U": actions.length_scale,
            "N": actions.force_scale,
            "R": max(load_scale, actions.force_scale),
        }
        for key, vals, q, has in (
            ("U", obs.displacements, obs.displacement_quantum, obs.has_displacements),
            ("N", obs.axial_forces, obs.axial_force_quantum, obs.has_axial_forces),
            ("R", obs.reactions, obs.reaction_quantum, obs.has_reactions),
        ):
            flat = np.ravel(vals)
            idx = np.flatnonzero(np.isfinite(flat)) if has else np.zeros(0, dtype=np.int64)
            quantum = np.nan_to_num(np.ravel(q)[idx], nan=0.0) if tol.use_quanta else np.zeros(idx.size)
            self.parts.append((key, idx, flat[idx], quantum, cm.scale_of(flat[idx])))
            pos = np.arange(idx.size)
            if base is not None:
                b = np.ravel(getattr(base, key))
                self.base_max[key] = cm.scale_of(b)
                if idx.size > SAMPLE:
                    p = b[idx]
                    ratio = np.abs(flat[idx] - p) / (quantum + tol.relative * np.abs(p) + 1e-300)
                    pos = np.sort(np.argpartition(-np.nan_to_num(ratio, nan=np.inf), SAMPLE)[:SAMPLE])
            self.sample[key] = (pos, idx[pos])

    def reports(self, key: str) -> bool:
        """Whether any quantity of the kind is reported."""
        return any(k == key and idx.size > 0 for k, idx, *_rest in self.parts)

    def rows(self, key: str) -> Any:
        """Flat indices of the sampled quantities of a kind."""
        return self.sample[key][1]

    def allowance(self, key: str, p: Any, idx: Any, q: Any, rep_scale: float) -> Any:
        """Allowance of the reported quantities ``idx`` of a kind against the predicted values ``p`` (flat).

        ``quantum + max(relative·|p|, floor·scale)`` (:meth:`audit.tolerances.Tolerances.allowed`), the scale
        being the kind's largest value (reactions also against the loads), or the reported one's when zero.
        """
        a, tol = self.actions, self.tol
        if key == "U":
            scale = cm.first_nonzero(max(cm.scale_of(p), a.length_scale), rep_scale)
        elif key == "R":
            scale = cm.first_nonzero(max(cm.scale_of(p, a.loads), a.force_scale), rep_scale)
        else:
            scale = cm.first_nonzero(max(cm.scale_of(p), a.force_scale), rep_scale)
        return np.maximum(q + np.maximum(tol.relative * np.abs(p[idx]), tol.floor * scale), 1e-300)

    def worst(self, pred: Prediction) -> float:
        out = 0.0
        for key, idx, rep, q, rep_scale in self.parts:
            if idx.size == 0:
                continue
            p = np.ravel(getattr(pred, key))
            allowed = self.allowance(key, p, idx, q, rep_scale)
            out = max(out, float(np.max(np.abs(rep - p[idx]) / allowed)))
        return out

    def lower_bounds(self, sub: dict[str, FloatArray], pmax: dict[str, FloatArray]) -> FloatArray:
        """(c,) lower bounds of :meth:`worst` for c candidates.

        ``sub[key]`` (n_sample, c): each candidate's predicted values on :meth:`rows` of the kind;
        ``pmax[key]`` (c,): an upper bound of each candidate's largest finite |predicted value| of the kind.
        A kind left out of ``pmax`` is left out of the bound (which stays a lower bound).
        """
        tol = self.tol
        c = next(iter(pmax.values())).shape[0]
        out = np.zeros(c)
        for key, idx, rep, q, rep_scale in self.parts:
            if idx.size == 0 or key not in pmax:
                continue
            pos, _rows = self.sample[key]
            a = self.action_scale[key]
            ub = np.maximum(pmax[key], a)
            if a == 0.0:
                ub = np.maximum(ub, rep_scale)  # a zero prediction falls back on the reported scale
            s = sub[key]
            allowed = q[pos][:, None] + np.maximum(tol.relative * np.abs(s), tol.floor * ub[None, :])
            r = np.abs(rep[pos][:, None] - s) / np.maximum(allowed, 1e-300)
            if r.shape[0]:
                out = np.maximum(out, np.max(r, axis=0))
        return out * (1.0 - SLACK)


class Search:
    """Which candidates need their exact figure, over the families tried in order (members, supports, loads).

    Every candidate whose lower bound is at most 1 is evaluated exactly (it may explain the results).  While
    no candidate has explained them, the closest one must be known exactly too: each family evaluates its
    candidates in increasing order of the bound until the next bound exceeds the best figure found so far.
    Every other candidate keeps its bound (``Candidate.exact`` False), which is above 1 and above the
    closest figure, so the selection made from the list is the same as with every figure exact.
    """

    def __init__(self, closest: bool = True) -> None:
        #: candidates whose lower bound is ≤ 1 are always evaluated exactly, so a cause that explains the data
        #: is never missed; ``closest`` False skips the search for the closest non-fitting candidate (the
        #: diagnosis quotes the multi-cause fit's closest set in DX001, never the single search's)
        self.closest = closest
        self.good_found = False
        self.best = np.inf
        self.exact_evaluations = 0

    def settle(self, lbs: FloatArray, exact: Callable[[int], float]) -> tuple[FloatArray, cm.BoolArray]:
        """(figures, exact?) for a family's candidates from their lower bounds and the exact evaluator."""
        worst = np.array(lbs, dtype=np.float64)
        done = np.zeros(worst.size, dtype=bool)
        for j in np.flatnonzero(worst <= 1.0).tolist():
            worst[j] = exact(j)
            done[j] = True
        self.exact_evaluations += int(done.sum())
        if np.any(worst[done] <= 1.0):
            self.good_found = True
        if not self.good_found and self.closest:
            block_best = float(np.min(worst[done])) if done.any() else np.inf
            closest_left = CLOSEST_EVALUATIONS
            for j in np.lexsort((np.arange(worst.size), worst)).tolist():
                if done[j]:
                    continue
                if worst[j] > block_best or worst[j] >= self.best or closest_left == 0:
                    break
                closest_left -= 1
                worst[j] = exact(j)
                done[j] = True
                self.exact_evaluations += 1
                block_best = min(block_best, float(worst[j]))
            self.best = min(self.best, block_best)
        return worst, done


#: differing numbers of each kind (the worst) used as witnesses by :func:`witness_screen`
WITNESSES = 6
#: the rounding margin of a witness, per unit of the response's size bound, at least this (see witness_screen)
WITNESS_ROUNDING = 1e-8


def witness_screen(
    ctx: Context, ev: Evaluator, base: Prediction, solver: Superposition, F: Any, C: FloatArray
) -> cm.BoolArray:
    """(c,) False for each candidate ``base + response(F) @ C[:, j]`` (F load columns, restraints held) that a
    few differing numbers prove cannot explain the results (its exact figure exceeds 1); True otherwise.

    The witnesses are the worst differing member forces and displacements of the base comparison.  The change
    of each under every load column comes from the symmetry of the restrained flexibility G = T K_r⁻¹ Tᵀ, as
    one solve per witness instead of one per column: ``ΔN_m = k_m (G b_m)ᵀ F`` (``G b_m`` is the member's
    column of :meth:`Superposition.member_columns`, shared with the fit) and ``ΔU_i = (G e_i)ᵀ F``.

    The allowance of a witness depends on the kind's largest predicted value S, not known here; but when
    every number of the kind is reported, a candidate that fits has ``|p| ≤ |r| + q + rel·|p| + floor·S`` at
    every one, so ``S ≤ S⁺ = max(action scale, (max|r| + max q) / (1 − rel − floor))`` (and the reported scale,
    used when S is 0, is below S⁺ too).  A witness with ``|r − p| − δ > q + max(rel·(|p| + δ), floor·S⁺)``
    therefore proves that the candidate does not fit.  δ bounds the difference between the witness's value
    and the one the candidate's own solve gives (both forward errors are about cond·eps of the response's
    size, ``|G w|∞ ‖F‖₁``): ``δ = max(WITNESS_ROUNDING, 10⁴·eps·cond) · |G w|∞ ‖F‖₁`` summed over the columns.
    Without a finite condition estimate, or a kind not wholly reported, nothing is dropped on that ground.
    """
    c = C.shape[1]
    alive = np.ones(c, dtype=bool)
    cond = float(getattr(ctx, "condition", np.nan))
    if c == 0 or not np.isfinite(cond) or F.shape[1] == 0:
        return alive
    eta = max(WITNESS_ROUNDING, 1e4 * np.finfo(np.float64).eps * cond)
    tol, model = ev.tol, solver.model
    Fd = sp.csc_matrix(F)
    f1 = np.asarray(abs(Fd).sum(axis=0)).ravel()  # ‖F_col‖₁
    aC = np.abs(C)
    for key, idx, rep, q, _rep_scale in ev.parts:
        total = model.n_members if key == "N" else model.n_nodes * model.dim
        if key == "R" or idx.size == 0 or idx.size != total:
            continue
        p = np.ravel(getattr(base, key))
        e = np.abs(rep - p[idx]) / ev.allowance(key, p, idx, q, _rep_scale)
        failing = np.flatnonzero(e > 1.0)
        if failing.size == 0:
            continue
        pos = failing[np.argsort(-e[failing], kind="stable")][:WITNESSES]
        flat = idx[pos]
        W = solver.member_columns(flat) * solver.k[flat][None, :] if key == "N" else solver.dof_columns(flat)
        D = np.asarray(Fd.T @ W).T @ C  # (witnesses, c): each candidate's change at each witness
        delta = eta * (colmax(W)[:, None] * f1[None, :]) @ aC
        pw = p[flat][:, None] + D
        room = 1.0 - tol.relative - tol.floor
        if room <= 0.0:
            continue
        s_up = max(ev.action_scale[key], (float(np.max(np.abs(rep))) + float(np.max(q))) / room)
        allowed = q[pos][:, None] + np.maximum(tol.relative * (np.abs(pw) + delta), tol.floor * s_up)
        proved = np.abs(rep[pos][:, None] - pw) - delta > allowed * (1.0 + SLACK)
        alive &= ~np.any(proved, axis=0)
    return alive


def reaction_rows(ev: Evaluator, solver: Superposition, extra_nodes: Any = ()) -> tuple[Any, Any]:
    """Flat dof indices where a candidate's reactions may differ from the base (the supported nodes' and
    ``extra_nodes``') together with the sampled reported reactions; and the positions of the sample in them."""
    d = solver.model.dim
    nodes = np.union1d(np.flatnonzero(solver.mask), np.asarray(extra_nodes, dtype=np.int64))
    dofs = (nodes[:, None] * d + np.arange(d)).ravel()
    rows = np.union1d(dofs, ev.rows("R")).astype(np.int64)
    return rows, np.searchsorted(rows, ev.rows("R"))


def unbalanced_joints(
    ctx: Context, ev: Evaluator, solver: Superposition, loads: FloatArray, obs: CaseResults, change: float
) -> Any:
    """The unsupported joints whose reported member forces prove that no candidate keeping the model's load
    there explains the results: (k,) node indices, sorted (empty when nothing is proved).

    A candidate of the single-cause search (one member's EA, a support added or released, a load missing,
    doubled or moved) predicts the solution of a changed structure under changed loads, so at every joint it
    leaves unsupported and unloaded-by-the-change the predicted forces balance the model's load:
    ``f_j − B_jᵀ N_p = ε_j`` (ε the rounding of the superposition) and the predicted reaction is 0.  If the
    candidate explains the results, every reported force at the joint is within its allowance A_m of N_p, so
    the joint residual of the reported forces ``ρ_j = f_j + r_j − B_jᵀ N`` (:func:`audit.checks.equilibrium.
    joint_residuals`, with r_j = 0: a joint with a nonzero reported reaction is not used) obeys
    ``|ρ_j,a| ≤ Σ_m |B_m,ja| A_m + |ε_j,a|`` on every axis a.  A joint where it does not is proved
    unbalanced: only a candidate that changes the load at that joint (or supports it) can explain the results.

    A_m depends on the predicted N_p, not known here: with every member force reported, a candidate that
    fits has ``|N_p| ≤ |r| + A`` everywhere, so the kind's scale is at most
    ``S⁺ = max(action scale, (max|r| + max q) / (1 − rel − floor))`` (as in :func:`witness_screen`) and
    ``A_m = q + max(rel·|N_p|, floor·S) ≤ A⁺_m = max((q + rel·|r_m|) / (1 − rel), q + floor·S⁺)``.
    ε bounds the rounding of the base equilibrium and of a solve with the factor (a backward-stable solve's
    residual is about cond·eps of ``‖Δf‖``): ``|ε_j| ≤ η (m_j + change)`` with ``η = max(WITNESS_ROUNDING,
    10⁴·eps·cond)``, ``m_j`` the magnitude of the terms at the joint (loads and ``|B|ᵀ(|r| + A⁺)``) and
    ``change`` an upper bound of the 1-norm of the candidates' load change.  Without every member force
    reported, or a finite condition estimate, nothing is proved.
    """
    none = np.zeros(0, dtype=np.int64)
    cond = float(getattr(ctx, "condition", np.nan))
    tol, model = ev.tol, solver.model
    part = next((p for p in ev.parts if p[0] == "N"), None)
    if part is None or not np.isfinite(cond) or not obs.has_axial_forces:
        return none
    _key, idx, rep, q, _rep_scale = part
    room = 1.0 - tol.relative - tol.floor
    if idx.size != model.n_members or room <= 0.0 or tol.relative >= 1.0:
        return none
    s_up = max(ev.action_scale["N"], (float(np.max(np.abs(rep))) + float(np.max(q))) / room)
    a_up = np.maximum((q + tol.relative * np.abs(rep)) / (1.0 - tol.relative), q + tol.floor * s_up)
    absBT = abs(solver.B).T
    d = model.dim
    bound = (absBT @ a_up).reshape(-1, d)
    eta = max(WITNESS_ROUNDING, 1e4 * np.finfo(np.float64).eps * cond)
    magnitude = np.abs(loads) + (absBT @ (np.abs(rep) + a_up)).reshape(-1, d)
    res = solver.joint_residuals(loads, obs)[0]
    R = cm.effective_reactions(model, obs)
    usable = ~solver.mask & np.all(np.isfinite(res), axis=1) & np.all(R == 0.0, axis=1)
    with np.errstate(invalid="ignore"):
        proved = np.abs(res) - eta * (magnitude + change) > bound * (1.0 + SLACK)
    return np.flatnonzero(usable & np.any(proved, axis=1))
