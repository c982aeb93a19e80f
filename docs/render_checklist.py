"""Render HTML sign-off checklists to PNG pictures, to look at them before a release.

    python docs/render_checklist.py OUT_FOLDER [CASE.yaml ...]

Checks each case file (default: the shipped demo case) with ``--format html``, then draws
with headless Chromium (``chromium`` on the PATH, e.g. the Debian package) the whole page
(``NAME-page.png``) and every figure on its own (``NAME-figure-N.png``), at twice the
screen resolution. Not part of the test suite, which never needs a browser; the tests
check the plot data and the SVG instead.
"""

from __future__ import annotations

import re
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

#: Chromium's switches for a quiet, self-contained headless run.
CHROMIUM_FLAGS = ("--headless", "--no-sandbox", "--disable-gpu",
                  "--disable-background-networking", "--disable-component-update",
                  "--disable-sync", "--no-first-run", "--hide-scrollbars")
#: Page width in CSS pixels; the checklist's text column is 60rem (about 960 px) wide.
PAGE_WIDTH = 1100
#: Window height for the whole page (its blank foot is cut off afterwards).
PAGE_HEIGHT = 16000
#: A figure's window: the inline SVG is 6.4 x 3.4 inches (614 x 326 CSS pixels), drawn
#: at twice the screen resolution.
FIGURE_WINDOW = (616, 328)


def _screenshot(html: Path, png: Path, size: tuple[int, int], profile: Path,
                scale: int = 1) -> None:
    browser = shutil.which("chromium") or shutil.which("chromium-browser")
    if browser is None:
        sys.exit("render_checklist: chromium not found (Debian: apt-get install chromium)")
    subprocess.run([browser, *CHROMIUM_FLAGS, f"--force-device-scale-factor={scale}",
                    f"--user-data-dir={profile}", f"--window-size={size[0]},{size[1]}",
                    f"--screenshot={png}", html.as_uri()],
                   check=True, capture_output=True, timeout=120)


def _cut_blank_foot(png: Path) -> None:
    """Crop the white rows below the page's last content (needs Pillow, which matplotlib
    brings)."""
    from PIL import Image, ImageOps

    with Image.open(png) as image:
        box = ImageOps.invert(image.convert("L")).getbbox()
        if box is not None:
            image.crop((0, 0, image.width, min(image.height, box[3] + 20))).save(png)


def render(case: Path, out: Path, profile: Path) -> list[Path]:
    """The page and figure pictures of one case's checklist; returns their paths."""
    from caselint.cli import main as caselint

    name = case.parent.name or case.stem
    html = out / f"{name}.html"
    caselint(["check", str(case), "--format", "html", "--output", str(html)])
    text = html.read_text(encoding="utf-8")
    pictures = [out / f"{name}-page.png"]
    _screenshot(html, pictures[0], (PAGE_WIDTH, PAGE_HEIGHT), profile)
    _cut_blank_foot(pictures[0])
    for index, svg in enumerate(re.findall(r"<svg.*?</svg>", text, flags=re.S)):
        page = out / f"{name}-figure-{index}.html"
        page.write_text(f"<!DOCTYPE html><html><body style='margin:0'>{svg}</body></html>",
                        encoding="utf-8")
        pictures.append(out / f"{name}-figure-{index}.png")
        _screenshot(page, pictures[-1], FIGURE_WINDOW, profile, scale=2)
    return pictures


def main(argv: list[str]) -> None:
    """Render the checklists of the case files given (default: the demo case)."""
    if not argv:
        sys.exit(__doc__)
    out = Path(argv[0])
    out.mkdir(parents=True, exist_ok=True)
    if argv[1:]:
        cases = [Path(a) for a in argv[1:]]
    else:
        from caselint.demo import demo_case_path

        cases = [Path(demo_case_path())]
    with tempfile.TemporaryDirectory() as profile:
        for case in cases:
            for picture in render(case, out, Path(profile)):
                print(picture)


if __name__ == "__main__":
    main(sys.argv[1:])
