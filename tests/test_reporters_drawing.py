"""Drawing geometry: SVG coordinates match the model after the stated transform; large models stay bounded.

The projection formulas checked here are those stated in the drawings' captions: a plane truss in its own
plane (x right, y up), a space truss in an isometric view with u = (x − y)·cos 30°, v = z − (x + y)·sin 30°
(the isometric axonometry: three axes at 120° on the drawing, all at full scale; common practice).
"""

from __future__ import annotations

import math
import re
import xml.etree.ElementTree as ET

import numpy as np
import pytest

from audit.reporters import drawing, samples
from audit.reporters.scene import Segments, to_svg

SVG = "{http://www.w3.org/2000/svg}"
ROOF_FORCES = np.array([25 / 3, 25 / 3, -125 / 12, -125 / 12, 0.0])  # method of joints, see samples.roof_result


def _circles(svg: str) -> dict[str, tuple[float, float]]:
    root = ET.fromstring(svg)
    return {
        c.get("data-node"): (float(c.get("cx")), float(c.get("cy")))
        for c in root.iter(SVG + "circle")
        if c.get("data-node")
    }


def _lines(svg: str) -> dict[str, tuple[float, float, float, float]]:
    root = ET.fromstring(svg)
    return {
        ln.get("data-member"): tuple(float(ln.get(k)) for k in ("x1", "y1", "x2", "y2"))
        for ln in root.iter(SVG + "line")
        if ln.get("data-member")
    }


def test_plane_nodes_follow_the_stated_transform() -> None:
    m = samples.roof_model()
    scene = drawing.structure(m, samples.roof_result(), "snow")
    T = scene.notes["transform"]
    got = _circles(to_svg(scene))
    for i, nid in enumerate(m.node_ids):
        x, y = m.coords[i]
        # plane view: x right, y up (SVG y points down)
        expected = (T.x0 + T.scale * (x - T.u0), T.y0 - T.scale * (y - T.v0))
        assert got[nid] == pytest.approx(expected, abs=0.006)


def test_plane_drawing_is_a_similarity() -> None:
    """Every pixel distance is the model distance times one scale: no stretching."""
    m = samples.roof_model()
    got = _circles(to_svg(drawing.structure(m)))
    ratios = []
    for i in range(m.n_nodes):
        for j in range(i + 1, m.n_nodes):
            a, b = got[m.node_ids[i]], got[m.node_ids[j]]
            ratios.append(math.dist(a, b) / float(np.linalg.norm(m.coords[i] - m.coords[j])))
    assert max(ratios) == pytest.approx(min(ratios), rel=1e-4)
    assert got["D"][1] < got["A"][1]  # the apex (y = 3) is drawn above the chord


def test_isometric_nodes_follow_the_stated_formula() -> None:
    m = samples.tripod_model()
    scene = drawing.structure(m, samples.tripod_result(), "dead")
    T = scene.notes["transform"]
    got = _circles(to_svg(scene))
    c30, s30 = math.cos(math.radians(30)), math.sin(math.radians(30))
    for i, nid in enumerate(m.node_ids):
        x, y, z = m.coords[i]
        u, v = (x - y) * c30, z - (x + y) * s30
        assert got[nid] == pytest.approx((T.x0 + T.scale * (u - T.u0), T.y0 - T.scale * (v - T.v0)), abs=0.006)
    assert "isometric" in " ".join(scene.caption)


@pytest.mark.parametrize(
    ("axis", "direction"),
    [
        (0, (math.cos(math.pi / 6), math.sin(math.pi / 6))),
        (1, (-math.cos(math.pi / 6), math.sin(math.pi / 6))),
        (2, (0.0, -1.0)),
    ],
    ids=["x-lower-right", "y-lower-left", "z-up"],
)
def test_isometric_axes_point_as_stated(axis: int, direction: tuple[float, float]) -> None:
    T, _ = drawing.fit_transform(samples.tripod_model().coords, 3)
    v = T.vector(np.eye(3)[axis : axis + 1])[0]
    assert v / np.linalg.norm(v) == pytest.approx(direction, abs=1e-12)
    assert np.linalg.norm(v) == pytest.approx(T.scale)  # every axis at full scale


def test_member_ends_sit_on_their_nodes() -> None:
    m = samples.roof_model()
    svg = to_svg(drawing.structure(m, samples.roof_result()))
    nodes, lines = _circles(svg), _lines(svg)
    assert set(lines) == set(m.member_ids)
    for k, mid in enumerate(m.member_ids):
        a, b = m.node_ids[m.conn[k, 0]], m.node_ids[m.conn[k, 1]]
        assert lines[mid] == pytest.approx((*nodes[a], *nodes[b]), abs=0.006)


def test_failing_members_labelled_and_coloured() -> None:
    scene = drawing.structure(samples.roof_model(), samples.roof_result())
    labels = {i.text for i in scene.items if getattr(i, "kind", "") == "label"}
    assert {"1", "3"} <= labels
    failing = next(i for i in scene.items if isinstance(i, Segments) and i.kind == "failing")
    assert set(failing.ids) == {"1", "3"}


def test_one_stub_per_restraint() -> None:
    m = samples.tripod_model()
    stubs = [i for i in drawing.structure(m).items if isinstance(i, Segments) and i.kind == "restraint"]
    assert sum(s.xy.shape[0] for s in stubs) == m.n_restraints


def test_forces_tension_solid_compression_hollow_width_grows_with_magnitude() -> None:
    m = samples.roof_model()
    scene = drawing.forces(m, ROOF_FORCES, "snow")
    segs = {
        i.kind: i for i in scene.items if isinstance(i, Segments) and i.kind in ("tension", "compression", "zero-force")
    }
    assert set(segs["tension"].ids) == {"1", "2"}
    assert set(segs["compression"].ids) == {"3", "4"}
    assert not segs["tension"].hollow
    assert segs["compression"].hollow
    assert segs["zero-force"].xy.shape[0] == 1
    nmax = 125 / 12
    assert segs["tension"].width == pytest.approx(2.5 + 9.0 * (25 / 3) / nmax)
    assert segs["compression"].width == pytest.approx(11.5)


def test_deformed_nodes_are_moved_by_the_stated_factor() -> None:
    m = samples.roof_model()
    u = np.array([[0.0, 0.0], [1e-4, -2e-3], [2e-4, 0.0], [1e-4, -1.8e-3]])
    scene = drawing.deformed(m, u, "snow")
    T, factor = scene.notes["transform"], scene.notes["factor"]
    # 8 % of the 8 m span over the largest movement, rounded down to 1-2-5
    assert factor == drawing.nice_factor(0.08 * 8.0 / float(np.linalg.norm(u, axis=1).max()))
    assert f"× {factor:g}" in " ".join(scene.caption)
    got = _circles(to_svg(scene))
    expected = T.apply(m.coords + factor * u)
    for i, nid in enumerate(m.node_ids):
        assert got[nid] == pytest.approx(tuple(expected[i]), abs=0.006)


@pytest.mark.parametrize(
    ("x", "expected"), [(1.0, 1.0), (0.7, 0.5), (3.9, 2.0), (199.0, 100.0), (250.0, 200.0), (5e-3, 5e-3)]
)
def test_nice_factor(x: float, expected: float) -> None:
    assert drawing.nice_factor(x) == pytest.approx(expected)


@pytest.mark.parametrize(
    "mode",
    [
        [[0, 0], [0, 0], [1, 0], [1, 0]],
        [0, 0, 0, 0, 1, 0, 1, 0],
        {"C": [1, 0], "D": {"x": 1}},
    ],
    ids=["per-node", "flat", "mapping"],
)
def test_mode_array_accepts_the_usual_shapes(mode) -> None:
    got = drawing.mode_array(samples.frame_model(), mode)
    assert got is not None
    assert got.tolist() == [[0, 0], [0, 0], [1, 0], [1, 0]]


@pytest.mark.parametrize("mode", [[1, 2, 3], {"Q": [1, 0]}, "sideways", None], ids=["short", "unknown", "text", "none"])
def test_mode_array_refuses_what_does_not_fit(mode) -> None:
    assert drawing.mode_array(samples.frame_model(), mode) is None


def test_mechanism_drawn_from_the_stability_block() -> None:
    names = [n for n, _ in drawing.all_scenes(samples.frame_result(), samples.frame_model())]
    assert names == ["structure", "mechanism-1"]
    scene = dict(drawing.all_scenes(samples.frame_result(), samples.frame_model()))["mechanism-1"]
    moved = scene.notes["moved"]
    # C and D move sideways by 10 % of the 4 m span; A and B stay
    assert moved[2] - samples.frame_model().coords[2] == pytest.approx([0.4, 0.0])
    assert moved[0] == pytest.approx([0.0, 0.0])


@pytest.fixture(scope="module")
def big():
    m = samples.lattice_model(183, 182)
    rng = np.random.default_rng(7)
    return m, rng.normal(size=m.n_members), rng.normal(size=(m.n_nodes, 2)) * 1e-3


def test_large_model_forces_drawing_is_bounded(big) -> None:
    m, n, _ = big
    assert m.n_members > 100_000
    scene = drawing.forces(m, n, "roof")
    kinds = ("tension", "compression", "zero-force")
    drawn = sum(i.xy.shape[0] for i in scene.items if isinstance(i, Segments) and i.kind in kinds)
    assert drawn <= drawing.MAX_DRAWN_MEMBERS
    assert scene.notes["aggregated"] == m.n_members - drawing.MAX_DRAWN_MEMBERS
    assert scene.notes["labelled"] <= drawing.MAX_LABELS
    assert len(to_svg(scene)) < 2_000_000  # measured 1.53 MB (the hollow bands repeat their path)


def test_large_model_structure_draws_members_with_findings_only(big) -> None:
    m, _, _ = big
    r = samples.roof_result()
    from dataclasses import replace

    from audit.findings import CheckOutcome, Finding, Location, Severity, Status

    bad = [f"m{k}" for k in range(0, m.n_members, 997)]
    fs = tuple(Finding("RC101", Severity.ERROR, "x", location=Location(member=b)) for b in bad)
    r = replace(r, outcomes=(CheckOutcome("recompute", "roof", Status.FAIL, fs),))
    scene = drawing.structure(m, r, "roof")
    assert scene.notes["drawn"] == len(bad)
    assert scene.notes["aggregated"] == m.n_members - len(bad)
    assert re.search(r"shading", " ".join(scene.caption))
    assert len(to_svg(scene)) < 600_000
