"""Size and speed of the HTML map for a 1 GW plant (not a test; run it by hand).

    python -m tests.map.bench_map [--blocks N] [--all-strings] [--browser]
    python -m tests.map.bench_map --plant [--mw 1000]

Builds the synthetic plan of :func:`tests.map.map_fixtures.synthetic_frames` (default: 64,800
strings, 2,700 arrays, 100 AC circuits, 16,200 trench segments, 16,200 rows; ``--blocks 2250``
gives about 70,000 lines), writes it as an output folder, then times
:func:`routeplan.map.page.write_map` (read + draw + write) and reports the file size.
``--all-strings`` draws every string instead of one line per row; ``--browser`` also times
opening the page in headless Chromium (until the map's scripts have run).

``--plant`` instead generates a plant with ``routeplan synth --mw MW`` and plans it
(``routeplan plan``, in-process), then times ``write_map`` and the opening of its plant view in
headless Chromium (until the plant view is ready and drawn), and counts what it draws.

Measured on the 2-core build machine (shared: load average 8–10 while measuring, so times
vary by ±50 %), Chromium headless at 1280 × 800, the 1 GW synthetic plant of
``routeplan synth --mw 1000`` (64,080 strings, 2,880 arrays, 240 AC circuits, 32,079 trench
segments, 21,840 rows, 240 blocks):

=============================  ==========================  ===========================
                               before the plant view       with the plant view
=============================  ==========================  ===========================
map.html                       10.5 MB                     11.1 MB
opens (scripts run, drawn)     1.9–3.1 s                   0.8–1.6 s
drawn at the opening view      62,079 features (canvas)    480 features, 243 SVG paths,
                                                           240 labels
first zoom-in to the details   (all drawn at opening)      1.1–2.0 s (~33,000 made)
render_map                     7.9–8.0 s                   9.5 s (blocks ~0.9 s, more
                                                           tiles ~0.7 s)
=============================  ==========================  ===========================
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


PLANT_READY = "window.rpPlantView && window.rpPlantView.ready"
RAF = "() => new Promise(r => requestAnimationFrame(() => requestAnimationFrame(() => r(1))))"
DRAWN = """() => {
    const map = window[document.querySelector('.folium-map').id];
    let features = 0;
    map.eachLayer(l => { if (l.feature) { features++; } });
    return {paths: document.querySelectorAll('path').length, features: features,
            labels: document.querySelectorAll('.rp-id-label, .rp-block-label').length};
}"""


def plant_open(html: Path) -> tuple[float, dict]:
    """Seconds until the plant view is ready and drawn, and what it draws."""
    from playwright.sync_api import sync_playwright

    from .test_map_browser import CHROMIUM_ARGS, VIEWPORT

    with sync_playwright() as p:
        browser = p.chromium.launch(executable_path=shutil.which("chromium"), args=CHROMIUM_ARGS)
        page = browser.new_page(viewport=VIEWPORT)
        start = time.perf_counter()
        page.goto(html.as_uri(), timeout=300_000)
        page.wait_for_function(PLANT_READY, timeout=300_000)
        page.evaluate(RAF)
        seconds = time.perf_counter() - start
        drawn = page.evaluate(DRAWN)
        browser.close()
    return seconds, drawn


def plant(mw: float) -> None:
    """Generate, plan and map a plant of ``mw`` MWdc; print the map's size and times."""
    from typer.testing import CliRunner

    from routeplan.cli import app

    runner = CliRunner()
    with tempfile.TemporaryDirectory() as tmp:
        site, out = Path(tmp) / "site", Path(tmp) / "out"
        for args in (["synth", "--mw", str(mw), "--out", str(site)],
                     ["plan", str(site), "--out", str(out), "-q"]):  # fmt: skip
            result = runner.invoke(app, args)
            if result.exit_code not in (0, 1):
                raise SystemExit(result.output)
        start = time.perf_counter()
        html = write_map(out)
        print(f"write_map: {time.perf_counter() - start:.1f} s; "
              f"map.html {html.stat().st_size / 1e6:.1f} MB")  # fmt: skip
        for _ in range(3):
            seconds, drawn = plant_open(html)
            print(f"opens in headless Chromium in {seconds:.2f} s; plant view draws {drawn}")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--blocks", type=int, default=2700, help="combiner blocks (2700)")
    parser.add_argument("--all-strings", action="store_true", help="do not aggregate strings")
    parser.add_argument("--browser", action="store_true", help="also time opening the page")
    parser.add_argument("--plant", action="store_true", help="a generated plant's plant view")
    parser.add_argument("--mw", type=float, default=1000.0, help="its size, MWdc (1000)")
    args = parser.parse_args()
    if args.plant:
        plant(args.mw)
        return
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
