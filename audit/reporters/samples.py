"""Small hand-built models and audit results for demonstrating and testing the reporters.

These are demo data for the *formatting* of reports, not audit answers.  Where
an ``expected`` number appears it is the closed-form method-of-joints value of
the model it belongs to (derivation in each function's docstring); the
``reported`` numbers are deliberately wrong so that the reports have something
to show.
"""

from __future__ import annotations

import numpy as np

from audit.findings import AuditResult, CheckOutcome, Finding, Location, Severity, Status
from audit.model import LoadCase, Model, Units

_SHA_MODEL = "3f9a" * 16
_SHA_RESULTS = "b07c" * 16


def _model(
    title: str,
    node_ids: tuple[str, ...],
    coords: list[list[float]],
    members: list[tuple[str, int, int]],
    restraints: list[tuple[int, list[float], str]],
    cases: list[tuple[str, dict[int, list[float]]]],
    springs: list[tuple[int, list[float], float]] = (),  # type: ignore[assignment]
) -> Model:
    xyz = np.asarray(coords, dtype=np.float64)
    dim = xyz.shape[1]
    n, m = len(node_ids), len(members)
    load_cases = []
    for cid, loads in cases:
        f = np.zeros((n, dim))
        for i, v in loads.items():
            f[i] = v
        load_cases.append(LoadCase(cid, cid, f, np.zeros(m), np.zeros(m), np.zeros(len(restraints))))
    return Model(
        title=title,
        dim=dim,
        units=Units("m", "kN"),
        node_ids=node_ids,
        coords=xyz,
        member_ids=tuple(mid for mid, _, _ in members),
        conn=np.asarray([[a, b] for _, a, b in members], dtype=np.int64).reshape(m, 2),
        E=np.full(m, 2.0e8),
        A=np.full(m, 1.2e-3),
        alpha=np.zeros(m),
        restraint_node=np.asarray([r[0] for r in restraints], dtype=np.int64),
        restraint_dir=np.asarray([r[1] for r in restraints], dtype=np.float64).reshape(len(restraints), dim),
        restraint_label=tuple(r[2] for r in restraints),
        spring_node=np.asarray([s[0] for s in springs], dtype=np.int64),
        spring_dir=np.asarray([s[1] for s in springs], dtype=np.float64).reshape(len(springs), dim),
        spring_k=np.asarray([s[2] for s in springs], dtype=np.float64),
        load_cases=tuple(load_cases),
        combinations=(),
    )


def roof_model() -> Model:
    """The four-joint roof truss of the exchange-format example (A, B, C on the chord, D at the apex)."""
    return _model(
        "Boathouse roof, frame 3",
        ("A", "B", "C", "D"),
        [[0, 0], [4, 0], [8, 0], [4, 3]],
        [("1", 0, 1), ("2", 1, 2), ("3", 0, 3), ("4", 3, 2), ("5", 1, 3)],
        [(0, [1, 0], "x"), (0, [0, 1], "y"), (2, [0, 1], "y")],
        [("snow", {3: [0.0, -12.5]}), ("heat", {})],
    )


def roof_result() -> AuditResult:
    """A failing audit of :func:`roof_model`.

    Expected values by the method of joints (common practice): with 12.5 kN
    down at D and symmetric supports, each reaction is 6.25 kN; at joint A,
    N3·(3/5) + 6.25 = 0 gives N3 = −125/12 = −10.41667 kN and N1 = −N3·(4/5) =
    25/3 = 8.33333 kN; at joint B, N5 = 0.  The reported −10.9 kN for member 3
    is the exchange-format example's number.
    """
    af = (("quantity", "axial force"),)
    outcomes = (
        CheckOutcome("stability", None, Status.PASS, summary=(("maxwell_count", 0),)),
        CheckOutcome("equilibrium", "snow", Status.PASS, summary=(("quantities", 9),)),
        CheckOutcome("equilibrium", "heat", Status.NOT_RUN, reason="no reported results for this case"),
        CheckOutcome(
            "recompute",
            "snow",
            Status.FAIL,
            findings=(
                Finding(
                    "RC101",
                    Severity.ERROR,
                    "axial force differs from the recomputed value by 4.6 %",
                    case="snow",
                    location=Location(member="3"),
                    reported=-10.9,
                    expected=-125 / 12,
                    difference=-10.9 + 125 / 12,
                    tolerance=0.0104,
                    units="kN",
                    data=af,
                ),
                Finding(
                    "RC101",
                    Severity.ERROR,
                    "axial force differs from the recomputed value by 1.2 %",
                    case="snow",
                    location=Location(member="1"),
                    reported=8.433,
                    expected=25 / 3,
                    difference=8.433 - 25 / 3,
                    tolerance=0.0083,
                    units="kN",
                    data=af,
                ),
                Finding(
                    "RC102",
                    Severity.WARNING,
                    "reaction agrees only to the printed digits",
                    case="snow",
                    location=Location(node="C", axis="y"),
                    reported=6.3,
                    expected=6.25,
                    difference=0.05,
                    tolerance=0.00625,
                    units="kN",
                    data=(("quantity", "reaction"), ("quantum", 0.05), ("within_rounding", True)),
                ),
                Finding(
                    "RC103",
                    Severity.WARNING,
                    "member 5 has no reported axial force <zero-force member?>",
                    case="snow",
                    location=Location(member="5"),
                ),
            ),
        ),
        CheckOutcome("recompute", "heat", Status.NOT_RUN, reason="no reported results for this case"),
        CheckOutcome("precision", None, Status.PASS, summary=(("digits", 30),)),
        CheckOutcome(
            "diagnosis",
            "snow",
            Status.PASS,
            findings=(
                Finding(
                    "DX104",
                    Severity.WARNING,
                    "member 3's axial stiffness in the source is 0.95333× the model's (the reported results fit "
                    "EA = 2.288e+05 against 2.4e+05: wrong section or material); with this corrected, every "
                    "reported number agrees (largest difference 0.41 of its allowance)",
                    case="snow",
                    location=Location(member="3"),
                    data=(
                        ("member", "3"),
                        ("EA_ratio", 0.95333),
                        (
                            "cause",
                            "member 3's axial stiffness in the source is 0.95333× the model's (the reported "
                            "results fit EA = 2.288e+05 against 2.4e+05: wrong section or material)",
                        ),
                        (
                            "agreement",
                            "with this corrected, every reported number agrees (largest difference 0.41 "
                            "of its allowance)",
                        ),
                        ("explains", 2),
                    ),
                ),
            ),
            summary=(("axial_force_differing", 2), ("displacement_differing", 0), ("reaction_differing", 0)),
        ),
    )
    return AuditResult(
        title="Boathouse roof, frame 3",
        outcomes=outcomes,
        fail_on=Severity.ERROR,
        tolerances={"force_rel": 1.0e-3, "force_abs": 1.0e-6, "displacement_rel": 1.0e-3, "equilibrium_rel": 1.0e-9},
        model_summary={
            "title": "Boathouse roof, frame 3",
            "dimensions": 2,
            "joints": 4,
            "members": 5,
            "restraints": 3,
            "springs": 0,
            "load_cases": 2,
            "combinations": 0,
            "units": {"length": "m", "force": "kN"},
        },
        stability={
            "maxwell_count": 0,
            "rank": 8,
            "mechanisms": 0,
            "self_stress_states": 0,
            "classification": "stable-determinate",
            "proof": "exact",
        },
        precision={"status": "proved", "digits": 30, "max_relative_bound": 2.5e-28, "backend": "flint"},
        inputs=(("roof.json", _SHA_MODEL), ("roof-results.json", _SHA_RESULTS)),
        version="0.1.0",
    )


def frame_model() -> Model:
    """A square of four members on a pin and a roller: one sway mechanism."""
    return _model(
        "Unbraced bay",
        ("A", "B", "C", "D"),
        [[0, 0], [4, 0], [4, 3], [0, 3]],
        [("AB", 0, 1), ("BC", 1, 2), ("CD", 2, 3), ("DA", 3, 0)],
        [(0, [1, 0], "x"), (0, [0, 1], "y"), (1, [0, 1], "y")],
        [("wind", {3: [2.0, 0.0]})],
    )


def frame_result() -> AuditResult:
    """An unstable model: nothing can be recomputed, and one check crashed.

    The mechanism: with A pinned and B on a roller, member AB holds B, the
    vertical members let C and D move only sideways, and CD keeps them moving
    together: mode (C, D) = (1, 0) each, every other node fixed.  Maxwell count
    m + r − d·j = 4 + 3 − 8 = −1.
    """
    nr = "the model is unstable: 1 mechanism"
    outcomes = (
        CheckOutcome(
            "solve",
            None,
            Status.FAIL,
            reason=nr,
            findings=(
                Finding(
                    "AU902", Severity.ERROR, "the model could not be solved, so nothing could be recomputed: " + nr
                ),
            ),
        ),
        CheckOutcome(
            "stability",
            None,
            Status.FAIL,
            findings=(
                Finding(
                    "ST101",
                    Severity.ERROR,
                    "the model has 1 mechanism: joints C and D sway sideways together",
                    location=Location(node="C"),
                    data=(("mechanisms", 1),),
                ),
            ),
        ),
        CheckOutcome("equilibrium", "wind", Status.NOT_RUN, reason=nr),
        CheckOutcome(
            "compatibility",
            None,
            Status.NOT_RUN,
            reason="the check crashed: ValueError: shapes (3,) and (4,) not aligned",
            findings=(
                Finding(
                    "AU901",
                    Severity.ERROR,
                    "check 'compatibility' crashed (ValueError: shapes (3,) and (4,) not aligned) at x.py:12",
                ),
            ),
        ),
    )
    return AuditResult(
        title="Unbraced bay",
        outcomes=outcomes,
        fail_on=Severity.ERROR,
        tolerances={"force_rel": 1.0e-3},
        model_summary={
            "title": "Unbraced bay",
            "dimensions": 2,
            "joints": 4,
            "members": 4,
            "restraints": 3,
            "springs": 0,
            "load_cases": 1,
            "combinations": 0,
            "units": {"length": "m", "force": "kN"},
        },
        stability={
            "maxwell_count": -1,
            "rank": 7,
            "mechanisms": 1,
            "self_stress_states": 0,
            "classification": "unstable",
            "proof": "exact",
            "mechanisms_detail": [
                {"description": "joints C and D sway sideways together", "mode": [[0, 0], [0, 0], [1, 0], [1, 0]]}
            ],
        },
        precision={"status": "not_run", "reason": "no solution"},
        crashed=("compatibility",),
        inputs=(("bay.json", _SHA_MODEL),),
        version="0.1.0",
    )


def tripod_model() -> Model:
    """Three legs from pinned feet to a loaded apex: a statically determinate space truss."""
    return _model(
        "Tripod mast",
        ("F1", "F2", "F3", "T"),
        [[2, 0, 0], [-1, 1.7320508075688772, 0], [-1, -1.7320508075688772, 0], [0, 0, 4]],
        [("L1", 0, 3), ("L2", 1, 3), ("L3", 2, 3)],
        [
            (i, v, a)
            for i in range(3)
            for v, a in (([1.0, 0.0, 0.0], "x"), ([0.0, 1.0, 0.0], "y"), ([0.0, 0.0, 1.0], "z"))
        ],
        [("dead", {3: [0.0, 0.0, -30.0]})],
    )


def tripod_result() -> AuditResult:
    """A passing audit of :func:`tripod_model`, with one case not checked."""
    return AuditResult(
        title="Tripod mast",
        outcomes=(
            CheckOutcome("stability", None, Status.PASS),
            CheckOutcome("equilibrium", "dead", Status.PASS),
            CheckOutcome("recompute", "dead", Status.PASS, summary=(("compared", 7),)),
            CheckOutcome("combinations", None, Status.NOT_RUN, reason="the model defines no combinations"),
        ),
        fail_on=Severity.ERROR,
        tolerances={"force_rel": 1.0e-3},
        model_summary={
            "title": "Tripod mast",
            "dimensions": 3,
            "joints": 4,
            "members": 3,
            "restraints": 9,
            "springs": 0,
            "load_cases": 1,
            "combinations": 0,
            "units": {"length": "m", "force": "kN"},
        },
        stability={
            "maxwell_count": 0,
            "rank": 12,
            "mechanisms": 0,
            "self_stress_states": 0,
            "classification": "stable-determinate",
            "proof": "exact",
        },
        precision={"status": "proved", "digits": 30},
        inputs=(("tripod.json", _SHA_MODEL),),
        version="0.1.0",
    )


def lattice_model(nx: int, ny: int) -> Model:
    """A square grid of nx × ny bays with one diagonal per bay, pinned along the bottom row.

    Member count: nx·(ny+1) + ny·(nx+1) + nx·ny.
    """
    ix, iy = np.meshgrid(np.arange(nx + 1), np.arange(ny + 1), indexing="xy")
    coords = np.column_stack([ix.ravel(), iy.ravel()]).astype(np.float64)
    nid = np.arange((nx + 1) * (ny + 1)).reshape(ny + 1, nx + 1)
    horiz = np.column_stack([nid[:, :-1].ravel(), nid[:, 1:].ravel()])
    vert = np.column_stack([nid[:-1, :].ravel(), nid[1:, :].ravel()])
    diag = np.column_stack([nid[:-1, :-1].ravel(), nid[1:, 1:].ravel()])
    conn = np.vstack([horiz, vert, diag]).astype(np.int64)
    m = conn.shape[0]
    n = coords.shape[0]
    bottom = nid[0]
    rnode = np.repeat(bottom, 2).astype(np.int64)
    rdir = np.tile(np.eye(2), (bottom.size, 1))
    loads = np.zeros((n, 2))
    loads[nid[-1], 1] = -1.0
    lc = LoadCase("roof", "roof", loads, np.zeros(m), np.zeros(m), np.zeros(rnode.size))
    return Model(
        title=f"Lattice {nx}×{ny}",
        dim=2,
        units=Units("m", "kN"),
        node_ids=tuple(str(i) for i in range(n)),
        coords=coords,
        member_ids=tuple(f"m{i}" for i in range(m)),
        conn=conn,
        E=np.full(m, 2.0e8),
        A=np.full(m, 1.0e-3),
        alpha=np.zeros(m),
        restraint_node=rnode,
        restraint_dir=rdir,
        restraint_label=("x", "y") * bottom.size,
        spring_node=np.zeros(0, dtype=np.int64),
        spring_dir=np.zeros((0, 2)),
        spring_k=np.zeros(0),
        load_cases=(lc,),
        combinations=(),
    )


__all__ = ["frame_model", "frame_result", "lattice_model", "roof_model", "roof_result", "tripod_model", "tripod_result"]
