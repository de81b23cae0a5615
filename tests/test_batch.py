"""Tests of audit.batch: many models, one broken, in one or several processes.

Oracle: a square panel (one cell of the benchmark grid, 1.5 m, one diagonal),
pinned at both bottom corners, 10 kN down at each top corner.  By the method
of joints (common practice; e.g. R. C. Hibbeler, *Structural Analysis*, 8th
ed., §3.4): at the top-left joint the horizontal bar carries nothing and the
left post -10 kN; at the top-right joint the diagonal carries nothing and the
right post -10 kN; the bottom bar joins two pins and carries nothing.  Each
post shortens by δ = 10 · 1.5 / (E A); the unstrained top bar and diagonal
then move both top joints by (+δ, −δ).  Reactions: 10 kN up at each pin.
"""

from __future__ import annotations

import json
import xml.etree.ElementTree as ET
from pathlib import Path
from typing import Any

import pytest
from bench_generator import generator

from audit import batch

E, A_POST, A_OTHER, L = 2.1e8, 2.5e-3, 1.2e-3, 1.5
DELTA = 10.0 * L / (E * A_POST)


def panel(post_force_reported: float = -10.0) -> dict[str, Any]:
    """The one-cell panel with the closed-form results above (left post force as given)."""
    return {
        "format": "truss-audit-model",
        "version": 1,
        "title": "one panel",
        "dimensions": 2,
        "units": {"length": "m", "force": "kN"},
        "nodes": [
            {"id": "0", "x": 0, "y": 0},
            {"id": "1", "x": L, "y": 0},
            {"id": "2", "x": 0, "y": L},
            {"id": "3", "x": L, "y": L},
        ],
        "members": [
            {"id": "bottom", "start": "0", "end": "1", "E": E, "A": A_OTHER},
            {"id": "top", "start": "2", "end": "3", "E": E, "A": A_OTHER},
            {"id": "left", "start": "0", "end": "2", "E": E, "A": A_POST},
            {"id": "right", "start": "1", "end": "3", "E": E, "A": A_POST},
            {"id": "diag", "start": "0", "end": "3", "E": E, "A": A_OTHER},
        ],
        "supports": [{"node": "0", "restrain": ["x", "y"]}, {"node": "1", "restrain": ["x", "y"]}],
        "load_cases": [{"id": "down", "loads": [{"node": "2", "fy": -10}, {"node": "3", "fy": -10}]}],
        "results": {
            "cases": {
                "down": {
                    "displacements": {"2": {"x": DELTA, "y": -DELTA}, "3": {"x": DELTA, "y": -DELTA}},
                    "axial_forces": {"bottom": 0, "top": 0, "left": post_force_reported, "right": -10, "diag": 0},
                    "reactions": {"0": {"x": 0, "y": 10}, "1": {"x": 0, "y": 10}},
                }
            }
        },
    }


@pytest.fixture(scope="module")
def models(tmp_path_factory: pytest.TempPathFactory) -> dict[str, str]:
    d = tmp_path_factory.mktemp("batch")
    good = d / "b_good.json"
    good.write_text(json.dumps(panel()), encoding="utf-8")
    wrong = d / "c_wrong.json"
    wrong.write_text(json.dumps(panel(post_force_reported=-10.5)), encoding="utf-8")  # 5 % off
    broken_doc = panel()
    broken_doc["members"][4]["end"] = "99"  # no such node
    broken = d / "a_broken.json"
    broken.write_text(json.dumps(broken_doc), encoding="utf-8")
    gen = generator()
    grid = d / "d_grid.json"
    facts = gen.write(str(grid), "grid2d", 100, perturb=2, seed=3)
    return {"good": str(good), "wrong": str(wrong), "broken": str(broken), "grid": str(grid), "facts": facts}


@pytest.fixture(scope="module")
def serial(models: dict[str, Any]) -> batch.BatchResult:
    paths = [models[k] for k in ("wrong", "grid", "broken", "good")]  # deliberately unsorted
    return batch.run_batch(paths, jobs=1)


@pytest.fixture(scope="module")
def parallel(models: dict[str, Any]) -> batch.BatchResult:
    paths = [models[k] for k in ("good", "broken", "grid", "wrong")]
    return batch.run_batch(paths, jobs=2)


def _by_name(result: batch.BatchResult) -> dict[str, batch.BatchEntry]:
    return {Path(e.path).stem.split("_", 1)[1]: e for e in result.entries}


def test_entries_come_back_sorted_by_path(serial: batch.BatchResult) -> None:
    paths = [e.path for e in serial.entries]
    assert paths == sorted(paths)


@pytest.mark.parametrize(
    ("name", "status"),
    [("good", "pass"), ("wrong", "fail"), ("broken", "input_error"), ("grid", "fail")],
    ids=["closed-form-results-pass", "five-percent-off-fails", "unknown-node-is-input-error", "perturbed-grid-fails"],
)
def test_status_of_each_model(serial: batch.BatchResult, name: str, status: str) -> None:
    assert _by_name(serial)[name].status == status


def test_broken_file_carries_the_reader_problems(serial: batch.BatchResult) -> None:
    entry = _by_name(serial)["broken"]
    assert entry.result is None
    assert any(path.startswith("members[4]") and "99" in message for path, message in entry.problems)


def test_wrong_post_force_is_located_on_that_member(serial: batch.BatchResult) -> None:
    result = _by_name(serial)["wrong"].result
    assert result is not None
    flagged = {f.location.member for f in result.findings if f.severity.label == "error" and f.location.member}
    assert flagged == {"left"}


def test_generated_grid_flags_exactly_the_perturbed_members(models: dict[str, Any], serial: batch.BatchResult) -> None:
    result = _by_name(serial)["grid"].result
    assert result is not None
    flagged = {f.location.member for f in result.findings if f.severity.label == "error" and f.location.member}
    assert flagged == set(models["facts"]["perturbed_members"])


def test_processes_give_the_same_statuses_and_codes(serial: batch.BatchResult, parallel: batch.BatchResult) -> None:
    def digest(r: batch.BatchResult) -> list[tuple[str, str, tuple[str, ...]]]:
        return [
            (e.path, e.status, tuple(sorted(f.code for f in e.result.findings)) if e.result else ()) for e in r.entries
        ]

    assert parallel.jobs == 2
    assert digest(parallel) == digest(serial)


def test_exit_code_is_the_worst_entry(serial: batch.BatchResult) -> None:
    assert batch.exit_code(serial) == 2  # an input error outranks a failed audit


def test_exit_code_of_passing_batch(models: dict[str, Any]) -> None:
    result = batch.run_batch([models["good"]], jobs=1)
    assert (batch.exit_code(result), result.verdict) == (0, "pass")


def test_missing_file_is_an_input_error(tmp_path: Path) -> None:
    result = batch.run_batch([str(tmp_path / "nowhere.json")], jobs=1)
    assert result.entries[0].status == "input_error"


def test_results_file_paired_with_its_model(tmp_path: Path) -> None:
    doc = panel(post_force_reported=-10.5)
    results = {"format": "truss-audit-results", "version": 1, **doc.pop("results")}
    model_path, results_path = tmp_path / "m.json", tmp_path / "m.results.json"
    model_path.write_text(json.dumps(doc), encoding="utf-8")
    results_path.write_text(json.dumps(results), encoding="utf-8")
    entry = batch.run_batch([(str(model_path), str(results_path))], jobs=1).entries[0]
    assert (entry.status, entry.results_path) == ("fail", str(results_path))


def test_summary_has_one_row_per_model_in_order(serial: batch.BatchResult) -> None:
    text = batch.render_summary(serial)
    positions = [text.index(e.path) for e in serial.entries]
    assert positions == sorted(positions)
    assert all(e.status in text for e in serial.entries)


def test_batch_json_document(serial: batch.BatchResult) -> None:
    doc = json.loads(batch.render_batch_json(serial))
    assert doc["format"] == batch.BATCH_FORMAT
    assert [m["path"] for m in doc["models"]] == [e.path for e in serial.entries]
    assert doc["tally"] == {"pass": 1, "fail": 2, "input_error": 1, "crashed": 0}
    broken = next(m for m in doc["models"] if m["status"] == "input_error")
    assert broken["problems"]
    assert "report" not in broken
    good = next(m for m in doc["models"] if m["status"] == "pass")
    assert good["report"]["verdict"] == "pass"


def test_batch_junit_document(serial: batch.BatchResult) -> None:
    root = ET.fromstring(batch.render_batch_junit(serial))
    assert root.tag == "testsuites"
    files = [s.get("file") or s.get("name") for s in root.iter("testsuite")]
    assert all(any(e.path == f for f in files) for e in serial.entries)
    errors = [s for s in root.iter("testsuite") if s.find("testcase/error") is not None]
    assert len(errors) == 1
    assert int(root.get("failures", "0")) >= 2


def test_bad_tolerance_fails_before_any_model_is_read(models: dict[str, Any]) -> None:
    with pytest.raises(ValueError, match="relative"):
        batch.run_batch([models["good"]], jobs=1, audit_kwargs={"tol": ("relative=lots",)})
