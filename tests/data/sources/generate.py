"""Write the source-note cases of ``tests/test_rules.py`` (run: ``python tests/data/sources/generate.py``).

Each folder is a table source (``TABLES.md``) made from a published reference case, laid out so that the
tables reader must say something about it (a note, code family SR); ``expect.json`` beside the tables
names the codes the audit must raise (the same contract as ``x-expect`` in ``tests/data/rules/``), the
source of the numbers and the derivation of the layout.  ``expect.json`` is not a table (not a CSV
file), so the reader never sees it.
"""

from __future__ import annotations

import json
import shutil
from fractions import Fraction
from pathlib import Path

from audit.tables.write import model_tables, write_tables

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent.parent.parent
BASE = ROOT / "reference_cases" / "published" / "timoshenko_three_bar.json"
SOURCE = (
    "reference_cases/published/timoshenko_three_bar.json: Timoshenko, Strength of Materials, Part I, 3rd ed., "
    "the statically indeterminate three-bar system (closed forms; see reference_cases/published/SOURCES.md)"
)


def _base() -> dict[str, list[list[object]]]:
    doc = json.loads(BASE.read_text(), parse_float=str)
    return model_tables(doc)


def _write(name: str, tables: dict[str, list[list[object]]], codes: list[str], derivation: str) -> None:
    folder = HERE / name
    if folder.exists():
        shutil.rmtree(folder)
    write_tables(folder, tables)
    expect = {"codes": codes, "x-source": SOURCE, "x-derivation": derivation}
    (folder / "expect.json").write_text(json.dumps(expect, indent=2) + "\n")


def unread_and_converted() -> None:
    t = _base()
    # a column and a table the contract does not name: listed as not read (SR001)
    t["nodes"] = [[*t["nodes"][0], "label"]] + [[*row, f"joint {row[0]}"] for row in t["nodes"][1:]]
    t["checker notes"] = [["note"], ["received 14 March, revision C"]]
    # the section area in mm2 while the model's length unit is m: converted exactly (SR002)
    _header, *rows = t["sections"]
    t["sections"] = [["name", "A [mm2]"]] + [[r[0], str(Fraction(str(r[1])) * 10**6)] for r in rows]
    _write(
        "sr001_sr002_unread_and_converted",
        t,
        ["SR001", "SR002"],
        "The published model's tables with a 'label' column in nodes and a 'checker notes' table (neither is "
        "named by the contract, so both are listed as not read), and the section area written in mm2 "
        "(0.001 m2 = 1000 mm2 exactly), converted back to m2 exactly; the audit is otherwise the published "
        "case's (every reported result within its tolerance).",
    )


def inexact_conversion() -> None:
    t = _base()
    _header, *rows = t["temperatures"]
    # 40 degC written as 72 degF (a difference: 40 * 9/5 = 72 exactly); 72 * 5/9 = 40 has no finite
    # decimal factor, so the conversion is flagged (SR102) though it lands on 40 here
    t["temperatures"] = [["case", "member", "delta [degF]"]] + [
        [r[0], r[1], str(Fraction(str(r[2])) * Fraction(9, 5))] for r in rows
    ]
    _write(
        "sr102_inexact_conversion",
        t,
        ["SR102"],
        "The published model's tables with the temperature change written in degF (40 degC = 72 degF as a "
        "difference, common practice); the factor 5/9 back to degC has no finite decimal form, so the reader "
        "warns that it rounded the conversion to 40 significant digits; the values and the audit are the "
        "published case's.",
    )


if __name__ == "__main__":
    unread_and_converted()
    inexact_conversion()
