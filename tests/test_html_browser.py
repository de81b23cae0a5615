"""The HTML report in a real headless browser (Debian's chromium): no console errors, content visible.

Skipped, with the reason, only when no chromium binary can be found.  A screenshot of each page is
written under the test's tmp dir and, when ``TRUSS_AUDIT_SCREENSHOT_DIR`` is set, copied there.
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pytest

from audit.reporters import _shared, html, samples

pytestmark = pytest.mark.browser

CHROMIUM = next(
    (
        p
        for p in (shutil.which("chromium"), "/usr/bin/chromium", shutil.which("chromium-browser"))
        if p and Path(p).is_file()
    ),
    None,
)
FLAGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--enable-logging=stderr",
    "--v=0",
]
CONSOLE = re.compile(r":CONSOLE[:(\]]")
ROOF_CONTEXT = {
    "displacements": {"snow": np.array([[0.0, 0.0], [1e-4, -2e-3], [2e-4, 0.0], [1e-4, -1.8e-3]])},
    "axial_forces": {"snow": np.array([25 / 3, 25 / 3, -125 / 12, -125 / 12, 0.0])},
}


DEMO = Path(__file__).resolve().parent.parent / "reference_cases" / "demo"


def _demo_model():
    """The demo footbridge (invented data, see reference_cases/demo/README.md)."""
    from audit import exchange

    return exchange.load_model(str(DEMO / "footbridge.json"))


def _demo_result():
    from audit import engine, exchange

    model = _demo_model()
    results = exchange.load_results(str(DEMO / "footbridge.results.json"), model)
    return engine.audit(model, results, inputs=(("footbridge.json", "0" * 64), ("footbridge.results.json", "1" * 64)))


def _browse(page: Path, tmp: Path, *mode: str) -> subprocess.CompletedProcess[str]:
    if CHROMIUM is None:
        pytest.skip("chromium not found (apt-get install chromium); the HTML browser test needs it")
    profile = tmp / f"profile-{len(list(tmp.glob('profile-*')))}"
    cmd = [CHROMIUM, *FLAGS, f"--user-data-dir={profile}", *mode, page.as_uri()]
    return subprocess.run(cmd, capture_output=True, text=True, timeout=120, check=False, cwd=tmp)


def _console_lines(stderr: str) -> list[str]:
    return [line for line in stderr.splitlines() if CONSOLE.search(line)]


def _save(shot: Path) -> None:
    target = os.environ.get("TRUSS_AUDIT_SCREENSHOT_DIR")
    if target:
        Path(target).mkdir(parents=True, exist_ok=True)
        shutil.copy2(shot, Path(target) / shot.name)


def test_console_capture_sees_an_error(tmp_path: Path) -> None:
    """The detector itself: a page that does log an error is caught (so a clean pass means something)."""
    page = tmp_path / "bad.html"
    page.write_text(
        "<!DOCTYPE html><html><body><p>x</p><script>console.error('marker-42');nope();</script></body></html>"
    )
    proc = _browse(page, tmp_path, "--dump-dom")
    assert any("marker-42" in line for line in _console_lines(proc.stderr)), proc.stderr[-2000:]


def test_console_capture_sees_a_blocked_fetch(tmp_path: Path) -> None:
    """Our Content-Security-Policy blocks a network fetch, and the browser says so on the console.

    The address is on the loopback (port 9, nothing listening), so even a failed policy sends nothing off
    this machine.
    """
    page = tmp_path / "fetch.html"
    page.write_text(
        "<!DOCTYPE html><html><head><meta http-equiv='Content-Security-Policy' content=\"default-src 'none'\">"
        "</head><body><img src='http://127.0.0.1:9/x.png'></body></html>"
    )
    proc = _browse(page, tmp_path, "--dump-dom")
    assert _console_lines(proc.stderr), proc.stderr[-2000:]


@pytest.mark.parametrize(
    ("name", "make_result", "make_model", "context"),
    [
        ("roof-fail", samples.roof_result, samples.roof_model, ROOF_CONTEXT),
        ("bay-unstable", samples.frame_result, samples.frame_model, None),
        ("tripod-pass", samples.tripod_result, samples.tripod_model, None),
        ("footbridge-demo", _demo_result, _demo_model, None),
    ],
    ids=["roof-fail", "bay-unstable", "tripod-pass", "footbridge-demo"],
)
def test_page_loads_clean_and_shows_verdict_and_failing_members(
    tmp_path: Path, name: str, make_result, make_model, context
) -> None:
    result = make_result()
    page = tmp_path / f"{name}.html"
    page.write_text(html.render(result, make_model(), context), encoding="utf-8")

    proc = _browse(page, tmp_path, "--dump-dom")
    assert proc.returncode == 0, proc.stderr[-2000:]
    assert _console_lines(proc.stderr) == []
    dom = proc.stdout
    assert f"VERDICT: {result.verdict.upper()}" in dom
    listed = re.search(r'<p class="ids">([^<]*)</p>', dom)
    failing = _shared.failing_members(result)
    if failing:
        assert listed is not None
        assert listed.group(1).split(", ") == failing
        for mid in failing:
            assert f'data-member="{mid}"' in dom
    else:
        assert "No member has a failing finding." in dom

    shot = tmp_path / f"truss-audit-{name}.png"
    proc = _browse(page, tmp_path, f"--screenshot={shot}", "--window-size=1100,2400", "--hide-scrollbars")
    assert proc.returncode == 0, proc.stderr[-2000:]
    assert _console_lines(proc.stderr) == []
    assert shot.is_file()
    assert shot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    _save(shot)
