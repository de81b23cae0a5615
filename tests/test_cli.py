"""The command line: exit codes, usage errors, and the output of ``explain`` and ``solve``.

``audit.cli.main(argv, out, err) -> int`` never raises for bad input or usage:
exit 0 pass / written, 1 the audit failed, 2 bad input or usage (nothing
written), 3 a check crashed, 4 ``solve`` cannot solve the model.

Reference values for ``solve`` are derived in this file by hand, for the
exchange contract's example roof truss (``shared/FORMAT.md``): member forces
by the method of joints and nodal displacements from member elongations
e = N·L/(EA) by joint compatibility, and the free thermal elongation
alpha·delta·L of a statically determinate truss, which moves the joints but
leaves every member force zero (common practice; e.g. Hibbeler, *Structural
Analysis*, 8th ed., §3.4 and §8.6).
"""

from __future__ import annotations

import io
import json
import os
import subprocess
import sys
from fractions import Fraction
from pathlib import Path
from typing import Any

import pytest

from audit import cli

ROOT = Path(__file__).resolve().parents[1]
CORPUS = ROOT / "fuzz" / "corpus"


def run_cli(argv: list[str]) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    code = cli.main(argv, out=out, err=err)
    return code, out.getvalue(), err.getvalue()


def base_model() -> dict[str, Any]:
    return json.loads((CORPUS / "boathouse.model.json").read_text(encoding="utf-8"))


# --------------------------------------------------------------------------- the hand solution
EA = Fraction(2) * 10**8 * Fraction(12, 10_000)  #: members 1-4, kN (E = 2e8 kPa, A = 1.2e-3 m^2)
SNOW = Fraction(25, 2)  #: kN down at D

#: member forces under snow, method of joints: joint D vertical, joint A horizontal, joint B vertical
N_SNOW = {
    "1": SNOW / 2 * Fraction(4, 3),
    "2": SNOW / 2 * Fraction(4, 3),
    "3": -SNOW / 2 * Fraction(5, 3),
    "4": -SNOW / 2 * Fraction(5, 3),
    "5": Fraction(0),
}


def snow_displacements() -> dict[str, tuple[Fraction, Fraction]]:
    """Joint displacements from the elongations e_i = N_i L_i / (EA), A pinned and C on a y roller.

    u_B = (e1, u_Dy) (member 5 has e5 = 0 and is vertical), u_C = (e1 + e2, 0);
    D from members 3 and 4: 4 u_Dx + 3 u_Dy = 5 e3 and 4 (u_Cx - u_Dx) + 3 u_Dy = 5 e4.
    """
    e1 = N_SNOW["1"] * 4 / EA
    e2 = N_SNOW["2"] * 4 / EA
    e3 = N_SNOW["3"] * 5 / EA
    e4 = N_SNOW["4"] * 5 / EA
    ucx = e1 + e2
    udx = (5 * e3 - 5 * e4 + 4 * ucx) / 8
    udy = (5 * e3 - 4 * udx) / 3
    return {"A": (Fraction(0), Fraction(0)), "B": (e1, udy), "C": (ucx, Fraction(0)), "D": (udx, udy)}


def heat_displacements() -> dict[str, tuple[Fraction, Fraction]]:
    """Member 1 lengthens by alpha·delta·L = 1.2e-5 · 25 · 4 m; every other member keeps its length.

    u_B = u_C = (e, ·); D from members 3, 4: 4 u_Dx + 3 u_Dy = 0, 4 (e - u_Dx) + 3 u_Dy = 0,
    so u_Dx = e/2, u_Dy = -2e/3; member 5 (vertical) gives u_By = u_Dy.
    """
    e = Fraction(12, 1_000_000) * 25 * 4
    return {"A": (Fraction(0), Fraction(0)), "B": (e, -2 * e / 3), "C": (e, Fraction(0)), "D": (e / 2, -2 * e / 3)}


def close(a: float, b: Fraction, scale: float) -> bool:
    return abs(a - float(b)) <= 1e-9 * scale


@pytest.fixture
def model_file(tmp_path: Path) -> Path:
    path = tmp_path / "roof.json"
    path.write_text(json.dumps(base_model(), indent=2), encoding="utf-8")
    return path


@pytest.fixture
def solved(tmp_path: Path, model_file: Path) -> dict[str, Any]:
    out_path = tmp_path / "roof.results.json"
    code, out, err = run_cli(["solve", str(model_file), "-o", str(out_path)])
    assert code == 0, err
    assert f"wrote {out_path}" in out
    return json.loads(out_path.read_text(encoding="utf-8"))


# --------------------------------------------------------------------------- explain
def test_explain_lists_every_registered_code() -> None:
    from audit.engine import registry

    code, out, err = run_cli(["explain"])
    assert code == 0, err
    lines = out.splitlines()
    assert lines[0].split() == ["code", "severity", "check", "summary"]
    rows = [ln for ln in lines[2:] if ln.strip()]
    reg = registry()
    assert len(rows) == len(reg)
    for row, rule in zip(rows, reg.values(), strict=True):
        assert row.split(None, 3) == [rule.code, rule.severity.label, rule.family, rule.summary]


def test_explain_codes_are_sorted_and_include_the_engine_codes() -> None:
    _code, out, _err = run_cli(["explain"])
    codes = [ln.split()[0] for ln in out.splitlines()[2:] if ln.strip()]
    assert codes == sorted(codes)
    assert {"AU901", "AU902"} <= set(codes)


def test_explain_one_code_gives_what_it_establishes_an_example_and_what_to_do() -> None:
    from audit.engine import registry

    rule = registry()["EQ101"]
    code, out, err = run_cli(["explain", "eq101"])
    assert code == 0, err
    assert out.startswith(f"EQ101 (error, equilibrium check): {rule.summary}\n")
    flat = " ".join(out.split())
    for title, body in (
        ("What it establishes:", rule.establishes),
        ("Example finding:", rule.example),
        ("How to act on it:", rule.action),
    ):
        assert f"{title} {' '.join(body.split())}" in flat


def test_explain_a_prefix_lists_that_family() -> None:
    code, out, _err = run_cli(["explain", "ST"])
    assert code == 0
    codes = [ln.split()[0] for ln in out.splitlines()[2:] if ln.strip()]
    assert codes
    assert all(c.startswith("ST") for c in codes)


def test_explain_an_unknown_code_is_a_usage_error() -> None:
    code, out, err = run_cli(["explain", "ZZ999"])
    assert code == 2
    assert "ZZ999" in err
    assert not out


@pytest.mark.parametrize(
    "argv", [["rules"], ["check", "a.json", "--select", "EQ"], ["check", "a.json", "--ignore", "EQ"]]
)
def test_the_old_names_are_gone(argv: list[str]) -> None:
    code, _out, err = run_cli(argv)
    assert code == 2
    assert "invalid choice" in err or "unrecognized arguments" in err


# --------------------------------------------------------------------------- usage
@pytest.mark.parametrize(
    "argv",
    [
        ["frobnicate"],
        ["check"],
        ["check", "a.json", "--no-such-option"],
        ["check", "a.json", "--digits", "five"],
        ["check", "a.json", "--digits", "5"],
        ["check", "a.json", "--digits", "201"],
        ["check", "a.json", "--fail-on", "catastrophe"],
        ["solve"],
        ["solve", "a.json"],
        ["solve", "a.json", "-o"],
        ["explain", "EQ101", "extra"],
    ],
    ids=[
        "unknown-command",
        "check-without-files",
        "unknown-option",
        "digits-not-a-number",
        "digits-too-few",
        "digits-too-many",
        "fail-on-unknown",
        "solve-without-model",
        "solve-without-output",
        "solve-output-without-path",
        "explain-with-two-arguments",
    ],
)
def test_usage_error_exits_2(argv: list[str]) -> None:
    code, out, err = run_cli(argv)
    assert code == 2
    assert err.strip(), "a usage error must say what is wrong"
    assert "Traceback" not in err + out


def test_no_command_prints_help_and_exits_2() -> None:
    code, out, _err = run_cli([])
    assert code == 2
    assert "check" in out
    assert "solve" in out
    assert "explain" in out


def test_version_returns_0_without_raising() -> None:
    from audit import __version__

    code, out, err = run_cli(["--version"])
    assert code == 0
    assert f"truss-audit {__version__}" in out + err


def test_help_returns_0_without_raising() -> None:
    code, out, _err = run_cli(["--help"])
    assert code == 0
    assert "usage: truss-audit" in out


def test_check_help_returns_0_without_raising() -> None:
    code, out, _err = run_cli(["check", "--help"])
    assert code == 0
    assert "--fail-on" in out


@pytest.mark.parametrize(
    "tol",
    ["relative", "relative=abc", "no_such_tolerance=1", "relative=-1", "relative=nan", "max_candidates=2.5"],
    ids=["no-value", "not-a-number", "unknown-name", "negative", "nan", "fractional-count"],
)
def test_bad_tolerance_override_exits_2(model_file: Path, tol: str) -> None:
    code, out, err = run_cli(["check", str(model_file), "--tol", tol, "--quiet"])
    assert code == 2
    assert err.strip()
    assert "Traceback" not in err + out


@pytest.mark.parametrize(
    "policy",
    [None, b"{not json", b'{"relative": "big"}', b'{"no_such_tolerance": 1}', b"[1, 2]"],
    ids=["missing-file", "not-json", "wrong-type", "unknown-name", "not-an-object"],
)
def test_bad_policy_file_exits_2(tmp_path: Path, model_file: Path, policy: bytes | None) -> None:
    path = tmp_path / "policy.json"
    if policy is not None:
        path.write_bytes(policy)
    code, out, err = run_cli(["check", str(model_file), "--policy", str(path), "--quiet"])
    assert code == 2
    assert err.strip()
    assert "Traceback" not in err + out
    assert str(path) in err or "policy" in err


def test_unknown_solver_exits_2(model_file: Path, tmp_path: Path) -> None:
    code, out, err = run_cli(["solve", str(model_file), "-o", str(tmp_path / "o.json"), "--solver", "abacus"])
    assert code == 2
    assert "abacus" in err
    assert "Traceback" not in err + out
    assert not (tmp_path / "o.json").exists()


def test_results_option_with_two_models_exits_2(tmp_path: Path, model_file: Path, solved: dict[str, Any]) -> None:
    other = tmp_path / "other.json"
    other.write_bytes(model_file.read_bytes())
    code, _out, err = run_cli(["check", str(model_file), str(other), "--results", str(tmp_path / "roof.results.json")])
    assert code == 2
    assert "--results" in err


def test_results_file_with_no_model_before_it(tmp_path: Path, model_file: Path, solved: dict[str, Any]) -> None:
    """A results file given first names itself in a one-line message (exit 2)."""
    results = tmp_path / "roof.results.json"
    code, _out, err = run_cli(["check", str(results), str(model_file)])
    assert code == 2
    assert str(results) in err
    assert "no model before it" in err
    assert "Problem(" not in err, f"the message shows a Python repr: {err!r}"


# --------------------------------------------------------------------------- solve
def test_solve_writes_the_hand_solution(solved: dict[str, Any]) -> None:
    assert solved["format"] == "truss-audit-results"
    assert solved["version"] == 1
    snow = solved["cases"]["snow"]
    for member, n in N_SNOW.items():
        assert close(snow["axial_forces"][member], n, 12.5), member
    for node, (ux, uy) in snow_displacements().items():
        assert close(snow["displacements"][node]["x"], ux, 1e-3), node
        assert close(snow["displacements"][node]["y"], uy, 1e-3), node
    assert close(snow["reactions"]["A"]["y"], SNOW / 2, 12.5)
    assert close(snow["reactions"]["C"]["y"], SNOW / 2, 12.5)
    assert close(snow["reactions"]["A"]["x"], Fraction(0), 12.5)


def test_solve_heat_case_moves_joints_without_forces(solved: dict[str, Any]) -> None:
    heat = solved["cases"]["heat"]
    for member in N_SNOW:
        assert close(heat["axial_forces"][member], Fraction(0), 12.5), member
    for node, (ux, uy) in heat_displacements().items():
        assert close(heat["displacements"][node]["x"], ux, 1e-3), node
        assert close(heat["displacements"][node]["y"], uy, 1e-3), node


def test_solve_combination_is_the_factored_sum(solved: dict[str, Any]) -> None:
    design = solved["cases"]["design"]
    for member, n in N_SNOW.items():
        assert close(design["axial_forces"][member], Fraction(3, 2) * n, 12.5), member
    snow, heat = snow_displacements(), heat_displacements()
    for node in "ABCD":
        for a, axis in enumerate("xy"):
            expected = Fraction(3, 2) * snow[node][a] + heat[node][a]
            assert close(design["displacements"][node][axis], expected, 1e-3), (node, axis)


def test_solve_output_is_a_results_file_the_auditor_passes(
    tmp_path: Path, model_file: Path, solved: dict[str, Any]
) -> None:
    code, out, err = run_cli(["check", str(model_file), "--results", str(tmp_path / "roof.results.json"), "--quiet"])
    assert code == 0, out + err
    assert out == f"{model_file}: pass\n"


def test_solve_with_digits_writes_that_many_digits(tmp_path: Path, model_file: Path) -> None:
    out_path = tmp_path / "hp.json"
    code, _out, err = run_cli(["solve", str(model_file), "-o", str(out_path), "--digits", "25"])
    assert code == 0, err
    text = out_path.read_text(encoding="utf-8")
    doc = json.loads(text)
    # N3 = -125/12 = -10.41666...: 25 significant digits of it appear in the file as written
    assert "-10.41666666666666666666667" in text
    assert abs(doc["cases"]["snow"]["axial_forces"]["5"]) < 1e-20  # member 5 carries nothing


def test_solve_an_unstable_model_exits_4(tmp_path: Path) -> None:
    doc = base_model()
    doc["supports"] = [{"node": "A", "restrain": ["x", "y"]}]  # free to turn about A
    path = tmp_path / "loose.json"
    path.write_text(json.dumps(doc), encoding="utf-8")
    out_path = tmp_path / "loose.results.json"
    code, out, err = run_cli(["solve", str(path), "-o", str(out_path)])
    assert code == 4
    assert "cannot be solved" in err
    assert "Traceback" not in err + out
    assert not out_path.exists()


# --------------------------------------------------------------------------- check
def test_check_fails_a_wrong_member_force(tmp_path: Path, model_file: Path, solved: dict[str, Any]) -> None:
    solved["cases"]["snow"]["axial_forces"]["3"] *= 1.1
    wrong = tmp_path / "wrong.json"
    wrong.write_text(json.dumps(solved), encoding="utf-8")
    code, out, err = run_cli(["check", str(model_file), str(wrong)])
    assert code == 1, err
    assert "member 3" in out


def test_check_quiet_prints_only_the_verdict(tmp_path: Path, model_file: Path, solved: dict[str, Any]) -> None:
    solved["cases"]["snow"]["reactions"]["C"]["y"] = 7.0
    wrong = tmp_path / "wrong.json"
    wrong.write_text(json.dumps(solved), encoding="utf-8")
    code, out, _err = run_cli(["check", str(model_file), "--results", str(wrong), "--quiet"])
    assert code == 1
    assert out == f"{model_file}: fail\n"


def test_check_a_folder_pairs_model_and_results_by_name(tmp_path: Path, solved: dict[str, Any]) -> None:
    code, out, err = run_cli(["check", str(tmp_path), "--quiet"])
    assert code == 0, out + err
    assert out.strip().endswith("pass")


def test_a_crashing_check_exits_3_under_its_own_name(
    tmp_path: Path, model_file: Path, solved: dict[str, Any], monkeypatch: pytest.MonkeyPatch
) -> None:
    from audit import engine

    victim = engine.CHECK_MODULES[2]

    def boom(ctx: object) -> list[object]:
        raise ZeroDivisionError("planted by the test")

    monkeypatch.setattr(victim, "run", boom)
    report = tmp_path / "report.json"
    code, out, err = run_cli(
        ["check", str(model_file), "--results", str(tmp_path / "roof.results.json"), "--json", str(report)]
    )
    assert code == 3, out + err
    doc = json.loads(report.read_text(encoding="utf-8"))
    assert doc["verdict"] == "fail"
    crashed = [f for f in doc["findings"] if f["code"] == "AU901"]
    assert len(crashed) == 1
    assert victim.CHECK_ID in crashed[0]["message"]


def test_an_unsolvable_model_fails_the_check(tmp_path: Path) -> None:
    doc = base_model()
    doc["supports"] = [{"node": "A", "restrain": ["x", "y"]}]
    path = tmp_path / "loose.json"
    path.write_text(json.dumps(doc), encoding="utf-8")
    code, out, err = run_cli(["check", str(path), "--quiet"])
    assert code == 1, out + err


# --------------------------------------------------------------------------- real processes
def _python_m(args: list[str], cwd: Path) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", "audit", *args],
        capture_output=True,
        text=True,
        timeout=120,
        cwd=cwd,
        env={**os.environ, "PYTHONWARNINGS": "ignore"},
        check=False,
    )


def test_python_m_audit_explain(tmp_path: Path) -> None:
    proc = _python_m(["explain"], tmp_path)
    assert proc.returncode == 0, proc.stderr
    assert "AU901" in proc.stdout


def test_python_m_audit_bad_tolerance_has_no_traceback(tmp_path: Path, model_file: Path) -> None:
    proc = _python_m(["check", str(model_file), "--tol", "no_such_tolerance=1"], tmp_path)
    assert proc.returncode == 2
    assert "Traceback" not in proc.stderr
