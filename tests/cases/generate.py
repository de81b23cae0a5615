"""Write the data-driven cases of ``tests/test_cases.py`` (run: ``python tests/cases/generate.py``).

Each case is a model document with its reported results inside and an ``x-expect`` key declaring what the
checks must find:

``codes``
    every code that must be raised; the warning and error codes raised must be exactly these (info codes
    not listed may appear).
``verdict``
    ``"fail"`` when the checks on reported results raise an error, else ``"pass"``.
``where``
    optional ``{code: {"member"|"node": id}}``: a finding with that code must be at that place.
``statuses``
    optional ``{check id: status}`` of the outcome of the first case.

The correct results are exact sympy solutions (``test_checks_common.exact_solve``) of the model, or of the
"source's" model where the source is meant to have analysed something else; they are then printed to a
stated number of significant figures, and one error is injected where the case says so.  The expectations
are written by hand, from what each injected error must break (the comment beside each case).
"""

from __future__ import annotations

import copy
import json
import sys
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))

from test_checks_common import TRIANGLE, ExactCase, exact_solve, model_of, results_text  # noqa: E402

PUBLISHED = HERE.parent.parent / "reference_cases" / "published"

Mutation = Callable[[dict[str, ExactCase]], dict[str, ExactCase]]

# the codes the other checks raise beside each diagnosis case (what each injected error breaks):
# a member left out: its zero force no longer fits the displacements (CP101), every kind differs
LEFT_OUT_CODES = ["CP101", "RC101", "RC102", "RC103", "RC002"]
# a stiffer spring: its reaction is no longer −k·u (SP104); the statically determinate forces stay
SPRING_CODES = ["SP104", "RC101", "RC002"]
# a roller along y for one at 45°: the reaction leaves the model's direction (SP102), the node moves along
# the model's restraint (SP103), every kind differs
INCLINED_CODES = ["SP102", "SP103", "RC101", "RC102", "RC103", "RC002"]
# y reversed: the reactions no longer balance the loads (EQ101-EQ103), the displacements no longer fit the
# forces (CP101); member forces keep their sign
AXIS_CODES = ["EQ101", "EQ102", "EQ103", "CP101", "RC101", "RC103", "RC002"]
# one joint's (x, y) written (y, x): its members no longer fit (CP101)
COMPONENT_CODES = ["CP101", "RC101", "RC002"]
# a section out and a slip: the slip unbalances its joints (EQ101)
TWO_CODES = ["CP101", "EQ101", "RC101", "RC102", "RC002"]
NOEXPL_CODES = ["CP101", "EQ101", "RC102", "RC002"]


def published(name: str) -> dict[str, Any]:
    doc = json.loads((PUBLISHED / name).read_text())
    doc.pop("results", None)
    return doc


def pratt() -> dict[str, Any]:
    sys.path.insert(0, str(HERE.parent))
    from test_mutation import PRATT

    return copy.deepcopy(PRATT)


def mechanism() -> dict[str, Any]:
    """The triangle with B on a roller along x: the frame can turn about A (a mechanism)."""
    doc = copy.deepcopy(TRIANGLE)
    doc["supports"] = [{"node": "A", "restrain": ["x", "y"]}, {"node": "B", "restrain": ["x"]}]
    doc["load_cases"] = [{"id": "P", "loads": [{"node": "C", "fx": 40, "fy": 30}]}]
    return doc


def edit(case: str, **arrays: Any) -> Mutation:
    def f(cases: dict[str, ExactCase]) -> dict[str, ExactCase]:
        c = cases[case]
        out = dict(cases)
        out[case] = ExactCase(
            case,
            np.array(arrays.get("u", lambda u: u)(c.displacements.copy()), dtype=np.float64),
            np.array(arrays.get("n", lambda n: n)(c.axial_forces.copy()), dtype=np.float64),
            np.array(arrays.get("r", lambda r: r)(c.reactions.copy()), dtype=np.float64),
        )
        return out

    return f


def at(index: Any, fn: Callable[[Any], Any]) -> Callable[[np.ndarray], np.ndarray]:
    def g(a: np.ndarray) -> np.ndarray:
        a[index] = fn(a[index])
        return a

    return g


def swap_rows(i: int, j: int, axis: int) -> Callable[[np.ndarray], np.ndarray]:
    def g(a: np.ndarray) -> np.ndarray:
        a[i, axis], a[j, axis] = a[j, axis], a[i, axis]
        return a

    return g


def with_source(changes: Callable[[dict[str, Any]], None]) -> Callable[[dict[str, Any]], dict[str, Any]]:
    def f(doc: dict[str, Any]) -> dict[str, Any]:
        src = copy.deepcopy(doc)
        changes(src)
        return src

    return f


def write(
    name: str,
    doc: dict[str, Any],
    expect: dict[str, Any],
    *,
    digits: int | None = 5,
    source: Callable[[dict[str, Any]], dict[str, Any]] | None = None,
    mutate: Mutation | None = None,
    exact: dict[str, ExactCase] | None = None,
    **text_kw: Any,
) -> None:
    model = model_of(doc)
    cases = exact if exact is not None else exact_solve(source(doc) if source else doc)
    if mutate is not None:
        cases = mutate(cases)
    body = results_text(model, cases, digits=digits, embedded=True, **text_kw)
    out = dict(doc)
    out["x-expect"] = expect
    out["results"] = "§RESULTS§"
    text = json.dumps(out, indent=1, ensure_ascii=False).replace('"§RESULTS§"', body.replace("\n", "\n "))
    (HERE / f"{name}.json").write_text(text + "\n")


def main() -> None:
    tri = copy.deepcopy(TRIANGLE)
    three = published("timoshenko_three_bar.json")
    three1 = copy.deepcopy(three)
    three1["load_cases"] = [{"id": "load", "loads": [{"node": "D", "fx": 30, "fy": -100}]}]
    three1.pop("combinations")
    pr = pratt()
    # ---- clean results: nothing may be raised but information
    write("clean_triangle_4sf", tri, {"codes": ["RC002"], "verdict": "pass"}, digits=4)
    write("clean_three_bar_all_cases_5sf", three, {"codes": ["RC002"], "verdict": "pass"}, digits=5)
    write(
        "clean_inclined_roller_4sf",
        published("logan_inclined_roller.json"),
        {"codes": ["RC002"], "verdict": "pass"},
        digits=4,
    )
    write(
        "clean_spring_support_full",
        published("spring_series.json"),
        {"codes": ["RC002"], "verdict": "pass"},
        digits=None,
    )
    write("clean_tripod_3sf", published("tripod_space.json"), {"codes": ["RC002"], "verdict": "pass"}, digits=3)
    # ---- equilibrium
    # member AC 5 % off: joints A and C out of balance, AC differs and no longer fits the displacements
    write(
        "eq_joint_residual",
        tri,
        {
            "codes": ["EQ101", "RC102", "CP101", "DX115", "RC002"],
            "verdict": "fail",
            "where": {"RC102": {"member": "AC"}, "DX115": {"member": "AC"}},
        },
        mutate=edit("P", n=at(2, lambda v: 1.05 * v)),
    )
    # reaction at B 10 % high: joint B, the global force and the global moment are off
    write(
        "eq_global_force",
        tri,
        {
            "codes": ["EQ101", "EQ102", "EQ103", "RC103", "DX115", "RC002"],
            "verdict": "fail",
            "where": {"EQ101": {"node": "B"}, "DX115": {"node": "B"}},
        },
        mutate=edit("P", r=at((1, 1), lambda v: 1.1 * v)),
    )
    # vertical reactions of A and B swapped: their sum still balances, their moment does not (DX116)
    write(
        "eq_global_moment_only",
        tri,
        {"codes": ["EQ101", "EQ103", "RC103", "DX116", "RC002"], "verdict": "fail", "where": {"DX116": {"node": "A"}}},
        mutate=edit("P", r=swap_rows(0, 1, 1)),
    )
    # forces of 7 and 8, displacements of U2 and all reactions not reported: counted, never passed
    write(
        "partial_reporting",
        pr,
        {"codes": ["EQ001", "SP001", "CP001", "RC001", "RC002"], "verdict": "pass"},
        skip_members=("7", "8"),
        skip_nodes=("U2",),
        parts=("displacements", "axial_forces"),
    )
    # ---- supports
    # a reaction invented at the free, loaded joint C (counted in C's balance, so C is out of balance)
    write(
        "sp_reaction_at_unsupported_node",
        tri,
        {
            "codes": ["SP101", "EQ101", "EQ102", "EQ103", "RC103", "DX115", "RC002"],
            "verdict": "fail",
            "where": {"SP101": {"node": "C"}, "DX115": {"node": "C"}},
        },
        mutate=edit("P", r=at((2, 0), lambda v: v + 5.0)),
    )
    # the inclined roller at node 3 pushes only along (1, -1)/√2; a component along (1, 1) is added
    write(
        "sp_reaction_across_inclined_roller",
        published("logan_inclined_roller.json"),
        {
            "codes": ["SP102", "EQ101", "EQ102", "EQ103", "RC103", "DX115", "RC002"],
            "verdict": "fail",
            "where": {"SP102": {"node": "3"}, "DX115": {"node": "3"}},
        },
        mutate=edit("P", r=at(2, lambda v: v + 20.0 * np.array([1.0, 1.0]))),
    )
    # node A reported moving 1 mm along x although pinned: the members at A no longer fit either
    write(
        "sp_displacement_at_restraint",
        tri,
        {
            "codes": ["SP103", "RC101", "CP101", "DX115", "RC002"],
            "verdict": "fail",
            "where": {"SP103": {"node": "A"}, "DX115": {"node": "A"}},
        },
        mutate=edit("P", u=at((0, 0), lambda v: v + 0.001)),
    )
    # the spring's reaction 10 % off −k·u: joint 1 and the global x balance are off too (the only
    # non-zero reaction: one number is no evidence for a scale factor; the diagnosis names it as one slip)
    write(
        "sp_spring_reaction",
        published("spring_series.json"),
        {
            "codes": ["SP104", "EQ101", "EQ102", "RC103", "DX115", "RC002"],
            "verdict": "fail",
            "where": {"SP104": {"node": "1"}, "DX115": {"node": "1"}},
        },
        mutate=edit("P", r=at((0, 0), lambda v: 1.1 * v)),
    )
    # ---- compatibility
    # C's displacement 2 % off along x: AC (not the vertical BC) no longer fits its force; in this
    # determinate frame only AC's elongation moves C along x, so AC's EA at 0.98x would explain it too, but
    # one number wrong is the simpler cause (a structural cause that changes a single number, at a factor
    # no hand-off mistake typically makes, ranks with a slip)
    write(
        "cp_displacements_do_not_fit_forces",
        tri,
        {
            "codes": ["CP101", "RC101", "DX115", "RC002"],
            "verdict": "fail",
            "where": {"CP101": {"member": "AC"}, "DX115": {"node": "C"}},
        },
        mutate=edit("P", u=at((2, 0), lambda v: 1.02 * v)),
    )

    # ---- combinations (three-bar: design = 1.35 load + 0.9 heat + 1.0 lack of fit)
    def wrong_factor(cases: dict[str, ExactCase]) -> dict[str, ExactCase]:
        out = dict(cases)
        parts = {"load": 1.5, "heat": 0.9, "lack_of_fit": 1.0}
        u = sum(f * cases[c].displacements for c, f in parts.items())
        n = sum(f * cases[c].axial_forces for c, f in parts.items())
        r = sum(f * cases[c].reactions for c, f in parts.items())
        out["design"] = ExactCase("design", np.asarray(u), np.asarray(n), np.asarray(r))
        return out

    # the combination made with 1.5 for "load": differs from its cases and the recomputation; the
    # loads of "design" are not balanced (the extra load acts on the vertical through the centroid, so
    # the moment is); refitted factors name 1.5; inside the case, the load at D at 1.5/1.35 of its
    # factored value explains every number (DX112)
    write(
        "cb_wrong_factor",
        three,
        {
            "codes": ["CB101", "CB102", "RC101", "RC102", "RC103", "EQ101", "EQ102", "DX112", "RC002"],
            "verdict": "fail",
            "where": {"DX112": {"node": "D"}},
        },
        mutate=wrong_factor,
    )

    # every case written compression positive (and declared tension positive): the combination is still the
    # factored sum of its cases, and the differences from the recomputation are the cases'
    def all_signs(cases: dict[str, ExactCase]) -> dict[str, ExactCase]:
        return {c: ExactCase(c, v.displacements, -v.axial_forces, v.reactions) for c, v in cases.items()}

    write(
        "cb_consistent_with_wrong_cases",
        three,
        {"codes": ["CB002", "DX101", "EQ101", "RC102", "CP101", "RC002"], "verdict": "fail"},
        mutate=all_signs,
    )
    write(
        "cb_case_not_reported",
        three,
        {"codes": ["CB001", "RC002"], "verdict": "pass"},
        only=("load", "lack_of_fit", "settlement", "design"),
    )
    # ---- diagnosis
    write(
        "dx_sign_convention",
        tri,
        {"codes": ["DX101", "EQ101", "RC102", "CP101", "RC002"], "verdict": "fail"},
        mutate=edit("P", n=lambda n: -n),
    )
    write(
        "dx_forces_in_newton",
        tri,
        {"codes": ["DX102", "EQ101", "EQ102", "EQ103", "RC102", "RC103", "CP101", "RC002"], "verdict": "fail"},
        mutate=edit("P", n=lambda n: 1000 * n, r=lambda r: 1000 * r),
    )
    write(
        "dx_displacements_in_mm",
        pr,
        {"codes": ["DX103", "RC101", "CP101", "RC002"], "verdict": "fail"},
        mutate=edit("P", u=lambda u: 1000 * u),
    )

    def e_wrong(src: dict[str, Any]) -> None:
        src["members"][4]["E"] = 1.05e8  # member 5 of the Pratt truss, half its E

    write(
        "dx_member_ea",
        pr,
        {"codes": ["DX104", "RC101", "CP101", "RC002"], "verdict": "fail", "where": {"DX104": {"member": "5"}}},
        source=with_source(e_wrong),
    )

    def drop_load(src: dict[str, Any]) -> None:
        src["load_cases"][0]["loads"] = [ld for ld in src["load_cases"][0]["loads"] if ld["node"] != "L2"]

    write(
        "dx_load_missing",
        pr,
        {
            "codes": ["DX105", "EQ101", "EQ102", "EQ103", "RC101", "RC102", "RC103", "RC002"],
            "verdict": "fail",
            "where": {"DX105": {"node": "L2"}},
        },
        source=with_source(drop_load),
        digits=6,
    )

    def double_load(src: dict[str, Any]) -> None:
        for ld in src["load_cases"][0]["loads"]:
            if ld["node"] == "L1":
                ld["fy"] = 2 * ld["fy"]

    write(
        "dx_load_doubled",
        pr,
        {
            "codes": ["DX106", "EQ101", "EQ102", "EQ103", "RC101", "RC102", "RC103", "RC002"],
            "verdict": "fail",
            "where": {"DX106": {"node": "L1"}},
        },
        source=with_source(double_load),
        digits=6,
    )

    def move_load(src: dict[str, Any]) -> None:
        for ld in src["load_cases"][0]["loads"]:
            if ld["node"] == "L2":
                ld["node"] = "U2"

    write(
        "dx_load_on_wrong_node",
        pr,
        {"codes": ["DX107", "EQ101", "RC101", "RC102", "RC002"], "verdict": "fail", "where": {"DX107": {"node": "L2"}}},
        source=with_source(move_load),
        digits=6,
    )

    # the source supported L2: its results balance with its own reaction there, so only the comparison
    # with the model (and the reaction where the model has no support) shows it
    def extra_support(src: dict[str, Any]) -> None:
        src["supports"].append({"node": "L2", "restrain": ["y"]})

    write(
        "dx_support_in_source_only",
        pr,
        {
            "codes": ["DX108", "SP101", "RC101", "RC102", "RC103", "RC002"],
            "verdict": "fail",
            "where": {"DX108": {"node": "L2"}},
        },
        source=with_source(extra_support),
        digits=6,
    )
    pinned = copy.deepcopy(pr)
    pinned["supports"] = [{"node": "L0", "restrain": ["x", "y"]}, {"node": "L3", "restrain": ["x", "y"]}]

    def roller(src: dict[str, Any]) -> None:
        src["supports"][1] = {"node": "L3", "restrain": ["y"]}

    # the model pins L3, the source had a roller there: reactions and the chord forces differ
    write(
        "dx_support_in_model_only",
        pinned,
        {
            "codes": ["DX109", "SP103", "RC101", "RC102", "RC103", "RC002"],
            "verdict": "fail",
            "where": {"DX109": {"node": "L3"}},
        },
        source=with_source(roller),
        digits=6,
    )
    write(
        "dx_reactions_on_the_supports",
        tri,
        {"codes": ["DX110", "EQ101", "EQ102", "EQ103", "RC103", "RC002"], "verdict": "fail"},
        mutate=edit("P", r=lambda r: -r),
    )
    write(
        "dx_factor_matching_no_unit",
        tri,
        {"codes": ["DX002", "EQ101", "EQ102", "EQ103", "RC102", "RC103", "CP101", "RC002"], "verdict": "fail"},
        mutate=edit("P", n=lambda n: 1.5 * n, r=lambda r: 1.5 * r),
    )
    # ---- diagnosis: causes named by the multi-cause fit (audit/checks/diagnosis/fit.py)
    # member AD left out of the source's three-bar model: its force is reported 0, the other two bars carry
    # the load alone (an indeterminate truss stays stable without it)
    without_ad = copy.deepcopy(three1)
    without_ad["members"] = [m for m in without_ad["members"] if m["id"] != "AD"]
    src = exact_solve(without_ad)["load"]
    ad = [m["id"] for m in three1["members"]].index("AD")
    write(
        "dx_member_left_out",
        three1,
        {"codes": ["DX111", *LEFT_OUT_CODES], "verdict": "fail", "where": {"DX111": {"member": "AD"}}},
        exact={"load": ExactCase("load", src.displacements, np.insert(src.axial_forces, ad, 0.0), src.reactions)},
        digits=6,
    )

    # the spring at node 1 entered ten times too stiff (50 000 for 5 000 kN/m)
    def stiff_spring(src: dict[str, Any]) -> None:
        src["supports"][0]["springs"][0]["stiffness"] = 50000

    write(
        "dx_spring_stiffness",
        published("spring_series.json"),
        {"codes": ["DX114", *SPRING_CODES], "verdict": "fail", "where": {"DX114": {"node": "1"}}},
        source=with_source(stiff_spring),
        digits=6,
    )

    # the 45° roller at node 3 entered along y in the source
    def roller_along_y(src: dict[str, Any]) -> None:
        src["supports"][1]["restrain"] = ["y"]

    write(
        "dx_inclined_support_along_an_axis",
        published("logan_inclined_roller.json"),
        {"codes": ["DX113", *INCLINED_CODES], "verdict": "fail", "where": {"DX113": {"node": "3"}}},
        source=with_source(roller_along_y),
        digits=6,
    )
    # y measured downwards: displacements and reactions along y negated, member forces unchanged
    write(
        "dx_axis_reversed",
        pr,
        {"codes": ["DX118", *AXIS_CODES], "verdict": "fail"},
        mutate=edit("P", u=lambda u: u * np.array([1.0, -1.0]), r=lambda r: r * np.array([1.0, -1.0])),
        digits=6,
    )
    # U1's displacement written (y, x)
    write(
        "dx_components_swapped",
        pr,
        {"codes": ["DX117", *COMPONENT_CODES], "verdict": "fail", "where": {"DX117": {"node": "U1"}}},
        mutate=edit("P", u=at(4, lambda v: v[::-1].copy())),
        digits=6,
    )

    # two independent mistakes: member 4's section a decimal place out, and member 1's force mistyped
    def section_out(src: dict[str, Any]) -> None:
        src["members"][3]["A"] = 0.0003

    write(
        "dx_two_causes",
        pr,
        {
            "codes": ["DX104", "DX115", *TWO_CODES],
            "verdict": "fail",
            "where": {"DX104": {"member": "4"}, "DX115": {"member": "1"}},
        },
        source=with_source(section_out),
        mutate=edit("P", n=at(0, lambda v: 1.2 * v)),
        digits=6,
    )
    # every member force off by its own factor (3 % to 27 %): no set of three causes explains nine numbers
    write(
        "dx_no_explanation",
        pr,
        {"codes": ["DX001", *NOEXPL_CODES], "verdict": "fail"},
        mutate=edit("P", n=lambda n: n * (1.0 + 0.03 * np.arange(1, 10))),
        digits=6,
    )
    # ---- a mechanism: nothing can be recomputed, the reported values are still checked
    mech = mechanism()
    state = ExactCase(
        "P",
        np.full((3, 2), np.nan),
        np.array([0.0, 0.0, 50.0]),
        np.array([[-40.0, -30.0], [0.0, 0.0], [0.0, 0.0]]),
    )
    write(
        "unsolvable_results_in_equilibrium",
        mech,
        {"codes": [], "verdict": "pass", "statuses": {"recompute": "not_run", "equilibrium": "pass"}},
        exact={"P": state},
        parts=("axial_forces", "reactions"),
    )
    missing = ExactCase("P", state.displacements, np.zeros(3), np.zeros((3, 2)))
    write(
        "unsolvable_load_missing",
        mech,
        {
            "codes": ["DX105", "EQ101", "EQ102", "EQ103"],
            "verdict": "fail",
            "where": {"DX105": {"node": "C"}},
            "statuses": {"recompute": "not_run"},
        },
        exact={"P": missing},
        parts=("axial_forces", "reactions"),
    )


if __name__ == "__main__":
    main()
