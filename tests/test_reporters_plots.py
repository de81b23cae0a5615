"""``--plot`` files: the report's drawings as SVG and PNG, deterministic, nothing written by the reporter."""

from __future__ import annotations

import struct
import xml.etree.ElementTree as ET

import numpy as np
import pytest

from audit.reporters import drawing, plots, samples
from audit.reporters.scene import to_svg

CTX = {"axial_forces": {"snow": np.array([25 / 3, 25 / 3, -125 / 12, -125 / 12, 0.0])}}


@pytest.fixture(scope="module")
def files() -> dict[str, bytes]:
    return plots.render(samples.roof_result(), samples.roof_model(), CTX)


def _png_size(data: bytes) -> tuple[int, int]:
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    w, h = struct.unpack(">II", data[16:24])
    return w, h


def test_file_names(files: dict[str, bytes]) -> None:
    assert sorted(files) == ["01-structure.png", "01-structure.svg", "02-forces-snow.png", "02-forces-snow.svg"]


def test_svg_files_are_the_report_drawings(files: dict[str, bytes]) -> None:
    scene = drawing.structure(samples.roof_model(), samples.roof_result(), "snow")
    data = files["01-structure.svg"].decode()
    assert data.startswith('<?xml version="1.0" encoding="UTF-8"?>')
    assert data == to_svg(scene, standalone=True)
    ET.fromstring(files["01-structure.svg"])


def test_png_size_follows_the_scene(files: dict[str, bytes]) -> None:
    scene = drawing.structure(samples.roof_model(), samples.roof_result(), "snow")
    w, h = _png_size(files["01-structure.png"])
    assert (w, h) == (round(scene.width * plots.DPI / 96), round(scene.height * plots.DPI / 96))


def test_png_is_deterministic(files: dict[str, bytes]) -> None:
    again = plots.render(samples.roof_result(), samples.roof_model(), CTX)
    assert again == files


def test_png_has_drawn_ink(files: dict[str, bytes]) -> None:
    """The image is not blank: decode it with matplotlib and find dark pixels (members, text)."""
    import io

    import matplotlib.image as mpimg

    img = mpimg.imread(io.BytesIO(files["02-forces-snow.png"]), format="png")
    dark = (img[..., :3].mean(axis=2) < 0.5).mean()
    assert 0.002 < dark < 0.5


def test_case_ids_become_safe_file_names() -> None:
    m = samples.roof_model()
    ctx = {"case": "snow", "axial_forces": {"snow": np.zeros(5)}}
    assert plots._file_stem("../a b/c:d") == "a_b_c_d"
    assert all("/" not in name for name in plots.render(samples.roof_result(), m, ctx, png=False))


def test_no_model_no_files() -> None:
    assert plots.render(samples.roof_result()) == {}
