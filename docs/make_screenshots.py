"""Regenerate the screenshots in docs/images/ from a solved front.

    python docs/make_screenshots.py                      # the test fixture tests/fixtures/front_small.json
    python docs/make_screenshots.py out/some-study       # a folder written by `strainline solve`

Builds report.html and handoff/ in a temporary folder (the given folder is not touched), opens them in
the system Chromium (Debian package `chromium`) through Playwright and writes small PNGs:
docs/images/report-front.png, docs/images/report-candidate.png, docs/images/report-compare.png and
docs/images/handoff-sheet.png.
"""
from __future__ import annotations

import json
import shutil
import sys
import tempfile
from pathlib import Path

from strainline.optimizer.outputs.report import load_front, write_all

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update",
        "--no-first-run", "--disable-sync"]


def main(argv: list[str]) -> int:
    from playwright.sync_api import sync_playwright

    src = Path(argv[0]) if argv else ROOT / "tests" / "fixtures" / "front_small.json"
    front = load_front(src)
    images = HERE / "images"
    images.mkdir(exist_ok=True)
    work = Path(tempfile.mkdtemp(prefix="strainline-shots-"))
    profile = Path(tempfile.mkdtemp(prefix="strainline-chromium-"))
    try:
        (work / "front.json").write_text(json.dumps(front), encoding="utf-8")
        write_all(front, work)
        chromium = shutil.which("chromium") or "/usr/bin/chromium"
        with sync_playwright() as p:
            ctx = p.chromium.launch_persistent_context(str(profile), executable_path=chromium, headless=True,
                                                       args=ARGS, viewport={"width": 1280, "height": 860})
            page = ctx.new_page()
            page.goto((work / "report.html").as_uri())
            page.wait_for_function("window.strainline && window.strainline.renders > 0", timeout=30000)
            # pick the candidate with the most cycles to failure, or the second thinnest, for the picture
            cands = front["candidates"]
            pick = min(1, len(cands) - 1)
            page.evaluate(f"window.strainline.select({pick})")
            page.wait_for_timeout(800)
            page.screenshot(path=str(images / "report-front.png"))
            page.locator("#candidate-card").screenshot(path=str(images / "report-candidate.png"))
            if len(cands) >= 2:           # the comparison view opens on the ends of the front
                page.locator("#compare-card").scroll_into_view_if_needed()
                page.wait_for_timeout(500)
                page.locator("#compare-card").screenshot(path=str(images / "report-compare.png"))
            cid = cands[pick]["id"]
            page.set_viewport_size({"width": 1000, "height": 1300})
            page.goto((work / "handoff" / f"{cid}.html").as_uri())
            page.wait_for_timeout(300)
            page.screenshot(path=str(images / "handoff-sheet.png"))
            ctx.close()
    finally:
        shutil.rmtree(work, ignore_errors=True)
        shutil.rmtree(profile, ignore_errors=True)
    for name in ("report-front.png", "report-candidate.png", "report-compare.png", "handoff-sheet.png"):
        if (images / name).exists():
            print(images / name, (images / name).stat().st_size // 1024, "KiB")
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
