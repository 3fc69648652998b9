"""Write the demo's pictures (the README's images): swell windows and outlook charts as SVG, and
PNG when Chromium is installed. Run after `shoalcast demo` on the same data dir:

    python -m app.demo.pictures docs/images [--spot vorrel-point:tip] [--outlook ostravel-strand]
"""

from __future__ import annotations

import argparse
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

from app.commands.common import ready_database
from app.db.session import session_scope
from app.formats import svg_outlook, svg_window
from app.services import outlooks, spots, tables

__all__ = ["render_png", "render_url_png", "write_pictures"]


def render_png(svg_path: Path, png_path: Path, width: int, height: int) -> bool:
    """Render an SVG with headless Chromium; False when no browser is installed."""
    return render_url_png(svg_path.resolve().as_uri(), png_path, width, height)


def render_url_png(url: str, png_path: Path, width: int, height: int) -> bool:
    """Screenshot `url` (a file or a page) at width x height with headless Chromium; False without one."""
    exe = shutil.which("chromium") or shutil.which("chromium-browser")
    if exe is None:
        return False
    with tempfile.TemporaryDirectory() as profile:
        subprocess.run(
            [exe, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
             "--disable-background-networking", "--disable-component-update", "--disable-sync",
             "--hide-scrollbars", f"--user-data-dir={profile}", f"--screenshot={png_path}",
             f"--window-size={width},{height}", url],
            capture_output=True, timeout=120, check=False,
        )  # fmt: skip
    return png_path.exists()


def write_pictures(out: Path, windows: list[tuple[str, str]], charts: list[str], *, hours: int = 72) -> list[Path]:
    out.mkdir(parents=True, exist_ok=True)
    written = []
    with session_scope(ready_database()) as session:
        for spot_id, point in windows:
            spot = spots.get_spot(session, spot_id)
            body = tables.window_body(session, spot_id)
            p = next(p for p in body["points"] if p["name"] == point and p.get("built"))
            svg = svg_window.swell_window_svg(p["periods_s"], p["directions_deg"], p["coefficient"], spot.faces_deg,
                                              f"{spot.name} ({point})")
            written.append(_save(out / f"window-{spot_id}.svg", svg, svg_window.WIDTH, svg_window.HEIGHT))
        for spot_id in charts:
            spot = spots.get_spot(session, spot_id)
            body = outlooks.get_outlook(session, spot_id, hours=hours, agency_id=None)
            steps = body.model_dump(mode="json")["steps"]
            svg = svg_outlook.outlook_svg(steps, spot_name=spot.name)
            written.append(_save(out / f"outlook-{spot_id}.svg", svg, svg_outlook.WIDTH, svg_outlook.HEIGHT))
    return written


def _save(path: Path, svg: str, width: int, height: int) -> Path:
    path.write_text(svg, encoding="utf-8")
    png = path.with_suffix(".png")
    return png if render_png(path, png, width, height) else path


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("out", type=Path)
    ap.add_argument("--spot", action="append", default=None, metavar="SPOT:POINT", help="a swell window to draw")
    ap.add_argument("--outlook", action="append", default=None, metavar="SPOT", help="an outlook chart to draw")
    args = ap.parse_args(argv)
    windows = [tuple(s.split(":", 1)) for s in (args.spot or ["vorrel-point:tip", "quillance-bay:bay centre"])]
    for path in write_pictures(args.out, windows, args.outlook or ["ostravel-strand"]):  # type: ignore[arg-type]
        print(path)
    return 0


if __name__ == "__main__":
    sys.exit(main())
