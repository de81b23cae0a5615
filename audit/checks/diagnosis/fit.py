"""The multi-cause fit: the smallest set of causes (up to ``MAX_CAUSES``) that explains every reported number.

Every candidate cause is a predicted change of the reported numbers (:class:`audit.checks.diagnosis.base.Cause`).
The residual ``reported − recomputed`` is measured on a set of rows (:class:`Rows`: the numbers that differ,
all components of their joints, and the numbers closest to differing), each in units of its own allowance
(:meth:`audit.tolerances.Tolerances.allowed`, taken at the recomputed value).  A set of causes is fitted by
weighted least squares of all their parameters together (slips take their row out of the fit; fixed changes
are subtracted) and *explains* the rows when every remaining residual is at most one allowance.

The search is greedy with refitting (a beam of ``BEAM`` sets per size): sets of one cause, then two, then
three, each set extended by every candidate and refitted.  Of the sets of the smallest size that explain the
rows, the simplest wins (:data:`audit.checks.diagnosis.base.RANK_STRUCTURAL` and the rule there), and it is
then checked exactly over *every* reported number with its full-size prediction
(:meth:`audit.checks.diagnosis.block.Evaluator.worst`); a set that fails the exact check is dropped and the next
tried.  When no set explains the numbers the closest one is returned with what it leaves unexplained.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
import scipy.sparse as sp

from audit.checks import _common as cm
from audit.checks.diagnosis.base import RANK_SLIP, RANK_STRUCTURAL, Cause
from audit.checks.diagnosis.block import Evaluator, Needs, Prediction, Superposition
from audit.model import CaseResults, FloatArray

#: at most this many causes in one explanation
MAX_CAUSES = 3
#: sets kept per size in the greedy search
BEAM = 6
#: rows kept per kind among the differing numbers (worst first) and among the closest to differing
ROWS_FAILING = 4096
ROWS_NEAR = 512
#: slips tried per extension: the rows with the largest remaining residual
SLIPS_PER_STEP = 4
#: exact checks of the best sets before giving up
EXACT_TRIES = 12
KEYS = ("U", "N", "R")
#: above this many dofs, at most LARGE_LIMIT candidates per family in the fit (see Problem.limit)
LARGE_DOFS = 20000
LARGE_LIMIT = 12


class Rows:
    """The reported numbers the fit works on, with the base (recomputed) values and allowances.

    ``kind[i]`` (0 U, 1 N, 2 R) and ``flat[i]`` (flat index into that kind's array) name row i; ``y`` the
    reported value, ``b`` the recomputed one, ``a`` the allowance, ``e = (y − b)/a``.
    """

    def __init__(self, ev: Evaluator, base: Prediction, dim: int) -> None:
        kinds, flats, ys, bs, as_, full_fail = [], [], [], [], [], {}
        self.n_failing = 0
        for key, idx, rep, q, rep_scale in ev.parts:
            if idx.size == 0:
                full_fail[key] = np.zeros(0, dtype=np.int64)
                continue
            k = KEYS.index(key)
            p = np.ravel(getattr(base, key))
            sub = p[idx]
            allowed = ev.allowance(key, p, idx, q, rep_scale)
            e = (rep - sub) / allowed
            ae = np.abs(e)
            failing = np.flatnonzero(ae > 1.0)
            self.n_failing += int(failing.size)
            full_fail[key] = idx[failing]
            if failing.size > ROWS_FAILING:
                failing = failing[np.argpartition(-ae[failing], ROWS_FAILING)[:ROWS_FAILING]]
            pos = set(failing.tolist())
            if key != "N" and failing.size:
                # every component of a joint with a differing one (swaps at a joint need them all)
                nodes = np.unique(idx[failing] // dim)
                want = (nodes[:, None] * dim + np.arange(dim)).ravel()
                where = np.searchsorted(idx, want)
                ok = where < idx.size
                where = where[ok]
                pos.update(where[idx[where] == want[ok]].tolist())
            passing = np.flatnonzero(ae <= 1.0)
            if passing.size > ROWS_NEAR:
                near = passing[np.argpartition(-ae[passing], ROWS_NEAR)[:ROWS_NEAR]]
                big = passing[np.argpartition(-np.abs(sub[passing]), ROWS_NEAR)[:ROWS_NEAR]]
                pos.update(near.tolist())
                pos.update(big.tolist())
            else:
                pos.update(passing.tolist())
            sel = np.array(sorted(pos), dtype=np.int64)
            kinds.append(np.full(sel.size, k, dtype=np.int64))
            flats.append(idx[sel])
            ys.append(rep[sel])
            bs.append(sub[sel])
            as_.append(allowed[sel])
        cat = lambda xs, dt: np.concatenate(xs).astype(dt) if xs else np.zeros(0, dtype=dt)  # noqa: E731
        self.kind = cat(kinds, np.int64)
        self.flat = cat(flats, np.int64)
        self.y = cat(ys, np.float64)
        self.b = cat(bs, np.float64)
        self.a = cat(as_, np.float64)
        self.e = (self.y - self.b) / self.a
        self.dim = dim
        self.failing_flat = full_fail  #: per kind, the flat indices of every differing number
        self.lookup: dict[str, dict[int, int]] = {}  #: per kind, row position of each flat index (filled lazily)

    def __len__(self) -> int:
        return int(self.kind.size)

    def of(self, key: str) -> Any:
        """Row positions of a kind."""
        return np.flatnonzero(self.kind == KEYS.index(key))

    def label(self, model: Any, i: int) -> str:
        key, f = KEYS[int(self.kind[i])], int(self.flat[i])
        if key == "N":
            return f"member {model.member_ids[f]}"
        node, ax = divmod(f, self.dim)
        return f"{'displacement' if key == 'U' else 'reaction'} {model.node_ids[node]} {'xyz'[ax]}"

    def on_rows(self, pred_change: Prediction) -> FloatArray:
        """A full-size prediction change read on the rows."""
        out = np.empty(len(self))
        for k, key in enumerate(KEYS):
            pos = np.flatnonzero(self.kind == k)
            if pos.size:
                out[pos] = np.ravel(getattr(pred_change, key))[self.flat[pos]]
        return out


class Responses:
    """Columns on the rows of structural responses computed with the existing factor (no new factorisation)."""

    def __init__(self, solver: Superposition, rows: Rows) -> None:
        self.solver, self.rows = solver, rows
        self.pos = {key: rows.of(key) for key in KEYS}
        self.flat = {key: rows.flat[self.pos[key]] for key in KEYS}

    def columns(
        self,
        X: FloatArray,
        extra_N: tuple[Any, Any] | None = None,
        F: FloatArray | None = None,
        mask: Any = None,
    ) -> FloatArray:
        """(n_rows, c) change on the rows of displacement increments X (n_dofs, c), with ``extra_N =
        (members, columns)`` adding 1 to those member forces and F (n_dofs, c) dense load increments.

        Member forces ``k∘(B X) + extra``, reactions ``Bᵀ N − F`` at the supported nodes (``mask``)."""
        s, d = self.solver, self.rows.dim
        c = X.shape[1]
        out = np.zeros((len(self.rows), c))
        pU, pN, pR = self.pos["U"], self.pos["N"], self.pos["R"]
        if pU.size:
            out[pU] = X[self.flat["U"]]
        if pN.size:
            fN = self.flat["N"]
            val = s.k[fN, None] * (s.B[fN] @ X)
            if extra_N is not None:
                for m, col in zip(np.asarray(extra_N[0]).tolist(), np.asarray(extra_N[1]).tolist(), strict=True):
                    val[fN == m, col] += 1.0
            out[pN] = val
        if pR.size:
            fR = self.flat["R"]
            val = s.forces_on_rows(X, fR)
            if extra_N is not None:
                BR = s.columns_of(fR)
                for m, col in zip(np.asarray(extra_N[0]).tolist(), np.asarray(extra_N[1]).tolist(), strict=True):
                    val[:, col] += BR[m].toarray().ravel()
            if F is not None:
                val -= F[fR].toarray() if sp.issparse(F) else F[fR]
            m = s.mask if mask is None else mask
            val[~m[fR // d]] = 0.0
            out[pR] = val
        return out

    def load_term(self, F: Any, mask: Any = None) -> FloatArray:
        """(n_rows, c) the change on the rows of load increments F (n_dofs, c) themselves, the displacements
        apart: ``−F`` on the reactions at the supported nodes (``mask``), so that ``columns(X, F=F) =
        columns(X) + load_term(F)``."""
        out = np.zeros((len(self.rows), F.shape[1]))
        pR = self.pos["R"]
        if pR.size:
            fR = self.flat["R"]
            val = -(F[fR].toarray() if sp.issparse(F) else np.asarray(F)[fR])
            m = self.solver.mask if mask is None else mask
            val[~m[fR // self.rows.dim]] = 0.0
            out[pR] = val
        return out

    def full(
        self, x: FloatArray, extra_member: int | None = None, f: FloatArray | None = None, mask: Any = None
    ) -> Prediction:
        """Full-size prediction change of one displacement increment (one column)."""
        s = self.solver
        dN = s.k * (s.B @ x)
        if extra_member is not None:
            dN[extra_member] += 1.0
        return s.response(x, dN, np.zeros_like(x) if f is None else f, mask)


@dataclass(frozen=True)
class Problem:
    """What the cause modules read to make their candidates for one case."""

    ctx: Any  #: the audit Context
    case: str
    obs: CaseResults  #: the reported results, corrected for the scales already found
    base: Prediction  #: the recomputed answer
    actions: cm.CaseActions
    rows: Rows
    resp: Responses

    @property
    def model(self) -> Any:
        return self.ctx.model

    @property
    def tol(self) -> Any:
        return self.ctx.tolerances

    @property
    def solver(self) -> Superposition:
        return self.resp.solver

    @property
    def limit(self) -> int:
        """Candidates per family: ``max_candidates``, but at most ``LARGE_LIMIT`` on a model of more than
        ``LARGE_DOFS`` dofs (each is a solve column; the candidates come ranked by their evidence, and the
        bounded single-cause search before the fit has tried ``max_candidates`` of each already)."""
        n = int(self.ctx.model.n_dofs)
        return self.tol.max_candidates if n <= LARGE_DOFS else min(self.tol.max_candidates, LARGE_LIMIT)


@dataclass(frozen=True)
class Plan:
    """What a family will make its candidates from (``data``, its own), and the columns they need: the core
    gathers every family's needs and solves them in one block (:meth:`Superposition.prefetch`) before the
    candidates are made (``candidates(problem, plan)``)."""

    needs: Needs
    data: Any


@dataclass(frozen=True)
class FitResult:
    causes: tuple[Cause, ...]
    theta: tuple[FloatArray, ...]  #: per cause, its fitted parameters
    score: float  #: largest |residual|/allowance on the rows
    exact: float | None  #: the same over every reported number with the full-size prediction (None: not run)
    residual: FloatArray  #: per row, in allowances, after the fit (0 at the rows taken by slips)


def fit_set(rows: Rows, causes: tuple[Cause, ...]) -> tuple[tuple[FloatArray, ...], float, FloatArray]:
    """Least-squares fit of a set of causes on the rows: (θ per cause, max |residual|, residual)."""
    r = rows.e.copy()
    keep = np.ones(len(rows), dtype=bool)
    for c in causes:
        if c.fixed is not None:
            r -= c.fixed / rows.a
        if c.takes is not None:
            keep[c.takes] = False
    blocks = [c.cols / rows.a[:, None] for c in causes if c.cols is not None]
    thetas: list[FloatArray] = []
    if blocks:
        G = np.hstack(blocks)
        Gk = G[keep]
        with np.errstate(all="ignore"):
            scale = np.sqrt(np.sum(Gk * Gk, axis=0))
        good = np.isfinite(scale) & (scale > 0)
        th = np.zeros(G.shape[1])
        if good.any():
            sol = np.linalg.lstsq(Gk[:, good] / scale[good], r[keep], rcond=None)[0]
            th[good] = sol / scale[good]
        r = r - G @ th
        at = 0
        for c in causes:
            p = c.n_params
            thetas.append(th[at : at + p])
            at += p
    else:
        thetas = [np.zeros(0) for _c in causes]
    r = np.where(keep, r, 0.0)
    score = float(np.max(np.abs(r))) if r.size else 0.0
    return tuple(thetas), score, r


def simplicity(causes: tuple[Cause, ...], thetas: tuple[FloatArray, ...], rows: Rows) -> float:
    """The rank sum of a set (smaller is simpler).  A cause of the model whose predicted change shows on one
    row only is no simpler than a slip of that number, unless it is a load at a plain factor (a load at a
    support missing, factor 0, or doubled, factor 2, changes that support's reaction only)."""
    total = 0.0
    for c, th in zip(causes, thetas, strict=True):
        rank = float(c.rank)
        if c.cols is not None and rank == RANK_STRUCTURAL and not (c.plain(th) and c.key[0] == "load"):
            change = np.abs(c.cols @ th) / rows.a
            if int(np.sum(change > 0.5)) <= 1:
                rank = RANK_SLIP + 0.5
        total += rank
    return total


#: candidates refitted in full per set extended: the best by the screening fit (and every one it says fits)
SCREEN = 16
SCREEN_FITTING = 48


def _pool_matrices(rows: Rows, pool: list[Cause]) -> tuple[tuple[Any, FloatArray], tuple[Any, FloatArray]]:
    """((pool indices, weighted columns), (pool indices, weighted fixed changes)) of the one-parameter and the
    fixed candidates, for :func:`screen`; the others (several parameters, slips) are always refitted."""
    ic = [
        i for i, c in enumerate(pool) if c.cols is not None and c.n_params == 1 and c.fixed is None and c.takes is None
    ]
    jf = [i for i, c in enumerate(pool) if c.cols is None and c.fixed is not None and c.takes is None]
    a = rows.a[:, None]
    cs = [c for i in ic if (c := pool[i].cols) is not None]
    fs = [f for j in jf if (f := pool[j].fixed) is not None]
    C = np.hstack(cs) / a if cs else np.zeros((len(rows), 0))
    F = np.column_stack(fs) / a if fs else np.zeros((len(rows), 0))
    return (np.asarray(ic, dtype=np.int64), C), (np.asarray(jf, dtype=np.int64), F)


def screen(
    rows: Rows,
    state: tuple[Cause, ...],
    pool: list[Cause],
    cols_w: tuple[Any, FloatArray],
    fixed_w: tuple[Any, FloatArray],
) -> list[Cause]:
    """The candidates worth a full refit when extending ``state``: the joint least-squares fit of each
    one-parameter or fixed candidate with the state's columns, for all of them at once (the residual
    projected off the state's columns, ``r − c⊥ t`` with ``t = c⊥ᵀr / c⊥ᵀc⊥``), ranked by the largest
    remaining residual; the best ``SCREEN`` and up to ``SCREEN_FITTING`` that fit, and every other candidate."""
    _th, _score, r = fit_set(rows, state)
    keep = np.ones(len(rows), dtype=bool)
    for c in state:
        if c.takes is not None:
            keep[c.takes] = False
    blocks = [c.cols[keep] / rows.a[keep, None] for c in state if c.cols is not None]
    Q = np.linalg.qr(np.hstack(blocks))[0] if blocks else np.zeros((int(keep.sum()), 0))
    rk = r[keep]
    out: list[Cause] = []
    picked: set[int] = set()
    for (idx, M), fixed in ((cols_w, False), (fixed_w, True)):
        if idx.size == 0:
            continue
        # the same operations as Mk − Q(QᵀMk), r − Mp, r − Mp·t written into one scratch block where it is
        # ours (never into the pool's matrix M)
        Mk = M if keep.all() else M[keep]
        if Q.shape[1]:
            Mp = Q @ (Q.T @ Mk)
            np.subtract(Mk, Mp, out=Mp)
        else:
            Mp = Mk
        if fixed:
            res = np.subtract(rk[:, None], Mp, out=Mp if Mp is not M else None)
        else:
            nn = np.einsum("ij,ij->j", Mp, Mp)
            with np.errstate(all="ignore"):
                t = np.where(nn > 0, (Mp.T @ rk) / nn, 0.0)
            res = np.multiply(Mp, t, out=Mp if Mp is not M else None)
            np.subtract(rk[:, None], res, out=res)
        score = np.max(np.abs(res, out=res), axis=0) if res.shape[0] else np.zeros(idx.size)
        order = np.argsort(score, kind="stable")
        take = order[:SCREEN].tolist() + [int(j) for j in order[SCREEN:] if score[j] <= 1.0][: SCREEN_FITTING - SCREEN]
        picked.update(int(idx[j]) for j in take)
    screened = {int(i) for i in cols_w[0]} | {int(j) for j in fixed_w[0]}
    for i, c in enumerate(pool):
        if i in picked or i not in screened:
            out.append(c)
    return out


def search(
    rows: Rows,
    pool: list[Cause],
    slip: Any,
    exact: Any,
    max_causes: int = MAX_CAUSES,
) -> tuple[FitResult | None, FitResult | None]:
    """(the explanation, or None; the closest set tried).

    ``slip(row)`` makes the slip cause of a row; ``exact(causes, θ)`` is the largest |difference|/allowance over
    every reported number with the full-size prediction of the set.
    """
    cols_w, fixed_w = _pool_matrices(rows, pool)
    beam: list[tuple[tuple[Cause, ...], float]] = [((), float(np.max(np.abs(rows.e)) if len(rows) else 0.0))]
    residual_of: dict[tuple[Any, ...], FloatArray] = {(): rows.e}
    closest: FitResult | None = None
    tried = 0
    for _size in range(1, max_causes + 1):
        scored: dict[tuple[Any, ...], tuple[float, float, tuple[Cause, ...], tuple[FloatArray, ...], FloatArray]] = {}
        for causes, _s in beam:
            keys = {c.key for c in causes}
            r = residual_of[tuple(c.key for c in causes)]
            order = np.argsort(-np.abs(r), kind="stable")[:SLIPS_PER_STEP]
            extra = [slip(int(i)) for i in order.tolist() if abs(r[i]) > 1.0]
            for cand in [*screen(rows, causes, pool, cols_w, fixed_w), *extra]:
                if cand.key in keys:
                    continue
                trial = tuple(sorted((*causes, cand), key=lambda c: c.key))
                tk = tuple(c.key for c in trial)
                if tk in scored:
                    continue
                thetas, score, res = fit_set(rows, trial)
                if not all(c.valid(t) for c, t in zip(trial, thetas, strict=True)):
                    continue
                scored[tk] = (score, simplicity(trial, thetas, rows), trial, thetas, res)
        if not scored:
            break
        ranked = sorted(scored.values(), key=lambda s: (s[0] > 1.0, s[1] if s[0] <= 1.0 else 0.0, s[0]))
        for score, _simp, trial, thetas, res in ranked:
            if score > 1.0 or tried >= EXACT_TRIES:
                break
            tried += 1
            w = exact(trial, thetas)
            result = FitResult(trial, thetas, score, w, res)
            if w <= 1.0:
                return result, result
            if closest is None or w < (closest.exact or np.inf):
                closest = result
        best = sorted(scored.values(), key=lambda s: s[0])[:BEAM]
        if closest is None or best[0][0] < closest.score:
            s0, _p, trial, thetas, res = best[0]
            if closest is None or closest.exact is None or s0 < closest.score:
                closest = FitResult(trial, thetas, s0, None, res)
        beam = [(s[2], s[0]) for s in best]
        for s in best:
            residual_of[tuple(c.key for c in s[2])] = s[4]
    return None, closest


def apply_set(base: Prediction, causes: tuple[Cause, ...], thetas: tuple[FloatArray, ...]) -> Prediction:
    """The full-size prediction of a set: structural changes first, then table changes (swaps, slips)."""
    pred = base
    order = sorted(range(len(causes)), key=lambda i: causes[i].rank != RANK_STRUCTURAL)
    for i in order:
        pred = causes[i].apply(pred, thetas[i])
    return pred


def with_reported(pred: Prediction, obs: CaseResults, key: str, flat: int) -> Prediction:
    """The prediction with one number set to the reported value (a slip takes that number over)."""
    arr = {"U": obs.displacements, "N": obs.axial_forces, "R": obs.reactions}[key]
    out = {k: np.array(getattr(pred, k), copy=True) for k in KEYS}
    np.ravel(out[key])[flat] = float(np.ravel(arr)[flat])
    return Prediction(out["U"], out["N"], out["R"])
