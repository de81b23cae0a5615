"""Generated mutation families of the diagnosis: one cause per variant, then two and three at once, and clean
results that must produce no diagnosis at all.  Every variant asserts the code and the location named.

The truth of each variant is the mistake injected: either in the *source's model* (a member's EA, a member
left out, a load at another factor, a spring's stiffness, a roller's direction), whose answer is solved here
independently of the project, or in the *source's tables* (a slip of one number, two labels swapped, two
components swapped, an axis reversed), applied to the correct answer.

Models and the source of their correct answers:

* ``pratt``: the six-joint Pratt truss of ``tests/test_mutation.py`` (determinate; one force checked there
  by the method of sections, Hibbeler, *Structural Analysis*, 8th ed., §3.5, recalled from memory);
* ``three_bar``: reference_cases/published/timoshenko_three_bar.json (Timoshenko, *Strength of Materials*,
  Part I, 3rd ed., ch. I), indeterminate;
* ``tripod``: reference_cases/published/tripod_space.json (closed form by joint equilibrium), 3D;
* ``inclined``: reference_cases/published/logan_inclined_roller.json (Logan, *A First Course in the Finite
  Element Method*, 4th ed., inclined supports, Example 3.9; recalled from memory);
* ``spring``: reference_cases/published/spring_series.json (a bar and a spring in series; common practice);

  the answers of these (and of their sources' variants) are exact sympy solves
  (``test_checks_common.exact_solve``);
* ``deck`` (invented, 2D, 121 members, 3 load cases, a pin, an inclined roller and a spring) and ``tower``
  (invented, 3D, 160 members, 3 load cases): dense float64 solves by the direct stiffness method with
  Lagrange multipliers for the restraints (Kassimali, *Matrix Analysis of Structures*, 2nd ed., ch. 3),
  written here with numpy, independently of the project's sparse solver.

``test_rates`` measures the rates the closing note quotes (causes named / variants; false causes on
clean results) and holds them to a floor.
"""

from __future__ import annotations

import copy
import functools
import json
import math
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from test_checks_common import ExactCase, context, exact_solve, model_of, parse, results_text
from test_mutation import PRATT

from audit.checks import diagnosis, recompute
from audit.findings import Severity

PUBLISHED = Path(__file__).resolve().parent.parent / "reference_cases" / "published"
AX = ("x", "y", "z")
Doc = dict[str, Any]
Cases = dict[str, ExactCase]


# ===================================================================== models
def _published(name: str) -> Doc:
    doc = json.loads((PUBLISHED / name).read_text())
    doc.pop("results", None)
    doc.pop("combinations", None)
    return doc


def _three_bar() -> Doc:
    doc = _published("timoshenko_three_bar.json")
    doc["load_cases"] = [
        {"id": "load", "loads": [{"node": "D", "fx": 30, "fy": -100}]},
        {"id": "side", "loads": [{"node": "D", "fx": 60, "fy": -20}]},
    ]
    return doc


def deck() -> Doc:
    """Invented: a 30-panel footbridge deck truss, bottom chord loaded, 4 m panels, 3 m deep."""
    n = 30
    nodes = [{"id": f"B{i}", "x": 4 * i, "y": 0} for i in range(n + 1)]
    nodes += [{"id": f"T{i}", "x": 4 * i, "y": 3} for i in range(n + 1)]
    mem = []
    for i in range(n):
        mem.append((f"b{i}", f"B{i}", f"B{i + 1}", 0.004))
        mem.append((f"t{i}", f"T{i}", f"T{i + 1}", 0.004))
        mem.append((f"d{i}", f"B{i}", f"T{i + 1}", 0.002) if i < n // 2 else (f"d{i}", f"T{i}", f"B{i + 1}", 0.002))
    for i in range(n + 1):
        mem.append((f"v{i}", f"B{i}", f"T{i}", 0.0015))
    return {
        "format": "truss-audit-model",
        "version": 1,
        "title": "Footbridge deck truss (invented)",
        "dimensions": 2,
        "units": {"length": "m", "force": "kN"},
        "nodes": nodes,
        "members": [{"id": m, "start": s, "end": e, "E": 2.1e8, "A": a} for m, s, e, a in mem],
        "supports": [
            {"node": "B0", "restrain": ["x", "y"]},
            {"node": f"B{n}", "restrain": [{"direction": [1, 2]}]},
            {"node": f"B{n // 2}", "springs": [{"axis": "y", "stiffness": 20000}]},
        ],
        "load_cases": [
            {"id": "deck", "loads": [{"node": f"B{i}", "fy": -12 - (i % 3)} for i in range(1, n)]},
            {"id": "wind", "loads": [{"node": f"T{i}", "fx": 3 + (i % 2)} for i in range(0, n + 1, 2)]},
            {"id": "cart", "loads": [{"node": "B9", "fy": -80, "fx": 5}, {"node": "B21", "fy": -40}]},
        ],
    }


def tower() -> Doc:
    """Invented: a 12-storey lattice mast, 2 m square, 2.5 m storeys, braced on every face."""
    levels = 12
    corners = [(0, 0), (2, 0), (2, 2), (0, 2)]
    nodes = [
        {"id": f"N{k}_{c}", "x": x, "y": y, "z": 2.5 * k} for k in range(levels + 1) for c, (x, y) in enumerate(corners)
    ]
    mem = []
    for k in range(levels):
        for c in range(4):
            a, b = f"N{k}_{c}", f"N{k}_{(c + 1) % 4}"
            up, upn = f"N{k + 1}_{c}", f"N{k + 1}_{(c + 1) % 4}"
            mem.append((f"L{k}_{c}", a, up, 0.003))
            mem.append((f"H{k + 1}_{c}", up, upn, 0.0012))
            mem.append((f"D{k}_{c}", a, upn, 0.0008) if (k + c) % 2 == 0 else (f"D{k}_{c}", b, up, 0.0008))
        mem.append((f"P{k + 1}", f"N{k + 1}_0", f"N{k + 1}_2", 0.0008))
    return {
        "format": "truss-audit-model",
        "version": 1,
        "title": "Lattice mast (invented)",
        "dimensions": 3,
        "units": {"length": "m", "force": "kN"},
        "nodes": nodes,
        "members": [{"id": m, "start": s, "end": e, "E": 2.0e8, "A": a} for m, s, e, a in mem],
        "supports": [{"node": f"N0_{c}", "restrain": ["x", "y", "z"]} for c in range(4)],
        "load_cases": [
            {
                "id": "wind_x",
                "loads": [{"node": f"N{k}_{c}", "fx": 1.5 + 0.2 * k} for k in range(1, levels + 1) for c in (0, 3)],
            },
            {"id": "wind_y", "loads": [{"node": f"N{k}_0", "fy": 2 + 0.1 * k} for k in range(2, levels + 1, 2)]},
            {"id": "head", "loads": [{"node": f"N{levels}_{c}", "fz": -25, "fx": 2} for c in range(4)]},
        ],
    }


def _E_A(doc: Doc, m: Doc) -> tuple[float, float]:
    """A member's E and A, inline or from its material and section."""
    E = m["E"] if "E" in m else doc["materials"][m["material"]]["E"]
    A = m["A"] if "A" in m else doc["sections"][m["section"]]["A"]
    return float(E), float(A)


def float_solve(doc: Doc) -> Cases:
    """Dense float64 direct stiffness solve with Lagrange multipliers: ``[K −Cᵀ; C 0][u; λ] = [f; 0]``;
    forces ``EA/L·n·(u_e − u_s)``; reactions ``K_members u − f`` at supported joints."""
    d = int(doc["dimensions"])
    ids = [str(n["id"]) for n in doc["nodes"]]
    ni = {n: i for i, n in enumerate(ids)}
    X = np.array([[float(n[a]) for a in AX[:d]] for n in doc["nodes"]])
    nd = len(ids) * d
    K = np.zeros((nd, nd))
    mems = []
    for m in doc["members"]:
        s, e = ni[str(m["start"])], ni[str(m["end"])]
        v = X[e] - X[s]
        L = float(np.linalg.norm(v))
        n = v / L
        E, A = _E_A(doc, m)
        k = E * A / L
        blk = k * np.outer(n, n)
        for p, q, sg in ((s, s, 1), (e, e, 1), (s, e, -1), (e, s, -1)):
            K[p * d : p * d + d, q * d : q * d + d] += sg * blk
        mems.append((s, e, n, k))
    Km = K.copy()
    C = []
    supported = set()
    for sup in doc.get("supports", []):
        node = ni[str(sup["node"])]
        supported.add(node)
        for r in sup.get("restrain", []):
            c = np.zeros(nd)
            if isinstance(r, str):
                c[node * d + AX.index(r)] = 1.0
            else:
                dirv = np.array(r["direction"], dtype=float)
                c[node * d : node * d + d] = dirv / np.linalg.norm(dirv)
            C.append(c)
        for spr in sup.get("springs", []):
            if "axis" in spr:
                sd = np.eye(d)[AX.index(spr["axis"])]
            else:
                sd = np.array(spr["direction"], dtype=float)
                sd = sd / np.linalg.norm(sd)
            K[node * d : node * d + d, node * d : node * d + d] += float(spr["stiffness"]) * np.outer(sd, sd)
    Cm = np.array(C)
    nc = Cm.shape[0]
    M = np.block([[K, -Cm.T], [Cm, np.zeros((nc, nc))]])
    out: Cases = {}
    for lc in doc["load_cases"]:
        f = np.zeros(nd)
        for ld in lc.get("loads", []):
            for a, key in enumerate(("fx", "fy", "fz")[:d]):
                f[ni[str(ld["node"])] * d + a] += float(ld.get(key, 0.0))
        u = np.linalg.solve(M, np.concatenate([f, np.zeros(nc)]))[:nd]
        N = np.array([k * float(n @ (u[e * d : e * d + d] - u[s * d : s * d + d])) for s, e, n, k in mems])
        R = (Km @ u - f).reshape(-1, d)
        R[[i for i in range(len(ids)) if i not in supported]] = 0.0
        out[str(lc["id"])] = ExactCase(str(lc["id"]), u.reshape(-1, d), N, R)
    return out


@dataclass(frozen=True)
class Subject:
    name: str
    doc: Doc
    solve: Callable[[Doc], Cases]


SUBJECTS = {
    "pratt": Subject("pratt", PRATT, exact_solve),
    "three_bar": Subject("three_bar", _three_bar(), exact_solve),
    "tripod": Subject("tripod", _published("tripod_space.json"), exact_solve),
    "inclined": Subject("inclined", _published("logan_inclined_roller.json"), exact_solve),
    "spring": Subject("spring", _published("spring_series.json"), exact_solve),
    "deck": Subject("deck", deck(), float_solve),
    "tower": Subject("tower", tower(), float_solve),
}


@functools.cache
def correct(name: str) -> Cases:
    s = SUBJECTS[name]
    return s.solve(s.doc)


@functools.cache
def _model(name: str) -> Any:
    return model_of(SUBJECTS[name].doc)


def diagnose(name: str, cases: Cases, digits: int | None = 6) -> list[Any]:
    model = _model(name)
    res = parse(model, results_text(model, cases, digits=digits))
    return [f for o in diagnosis.run(context(model, res)) for f in o.findings]


# ===================================================================== mutations
#: a mutation: (subject, cases) -> (mutated cases, expected {(code, place)})
Expect = set[tuple[str, str]]


def _copy(cases: Cases) -> Cases:
    return {
        k: ExactCase(k, v.displacements.copy(), v.axial_forces.copy(), v.reactions.copy()) for k, v in cases.items()
    }


def _first(cases: Cases) -> str:
    return next(iter(cases))


def _member_ids(name: str) -> list[str]:
    return [str(m["id"]) for m in SUBJECTS[name].doc["members"]]


def _node_ids(name: str) -> list[str]:
    return [str(n["id"]) for n in SUBJECTS[name].doc["nodes"]]


def _big_members(name: str, case: str, share: float = 0.2) -> list[int]:
    N = correct(name)[case].axial_forces
    return [int(i) for i in np.flatnonzero(np.abs(N) >= share * np.max(np.abs(N)))]


def _free_nodes(name: str) -> list[int]:
    doc = SUBJECTS[name].doc
    sup = {str(s["node"]) for s in doc.get("supports", [])}
    return [i for i, n in enumerate(_node_ids(name)) if n not in sup]


def slip_force(name: str, k: int) -> tuple[Cases, Expect]:
    cases = _copy(correct(name))
    c = _first(cases)
    big = _big_members(name, c)
    m = big[(7 * k + 3) % len(big)]
    cases[c].axial_forces[m] *= (1.1, 0.8, -1.0, 1.5)[k % 4]
    return cases, {("DX115", f"member {_member_ids(name)[m]}")}


def slip_displacement(name: str, k: int) -> tuple[Cases, Expect]:
    cases = _copy(correct(name))
    c = _first(cases)
    U = cases[c].displacements
    free = _free_nodes(name)
    cand = [(i, a) for i in free for a in range(U.shape[1]) if abs(U[i, a]) >= 0.2 * np.max(np.abs(U))]
    i, a = cand[(5 * k + 1) % len(cand)]
    U[i, a] *= (1.2, 0.5, -1.0)[k % 3]
    return cases, {("DX115", f"node {_node_ids(name)[i]} {AX[a]}")}


def slip_reaction(name: str, k: int) -> tuple[Cases, Expect]:
    cases = _copy(correct(name))
    c = _first(cases)
    R = cases[c].reactions
    cand = [(i, a) for i in range(R.shape[0]) for a in range(R.shape[1]) if abs(R[i, a]) >= 0.2 * np.max(np.abs(R))]
    i, a = cand[k % len(cand)]
    R[i, a] *= (1.3, 0.7)[k % 2]
    return cases, {("DX115", f"node {_node_ids(name)[i]} {AX[a]}")}


def swap_forces(name: str, k: int) -> tuple[Cases, Expect]:
    cases = _copy(correct(name))
    c = _first(cases)
    N = cases[c].axial_forces
    big = _big_members(name, c)
    pairs = [(i, j) for i in big for j in big if i < j and abs(N[i] - N[j]) > 0.1 * np.max(np.abs(N))]
    i, j = pairs[(11 * k) % len(pairs)]
    N[[i, j]] = N[[j, i]]
    ids = _member_ids(name)
    return cases, {("DX116", f"member {ids[i]}")}


def swap_components(name: str, k: int) -> tuple[Cases, Expect]:
    cases = _copy(correct(name))
    c = _first(cases)
    U = cases[c].displacements
    free = _free_nodes(name)
    cand = [i for i in free if abs(U[i, 0] - U[i, 1]) > 0.2 * np.max(np.abs(U))]
    i = cand[(3 * k) % len(cand)]
    U[i, [0, 1]] = U[i, [1, 0]]
    return cases, {("DX117", f"node {_node_ids(name)[i]}")}


def axis_reversed(name: str, k: int) -> tuple[Cases, Expect]:
    d = int(SUBJECTS[name].doc["dimensions"])
    a = 1 if d == 2 else (2, 0)[k % 2]
    flip = np.ones(d)
    flip[a] = -1.0
    cases = {
        cid: ExactCase(cid, v.displacements * flip, v.axial_forces, v.reactions * flip)
        for cid, v in correct(name).items()
    }
    return cases, {("DX118", "model")}


def _source(name: str, change: Callable[[Doc], None]) -> Cases:
    src = copy.deepcopy(SUBJECTS[name].doc)
    change(src)
    return SUBJECTS[name].solve(src)


def member_ea(name: str, k: int) -> tuple[Cases, Expect]:
    c = _first(correct(name))
    big = _big_members(name, c, 0.3)
    m = big[(5 * k + 2) % len(big)]
    factor = (0.1, 10.0, 0.5, 0.1005)[k % 4]

    def change(src: Doc) -> None:
        E, A = _E_A(src, src["members"][m])
        src["members"][m].pop("section", None)
        src["members"][m].pop("material", None)
        src["members"][m].update({"E": E, "A": A * factor})

    return _source(name, change), {("DX104", f"member {_member_ids(name)[m]}")}


def load_factor(name: str, k: int) -> tuple[Cases, Expect]:
    doc = SUBJECTS[name].doc
    loads = doc["load_cases"][0]["loads"]
    j = (3 * k + 1) % len(loads)
    factor = (1.5, 0.0, 2.0, 0.8)[k % 4]
    code = {0.0: "DX105", 2.0: "DX106"}.get(factor, "DX112")

    def change(src: Doc) -> None:
        ld = src["load_cases"][0]["loads"][j]
        for key in ("fx", "fy", "fz"):
            if key in ld:
                ld[key] = float(ld[key]) * factor

    return _source(name, change), {(code, f"node {loads[j]['node']}")}


def _stable_without(name: str, m: int) -> bool:
    doc = copy.deepcopy(SUBJECTS[name].doc)
    del doc["members"][m]
    try:
        cases = float_solve(doc)
    except np.linalg.LinAlgError:
        return False
    return all(np.all(np.isfinite(v.displacements)) and np.max(np.abs(v.displacements)) < 1e3 for v in cases.values())


def member_left_out(name: str, k: int) -> tuple[Cases, Expect]:
    c = _first(correct(name))
    ok = [m for m in _big_members(name, c, 0.1) if _stable_without(name, m)]
    m = ok[(7 * k) % len(ok)]
    src = copy.deepcopy(SUBJECTS[name].doc)
    del src["members"][m]
    sol = SUBJECTS[name].solve(src)
    cases = {
        cid: ExactCase(cid, v.displacements, np.insert(v.axial_forces, m, 0.0), v.reactions) for cid, v in sol.items()
    }
    return cases, {("DX111", f"member {_member_ids(name)[m]}")}


def spring_stiffness(name: str, k: int) -> tuple[Cases, Expect]:
    doc = SUBJECTS[name].doc
    at = [i for i, s in enumerate(doc["supports"]) if s.get("springs")]
    i = at[k % len(at)]
    factor = (10.0, 0.1, 3.0)[k % 3]

    def change(src: Doc) -> None:
        src["supports"][i]["springs"][0]["stiffness"] = float(src["supports"][i]["springs"][0]["stiffness"]) * factor

    return _source(name, change), {("DX114", f"node {doc['supports'][i]['node']}")}


def inclined_along_axis(name: str, k: int) -> tuple[Cases, Expect]:
    doc = SUBJECTS[name].doc
    at = [i for i, s in enumerate(doc["supports"]) if any(not isinstance(r, str) for r in s.get("restrain", []))]
    i = at[0]
    axis = ("y", "x")[k % 2]

    def change(src: Doc) -> None:
        src["supports"][i]["restrain"] = [axis]

    return _source(name, change), {("DX113", f"node {doc['supports'][i]['node']}")}


FAMILIES: dict[str, Callable[[str, int], tuple[Cases, Expect]]] = {
    "slip_force": slip_force,
    "slip_displacement": slip_displacement,
    "slip_reaction": slip_reaction,
    "swap_forces": swap_forces,
    "swap_components": swap_components,
    "axis_reversed": axis_reversed,
    "member_ea": member_ea,
    "load_factor": load_factor,
    "member_left_out": member_left_out,
    "spring_stiffness": spring_stiffness,
    "inclined_along_axis": inclined_along_axis,
}

#: the families that apply to each subject (a member left out needs an indeterminate truss; a spring or an
#: inclined roller needs one in the model; component swaps need a plane or space truss with two axes)
APPLIES = {
    "pratt": [
        "slip_force",
        "slip_displacement",
        "slip_reaction",
        "swap_forces",
        "swap_components",
        "axis_reversed",
        "member_ea",
        "load_factor",
    ],
    "three_bar": [
        "slip_force",
        "slip_displacement",
        "slip_reaction",
        "axis_reversed",
        "member_ea",
        "load_factor",
        "member_left_out",
    ],
    "tripod": ["slip_force", "slip_reaction", "axis_reversed", "load_factor"],
    "inclined": ["slip_force", "slip_displacement", "inclined_along_axis", "load_factor"],
    "spring": ["spring_stiffness", "load_factor"],
    "deck": list(FAMILIES),
    "tower": [
        "slip_force",
        "slip_displacement",
        "slip_reaction",
        "swap_forces",
        "swap_components",
        "axis_reversed",
        "member_ea",
        "load_factor",
        "member_left_out",
    ],
}
VARIANTS = 2
SINGLE = [(s, fam, k) for s, fams in APPLIES.items() for fam in fams for k in range(VARIANTS)]


def named(found: list[Any]) -> Expect:
    return {(f.code, f.location.label()) for f in found if f.severity >= Severity.WARNING}


def _labels_match(expected: Expect, got: Expect) -> bool:
    """Each expected (code, place) named; a swap may be located at either of its two labels."""
    for code, place in expected:
        if (code, place) in got:
            continue
        if code == "DX116" and any(c == "DX116" for c, _p in got):
            continue
        return False
    return len(got) == len(expected)


@pytest.mark.parametrize(("subject", "family", "k"), SINGLE, ids=[f"{s}-{f}-{k}" for s, f, k in SINGLE])
def test_one_cause_is_named_with_its_place(subject: str, family: str, k: int) -> None:
    cases, expected = FAMILIES[family](subject, k)
    found = diagnose(subject, cases)
    got = named(found)
    assert _labels_match(expected, got), (expected, got, [f.message for f in found])


# ===================================================================== several causes
def _combine(name: str, fams: tuple[str, ...], k: int) -> tuple[Cases, Expect]:
    """Table mistakes applied on top of the source's answer (a structural cause first, when there is one)."""
    structural = [f for f in fams if f in ("member_ea", "load_factor")]
    table = [f for f in fams if f not in structural]
    expected: Expect = set()
    if structural:
        cases, exp = FAMILIES[structural[0]](name, k)
        expected |= exp
    else:
        cases = _copy(correct(name))
    base = correct(name)
    for j, fam in enumerate(table):
        mutated, exp = FAMILIES[fam](name, k + 3 * j + 1)
        c = _first(cases)
        diff = {
            "U": mutated[c].displacements - base[c].displacements,
            "N": mutated[c].axial_forces - base[c].axial_forces,
            "R": mutated[c].reactions - base[c].reactions,
        }
        cases[c] = ExactCase(
            c, cases[c].displacements + diff["U"], cases[c].axial_forces + diff["N"], cases[c].reactions + diff["R"]
        )
        expected |= exp
    return cases, expected


MULTI = [
    ("pratt", ("member_ea", "slip_force"), 0),
    ("pratt", ("slip_force", "slip_reaction"), 1),
    ("three_bar", ("load_factor", "slip_force"), 0),
    ("deck", ("member_ea", "slip_force"), 0),
    ("deck", ("load_factor", "slip_displacement"), 1),
    ("deck", ("slip_force", "slip_displacement"), 2),
    ("deck", ("member_ea", "slip_force", "slip_reaction"), 0),
    ("deck", ("load_factor", "slip_force", "slip_displacement"), 1),
    ("tower", ("member_ea", "slip_force"), 1),
    ("tower", ("slip_force", "slip_displacement", "slip_reaction"), 0),
    ("tower", ("load_factor", "slip_force", "slip_displacement"), 2),
]


def _distinct(expected: Expect, n: int) -> bool:
    return len(expected) == n


@pytest.mark.parametrize(("subject", "fams", "k"), MULTI, ids=[f"{s}-{'+'.join(f)}-{k}" for s, f, k in MULTI])
def test_two_and_three_causes_are_named_cause_by_cause(subject: str, fams: tuple[str, ...], k: int) -> None:
    cases, expected = _combine(subject, fams, k)
    if not _distinct(expected, len(fams)):
        pytest.skip("two mutations landed on the same number")
    found = diagnose(subject, cases)
    got = named(found)
    assert _labels_match(expected, got), (expected, got, [f.message for f in found])
    first = _first(cases)
    for f in found:
        if f.severity >= Severity.WARNING and f.case == first and "causes_in_set" in f.data_dict():
            assert f.data_dict()["causes_in_set"] in (len(fams), len(fams) - 1)  # a case-wide scale counts apart


# ===================================================================== clean results
CLEAN = [(s, d) for s in SUBJECTS for d in (None, 4, 3)]


@pytest.mark.parametrize(("subject", "digits"), CLEAN, ids=[f"{s}-{d or 'full'}" for s, d in CLEAN])
def test_clean_results_get_no_diagnosis(subject: str, digits: int | None) -> None:
    assert diagnose(subject, correct(subject), digits) == []


def test_declared_units_and_sign_convention_get_no_diagnosis() -> None:
    """Results written in N and mm and compression positive, and declared so, are clean."""
    name = "deck"
    model = _model(name)
    cases = {
        c: ExactCase(c, 1000.0 * v.displacements, -1000.0 * v.axial_forces, 1000.0 * v.reactions)
        for c, v in correct(name).items()
    }
    text = results_text(
        model, cases, digits=5, sign_convention="compression_positive", units={"length": "mm", "force": "N"}
    )
    found = [f for o in diagnosis.run(context(model, parse(model, text))) for f in o.findings]
    assert found == []


# ===================================================================== rates
def test_rates() -> None:
    """Causes named / variants over every single-cause variant (a third seed of each family), and false causes
    on the clean results; printed for the closing note and held to a floor."""
    named_ok = total = 0
    misses = []
    for s, fams in APPLIES.items():
        for fam in fams:
            cases, expected = FAMILIES[fam](s, VARIANTS)
            total += 1
            got = named(diagnose(s, cases))
            if _labels_match(expected, got):
                named_ok += 1
            else:
                misses.append((s, fam, sorted(expected), sorted(got)))
    false = sum(bool(diagnose(s, correct(s), d)) for s, d in CLEAN)
    print(f"\ndiagnosis: {named_ok}/{total} causes named, {false}/{len(CLEAN)} clean runs with a false cause")
    for m in misses:
        print("  missed:", m)
    assert false == 0
    assert named_ok >= math.ceil(0.9 * total), misses


# ===================================================================== property test: never a crash
RANDOM_CAUSES = ("slip_force", "slip_displacement", "member_ea", "load_factor", "axis_reversed", "swap_forces")


def _random_variant(doc: Doc, cause: str) -> tuple[Cases, Cases, Expect]:
    """(correct answer, the source's answer with one cause, expected (code, place)) of a drawn truss."""
    doc.pop("combinations", None)
    good = float_solve(doc)
    c = next(iter(good))
    N, U = good[c].axial_forces, good[c].displacements
    mids = [str(m["id"]) for m in doc["members"]]
    nids = [str(n["id"]) for n in doc["nodes"]]
    bad = _copy(good)
    m = int(np.argmax(np.abs(N)))
    if cause == "slip_force":
        bad[c].axial_forces[m] *= 1.5
        return good, bad, {("DX115", f"member {mids[m]}")}
    if cause == "slip_displacement":
        i = int(np.argmax(np.abs(U)))
        bad[c].displacements.reshape(-1)[i] *= 1.5
        node, a = divmod(i, U.shape[1])
        return good, bad, {("DX115", f"node {nids[node]} {AX[a]}")}
    if cause == "swap_forces":
        j = int(np.argsort(np.abs(N))[-2])
        bad[c].axial_forces[[m, j]] = bad[c].axial_forces[[j, m]]
        return good, bad, {("DX116", f"member {mids[m]}")}
    if cause == "axis_reversed":
        # without displacements along the axis, reversing it only flips reactions: the sign of the reactions
        # (DX110) or of a load says the same, so the axis must move
        assume(float(np.max(np.abs(U[:, -1]))) > max(1e-9, 0.05 * float(np.max(np.abs(U)))))
        flip = np.ones(U.shape[1])
        flip[-1] = -1.0
        bad = {k: ExactCase(k, v.displacements * flip, v.axial_forces, v.reactions * flip) for k, v in good.items()}
        return good, bad, {("DX118", "model")}
    src = copy.deepcopy(doc)
    if cause == "member_ea":
        src["members"][m]["A"] = float(src["members"][m]["A"]) * 0.1
        return good, float_solve(src), {("DX104", f"member {mids[m]}")}
    ld = src["load_cases"][0]["loads"][0]
    for key in ("fx", "fy", "fz"):
        if key in ld:
            ld[key] = float(ld[key]) * 1.5
    return good, float_solve(src), {("DX112", f"node {ld['node']}")}


def _identifiable(good: Cases, bad: Cases) -> bool:
    """The injected cause changes some number by more than 2 % of its kind's scale (else it is not a
    mistake the audit resolves, DEVELOPERS.md tolerances)."""
    c = next(iter(good))
    for a, b, floor in (
        (good[c].axial_forces, bad[c].axial_forces, 1e-6),
        (good[c].displacements, bad[c].displacements, 1e-9),  # float noise of a rigid case is no displacement
        (good[c].reactions, bad[c].reactions, 1e-6),
    ):
        scale = float(np.max(np.abs(a))) if a.size else 0.0
        if scale > floor and float(np.max(np.abs(a - b))) > 0.02 * scale:
            return True
    return False


from hypothesis import HealthCheck, assume, given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402
from strategies import plane_trusses, space_trusses  # noqa: E402
from test_checks_common import EXAMPLES  # noqa: E402


@settings(
    max_examples=EXAMPLES, deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much]
)
@given(
    doc=st.one_of(
        plane_trusses(max_nodes=9, springs=False, inclined_supports=True, combinations=False),
        space_trusses(max_nodes=8, springs=False, inclined_supports=False, combinations=False),
    ),
    cause=st.sampled_from(RANDOM_CAUSES),
)
def test_random_truss_with_one_random_cause_never_raises_and_names_it(doc: Doc, cause: str) -> None:
    """Random stable trusses (2D and 3D, determinate and indeterminate; tests/strategies.py), one random
    cause each: the diagnosis never raises, and it names the cause (or, when the numbers cannot tell two
    places apart, lists the injected one among the alternatives)."""
    good, bad, expected = _random_variant(doc, cause)
    assume(_identifiable(good, bad))
    model = model_of(doc)
    res = parse(model, results_text(model, bad, digits=8))
    ctx = context(model, res)
    found = [f for o in diagnosis.run(ctx) for f in o.findings]
    first = next(iter(good))
    # a mutation the comparison itself does not resolve (inside the allowances) is no cause to name
    assume(found or any(f.severity >= Severity.ERROR for o in recompute.run(ctx) for f in o.findings))
    got = {(f.code, f.location.label()) for f in found if f.severity >= Severity.WARNING and f.case == first}
    alts = {(code, place) for f in found for code, place, *_r in f.data_dict().get("alternatives", ())}
    (code, place) = next(iter(expected))
    ok = (code, place) in got or (code, place) in alts or (code == "DX116" and any(c == code for c, _p in got))
    # one member's EA that alone sets every displacement scales them all: a length unit looks the same, and the
    # finding says so (the forces of the truss do not change)
    ok = ok or (code == "DX104" and any(f.code == "DX103" and "uniform error in E" in f.message for f in found))
    assert ok, (expected, got, [f.message for f in found])
