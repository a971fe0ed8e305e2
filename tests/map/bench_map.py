"""Size and speed of the HTML map for a 1 GW plant (not a test; run it by hand).

    python -m tests.map.bench_map [--blocks N] [--all-strings] [--browser]

Builds the synthetic plan of :func:`tests.map.map_fixtures.synthetic_frames` (default: 64,800
strings, 2,700 arrays, 100 AC circuits, 16,200 trench segments, 16,200 rows; ``--blocks 2250``
gives about 70,000 lines), writes it as an output folder, then times
:func:`routeplan.map.page.write_map` (read + draw + write) and reports the file size.
``--all-strings`` draws every string instead of one line per row; ``--browser`` also times
opening the page in headless Chromium (until the map's scripts have run).
"""

from __future__ import annotations

import argparse
import shutil
import tempfile
import time
from pathlib import Path

from routeplan.map.page import render_map, write_map

from .map_fixtures import synthetic_frames, write_output_folder


def open_seconds(html: Path) -> float:
    """Seconds from navigation until the page's scripts have run (DOMContentLoaded)."""
    from playwright.sync_api import sync_playwright

    from .test_map_browser import CHROMIUM_ARGS, MAP_READY, VIEWPORT

    with sync_playwright() as p:
        browser = p.chromium.launch(executable_path=shutil.which("chromium"), args=CHROMIUM_ARGS)
        page = browser.new_page(viewport=VIEWPORT)
        start = time.perf_counter()
        page.goto(html.as_uri(), timeout=300_000)
        page.wait_for_function(MAP_READY, timeout=300_000)
        seconds = time.perf_counter() - start
        browser.close()
    return seconds


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--blocks", type=int, default=2700, help="combiner blocks (2700)")
    parser.add_argument("--all-strings", action="store_true", help="do not aggregate strings")
    parser.add_argument("--browser", action="store_true", help="also time opening the page")
    args = parser.parse_args()
    threshold = 10**9 if args.all_strings else 20_000

    frames, site = synthetic_frames(n_blocks=args.blocks)
    lines = len(frames["circuits"]) + len(frames["segments"])
    print(f"input: {lines:,} lines ({len(frames['circuits']):,} circuits, "
          f"{len(frames['segments']):,} segments), {len(frames['rows']):,} rows")  # fmt: skip
    with tempfile.TemporaryDirectory() as tmp:
        out = write_output_folder(Path(tmp) / "out", frames, site)
        start = time.perf_counter()
        html = write_map(out, aggregate_strings_above=threshold)
        total = time.perf_counter() - start
        start = time.perf_counter()
        render_map(
            frames["circuits"], frames["segments"], frames["rows"], frames["equipment"],
            site_name=site, aggregate_strings_above=threshold,
        )  # fmt: skip
        draw = time.perf_counter() - start
        size = html.stat().st_size
        print(f"write_map (read + draw + write): {total:.1f} s; render_map alone: {draw:.1f} s")
        print(f"map.html: {size / 1e6:.1f} MB")
        if args.browser:
            print(f"opens in headless Chromium in {open_seconds(html):.1f} s")


if __name__ == "__main__":
    main()
