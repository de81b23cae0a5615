"""Write ``footbridge_handoff.xlsx``: the consultant's hand-off of the demo as a workbook (invented data).

Run ``python reference_cases/demo/make_handoff.py`` from the repository root.  The workbook holds the
same model as ``footbridge.json`` and the same results as ``footbridge.results.json`` (the planted
mistake included), laid out as the consultant's program might export them: the trade's words in the
headers (``Joint``, ``Node I``, ``dx``, ``Axial force``), units in brackets (E in N/mm2, A in mm2,
displacements in mm), a utilisation column and a notes sheet that the tables contract does not name (the
audit lists them as not read).  E and A are converted exactly (1 kN/m2 = 1e-3 N/mm2, 1 m2 = 1e6 mm2),
so the tables reader gets back the model's values.
"""

from __future__ import annotations

import json
from fractions import Fraction
from pathlib import Path

from audit.tables.write import model_tables, write_tables

HERE = Path(__file__).resolve().parent


def _scaled(text: object, factor: Fraction) -> str:
    value = Fraction(str(text)) * factor
    return str(value.numerator) if value.denominator == 1 else str(float(value))


def main(target: Path = HERE / "footbridge_handoff.xlsx") -> None:
    model = json.loads((HERE / "footbridge.json").read_text(), parse_float=str)
    results = json.loads((HERE / "footbridge.results.json").read_text(), parse_float=str)
    t = model_tables(model, results)
    t["nodes"][0] = ["Joint", "x [m]", "y [m]"]
    t["materials"][0] = ["Material", "E [N/mm2]", "alpha [1/degC]"]
    t["materials"][1:] = [[r[0], _scaled(r[1], Fraction(1, 1000)), r[2]] for r in t["materials"][1:]]
    t["sections"][0] = ["Section", "A [mm2]"]
    t["sections"][1:] = [[r[0], _scaled(r[1], Fraction(10**6))] for r in t["sections"][1:]]
    header = t["members"][0]
    t["members"][0] = [{"id": "Element", "start": "Node I", "end": "Node J"}.get(h, h) for h in header]
    t["displacements"][0] = ["Load case", "Joint", "dx [mm]", "dy [mm]"]
    t["forces"][0] = ["Load case", "Element", "Axial force [kN]", "Utilisation"]
    t["forces"][1:] = [[*r, ""] for r in t["forces"][1:]]
    t["reactions"][0] = ["Load case", "Joint", "Rx [kN]", "Ry [kN]"]
    t["notes"] = [
        ["Note"],
        ["Hand-off of the north side truss, revision B (invented demo data)."],
        ["Utilisation left blank: member checks follow in a separate issue."],
    ]
    write_tables(target, t)


if __name__ == "__main__":
    main()
