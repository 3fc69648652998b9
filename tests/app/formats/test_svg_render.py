"""Render both SVGs in a real headless browser (Debian chromium) and check the PNGs.

Checks: the PNG exists, has the SVG's declared size, and is not one flat colour (text and shading
drew). Without chromium the test fails under CI=true and is skipped elsewhere.
"""

from __future__ import annotations

import importlib.util
import os
import shutil
import subprocess
from pathlib import Path

import pytest

from app.formats import svg_outlook, svg_window

_spec = importlib.util.spec_from_file_location("_png", Path(__file__).with_name("_png.py"))
_png = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(_png)

_test_svg_spec = importlib.util.spec_from_file_location("_svg_inputs", Path(__file__).with_name("test_svg.py"))
_inputs = importlib.util.module_from_spec(_test_svg_spec)
_test_svg_spec.loader.exec_module(_inputs)


def _chromium() -> str:
    exe = shutil.which("chromium") or shutil.which("chromium-browser")
    if exe is None:
        if os.environ.get("CI", "").lower() in {"1", "true", "yes"}:
            pytest.fail("chromium is required under CI=true (apt-get install -y chromium)")
        pytest.skip("chromium not installed")
    return exe


def _render(exe: str, svg: str, width: int, height: int, tmp: Path, name: str) -> bytes:
    src = tmp / f"{name}.svg"
    png = tmp / f"{name}.png"
    src.write_text(svg, encoding="utf-8")
    cmd = [exe, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
           "--disable-background-networking", "--disable-component-update", "--disable-sync",
           "--hide-scrollbars", f"--user-data-dir={tmp / 'profile'}", f"--screenshot={png}",
           f"--window-size={width},{height}", src.as_uri()]
    proc = subprocess.run(cmd, capture_output=True, text=True, timeout=120, check=False)
    assert png.exists(), f"chromium wrote no PNG (exit {proc.returncode}): {proc.stderr[-800:]}"
    return png.read_bytes()


@pytest.mark.slow
@pytest.mark.parametrize(
    "name, make, size",
    [
        ("window", _inputs.window_svg, (svg_window.WIDTH, svg_window.HEIGHT)),
        ("outlook", lambda: svg_outlook.outlook_svg(_inputs.outlook_steps(48), spot_name="Tiller Bank (fictional)"),
         (svg_outlook.WIDTH, svg_outlook.HEIGHT)),
    ],
)
def test_svg_renders_in_headless_chromium(name, make, size, tmp_path):
    exe = _chromium()
    data = _render(exe, make(), *size, tmp_path, name)
    assert len(data) > 1000
    assert _png.png_size(data) == size
    # a blank page is one colour; our pictures use white, ink, muted greys and ramp shades
    assert _png.distinct_colours(data) >= 16
    if os.environ.get("KEEP_SVG_RENDERS"):  # for looking at the pictures by eye
        Path(os.environ["KEEP_SVG_RENDERS"], f"{name}.png").write_bytes(data)
