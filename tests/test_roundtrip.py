"""Round trip through the exchange format: parse(dump(parse(x))) equals parse(x), field by field.

Random valid model documents cover every part of ``shared/FORMAT.md``: integer
and string ids, materials and sections, axis and direction restraints, springs,
all four load kinds, combinations, reported results and a source stiffness.
Numbers are drawn as decimal *texts* (integers, fixed point, exponents in
either case) and written into the JSON as they are, so the test also checks
that every text survives exactly (FORMAT.md: "a reader keeps each one's
decimal text").  Property-based round-trip testing is common practice.
"""

from __future__ import annotations

import dataclasses
import json
from typing import Any

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from audit.exchange import dump_model, parse_model
from audit.model import AXES, FORCE_UNITS, LENGTH_UNITS, TEMPERATURE_UNITS

Doc = dict[str, Any]


class Num(str):
    """A number's decimal text, to be written into the JSON unquoted."""

    __slots__ = ()


def dumps_with_texts(doc: Any) -> str:
    """JSON text of ``doc`` with every :class:`Num` written as its own text."""
    texts: list[str] = []

    def mark(v: Any) -> Any:
        if isinstance(v, Num):
            texts.append(str(v))
            return f"\u00a7num{len(texts) - 1}\u00a7"
        if isinstance(v, dict):
            return {k: mark(x) for k, x in v.items()}
        if isinstance(v, list):
            return [mark(x) for x in v]
        return v

    text = json.dumps(mark(doc), ensure_ascii=False)
    for i, t in enumerate(texts):
        text = text.replace(f'"\u00a7num{i}\u00a7"', t, 1)
    return text


@st.composite
def number_text(draw: st.DrawFn, positive: bool = False, form: str | None = None) -> Num:
    sign = "" if positive else draw(st.sampled_from(["", "-"]))
    kind = form or draw(st.sampled_from(["int", "fixed", "exp"]))
    whole = str(draw(st.integers(0, 10**6)))
    frac = draw(st.text("0123456789", min_size=1, max_size=8))
    if kind == "int":
        text = whole
    elif kind == "fixed":
        text = f"{whole}.{frac}"
    else:
        mant = draw(st.sampled_from([whole, f"{whole}.{frac}"]))
        marker = draw(st.sampled_from(["e", "E", "e+", "E-", "e-"]))
        text = f"{mant}{marker}{draw(st.integers(0, 20))}"
    if positive and float(text) == 0:
        text = "1" + text
    return Num(sign + text)


@st.composite
def direction_text(draw: st.DrawFn, dim: int) -> list[Num]:
    comps = draw(st.lists(number_text(form="int"), min_size=dim, max_size=dim))
    if all(float(c) == 0 for c in comps):
        comps[draw(st.integers(0, dim - 1))] = Num("1")
    return comps


@st.composite
def model_documents(draw: st.DrawFn) -> Doc:
    dim = draw(st.sampled_from([2, 3]))
    axes = AXES[:dim]
    temperature = draw(st.sampled_from([None, *TEMPERATURE_UNITS]))
    units: Doc = {
        "length": draw(st.sampled_from(list(LENGTH_UNITS))),
        "force": draw(st.sampled_from(list(FORCE_UNITS))),
    }
    if temperature:
        units["temperature"] = temperature
    n = draw(st.integers(2, 7))
    node_ids: list[Any] = [draw(st.sampled_from([100 + i, f"n{i}", f"node {i}/é"])) for i in range(n)]
    nodes = []
    for i, nid in enumerate(node_ids):
        # a distinct whole part per node keeps nodes apart, so no member has zero length
        node: Doc = {
            "id": nid,
            "x": Num(f"{draw(st.sampled_from(['', '-']))}{i}.{draw(st.text('0123456789', min_size=1, max_size=6))}"),
        }
        for a in axes[1:]:
            node[a] = draw(number_text())
        nodes.append(node)
    materials = {f"mat{k}": {"E": draw(number_text(positive=True))} for k in range(draw(st.integers(0, 2)))}
    for mat in materials.values():
        if draw(st.booleans()):
            mat["alpha"] = draw(number_text())
    sections = {f"sec{k}": {"A": draw(number_text(positive=True))} for k in range(draw(st.integers(0, 2)))}
    members = []
    has_alpha = []
    for j in range(draw(st.integers(1, 10))):
        a, b = draw(st.lists(st.integers(0, n - 1), min_size=2, max_size=2, unique=True))
        mb: Doc = {"id": draw(st.sampled_from([j, f"m{j}"])), "start": node_ids[a], "end": node_ids[b]}
        if materials and draw(st.booleans()):
            mb["material"] = draw(st.sampled_from(sorted(materials)))
        if "material" not in mb or draw(st.booleans()):
            mb["E"] = draw(number_text(positive=True))
        if sections and draw(st.booleans()):
            mb["section"] = draw(st.sampled_from(sorted(sections)))
        if "section" not in mb or draw(st.booleans()):
            mb["A"] = draw(number_text(positive=True))
        if draw(st.booleans()):
            mb["alpha"] = draw(number_text())
        has_alpha.append("alpha" in mb or "alpha" in materials.get(mb.get("material", ""), {}))
        members.append(mb)

    supports = []
    restrained: list[tuple[int, Doc]] = []  # (node, how to displace it)
    for i in draw(st.lists(st.integers(0, n - 1), unique=True, max_size=n)):
        entry: Doc = {"node": node_ids[i]}
        how = draw(st.sampled_from(["axes", "direction", "springs"]))
        if how == "axes":
            chosen = draw(st.lists(st.sampled_from(axes), min_size=1, max_size=dim, unique=True))
            entry["restrain"] = list(chosen)
            restrained += [(i, {a: None}) for a in chosen]
        elif how == "direction":
            d = draw(direction_text(dim))
            entry["restrain"] = [{"direction": d}]
            restrained.append((i, {"direction": d, "value": None}))
        if how == "springs" or draw(st.booleans()):
            springs = []
            for _ in range(draw(st.integers(1, 2))):
                spring: Doc = {"stiffness": draw(number_text(positive=True))}
                if draw(st.booleans()):
                    spring["axis"] = draw(st.sampled_from(axes))
                else:
                    spring["direction"] = draw(direction_text(dim))
                springs.append(spring)
            entry["springs"] = springs
        supports.append(entry)

    load_cases = []
    for k in range(draw(st.integers(0, 3))):
        lc: Doc = {"id": f"L{k}"}
        if draw(st.booleans()):
            lc["title"] = draw(st.text(max_size=10))
        loads = []
        for _ in range(draw(st.integers(0, 4))):
            load: Doc = {"node": node_ids[draw(st.integers(0, n - 1))]}
            for a in draw(st.lists(st.sampled_from(axes), min_size=1, unique=True)):
                load["f" + a] = draw(number_text())
            loads.append(load)
        if loads:
            lc["loads"] = loads
        if temperature and any(has_alpha):
            with_alpha = [j for j, h in enumerate(has_alpha) if h]
            picks = draw(st.lists(st.sampled_from(with_alpha), max_size=3))
            if picks:
                lc["temperature_changes"] = [{"member": members[j]["id"], "delta": draw(number_text())} for j in picks]
        picks = draw(st.lists(st.integers(0, len(members) - 1), max_size=3))
        if picks:
            lc["length_errors"] = [{"member": members[j]["id"], "value": draw(number_text())} for j in picks]
        if restrained:
            chosen_r = draw(st.lists(st.integers(0, len(restrained) - 1), unique=True, max_size=3))
            sds = []
            for r in chosen_r:
                node_i, how_r = restrained[r]
                item: Doc = {"node": node_ids[node_i]}
                for key, val in how_r.items():
                    item[key] = draw(number_text()) if val is None else val
                sds.append(item)
            if sds:
                lc["support_displacements"] = sds
        load_cases.append(lc)
    doc: Doc = {
        "format": "truss-audit-model",
        "version": 1,
        "dimensions": dim,
        "units": units,
        "nodes": nodes,
        "members": members,
    }
    if draw(st.booleans()):
        doc["title"] = draw(st.text(max_size=20))
    if draw(st.booleans()):
        doc["description"] = draw(st.text(max_size=20))
    if materials:
        doc["materials"] = materials
    if sections:
        doc["sections"] = sections
    if supports:
        doc["supports"] = supports
    if load_cases:
        doc["load_cases"] = load_cases
        combos = []
        for c in range(draw(st.integers(0, 2))):
            ids = draw(st.lists(st.sampled_from([lc["id"] for lc in load_cases]), min_size=1, unique=True))
            combos.append({"id": f"C{c}", "factors": {i: draw(number_text()) for i in ids}})
        if combos:
            doc["combinations"] = combos
        if draw(st.booleans()):
            doc["results"] = draw(results_body(doc, node_ids, [mb["id"] for mb in members], axes))
    if draw(st.booleans()):
        dofs = draw(
            st.lists(st.tuples(st.integers(0, n - 1), st.sampled_from(axes)), min_size=1, max_size=6, unique=True)
        )
        storage = draw(st.sampled_from(["full", "upper"]))
        entries = []
        for _ in range(draw(st.integers(0, 6))):
            r, c = draw(st.integers(0, len(dofs) - 1)), draw(st.integers(0, len(dofs) - 1))
            if storage == "upper" and r > c:
                r, c = c, r
            entries.append([r, c, Num(repr(draw(st.floats(allow_nan=False, allow_infinity=False))))])
        doc["stiffness"] = {"dofs": [[node_ids[i], a] for i, a in dofs], "storage": storage, "entries": entries}
    return doc


@st.composite
def results_body(draw: st.DrawFn, doc: Doc, node_ids: list[Any], member_ids: list[Any], axes: tuple[str, ...]) -> Doc:
    """Reported results in model units, tension positive, each value a float's shortest text."""
    value = st.floats(allow_nan=False, allow_infinity=False, width=64).map(lambda f: Num(repr(f)))
    case_ids = [lc["id"] for lc in doc["load_cases"]] + [c["id"] for c in doc.get("combinations", [])]
    cases: Doc = {}
    for cid in draw(st.lists(st.sampled_from(case_ids), unique=True, min_size=1)):
        case: Doc = {}
        for part in draw(st.lists(st.sampled_from(["displacements", "axial_forces", "reactions"]), unique=True)):
            if part == "axial_forces":
                picks = draw(st.lists(st.sampled_from(member_ids), unique=True))
                case[part] = {str(m): draw(value) for m in picks}
            else:
                picks = draw(st.lists(st.sampled_from(node_ids), unique=True))
                case[part] = {
                    str(i): {a: draw(value) for a in draw(st.lists(st.sampled_from(axes), min_size=1, unique=True))}
                    for i in picks
                }
        cases[cid] = case
    body: Doc = {"sign_convention": "tension_positive", "units": dict(doc["units"]), "cases": cases}
    body["units"].pop("temperature", None)
    if draw(st.booleans()):
        body["source"] = draw(st.text(max_size=10))
    return body


def as_read(text: Any) -> str:
    """The text a reader keeps: as written, except that an integer is in its canonical form ("-0" reads as "0")."""
    t = str(text)
    return str(int(t)) if t.lstrip("-").isdigit() else t


def assert_same(a: Any, b: Any, where: str = "model") -> None:
    """Field-by-field equality: arrays by value, dtype and shape (NaN equal to NaN), records recursively."""
    if isinstance(a, np.ndarray):
        assert isinstance(b, np.ndarray), where
        assert a.dtype == b.dtype, where
        assert a.shape == b.shape, where
        assert np.array_equal(a, b, equal_nan=a.dtype.kind == "f"), where
        if a.dtype.kind == "f":  # negative zero stays negative zero
            assert np.array_equal(np.signbit(a), np.signbit(b)), where
    elif dataclasses.is_dataclass(a) and not isinstance(a, type):
        assert type(a) is type(b), where
        for f in dataclasses.fields(a):
            assert_same(getattr(a, f.name), getattr(b, f.name), f"{where}.{f.name}")
    elif isinstance(a, tuple):
        assert isinstance(b, tuple), where
        assert len(a) == len(b), where
        for i, (x, y) in enumerate(zip(a, b, strict=True)):
            assert_same(x, y, f"{where}[{i}]")
    else:
        assert type(a) is type(b), where
        assert a == b, (where, a, b)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
@given(model_documents())
def test_parse_dump_parse_is_identity(doc: Doc) -> None:
    first = parse_model(dumps_with_texts(doc))
    again = parse_model(dump_model(first))
    assert_same(first, again)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
@given(model_documents())
def test_texts_are_the_written_texts(doc: Doc) -> None:
    # FORMAT.md: a reader keeps each number's decimal text as written
    m = parse_model(dumps_with_texts(doc))
    for i, node in enumerate(doc["nodes"]):
        assert m.coords_text[i] == tuple(as_read(node[a]) for a in AXES[: m.dim])
    for j, mb in enumerate(doc["members"]):
        material = doc.get("materials", {}).get(mb.get("material", ""), {})
        section = doc.get("sections", {}).get(mb.get("section", ""), {})
        assert m.E_text[j] == as_read(mb.get("E", material.get("E")))
        assert m.A_text[j] == as_read(mb.get("A", section.get("A")))
        assert m.alpha_text[j] == as_read(mb.get("alpha", material.get("alpha", "0")))
    assert np.array_equal(m.coords[:, 0], [float(node["x"]) for node in doc["nodes"]])
