"""Stiffness health (``audit.checks.stiffness_health``).

The source matrices here are written by the test itself from the textbook
element matrix of a bar, EA/L·[c², cs, −c², −cs; …] (Kassimali, *Matrix
Analysis of Structures*, 2nd ed., eq. 3.73), assembled with plain loops, so
the comparison is against an independent assembly.  That K annihilates
rigid-body motions and is symmetric positive semidefinite is common practice
(McGuire, Gallagher & Ziemian, *Matrix Structural Analysis*, 2nd ed., §3.7).
"""

from __future__ import annotations

import json
import math
from dataclasses import replace
from typing import Any

import numpy as np
import pytest
import scipy.sparse as sp

from audit.checks import stiffness_health
from audit.context import Context
from audit.engine import build_context
from audit.exchange import parse_model

E, A = 2.0e8, 1.0e-3


def _triangle(extra: dict[str, Any] | None = None, E2: float = E) -> dict[str, Any]:
    doc: dict[str, Any] = {
        "format": "truss-audit-model",
        "version": 1,
        "dimensions": 2,
        "units": {"length": "m", "force": "kN"},
        "nodes": [{"id": "A", "x": 0, "y": 0}, {"id": "B", "x": 4, "y": 0}, {"id": "C", "x": 2, "y": 3}],
        "members": [
            {"id": "1", "start": "A", "end": "B", "E": E, "A": A},
            {"id": "2", "start": "B", "end": "C", "E": E2, "A": A},
            {"id": "3", "start": "C", "end": "A", "E": E, "A": A},
        ],
        "supports": [{"node": "A", "restrain": ["x", "y"]}, {"node": "B", "restrain": ["y"]}],
        "load_cases": [{"id": "P", "loads": [{"node": "C", "fx": 10, "fy": -20}]}],
    }
    if extra:
        doc.update(extra)
    return doc


def _textbook_K(doc: dict[str, Any], ea_factor: dict[str, float] | None = None) -> list[list[float]]:
    """Global K by loops over the textbook 2D bar matrix (Kassimali eq. 3.73)."""
    ids = [n["id"] for n in doc["nodes"]]
    xy = {n["id"]: (float(n["x"]), float(n["y"])) for n in doc["nodes"]}
    K = [[0.0] * (2 * len(ids)) for _ in range(2 * len(ids))]
    for m in doc["members"]:
        (x1, y1), (x2, y2) = xy[m["start"]], xy[m["end"]]
        L = math.hypot(x2 - x1, y2 - y1)
        c, s = (x2 - x1) / L, (y2 - y1) / L
        k = m["E"] * m["A"] / L * (ea_factor or {}).get(m["id"], 1.0)
        ke = [[c * c, c * s, -c * c, -c * s], [c * s, s * s, -c * s, -s * s]]
        ke += [[-v for v in ke[0]], [-v for v in ke[1]]]
        dofs = [
            2 * ids.index(m["start"]),
            2 * ids.index(m["start"]) + 1,
            2 * ids.index(m["end"]),
            2 * ids.index(m["end"]) + 1,
        ]
        for i in range(4):
            for j in range(4):
                K[dofs[i]][dofs[j]] += k * ke[i][j]
    return K


def _stiffness_block(
    doc: dict[str, Any], K: list[list[float]], storage: str = "upper", dofs: list[int] | None = None
) -> dict[str, Any]:
    ids = [n["id"] for n in doc["nodes"]]
    dofs = list(range(len(K))) if dofs is None else dofs
    entries = []
    for a, i in enumerate(dofs):
        for b, j in enumerate(dofs):
            if (storage == "full" or b >= a) and K[i][j] != 0.0:
                entries.append([a, b, K[i][j]])
    return {"dofs": [[ids[i // 2], "xy"[i % 2]] for i in dofs], "storage": storage, "entries": entries}


def _run(doc: dict[str, Any]) -> tuple[set[str], Any]:
    ctx = build_context(parse_model(json.dumps(doc)))
    (outcome,) = stiffness_health.run(ctx)
    return {f.code for f in outcome.findings}, outcome


def _run_ctx(ctx: Context) -> tuple[set[str], Any]:
    (outcome,) = stiffness_health.run(ctx)
    return {f.code for f in outcome.findings}, outcome


# ------------------------------------------------------------------ rebuilt K
def test_clean_model_passes_with_definiteness_stated() -> None:
    codes, outcome = _run(_triangle())
    assert codes == {"KH107"}
    assert outcome.status.value == "pass"
    summary = dict(outcome.summary)
    assert summary["digits_lost"] == pytest.approx(math.log10(summary["condition_estimate"]), abs=0.01)


def test_asymmetric_rebuilt_matrix_is_caught() -> None:
    ctx = build_context(parse_model(json.dumps(_triangle())))
    K = ctx.system.K.tolil()
    K[0, 2] += 1.0e3
    codes, outcome = _run_ctx(replace(ctx, system=replace(ctx.system, K=K.tocsr())))
    assert "KH101" in codes
    assert outcome.status.value == "fail"


def test_stiffness_against_rigid_motion_is_caught_and_located() -> None:
    ctx = build_context(parse_model(json.dumps(_triangle())))
    K = ctx.system.K + sp.csr_matrix(([1.0e4], ([5], [5])), shape=ctx.system.K.shape)
    codes, outcome = _run_ctx(replace(ctx, system=replace(ctx.system, K=K.tocsr())))
    assert "KH102" in codes
    locs = {(f.location.node, f.location.axis) for f in outcome.findings if f.code == "KH102"}
    assert ("C", "y") in locs


def test_non_positive_member_stiffness_is_caught() -> None:
    model = parse_model(json.dumps(_triangle()))
    bad = replace(model, E=np.array([E, -E, E]))
    ctx = build_context(bad)
    codes, outcome = _run_ctx(ctx)
    assert "KH103" in codes
    assert [f.location.member for f in outcome.findings if f.code == "KH103"] == ["2"]


def test_extreme_stiffness_spread_is_warned_and_costs_digits() -> None:
    codes, outcome = _run(_triangle(E2=E * 1e11))
    assert {"KH106", "KH105"} <= codes
    (f,) = [f for f in outcome.findings if f.code == "KH106"]
    # stiffest member 2 (L = √13) over softest member 1 (L = 4): 10¹¹ · 4/√13
    assert f.reported == pytest.approx(1e11 * 4 / math.sqrt(13), rel=1e-12)
    assert f.data_dict()["stiffest"] == "2"


def test_numerically_singular_although_stable() -> None:
    """A stiffness contrast of 10¹⁸ makes the restrained K numerically singular though no mechanism exists."""
    codes, outcome = _run(_triangle(E2=E * 1e18))
    assert "KH104" in codes
    assert outcome.status.value == "fail"


# -------------------------------------------------------- the source's matrix
@pytest.mark.parametrize("storage", ["upper", "full"])
def test_source_matrix_that_agrees(storage: str) -> None:
    doc = _triangle()
    doc["stiffness"] = _stiffness_block(doc, _textbook_K(doc), storage)
    codes, _ = _run(doc)
    assert codes == {"KH107", "KH115"}


def test_source_matrix_with_a_wrong_member_names_it() -> None:
    doc = _triangle()
    doc["stiffness"] = _stiffness_block(doc, _textbook_K(doc, {"2": 0.5}))
    codes, outcome = _run(doc)
    assert "KH112" in codes
    assert "KH113" not in codes  # member 2 explains every disagreeing entry
    (f,) = [f for f in outcome.findings if f.code == "KH112"]
    assert f.location.member == "2"
    assert f.reported / f.expected == pytest.approx(0.5, rel=1e-9)


def test_asymmetric_source_matrix() -> None:
    doc = _triangle()
    K = _textbook_K(doc)
    K[0][3] += 5.0e3
    doc["stiffness"] = _stiffness_block(doc, K, "full")
    codes, _ = _run(doc)
    assert "KH110" in codes


def test_source_matrix_with_stiffness_at_a_joint_no_member_explains() -> None:
    """A grounded spring folded into the source's matrix at C y: differs at that joint only, and the full
    matrix then resists a rigid-body translation."""
    doc = _triangle()
    K = _textbook_K(doc)
    K[5][5] += 7.0e3
    doc["stiffness"] = _stiffness_block(doc, K)
    codes, outcome = _run(doc)
    assert {"KH113", "KH114"} <= codes
    assert "KH112" not in codes
    assert [f.location.node for f in outcome.findings if f.code == "KH113"] == ["C"]


def test_singular_restrained_source_matrix() -> None:
    """The source's restrained matrix (free dofs B x, C x, C y) with member 3 left out: B x and C are held by
    members 1, 2 only, which is still regular; leaving out members 2 and 3 makes C free: singular."""
    doc = _triangle()
    K = _textbook_K(doc, {"2": 0.0, "3": 0.0})
    doc["stiffness"] = _stiffness_block(doc, K, dofs=[2, 4, 5])
    codes, _ = _run(doc)
    assert "KH114" in codes
    assert "KH112" in codes
