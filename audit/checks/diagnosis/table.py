"""Mistakes in the source's tables rather than its model: one number wrong (an isolated slip, DX115), two
labels swapped (two members' forces, or two joints' displacements or reactions, DX116), and two components
swapped at one joint (x↔y, or any pair in 3D, DX117).

Each is a predicted change of the reported numbers with no structural response: a slip takes one number
over (a unit vector on it, its value fitted exactly); a swap is the difference of the two entries, applied
to the predicted values.
"""

from __future__ import annotations

from itertools import combinations
from typing import Any

import numpy as np

from audit.checks import _common as cm
from audit.checks.diagnosis.base import CHECK_ID, RANK_SLIP, RANK_TABLE, Cause
from audit.checks.diagnosis.block import Prediction
from audit.checks.diagnosis.fit import KEYS, Problem, with_reported
from audit.findings import Location, Severity
from audit.model import AXES, FloatArray
from audit.rules import Rule

RULES = (
    Rule(
        "DX115",
        Severity.WARNING,
        "one reported number disagrees while every other is consistent with the model: an isolated slip",
        CHECK_ID,
    ),
    Rule("DX116", Severity.WARNING, "two labels swapped in the source's table: their numbers are exchanged", CHECK_ID),
    Rule("DX117", Severity.WARNING, "two components of one joint swapped in the source's table (x↔y ...)", CHECK_ID),
)

#: differing rows per kind whose pairs are tried as swaps
SWAP_ROWS = 16
#: joints per kind whose pairs are tried as swapped joints, and whose components are tried as swapped
SWAP_NODES = 12
KIND_WORDS = {"U": "displacement", "N": "axial force", "R": "reaction"}


def _loc(pb: Problem, i: int) -> Location:
    key, f = KEYS[int(pb.rows.kind[i])], int(pb.rows.flat[i])
    return cm.flat_location(pb.model, "axial_force" if key == "N" else "node", f)


def slip(pb: Problem, i: int) -> Cause:
    """One number wrong: row i of the rows taken over, its correct value the recomputed one."""
    rows, model = pb.rows, pb.model
    key, f = KEYS[int(rows.kind[i])], int(rows.flat[i])
    y, b = float(rows.y[i]), float(rows.b[i])
    label = rows.label(model, i)

    def describe(theta: FloatArray) -> tuple[str, tuple[tuple[str, Any], ...]]:
        sign = (
            " (the recomputed value with the opposite sign: a sign slip)" if b != 0 and abs(y + b) <= rows.a[i] else ""
        )
        msg = (
            f"the reported {KIND_WORDS[key]} at {label.split(' ', 1)[1] if key != 'N' else label} is {cm.fmt(y)} "
            f"where the model gives {cm.fmt(b)}{sign}: one number wrong in the source"
        )
        return msg, (("quantity", KIND_WORDS[key]), ("reported", y), ("corrected", b), ("sign_slip", bool(sign)))

    return Cause(
        code="DX115",
        location=_loc(pb, i),
        rank=RANK_SLIP,
        key=("slip", key, f),
        apply=lambda pred, th: with_reported(pred, pb.obs, key, f),
        describe=describe,
        takes=i,
    )


def _swap_apply(key: str, a: list[int], b: list[int]) -> Any:
    def apply(pred: Prediction, _th: FloatArray) -> Prediction:
        out = {k: np.array(getattr(pred, k), copy=True) for k in KEYS}
        flat = np.ravel(out[key])
        va, vb = flat[a].copy(), flat[b].copy()
        flat[a], flat[b] = vb, va
        return Prediction(out["U"], out["N"], out["R"])

    return apply


def _where(rows: Any, key: str) -> dict[int, int]:
    """Row position of each flat index of a kind among the rows (kept on the rows object)."""
    cache: dict[str, dict[int, int]] = rows.lookup
    if key not in cache:
        pos = rows.of(key)
        cache[key] = {int(f): int(p) for f, p in zip(rows.flat[pos].tolist(), pos.tolist(), strict=True)}
    return cache[key]


def _fixed(pb: Problem, key: str, a: list[int], b: list[int]) -> FloatArray | None:
    """The change on the rows of exchanging the entries a[i] ↔ b[i] of one kind; None when a swapped entry is
    not among the rows or the exchange does not bring every swapped row closer."""
    rows = pb.rows
    where = _where(rows, key)
    g = np.zeros(len(rows))
    for fa, fb in zip(a, b, strict=True):
        if fa not in where or fb not in where:
            return None
        ia, ib = where[fa], where[fb]
        g[ia] += rows.b[ib] - rows.b[ia]
        g[ib] += rows.b[ia] - rows.b[ib]
    touched = np.flatnonzero(g)
    if touched.size == 0:
        return None
    after = np.abs(rows.e[touched] - g[touched] / rows.a[touched])
    if not np.all(after < np.abs(rows.e[touched])):
        return None
    return g


def candidates(pb: Problem) -> list[Cause]:
    rows, model, d = pb.rows, pb.model, pb.model.dim
    out: list[Cause] = []
    failing = np.abs(rows.e) > 1.0
    # two members' forces exchanged
    pos = np.flatnonzero(failing & (rows.kind == KEYS.index("N")))
    pos = pos[np.argsort(-np.abs(rows.e[pos]), kind="stable")][:SWAP_ROWS]
    for i, j in combinations(sorted(pos.tolist()), 2):
        fi, fj = int(rows.flat[i]), int(rows.flat[j])
        g = _fixed(pb, "N", [fi], [fj])
        if g is None:
            continue
        mi, mj = model.member_ids[fi], model.member_ids[fj]
        out.append(
            Cause(
                code="DX116",
                location=Location(member=mi),
                rank=RANK_TABLE,
                key=("swap", "N", fi, fj),
                apply=_swap_apply("N", [fi], [fj]),
                describe=lambda _t, mi=mi, mj=mj: (
                    f"the axial forces of members {mi} and {mj} are exchanged in the source's table",
                    (("quantity", "axial force"), ("labels", (mi, mj))),
                ),
                fixed=g,
            )
        )
    for key in ("U", "R"):
        pos = np.flatnonzero(failing & (rows.kind == KEYS.index(key)))
        if pos.size == 0:
            continue
        nodes_all = rows.flat[pos] // d
        worst: dict[int, float] = {}
        for n, e in zip(nodes_all.tolist(), np.abs(rows.e[pos]).tolist(), strict=True):
            worst[n] = max(worst.get(n, 0.0), e)
        nodes = sorted(worst, key=lambda n: -worst[n])[:SWAP_NODES]
        word = KIND_WORDS[key]
        # two joints' values exchanged
        for p, q in combinations(sorted(nodes), 2):
            a = [p * d + ax for ax in range(d)]
            b = [q * d + ax for ax in range(d)]
            g = _fixed(pb, key, a, b)
            if g is None:
                continue
            np_, nq = model.node_ids[p], model.node_ids[q]
            out.append(
                Cause(
                    code="DX116",
                    location=Location(node=np_),
                    rank=RANK_TABLE,
                    key=("swap", key, p, q),
                    apply=_swap_apply(key, a, b),
                    describe=lambda _t, np_=np_, nq=nq, word=word: (
                        f"the {word}s of joints {np_} and {nq} are exchanged in the source's table",
                        (("quantity", word), ("labels", (np_, nq))),
                    ),
                    fixed=g,
                )
            )
        # one component of two joints exchanged (one column of two rows swapped)
        for p, q in combinations(sorted(nodes), 2):
            for ax in range(d):
                a, b = [p * d + ax], [q * d + ax]
                g = _fixed(pb, key, a, b)
                if g is None:
                    continue
                np_, nq = model.node_ids[p], model.node_ids[q]
                out.append(
                    Cause(
                        code="DX116",
                        location=Location(node=np_, axis=AXES[ax]),
                        rank=RANK_TABLE,
                        key=("swap", key, p, q, ax),
                        apply=_swap_apply(key, a, b),
                        describe=lambda _t, np_=np_, nq=nq, word=word, ax=ax: (
                            f"the {word}s along {AXES[ax]} of joints {np_} and {nq} are exchanged in the source's "
                            "table",
                            (("quantity", word), ("labels", (np_, nq)), ("component", AXES[ax])),
                        ),
                        fixed=g,
                    )
                )
        # two components of one joint exchanged (in this kind, or in displacements and reactions together)
        for n in nodes:
            for a1, a2 in combinations(range(d), 2):
                for kinds in ((key,), ("U", "R")) if key == "U" else ((key,),):
                    g = np.zeros(len(rows))
                    fine = True
                    for k in kinds:
                        gk = _fixed(pb, k, [n * d + a1], [n * d + a2])
                        if gk is None:
                            fine = False
                            break
                        g += gk
                    if not fine:
                        continue
                    nid = model.node_ids[n]
                    pair = f"{AXES[a1]}↔{AXES[a2]}"
                    words = " and ".join(KIND_WORDS[k] + "s" for k in kinds)
                    applies = [_swap_apply(k, [n * d + a1], [n * d + a2]) for k in kinds]
                    out.append(
                        Cause(
                            code="DX117",
                            location=Location(node=nid),
                            rank=RANK_TABLE,
                            key=("components", kinds, n, a1, a2),
                            apply=lambda pred, th, applies=applies: _chain(applies, pred, th),
                            describe=lambda _t, nid=nid, pair=pair, words=words: (
                                f"the {words} of joint {nid} have their components swapped ({pair}) in the "
                                "source's table",
                                (("quantity", words), ("node", nid), ("components", pair)),
                            ),
                            fixed=g,
                        )
                    )
    return out


def _chain(applies: list[Any], pred: Prediction, th: FloatArray) -> Prediction:
    for f in applies:
        pred = f(pred, th)
    return pred
