"""Tolerances: one object, a policy file, overrides, and the rule's promises (3-4 significant figures pass,
a 1 % error fails), the latter checked on numbers printed here with Python's own rounding."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from audit.tolerances import POLICY_FORMAT, Tolerances


def quantum_of(text: str) -> float:
    """Half a unit in the last printed digit of a number in e-notation (as the format's reader defines it)."""
    mant, _, exp = text.lstrip("-").partition("e")
    return 0.5 * 10.0 ** (int(exp) - len(mant.partition(".")[2]))


def printed(x: float, digits: int) -> tuple[float, float]:
    text = f"{x:.{digits - 1}e}"
    return float(text), quantum_of(text)


def test_defaults_are_echoed_as_plain_values() -> None:
    d = Tolerances().as_dict()
    assert d == {
        "relative": 1.0e-3,
        "floor": 1.0e-4,
        "noise": 1.0e-12,
        "use_quanta": True,
        "ratio_match": 5.0e-3,
        "max_candidates": 40,
    }
    assert json.loads(json.dumps(d)) == d
    assert Tolerances(**d) == Tolerances()


def test_policy_from_mapping_file_and_wrapped_document(tmp_path: Path) -> None:
    assert Tolerances.from_policy({"relative": 0.01}).relative == 0.01
    plain = tmp_path / "plain.json"
    plain.write_text('{"floor": 1e-5, "x-note": "kept out"}')
    assert Tolerances.from_policy(plain).floor == 1e-5
    wrapped = tmp_path / "wrapped.json"
    wrapped.write_text(json.dumps({"format": POLICY_FORMAT, "version": 1, "tolerances": {"use_quanta": False}}))
    assert Tolerances.from_policy(str(wrapped)).use_quanta is False


@pytest.mark.parametrize(
    "policy",
    [{"relativ": 0.01}, {"relative": -1}, {"relative": float("nan")}, {"use_quanta": "yes"}, {"max_candidates": 0}],
    ids=["misspelt", "negative", "nan", "not-bool", "zero-candidates"],
)
def test_bad_policies_are_refused(policy: dict[str, object]) -> None:
    with pytest.raises(ValueError, match="tolerance"):
        Tolerances.from_policy(policy)


def test_bad_policy_file_is_refused(tmp_path: Path) -> None:
    bad = tmp_path / "bad.json"
    bad.write_text("{relative: 1}")
    with pytest.raises(ValueError, match="not valid JSON"):
        Tolerances.from_policy(bad)
    wrong = tmp_path / "wrong.json"
    wrong.write_text(json.dumps({"format": "something-else", "tolerances": {}}))
    with pytest.raises(ValueError, match="format"):
        Tolerances.from_policy(wrong)


def test_override_ignores_none_and_refuses_unknown_names() -> None:
    t = Tolerances().override(relative=None, floor=2e-4)
    assert (t.relative, t.floor) == (1e-3, 2e-4)
    with pytest.raises(ValueError, match="unknown tolerance"):
        Tolerances().override(tolerance=1)


def test_allowed_is_quantum_plus_the_larger_relative_term() -> None:
    t = Tolerances()
    a = t.allowed(np.array([100.0, 0.0]), np.array([0.05, 0.0]), 1000.0)
    assert a.tolist() == pytest.approx([0.05 + 0.1, 0.1])
    assert Tolerances(use_quanta=False).allowed(100.0, 0.05, 1000.0) == pytest.approx(0.1)


magnitudes = st.floats(min_value=1e-6, max_value=1e9, allow_nan=False).flatmap(lambda m: st.sampled_from([m, -m]))


@given(x=magnitudes, digits=st.sampled_from([3, 4]), spread=st.floats(min_value=1.0, max_value=1e4))
def test_correct_values_printed_to_3_or_4_figures_pass(x: float, digits: int, spread: float) -> None:
    value, q = printed(x, digits)
    assert abs(value - x) <= Tolerances().allowed(x, q, abs(x) * spread)


@given(x=magnitudes, share=st.floats(min_value=0.02, max_value=1.0), sign=st.sampled_from([1.01, 0.99]))
def test_a_one_percent_error_printed_to_4_figures_fails(x: float, share: float, sign: float) -> None:
    """For any member carrying at least 2 % of the largest force (below that the floor of 1e-4 of the scale
    governs); at 3 figures the print alone resolves only 0.5 %, so 4 are needed for a guarantee."""
    value, q = printed(sign * x, 4)
    assert abs(value - x) > Tolerances().allowed(x, q, abs(x) / share)


@given(x=magnitudes)
def test_float_noise_on_a_zero_member_passes_and_one_percent_of_the_scale_fails(x: float) -> None:
    t = Tolerances()
    scale = abs(x)
    assert 1e-12 * scale <= t.allowed(0.0, 0.0, scale)
    assert not 0.01 * scale <= t.allowed(0.0, 0.0, scale)
    assert math.isclose(float(t.rounding_band(0.0, scale)), 1e-12 * scale)
