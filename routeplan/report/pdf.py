"""``routeplan report OUT --pdf FILE``: the report of a plan folder printed to PDF by
headless Chromium (``--print-to-pdf``), which lays out the page's print CSS.

Checks come first, each a :class:`routeplan.errors.FolderError` (one line naming the path):
``OUT`` must be a folder ``routeplan plan`` wrote, holding its ``report.html``; ``FILE`` must
be new or a PDF routeplan wrote (:func:`routeplan.folder.check_own_file` with
:data:`PDF_MARK`); a Chromium must be found (:data:`CHROMIUM_NAMES` on ``PATH``). The PDF is
printed into a temporary folder, then put in place all or nothing
(:func:`routeplan.folder.write_own_file`).
"""

from __future__ import annotations

import json
import shutil
import subprocess
import tempfile
from pathlib import Path

from ..errors import FolderError
from ..folder import MANIFEST, MARK_WINDOW, Manifest, check_own_file, reading, write_own_file
from .html import PAGE_RULE, TITLE

#: executables looked for on PATH, in this order
CHROMIUM_NAMES: tuple[str, ...] = (
    "chromium",
    "chromium-browser",
    "google-chrome",
    "google-chrome-stable",
)
#: routeplan's mark in a PDF it wrote: Chromium (Skia) writes the document information
#: first, whose title is the report's ASCII title
PDF_MARK = f"/Title ({TITLE})".encode("ascii")
#: flags of a headless Chromium that prints and nothing else (no network chatter, no profile)
CHROMIUM_FLAGS: tuple[str, ...] = (
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--no-first-run",
    "--no-pdf-header-footer",
)
#: paper sizes of ``--paper``: the CSS ``@page`` size the PDF is printed on
PAPER: dict[str, str] = {"a4": "A4", "letter": "letter"}
#: longest time Chromium may take to print, s
TIMEOUT_S = 300


def find_chromium() -> str | None:
    """The first of :data:`CHROMIUM_NAMES` found on PATH, or None."""
    for name in CHROMIUM_NAMES:
        path = shutil.which(name)
        if path:
            return path
    return None


def report_source(out_dir: Path | str) -> Path:
    """``OUT/report.html`` when ``OUT`` is a folder ``routeplan plan`` wrote and its manifest
    lists the report; else :class:`FolderError` naming ``OUT``."""
    out = Path(out_dir)
    if not out.is_dir():
        raise FolderError(out, "is not a folder: give the output folder of 'routeplan plan'")
    try:
        data = json.loads((out / MANIFEST).read_text(encoding="utf-8"))
        manifest = Manifest.from_data(data)
    except (OSError, ValueError):
        manifest = None
    if manifest is None or manifest.purpose != "plan":
        raise FolderError(
            out,
            f"is not an output folder of 'routeplan plan' (no plan manifest {MANIFEST}): "
            "plan the site into it first",
        )
    report = out / "report.html"
    if "report.html" not in manifest.files or not report.is_file():
        raise FolderError(
            out,
            "holds no report.html written by routeplan (an earlier version planned it): plan "
            "the site again",
        )
    return report


def check_report(out_dir: Path | str, pdf: Path | str) -> tuple[Path, str]:
    """Every check of ``report OUT --pdf FILE`` before any work: the report to print and the
    Chromium to print it with. Raises :class:`FolderError` (one line) otherwise."""
    report = report_source(out_dir)
    check_own_file(pdf, PDF_MARK)
    chromium = find_chromium()
    if chromium is None:
        raise FolderError(
            pdf,
            "cannot be made: no Chromium found (looked for "
            + ", ".join(CHROMIUM_NAMES)
            + " on PATH); install one, e.g. Debian's chromium package",
        )
    return report, chromium


def write_report_pdf(out_dir: Path | str, pdf: Path | str, paper: str = "a4") -> Path:
    """Print ``OUT/report.html`` to the PDF file ``pdf`` with headless Chromium (see the
    module docstring) on ``paper`` (a key of :data:`PAPER`); returns ``pdf``. Raises
    :class:`FolderError` when a check fails or Chromium writes no PDF."""
    size = PAPER[paper]
    out = Path(out_dir)
    report, chromium = check_report(out, pdf)
    with tempfile.TemporaryDirectory(prefix="routeplan-pdf-") as tmp:
        target = Path(tmp) / "report.pdf"
        with reading(out):
            text = report.read_text(encoding="utf-8")
        page = Path(tmp) / "report.html"
        page.write_text(text.replace(PAGE_RULE, f"@page {{ size: {size};", 1), encoding="utf-8")
        cmd = [
            chromium,
            *CHROMIUM_FLAGS,
            f"--user-data-dir={Path(tmp) / 'profile'}",
            f"--print-to-pdf={target}",
            page.resolve().as_uri(),
        ]
        try:
            subprocess.run(
                cmd,
                stdin=subprocess.DEVNULL,
                stdout=subprocess.DEVNULL,
                stderr=subprocess.DEVNULL,
                timeout=TIMEOUT_S,
                check=False,
            )
        except subprocess.TimeoutExpired:
            raise FolderError(pdf, f"not written: {chromium} took over {TIMEOUT_S} s") from None
        try:
            data = target.read_bytes()
        except OSError:
            data = b""
        if not data.startswith(b"%PDF") or PDF_MARK not in data[:MARK_WINDOW]:
            raise FolderError(pdf, f"not written: {chromium} printed no PDF of the report")
        return write_own_file(pdf, data, PDF_MARK)
