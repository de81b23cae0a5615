"""A model built in memory without decimal texts is recomputed at its float values, never as unloaded.

Reference: our own float64 solve of the same model, which the high-precision answer must match to
float64 accuracy (the exact answer of the float-valued model; common practice for refinement checks).
"""

from __future__ import annotations

import dataclasses
import json
from pathlib import Path

import numpy as np

from audit import engine, exchange

ROOT = Path(__file__).resolve().parent.parent


def test_loads_without_texts_are_taken_at_their_float_values() -> None:
    model = exchange.load_model(str(ROOT / "reference_cases" / "demo" / "footbridge.json"))
    bare = dataclasses.replace(
        model,
        load_cases=tuple(
            dataclasses.replace(lc, load_text=(), temperature_text=(), length_error_text=(), settlement_text=())
            for lc in model.load_cases
        ),
    )
    ctx = engine.build_context(bare)
    assert ctx.precision is not None
    assert ctx.solution is not None
    for case in ctx.solution.cases:
        hp = ctx.precision.case(case.case_id)
        scale = np.abs(case.axial_forces).max()
        assert scale > 0
        assert np.abs(hp.axial_forces - case.axial_forces).max() <= 1e-9 * scale, case.case_id
    json.dumps(ctx.precision.as_dict())
