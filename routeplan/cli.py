"""The ``routeplan`` command line. The only module that prints or exits.

Exit status: 0 = done, every limit met; 1 = outputs written but something fails a design
limit; 2 = bad input (every problem listed, one per line, on stderr).
"""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Annotated

import typer
from rich.console import Console
from rich.table import Table

from layers import LayerError, SiteError

from . import CAUTION, __version__

app = typer.Typer(
    add_completion=False,
    no_args_is_help=True,
    help="Electrical design of PV plants from GIS layers: route, size, schedule. " + CAUTION,
)
out = Console(highlight=False, soft_wrap=True)
err = Console(stderr=True, highlight=False, soft_wrap=True)


def _fail_input(exc: LayerError) -> None:
    problems = getattr(exc, "problems", None) or [exc]
    for p in problems:
        err.print(f"error: {p}", markup=False)
    err.print(f"{len(problems)} problem(s) in the input; nothing was planned.", markup=False)
    raise typer.Exit(2)


@app.callback()
def main(
    version: Annotated[bool, typer.Option("--version", help="Print the version and exit.")] = False,
) -> None:
    """routeplan: PV cable routing and sizing from site GIS layers."""
    if version:
        out.print(f"routeplan {__version__}")
        raise typer.Exit(0)


@app.command()
def check(
    site: Annotated[Path, typer.Argument(help="Site folder holding site.toml and the layers.")],
) -> None:
    """Validate a site's layers and settings and summarise them; exit 2 listing every problem."""
    from .check import check_site

    try:
        report = check_site(site)
    except LayerError as exc:
        _fail_input(exc)
        return
    s = report.site
    out.print(f"site     {s.name}", markup=False)
    out.print(f"CRS      {s.crs_note}", markup=False)
    table = Table(show_header=True, header_style="bold", box=None)
    table.add_column("layer")
    table.add_column("features", justify="right")
    table.add_column("source")
    for name, n in report.counts.items():
        table.add_row(name, str(n), s.sources.get(name, "-"))
    out.print(table)
    out.print(
        f"strings  {report.strings}  ({report.dc_kw / 1000:.2f} MWdc; inverters "
        f"{report.ac_kva / 1000:.2f} MVA)",
        markup=False,
    )
    out.print(
        f"trench   {report.trench_m:,.1f} m in {report.counts['trenches']} trenches", markup=False
    )
    for key, m in s.modules.items():
        out.print(
            f"module   {key}: Isc {m.isc_a:g} A, Imp {m.imp_a:g} A, Voc {m.voc_v:g} V, "
            f"Vmp {m.vmp_v:g} V, {m.per_string} per string",
            markup=False,
        )
    d = report.design
    settings = ", ".join(f"{k}={_fmt(v)}" for k, v in d.values.items())
    out.print(f"design   {settings}", markup=False)
    out.print(
        "         material "
        + ", ".join(f"{k}={v}" for k, v in d.material.items())
        + "; drop limits "
        + ", ".join(f"{k}={v:g}%" for k, v in d.drop_pct.items()),
        markup=False,
    )
    out.print(
        "         allowances " + ", ".join(f"{k}={v:g}" for k, v in d.allowances.items()),
        markup=False,
    )
    if d.defaulted:
        out.print("defaults " + ", ".join(d.defaulted), markup=False)
    for note in report.notes:
        out.print(f"note     {note}", markup=False)
    out.print("ok: no problems found", markup=False)


def _fmt(v: object) -> str:
    if isinstance(v, float):
        return "unset" if v != v else f"{v:g}"
    return str(v)


def run() -> None:  # pragma: no cover - console entry for `python -m routeplan`
    app()


if __name__ == "__main__":  # pragma: no cover
    sys.exit(app())
