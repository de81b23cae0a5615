"""Reading and writing the neutral exchange format (``shared/FORMAT.md``, version 1).

The contract's own example model and results (copied verbatim from FORMAT.md into
``tests/data/exchange/format_example_*.json``) are the main fixtures.  Each check
names its source: FORMAT.md for what the format says, RFC 8259 for JSON itself,
the JSON Schema 2020-12 specification for the schema files, the exact unit
definitions (international yard and pound, 1959: 1 ft = 0.3048 m, 1 in = 25.4 mm)
for conversions, and common practice for the rest.
"""

from __future__ import annotations

import copy
import json
import math
from dataclasses import dataclass
from fractions import Fraction
from pathlib import Path
from typing import Any

import jsonschema
import mpmath
import numpy as np
import pytest
from numpy.testing import assert_array_equal

from audit import exchange
from audit.exchange import dump_results, load_model, load_results, parse_model, parse_results

DATA = Path(__file__).parent / "data" / "exchange"


def example_doc() -> dict[str, Any]:
    result: dict[str, Any] = json.loads((DATA / "format_example_model.json").read_text())
    return result


def parse_doc(doc: dict[str, Any]) -> Any:
    return parse_model(json.dumps(doc))


@pytest.fixture
def example() -> Any:
    return load_model(DATA / "format_example_model.json")


# ---------------------------------------------------------------- the FORMAT.md example model
def test_example_nodes_in_file_order(example: Any) -> None:
    # FORMAT.md: nodes A(0,0) B(4,0) C(8,0) D(4,3)
    assert example.node_ids == ("A", "B", "C", "D")
    assert example.coords.dtype == np.float64
    assert_array_equal(example.coords, [[0, 0], [4, 0], [8, 0], [4, 3]])
    assert example.coords_text == (("0", "0"), ("4", "0"), ("8", "0"), ("4", "3"))


def test_example_members_and_connectivity(example: Any) -> None:
    # FORMAT.md: members 1..5 between A-B, B-C, A-D, D-C, B-D
    assert example.member_ids == ("1", "2", "3", "4", "5")
    assert example.conn.dtype == np.int64
    assert_array_equal(example.conn, [[0, 1], [1, 2], [0, 3], [3, 2], [1, 3]])
    assert_array_equal(example.lengths(), [4, 4, 5, 5, 3])


def test_example_properties_resolved_with_texts(example: Any) -> None:
    # FORMAT.md: "steel" E 2.0e8 alpha 1.2e-5, "tube" A 1.2e-3; member 5 inline E 2.0e8, A 8.0e-4, no alpha
    assert_array_equal(example.E, [2.0e8] * 5)
    assert_array_equal(example.A, [1.2e-3] * 4 + [8.0e-4])
    assert_array_equal(example.alpha, [1.2e-5] * 4 + [0.0])
    assert example.E_text == ("2.0e8",) * 5
    assert example.A_text == ("1.2e-3",) * 4 + ("8.0e-4",)
    assert example.alpha_text == ("1.2e-5",) * 4 + ("0",)


def test_example_units_and_title(example: Any) -> None:
    assert example.title == "Boathouse roof, frame 3"
    assert (example.units.length, example.units.force, example.units.temperature) == ("m", "kN", "degC")
    assert example.dim == 2


def test_example_restraints(example: Any) -> None:
    # FORMAT.md: A restrained x and y; C an inclined roller written as direction [0, 1]
    assert_array_equal(example.restraint_node, [0, 0, 2])
    assert_array_equal(example.restraint_dir, [[1, 0], [0, 1], [0, 1]])
    assert example.restraint_label == ("x", "y", "dir(0,1)")
    assert example.restraint_dir_text == (("1", "0"), ("0", "1"), ("0", "1"))
    assert example.n_restraints == 3
    assert example.spring_node.shape == (0,)
    assert example.spring_dir.shape == (0, 2)


def test_example_load_cases(example: Any) -> None:
    # FORMAT.md: snow fy = -12.5 at D; heat: member 1 delta 25
    snow, heat = example.load_cases
    assert snow.id == "snow"
    assert_array_equal(snow.loads, [[0, 0], [0, 0], [0, 0], [0, -12.5]])
    assert snow.load_text == ((3, 1, "-12.5"),)
    assert heat.id == "heat"
    assert_array_equal(heat.temperature, [25, 0, 0, 0, 0])
    assert heat.temperature_text == ((0, "25"),)
    assert heat.has_initial_strain
    assert not snow.has_initial_strain
    assert heat.settlement.shape == (3,)


def test_example_combination(example: Any) -> None:
    # FORMAT.md: design = 1.5 snow + 1.0 heat
    (design,) = example.combinations
    assert design.id == "design"
    assert design.factors == ((0, 1.5, "1.5"), (1, 1.0, "1.0"))
    assert example.all_case_ids() == ("snow", "heat", "design")


def test_example_results_file(example: Any) -> None:
    # FORMAT.md results example: mm and kN against a model in m and kN; 1 mm = 0.001 m (SI)
    res = load_results(DATA / "format_example_results.json", example)
    assert res.length_factor == pytest.approx(0.001, rel=1e-15)
    assert res.force_factor == 1.0
    assert res.units.length == "mm"
    assert res.source == "hand-off from the analysis of 14 March, revision C"
    snow = res.case("snow")
    assert snow is not None
    assert snow.has_displacements
    assert snow.has_axial_forces
    assert snow.has_reactions
    assert snow.displacements[1, 1] == pytest.approx(-1.954e-3, rel=1e-15)
    assert np.isnan(snow.displacements[0]).all()  # A not reported
    assert_array_equal(snow.axial_forces, [8.333, 8.333, -10.417, -10.417, 0.0])
    assert snow.reactions[0, 1] == 6.25
    assert np.isnan(snow.reactions[2, 0])  # C x not reported


def test_results_quantum_is_half_the_last_written_digit(example: Any) -> None:
    # common practice: a value printed to k decimals carries at most half a unit in the k-th decimal
    res = load_results(DATA / "format_example_results.json", example)
    snow = res.cases[0]
    assert_array_equal(snow.axial_force_quantum, [0.0005, 0.0005, 0.0005, 0.0005, 0.05])
    # "-1.71" mm -> 0.005 mm = 5e-6 m; "0.112" mm -> 5e-7 m
    assert snow.displacement_quantum[3, 1] == pytest.approx(5e-6, rel=1e-12)
    assert snow.displacement_quantum[1, 0] == pytest.approx(5e-7, rel=1e-12)


@pytest.mark.parametrize(
    ("text", "quantum"),
    [
        ("8.333", 0.0005),
        ("1.2e-3", 0.05e-3),
        ("12", 0.5),
        ("1200", 0.5),
        ("0.0", 0.05),
        ("-2.50E+2", 0.5),
        ("1e5", 0.5e5),
    ],
)
def test_quantum_of_texts(text: str, quantum: float) -> None:
    # common practice: half a unit in the last written digit
    assert exchange._quantum_text(text) == pytest.approx(quantum, rel=1e-12)


def test_results_inside_the_model(example: Any) -> None:
    # FORMAT.md: results travel inside the model under "results" (no format/version)
    doc = example_doc()
    results = json.loads((DATA / "format_example_results.json").read_text())
    del results["format"], results["version"]
    doc["results"] = results
    m = parse_doc(doc)
    assert m.results is not None
    assert m.results.case("snow") is not None
    assert m.results.cases[0].axial_forces[2] == -10.417


def test_results_compression_positive_negated(example: Any) -> None:
    # FORMAT.md: axial force is tension positive unless sign_convention says otherwise
    text = json.dumps(
        {
            "format": "truss-audit-results",
            "version": 1,
            "sign_convention": "compression_positive",
            "cases": {"snow": {"axial_forces": {"3": 10.417, "1": -8.333}}},
        }
    )
    res = parse_results(text, example)
    assert res.sign_convention == "compression_positive"
    c = res.cases[0]
    assert c.axial_forces[2] == -10.417
    assert c.axial_forces[0] == 8.333
    assert np.isnan(c.axial_forces[1])
    assert c.has_axial_forces
    assert not c.has_displacements
    assert not c.has_reactions


def test_results_unit_conversion_exact_factors(example: Any) -> None:
    # 1959 international yard and pound: 1 in = 0.0254 m; lbf = 4.4482216152605 N (NIST SP 811)
    text = json.dumps(
        {
            "format": "truss-audit-results",
            "version": 1,
            "units": {"length": "in", "force": "lbf"},
            "cases": {"snow": {"displacements": {"D": {"y": -1.5}}, "reactions": {"A": {"y": 1000}}}},
        }
    )
    res = parse_results(text, example)
    assert res.length_factor == 0.0254
    assert res.force_factor == pytest.approx(4.4482216152605e-3, rel=1e-15)
    c = res.cases[0]
    assert c.displacements[3, 1] == pytest.approx(-1.5 * 0.0254, rel=1e-15)
    assert c.displacement_quantum[3, 1] == pytest.approx(0.05 * 0.0254, rel=1e-12)
    assert c.reactions[0, 1] == pytest.approx(4.4482216152605, rel=1e-15)
    assert c.reaction_quantum[0, 1] == pytest.approx(0.5 * 4.4482216152605e-3, rel=1e-12)


# ------------------------------------------------------------------------- reading details
def test_integer_ids_are_their_decimal_strings() -> None:
    # FORMAT.md: an integer id means its decimal string
    doc = example_doc()
    doc["nodes"][0]["id"] = 7
    for mb in doc["members"]:
        for key in ("start", "end"):
            if mb[key] == "A":
                mb[key] = "7"
    doc["supports"][0]["node"] = 7
    doc["members"][0]["id"] = 1
    m = parse_doc(doc)
    assert m.node_ids[0] == "7"
    assert m.member_ids[0] == "1"
    assert m.restraint_node[0] == 0


def test_numbers_keep_their_written_text() -> None:
    # FORMAT.md: a reader keeps each number's decimal text
    text = (DATA / "format_example_model.json").read_text()
    text = text.replace('"x": 4, "y": 3', '"x": 4.000, "y": 0.30000000000000000001e1')
    m = parse_model(text)
    assert m.coords_text[3] == ("4.000", "0.30000000000000000001e1")
    assert m.coords[3, 1] == 3.0


def test_utf8_bom_is_accepted() -> None:
    # RFC 8259 section 8.1: a parser may ignore a byte order mark
    data = b"\xef\xbb\xbf" + (DATA / "format_example_model.json").read_bytes()
    assert parse_model(data).n_members == 5
    assert parse_model(data.decode("utf-8")).n_members == 5


def test_x_keys_are_allowed_everywhere() -> None:
    # FORMAT.md: keys that begin with x- are a source's own data, kept and otherwise ignored
    doc = example_doc()
    doc["x-tool"] = {"name": "frame2d", "nested": [1, {"a": None}]}
    doc["units"]["x-note"] = "SI"
    doc["nodes"][0]["x-tag"] = "pin"
    doc["members"][0]["x-colour"] = [1, 2, 3]
    doc["supports"][1]["restrain"][0]["x-why"] = "roller"
    doc["load_cases"][0]["loads"][0]["x-origin"] = "snow map"
    doc["combinations"][0]["x-code"] = "EN 1990"
    m = parse_doc(doc)
    assert m.n_members == 5


def test_three_dimensional_model_with_springs_and_settlement() -> None:
    # FORMAT.md: dimensions 3, z on every node; springs; support displacements on restrained directions
    doc = {
        "format": "truss-audit-model",
        "version": 1,
        "dimensions": 3,
        "units": {"length": "mm", "force": "N"},
        "nodes": [
            {"id": 1, "x": 0, "y": 0, "z": 0},
            {"id": 2, "x": 1000, "y": 0, "z": 0},
            {"id": 3, "x": 0, "y": 1000, "z": 0},
            {"id": 4, "x": 0, "y": 0, "z": 1000},
        ],
        "members": [
            {"id": "a", "start": 1, "end": 4, "E": 210000, "A": 100},
            {"id": "b", "start": 2, "end": 4, "E": 210000, "A": 100},
            {"id": "c", "start": 3, "end": 4, "E": 210000, "A": 100},
        ],
        "supports": [
            {"node": 1, "restrain": ["x", "y", "z"]},
            {"node": 2, "restrain": ["y", "z", {"direction": [-3, 0, 4]}]},
            {"node": 3, "restrain": ["x", "z"], "springs": [{"axis": "y", "stiffness": 50.5}]},
            {"node": 4, "springs": [{"direction": [0, 3, 4], "stiffness": 0}]},
        ],
        "load_cases": [
            {
                "id": "settle",
                "support_displacements": [
                    {"node": 1, "z": -2.5},
                    {"node": 2, "direction": [3, 0, -4], "value": 1.5},
                    {"node": 3, "x": 0.25},
                ],
                "loads": [{"node": 4, "fx": 1, "fz": -2}, {"node": 4, "fz": -3}],
            }
        ],
    }
    m = parse_doc(doc)
    assert m.dim == 3
    assert m.restraint_label == ("x", "y", "z", "y", "z", "dir(-3,0,4)", "x", "z")
    assert_array_equal(m.restraint_dir[5], [-0.6, 0, 0.8])
    assert m.restraint_dir_text[5] == ("-3", "0", "4")
    assert_array_equal(m.spring_node, [2, 3])
    assert_array_equal(m.spring_dir, [[0, 1, 0], [0, 0.6, 0.8]])
    assert_array_equal(m.spring_k, [50.5, 0])
    assert m.spring_k_text == ("50.5", "0")
    assert m.spring_dir_text == (("0", "1", "0"), ("0", "3", "4"))
    (lc,) = m.load_cases
    # loads at one node add up (FORMAT.md: omitted components are 0)
    assert_array_equal(lc.loads[3], [1, 0, -5])
    assert lc.load_text == ((3, 0, "1"), (3, 2, "-2"), (3, 2, "-3"))
    # the direction [3, 0, -4] is opposite to the restraint's [-3, 0, 4]: along the restraint it is -1.5
    assert_array_equal(lc.settlement, [0, 0, -2.5, 0, 0, -1.5, 0.25, 0])
    assert lc.settlement_text == ((2, "-2.5"), (5, "-1.5"), (6, "0.25"))


def test_settlement_by_axis_on_a_parallel_direction_restraint() -> None:
    # FORMAT.md: support displacements only on restrained directions; a direction restraint along an axis counts
    doc = example_doc()
    doc["load_cases"][0]["support_displacements"] = [{"node": "C", "y": -0.01}]
    m = parse_doc(doc)
    assert_array_equal(m.load_cases[0].settlement, [0, 0, -0.01])
    assert m.load_cases[0].settlement_text == ((2, "-0.01"),)


def test_length_errors_and_temperature_per_member() -> None:
    doc = example_doc()
    doc["load_cases"][1]["length_errors"] = [{"member": "5", "value": -0.002}, {"member": "5", "value": 0.001}]
    m = parse_doc(doc)
    heat = m.load_cases[1]
    assert heat.length_error[4] == pytest.approx(-0.001, abs=1e-18)
    assert heat.length_error_text == ((4, "-0.002"), (4, "0.001"))


def test_source_stiffness() -> None:
    # FORMAT.md: stiffness with dofs [node, axis], storage, entries [row, column, value], zero-based
    doc = example_doc()
    doc["stiffness"] = {
        "dofs": [["B", "x"], ["B", "y"], ["D", "x"], ["D", "y"]],
        "storage": "upper",
        "entries": [[0, 0, 1.5e5], [0, 1, -2], [3, 3, 7]],
    }
    m = parse_doc(doc)
    st = m.stiffness
    assert st is not None
    assert_array_equal(st.dof_node, [1, 1, 3, 3])
    assert_array_equal(st.dof_axis, [0, 1, 0, 1])
    assert st.storage == "upper"
    assert_array_equal(st.rows, [0, 0, 3])
    assert_array_equal(st.cols, [0, 1, 3])
    assert_array_equal(st.values, [1.5e5, -2, 7])
    assert st.rows.dtype == np.int64


def test_arrays_have_documented_dtypes_and_shapes(example: Any) -> None:
    # audit/model.py documents (n, dim) float64 and int64 index arrays
    assert example.E.dtype == example.A.dtype == example.alpha.dtype == np.float64
    assert example.restraint_node.dtype == np.int64
    assert example.restraint_dir.shape == (3, 2)
    assert example.load_cases[0].loads.shape == (4, 2)


# ------------------------------------------------------------------------------ the schemas
@pytest.mark.parametrize("kind", ["model", "results"])
def test_schema_files_are_valid_2020_12(kind: str) -> None:
    # JSON Schema 2020-12 meta-schema, checked by the jsonschema library
    jsonschema.Draft202012Validator.check_schema(exchange.schema(kind))


def _plain_validator(kind: str) -> Any:
    from referencing import Registry, Resource

    model, results = exchange.schema("model"), exchange.schema("results")
    reg = Registry().with_resources(
        [(model["$id"], Resource.from_contents(model)), (results["$id"], Resource.from_contents(results))]
    )
    return jsonschema.Draft202012Validator(exchange.schema(kind), registry=reg)


def test_format_examples_validate_with_a_plain_validator() -> None:
    # the schemas work for any JSON Schema 2020-12 validator, not only this reader
    assert list(_plain_validator("model").iter_errors(example_doc())) == []
    results = json.loads((DATA / "format_example_results.json").read_text())
    assert list(_plain_validator("results").iter_errors(results)) == []


def test_schema_rejects_unknown_key_but_allows_x_keys() -> None:
    doc = example_doc()
    doc["members"][0]["x-ok"] = 1
    assert list(_plain_validator("model").iter_errors(doc)) == []
    doc["members"][0]["sectoin"] = "tube"
    assert len(list(_plain_validator("model").iter_errors(doc))) == 1


# ------------------------------------------------------------------------------- the writer
@dataclass
class Solved:
    case_id: str
    displacements: Any
    axial_forces: Any
    reactions: Any


def _solved(example: Any) -> Solved:
    n, d = example.n_nodes, example.dim
    disp = np.arange(n * d, dtype=float).reshape(n, d) * 1e-4
    forces = np.array([8.333333333333334, 8.333333333333334, -10.416666666666666, -10.416666666666666, -0.0])
    reac = np.zeros((n, d))
    reac[0] = [0.0, 6.25]
    reac[2, 1] = 6.25
    return Solved("snow", disp, forces, reac)


def test_dump_results_shape_and_header(example: Any) -> None:
    # FORMAT.md results file: format, version, source, sign_convention, units, cases
    doc = json.loads(dump_results(example, [_solved(example)], source="truss-audit solve"))
    assert doc["format"] == "truss-audit-results"
    assert doc["version"] == 1
    assert doc["sign_convention"] == "tension_positive"
    assert doc["units"] == {"length": "m", "force": "kN"}
    case = doc["cases"]["snow"]
    assert sorted(case["displacements"]) == ["A", "B", "C", "D"]
    assert set(case["displacements"]["B"]) == {"x", "y"}
    assert sorted(case["axial_forces"]) == ["1", "2", "3", "4", "5"]
    assert sorted(case["reactions"]) == ["A", "C"]  # nodes with a restraint or spring


def test_dump_results_shortest_round_trip_floats(example: Any) -> None:
    # Python float repr is the shortest string that reads back to the same float (Python docs, repr of float)
    solved = _solved(example)
    text = dump_results(example, [solved], source="s")
    res = parse_results(text, example)
    assert_array_equal(res.cases[0].axial_forces, solved.axial_forces)
    assert_array_equal(res.cases[0].displacements, solved.displacements)
    assert '"3": -10.416666666666666' in text
    assert "-0.0" not in text
    assert '"5": 0' in text


def test_dump_results_significant_digits_from_exact_values(example: Any) -> None:
    solved = _solved(example)
    solved.axial_forces = [Fraction(25, 3), mpmath.mpf(25) / 3, Fraction(-125, 12), mpmath.mpf("-1.2345e-5"), 0]
    text = dump_results(example, [solved], source="s", digits=5)
    forces = json.loads(text, parse_float=str)["cases"]["snow"]["axial_forces"]
    assert forces == {"1": "8.3333", "2": "8.3333", "3": "-10.417", "4": "-1.2345e-05", "5": 0}
    assert "mpf" not in text


@pytest.mark.parametrize(
    ("value", "digits", "text"),
    [
        (Fraction(1, 3), 3, "0.333"),
        (Fraction(2, 3), 1, "0.7"),
        (Fraction(1, 8), 2, "0.12"),  # half to even
        (Fraction(3, 8), 2, "0.38"),  # half to even
        (Fraction(9999, 100), 3, "100"),  # carries into the next decade
        (Fraction(123456), 3, "1.23e+05"),
        (Fraction(12), 4, "12.00"),
        (Fraction(1, 10**6), 2, "1.0e-06"),
        (0.1, 20, "0.10000000000000000555"),  # the exact binary value of the float 0.1
        (Fraction(-5, 1000), 2, "-0.0050"),
    ],
)
def test_significant_digits(value: Any, digits: int, text: str) -> None:
    # round half to even at the N-th significant digit (IEEE 754 default rounding, common practice for decimals)
    out = exchange._number(value, digits)
    assert out == text
    assert float(json.loads(out)) == pytest.approx(float(value), rel=10.0 ** (1 - digits))


def test_dump_results_rejects_non_finite(example: Any) -> None:
    # RFC 8259 section 6: NaN and Infinity are not JSON numbers
    solved = _solved(example)
    solved.axial_forces = [math.inf, 0, 0, 0, 0]
    with pytest.raises(ValueError, match="non-finite"):
        dump_results(example, [solved], source="s")


def test_dump_results_wrong_shape(example: Any) -> None:
    solved = _solved(example)
    solved.axial_forces = [0.0] * 4
    with pytest.raises(ValueError, match="axial forces"):
        dump_results(example, [solved], source="s")


def test_dump_model_round_trip_of_example(example: Any) -> None:
    again = parse_model(exchange.dump_model(example))
    assert again.E_text == example.E_text
    assert again.alpha_text == example.alpha_text
    assert again.restraint_label == example.restraint_label
    assert_array_equal(again.restraint_dir, example.restraint_dir)
    assert again.combinations == example.combinations
    assert again.load_cases[1].temperature_text == example.load_cases[1].temperature_text


def test_large_model_parses(tmp_path: Path) -> None:
    # common practice: big inputs take the bulk path; 20 000 members must still be exact
    n = 10_001
    nodes = [{"id": i, "x": i * 0.5, "y": (i % 2) * 1.25} for i in range(n)]
    members = [{"id": j, "start": j, "end": j + 1, "E": 2.1e8, "A": 1e-3} for j in range(n - 1)]
    members += [{"id": n + j, "start": j, "end": j + 2, "material": "s", "section": "t"} for j in range(n - 2)]
    doc = copy.deepcopy(example_doc())
    doc.update(nodes=nodes, members=members, materials={"s": {"E": 7e7}}, sections={"t": {"A": 2e-3}})
    doc["supports"] = [{"node": 0, "restrain": ["x", "y"]}, {"node": n - 1, "restrain": ["y"]}]
    doc["load_cases"] = [{"id": "L", "loads": [{"node": 5, "fy": -1}]}]
    del doc["combinations"]
    m = parse_doc(doc)
    assert m.n_members == 2 * n - 3
    assert m.E[0] == 2.1e8
    assert m.E[-1] == 7e7
    assert m.coords_text[3] == ("1.5", "1.25")


@pytest.mark.parametrize(("value", "text"), [(0.125, "0.12"), (0.375, "0.38"), (2.5, "2"), (-1e-7, "-1e-07")])
def test_significant_digits_of_float_ties(value: float, text: str) -> None:
    # 0.125, 0.375 and 2.5 are exact binary values: true ties, rounded half to even (IEEE 754 roundTiesToEven)
    digits = 1 if value in (2.5, -1e-7) else 2
    assert exchange._number(value, digits) == text


def test_exact_rounding_agrees_with_the_decimal_module() -> None:
    # Python's decimal module (General Decimal Arithmetic, ROUND_HALF_EVEN) as an independent reference
    import decimal
    import random

    rng = random.Random(5)
    for _ in range(2000):
        p, q = rng.randint(1, 10 ** rng.randint(1, 30)), rng.randint(1, 10 ** rng.randint(1, 30))
        digits = rng.randint(1, 17)
        exact = decimal.Context(prec=300).divide(decimal.Decimal(p), decimal.Decimal(q))
        rounded = decimal.Context(prec=digits, rounding=decimal.ROUND_HALF_EVEN).plus(exact)
        assert float(exchange._number(Fraction(p, q), digits)) == float(rounded)
        t = rounded.as_tuple()
        assert exchange._round_ratio(p, q, digits)[1] == t.exponent + len(t.digits) - 1


@pytest.mark.parametrize(
    ("raw", "quantum"), [(b"8.333", 0.0005), (b"1.2e-3", 0.05e-3), (12, 0.5), (b"-2.50E+2", 0.5), (b"7.5e-400", 5e-401)]
)
def test_bulk_quanta_match_single(raw: Any, quantum: float) -> None:
    assert exchange._quanta([raw])[0] == pytest.approx(quantum, rel=1e-12)
