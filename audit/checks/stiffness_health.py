"""Health of the stiffness matrix: the rebuilt K, the restrained K, and the source's own matrix if exported.

* symmetry of the rebuilt K (a self-check of the assembly);
* K r = 0 for every rigid-body motion r of the unrestrained members-only K,
  relative to ‖K‖∞‖r‖∞ (translations and rotations; common practice: an
  element stiffness that resists a rigid motion is wrong, e.g. McGuire,
  Gallagher & Ziemian, *Matrix Structural Analysis*, 2nd ed., §3.7);
* K positive semidefinite (every EA/L > 0, since K = Bᵀ diag(EA/L) B) and the
  restrained K positive definite (the SPD factorisation succeeded; certified
  when the high-precision step proved a positive lower eigenvalue bound);
* the 1-norm condition estimate of the diagonally scaled restrained K and the
  decimal digits it costs, log10(κ) (Higham, *Accuracy and Stability of
  Numerical Algorithms*, 2nd ed., §7.1: relative error ≲ κ·u);
* the spread of member stiffness EA/L;
* the source's own assembled matrix (``Model.stiffness``): symmetry,
  singularity and an entry-by-entry comparison with the rebuilt one, the
  disagreeing entries explained member by member.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import scipy.sparse as sp

from audit import linsolve
from audit.context import Context
from audit.findings import CheckOutcome, Finding, Location, Severity, Status
from audit.model import AXES, FloatArray, Model, SourceStiffness
from audit.rules import Rule
from audit.solve import SINGULAR_CONDITION, condition_estimate

CHECK_ID = "stiffness"

#: relative asymmetry of the rebuilt K tolerated (it is assembled symmetric: anything above is a bug)
SYMMETRY_TOLERANCE = 1.0e-12
#: |K r|∞ / (‖K‖∞ ‖r‖∞) tolerated for a rigid-body motion r
RIGID_TOLERANCE = 1.0e-10
#: a condition estimate above this is warned about (more than 10 of float64's 16 digits lost)
CONDITION_WARNING = 1.0e10
#: EA/L max/min above this is warned about
SPREAD_WARNING = 1.0e8
#: source matrix entries may differ from ours by this fraction of the largest entry
SOURCE_RELATIVE = 1.0e-6
#: the source's restrained matrix is factorised (to test singularity) up to this order
SOURCE_FACTOR_LIMIT = 200_000

RULES = (
    Rule("KH101", Severity.ERROR, "the rebuilt stiffness matrix is not symmetric (self-check)", CHECK_ID),
    Rule("KH102", Severity.ERROR, "the unrestrained stiffness resists a rigid-body motion (K r ≠ 0)", CHECK_ID),
    Rule("KH103", Severity.ERROR, "a member stiffness EA/L is not positive: K is not positive semidefinite", CHECK_ID),
    Rule(
        "KH104",
        Severity.ERROR,
        "the restrained stiffness is numerically singular although no mechanism exists",
        CHECK_ID,
    ),
    Rule("KH105", Severity.WARNING, "the restrained stiffness is ill-conditioned: many digits are lost", CHECK_ID),
    Rule("KH106", Severity.WARNING, "extreme spread of member stiffness EA/L", CHECK_ID),
    Rule("KH107", Severity.INFO, "positive definiteness of the restrained stiffness: how it was established", CHECK_ID),
    Rule("KH110", Severity.ERROR, "the source's stiffness matrix is not symmetric", CHECK_ID),
    Rule("KH111", Severity.ERROR, "the source's stiffness matrix cannot be mapped onto the model's dofs", CHECK_ID),
    Rule("KH112", Severity.ERROR, "the source's stiffness entries of a member differ from the rebuilt ones", CHECK_ID),
    Rule("KH113", Severity.ERROR, "the source's stiffness differs at a joint where no member explains it", CHECK_ID),
    Rule("KH114", Severity.ERROR, "the source's stiffness matrix is singular or resists rigid-body motion", CHECK_ID),
    Rule("KH115", Severity.INFO, "the source's stiffness matrix agrees with the rebuilt one", CHECK_ID),
)


def run(ctx: Context) -> list[CheckOutcome]:
    model, system = ctx.model, ctx.system
    findings: list[Finding] = []
    K = system.K
    kmax = float(abs(K).max()) if K.nnz else 0.0
    findings += _symmetry(K, kmax)
    findings += _rigid_body(model, K)
    findings += _member_stiffness(model)
    findings += _definiteness(ctx)
    if model.stiffness is not None:
        findings += source_matrix(model, (system.K + system.K_springs).tocsr(), system.K, ctx.factor is not None)
    failed = any(f.severity >= Severity.ERROR for f in findings)
    cond = ctx.condition
    summary: list[tuple[str, Any]] = [
        ("condition_estimate", cond),
        ("digits_lost", round(math.log10(cond), 2) if np.isfinite(cond) and cond > 0 else None),
        ("max_abs_entry", kmax),
        ("source_matrix", model.stiffness is not None),
    ]
    return [
        CheckOutcome(
            check=CHECK_ID,
            case=None,
            status=Status.FAIL if failed else Status.PASS,
            findings=tuple(findings),
            reason="stiffness matrix symmetry, rigid-body motions, definiteness, conditioning"
            + (", source matrix" if model.stiffness is not None else ""),
            summary=tuple(summary),
        )
    ]


# ------------------------------------------------------------- rebuilt K
def _symmetry(K: sp.csr_matrix, kmax: float) -> list[Finding]:
    if K.nnz == 0:
        return []
    D = (K - K.T).tocoo()
    worst = float(np.abs(D.data).max()) if D.nnz else 0.0
    if worst <= SYMMETRY_TOLERANCE * kmax:
        return []
    i = int(np.argmax(np.abs(D.data)))
    return [
        Finding(
            "KH101",
            Severity.ERROR,
            f"the rebuilt stiffness matrix is not symmetric: |K_ij − K_ji| = {worst:.3g} at dofs "
            f"({int(D.row[i])}, {int(D.col[i])}), {worst / kmax:.2e} of the largest entry",
            difference=worst,
            tolerance=SYMMETRY_TOLERANCE * kmax,
        )
    ]


def rigid_body_motions(model: Model) -> list[tuple[str, FloatArray]]:
    """(name, (n_dofs,) vector) translations along each axis and rotations about the centroid's axes."""
    d = model.dim
    X = model.coords - model.coords.mean(axis=0)
    out = []
    for a in range(d):
        v = np.zeros((model.n_nodes, d))
        v[:, a] = 1.0
        out.append((f"translation along {AXES[a]}", v.ravel()))
    if d == 2:
        out.append(("rotation about z", np.column_stack([-X[:, 1], X[:, 0]]).ravel()))
    else:
        for a in range(3):
            out.append((f"rotation about {AXES[a]}", np.cross(np.eye(3)[a], X).ravel()))
    return out


def _rigid_body(model: Model, K: sp.csr_matrix) -> list[Finding]:
    if K.nnz == 0:
        return []
    knorm = float(abs(K).sum(axis=1).max())
    out = []
    for name, r in rigid_body_motions(model):
        rn = float(np.abs(r).max())
        if rn == 0:
            continue
        res = np.abs(K @ r)
        rel = float(res.max()) / (knorm * rn)
        if rel > RIGID_TOLERANCE:
            g = int(np.argmax(res))
            node, axis = model.node_ids[g // model.dim], AXES[g % model.dim]
            out.append(
                Finding(
                    "KH102",
                    Severity.ERROR,
                    f"the unrestrained stiffness resists a rigid-body {name}: |K r| is {rel:.2e} of ‖K‖‖r‖, "
                    f"largest at node {node} along {axis}",
                    location=Location(node=node, axis=axis),
                    difference=rel,
                    tolerance=RIGID_TOLERANCE,
                )
            )
    return out


def _member_stiffness(model: Model) -> list[Finding]:
    if model.n_members == 0:
        return []
    k = model.axial_stiffness()
    out = []
    bad = np.flatnonzero(~(k > 0))
    for e in bad[:20].tolist():
        out.append(
            Finding(
                "KH103",
                Severity.ERROR,
                f"member {model.member_ids[e]} has EA/L = {k[e]:.4g}: a stiffness that is not positive makes K "
                "indefinite (or leaves the member out)",
                location=Location(member=model.member_ids[e]),
                reported=float(k[e]),
            )
        )
    pos = k[k > 0]
    if pos.size:
        hi, lo = int(np.argmax(np.where(k > 0, k, -np.inf))), int(np.argmin(np.where(k > 0, k, np.inf)))
        spread = float(k[hi] / k[lo])
        if spread > SPREAD_WARNING:
            out.append(
                Finding(
                    "KH106",
                    Severity.WARNING,
                    f"member stiffness EA/L spans {spread:.3g}: from {k[lo]:.4g} (member {model.member_ids[lo]}) to "
                    f"{k[hi]:.4g} (member {model.member_ids[hi]}); about {math.log10(spread):.0f} digits of the "
                    "solution can be lost to it",
                    reported=spread,
                    tolerance=SPREAD_WARNING,
                    data=(("softest", model.member_ids[lo]), ("stiffest", model.member_ids[hi])),
                )
            )
    return out


def _definiteness(ctx: Context) -> list[Finding]:
    out: list[Finding] = []
    cond = ctx.condition
    stable = ctx.stability.stable
    if ctx.factor is None:
        if stable and ctx.system.K_r.shape[0]:
            out.append(
                Finding(
                    "KH104",
                    Severity.ERROR,
                    "the geometry has no mechanism, yet the restrained stiffness could not be factorised as positive "
                    f"definite ({ctx.unsolvable_reason or 'factorisation refused'}): with an estimated scaled "
                    "condition "
                    f"above {SINGULAR_CONDITION:.0e} the stiffness contrast makes it numerically singular",
                )
            )
        return out
    digits = math.log10(cond) if np.isfinite(cond) and cond > 0 else float("nan")
    if np.isfinite(cond) and cond > CONDITION_WARNING:
        out.append(
            Finding(
                "KH105",
                Severity.WARNING,
                f"the scaled restrained stiffness has condition estimate {cond:.3g}: a float64 solve can lose about "
                f"{digits:.0f} of its 16 digits",
                reported=cond,
                tolerance=CONDITION_WARNING,
            )
        )
    lam = getattr(ctx.precision, "lambda_lo", None) if ctx.precision is not None else None
    if lam is not None and np.isfinite(lam) and lam > 0:
        how = f"certified: the smallest eigenvalue of the restrained K is at least {lam:.4g} (Rump-style bound)"
    else:
        why = getattr(ctx.precision, "lambda_reason", "") if ctx.precision is not None else "precision step not run"
        how = f"the SPD factorisation ({ctx.factor.backend}) succeeded: numerical evidence, not certified" + (
            f" ({why})" if why else ""
        )
    out.append(
        Finding(
            "KH107",
            Severity.INFO,
            f"restrained stiffness positive definite: {how}; scaled condition estimate {cond:.3g} "
            f"(about {digits:.1f} digits lost)",
            reported=lam if lam is not None else None,
            data=(("condition_estimate", cond), ("digits_lost", digits), ("certified", bool(lam and lam > 0))),
        )
    )
    return out


# ------------------------------------------------------- source's matrix
def _source_matrix(src: SourceStiffness) -> tuple[sp.csr_matrix, list[str]]:
    """The source's matrix (n_s, n_s) in its own dof order, and problems with its storage."""
    n = src.dof_node.size
    problems = []
    r, c, v = src.rows, src.cols, src.values
    if src.storage == "upper":
        low = r > c
        if low.any():
            problems.append(f"{int(low.sum())} entries below the diagonal in upper storage")
        off = r != c
        r, c, v = np.concatenate([r, c[off]]), np.concatenate([c, r[off]]), np.concatenate([v, v[off]])
    S = sp.coo_matrix((v, (r, c)), shape=(n, n)).tocsr()
    S.sum_duplicates()
    return S, problems


def source_matrix(model: Model, K_total: sp.csr_matrix, K_members: sp.csr_matrix, ours_regular: bool) -> list[Finding]:
    """Symmetry, singularity and entry-by-entry comparison of the source's matrix with the rebuilt one."""
    src = model.stiffness
    assert src is not None
    d = model.dim
    out: list[Finding] = []
    if np.any(src.dof_axis >= d) or np.any(src.dof_node >= model.n_nodes) or np.any(src.dof_node < 0):
        return [Finding("KH111", Severity.ERROR, "the source's dof list names an axis or node the model lacks")]
    g = src.dof_node * d + src.dof_axis
    if np.unique(g).size != g.size:
        return [Finding("KH111", Severity.ERROR, "the source's dof list names a degree of freedom twice")]
    S, problems = _source_matrix(src)
    for p in problems:
        out.append(Finding("KH111", Severity.ERROR, f"the source's matrix storage is inconsistent: {p}"))
    smax = float(abs(S).max()) if S.nnz else 0.0
    if src.storage == "full" and S.nnz:
        A = (S - S.T).tocoo()
        worst = float(np.abs(A.data).max()) if A.nnz else 0.0
        if worst > SOURCE_RELATIVE * smax:
            i = int(np.argmax(np.abs(A.data)))
            out.append(
                Finding(
                    "KH110",
                    Severity.ERROR,
                    f"the source's matrix is not symmetric: entries "
                    f"({_dof(model, g[A.row[i]])}, {_dof(model, g[A.col[i]])}) "
                    f"and its mirror differ by {worst:.4g} ({worst / smax:.2e} of the largest entry)",
                    difference=worst,
                    tolerance=SOURCE_RELATIVE * smax,
                )
            )
    # ours on the same dofs, springs included (the source's global matrix); without springs if that fits better
    ours = K_total[g][:, g].tocsr()
    D = (S - ours).tocsr()
    if model.spring_node.size:
        alt = (S - K_members[g][:, g]).tocsr()
        if _maxabs(alt) < _maxabs(D):
            D, ours = alt, K_members[g][:, g].tocsr()
    scale = max(float(abs(ours).max()) if ours.nnz else 0.0, smax)
    tol = SOURCE_RELATIVE * scale
    out += _explain(model, src, g, S, D, tol)
    out += _singularity(model, g, S, ours_regular)
    if not any(f.severity >= Severity.ERROR for f in out):
        out.append(
            Finding(
                "KH115",
                Severity.INFO,
                f"the source's matrix ({g.size} dofs, {src.storage} storage) agrees with the rebuilt one entry by "
                f"entry within {SOURCE_RELATIVE:.0e} of the largest entry",
                difference=_maxabs(D),
                tolerance=tol,
            )
        )
    return out


def _maxabs(M: sp.spmatrix) -> float:
    return float(abs(M).max()) if M.nnz else 0.0


def _dof(model: Model, g: int) -> str:
    return f"{model.node_ids[int(g) // model.dim]} {AXES[int(g) % model.dim]}"


def _explain(
    model: Model, src: SourceStiffness, g: np.ndarray, S: sp.csr_matrix, D: sp.csr_matrix, tol: float
) -> list[Finding]:
    """Name the members whose element matrix explains the disagreeing entries; what is left, per joint."""
    d = model.dim
    Dc = D.tocoo()
    bad = np.abs(Dc.data) > tol
    if not bad.any():
        return []
    rows, cols = Dc.row[bad], Dc.col[bad]
    na, nb = src.dof_node[rows], src.dof_node[cols]
    out: list[Finding] = []
    pair_members: dict[tuple[int, int], list[int]] = {}
    for e, (a, b) in enumerate(model.conn.tolist()):
        pair_members.setdefault((min(a, b), max(a, b)), []).append(e)
    pos = {int(x): i for i, x in enumerate(g.tolist())}
    n_dir = model.directions()
    k_ours = model.axial_stiffness()
    explained = np.zeros(bad.sum(), dtype=bool)
    pairs = sorted({(min(a, b), max(a, b)) for a, b in zip(na.tolist(), nb.tolist(), strict=True) if a != b})
    corr = sp.lil_matrix(D.shape)
    for a, b in pairs:
        members = pair_members.get((a, b), [])
        if not members:
            out.append(
                Finding(
                    "KH112",
                    Severity.ERROR,
                    f"the source's matrix couples joints {model.node_ids[a]} and {model.node_ids[b]}, which no member "
                    "joins (connectivity differs)",
                    data=(("nodes", (model.node_ids[a], model.node_ids[b])),),
                )
            )
            continue
        e = members[0]
        nn = np.outer(n_dir[e], n_dir[e])
        ia = [pos.get(a * d + x) for x in range(d)]
        ib = [pos.get(b * d + x) for x in range(d)]
        block = np.array([[S[i, j] if i is not None and j is not None else np.nan for j in ib] for i in ia])
        ok = np.isfinite(block)
        denom = float(np.sum((nn * ok) ** 2))
        k_src = -float(np.nansum(block * nn)) / denom if denom > 0 else float("nan")
        k_sum = float(sum(k_ours[x] for x in members))
        fit = float(np.nanmax(np.abs(block + k_src * nn))) if np.isfinite(k_src) else float("inf")
        ids = [model.member_ids[x] for x in members]
        who = "member " + ids[0] if len(ids) == 1 else "members " + ", ".join(ids) + " (parallel)"
        if fit <= tol:
            msg = (
                f"the source's entries for {who} ({model.node_ids[a]}–{model.node_ids[b]}) imply EA/L = {k_src:.6g}, "
                f"the model gives {k_sum:.6g} (ratio {k_src / k_sum:.6g})"
            )
            for p_, q_ in ((a, a), (b, b), (a, b), (b, a)):
                sgn = 1.0 if p_ == q_ else -1.0
                for x in range(d):
                    for y in range(d):
                        i, j = pos.get(p_ * d + x), pos.get(q_ * d + y)
                        if i is not None and j is not None:
                            corr[i, j] += sgn * (k_src - k_sum) * nn[x, y]
        else:
            msg = (
                f"the source's entries for {who} ({model.node_ids[a]}–{model.node_ids[b]}) do not have the form "
                "EA/L·n nᵀ along the member: its direction (coordinates) or connectivity differs"
            )
        out.append(
            Finding(
                "KH112",
                Severity.ERROR,
                msg,
                location=Location(member=ids[0]),
                reported=k_src,
                expected=k_sum,
                difference=k_src - k_sum if np.isfinite(k_src) else None,
                tolerance=tol,
            )
        )
        explained |= ((na == a) & (nb == b)) | ((na == b) & (nb == a))
    # what the named members do not explain on the diagonal blocks
    R = (D - corr.tocsr()).tocoo()
    left = np.abs(R.data) > tol
    nodes = sorted(
        {
            int(src.dof_node[i])
            for i, j in zip(R.row[left], R.col[left], strict=True)
            if src.dof_node[i] == src.dof_node[j]
        }
    )
    for v in nodes[:20]:
        sel = left & (src.dof_node[R.row] == v) & (src.dof_node[R.col] == v)
        worst = float(np.abs(R.data[sel]).max())
        out.append(
            Finding(
                "KH113",
                Severity.ERROR,
                f"at joint {model.node_ids[v]} the source's diagonal stiffness differs by up to {worst:.4g} beyond "
                "what "
                "its members explain (a spring or support folded into the matrix, or a member missing?)",
                location=Location(node=model.node_ids[v]),
                difference=worst,
                tolerance=tol,
            )
        )
    return out


def _singularity(model: Model, g: np.ndarray, S: sp.csr_matrix, ours_regular: bool) -> list[Finding]:
    """A full (unrestrained) source matrix must not resist rigid-body motions; a restrained one must be regular."""
    out: list[Finding] = []
    if g.size == model.n_dofs and model.spring_node.size == 0:
        snorm = float(abs(S).sum(axis=1).max()) if S.nnz else 0.0
        for name, r in rigid_body_motions(model):
            rr = r[g]
            rel = float(np.abs(S @ rr).max()) / (snorm * float(np.abs(rr).max()) or 1.0)
            if snorm and rel > 1e3 * SOURCE_RELATIVE:
                out.append(
                    Finding(
                        "KH114",
                        Severity.ERROR,
                        f"the source's unrestrained matrix resists a rigid-body {name} (|S r| = {rel:.2e} of ‖S‖‖r‖): "
                        "it should be singular",
                        difference=rel,
                    )
                )
        return out
    if g.size == model.n_dofs or g.size > SOURCE_FACTOR_LIMIT or not ours_regular:
        return out
    try:
        diag = S.diagonal()
        if np.any(diag <= 0):
            raise np.linalg.LinAlgError("a zero or negative diagonal entry")
        f = linsolve.factorize(S)
        cond = condition_estimate(S, f)
    except (np.linalg.LinAlgError, RuntimeError) as exc:
        cond, why = float("inf"), str(exc)
    else:
        why = f"scaled condition estimate {cond:.3g}"
    if not np.isfinite(cond) or cond > SINGULAR_CONDITION:
        out.append(
            Finding(
                "KH114",
                Severity.ERROR,
                f"the source's restrained matrix is singular or not positive definite ({why}), while the rebuilt one "
                "is regular: the source could not have solved with it",
            )
        )
    return out
