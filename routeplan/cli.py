"""The ``routeplan`` command line. The only module that prints or exits.

Exit status: 0 = done, every limit met; 1 = outputs written but something fails a design
limit; 2 = bad input (every problem listed, one per line, on stderr).
"""

from __future__ import annotations

import contextlib
import functools
import os
import sys
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Annotated, Any

import typer
from rich.cells import cell_len
from rich.console import Console
from rich.table import Table
from rich.text import Text
from typer.core import TyperGroup

from layers import LayerError

from . import CAUTION, __version__
from .errors import FolderError, RoutingError

InputError = (LayerError, RoutingError)

#: map options shared by ``plan`` and ``map``
BasemapOption = Annotated[
    bool, typer.Option("--basemap", help="Add an online basemap to map.html (needs internet).")
]
AggregateOption = Annotated[
    int, typer.Option(help="Draw string circuits per row on the map above this many strings.")
]
#: ``--force`` of every command that writes a folder
ForceOption = Annotated[
    bool,
    typer.Option(
        "--force",
        help="Write into a folder holding files routeplan did not write (routeplan's files go "
        "beside them; nothing else is touched), and replace routeplan's own files even if "
        "they were edited since.",
    ),
]


class _Commands(TyperGroup):
    """The command group: a command's help in the list of commands is its docstring's first
    paragraph as one line (rich would keep the docstring's own line breaks there, breaking
    sentences in the middle at any terminal width)."""

    def get_command(self, ctx: typer.Context, cmd_name: str) -> Any:
        command = super().get_command(ctx, cmd_name)
        if command is not None and command.short_help is None and command.help:
            command.short_help = " ".join(command.help.split("\n\n")[0].split())
        return command


app = typer.Typer(
    cls=_Commands,
    add_completion=False,
    no_args_is_help=True,
    context_settings={"help_option_names": ["-h", "--help"]},
    help="Electrical design of PV plants from GIS layers: route, size, schedule. " + CAUTION,
)
#: control characters (C0, DEL, C1) shown as ``\xNN`` when text from the user's files reaches
#: the terminal: an id holding ESC must not clear or recolour the screen, nor a line break
#: split a one-line message
_CONTROLS = {c: f"\\x{c:02x}" for c in (*range(32), *range(127, 160))}


def visible(text: str) -> str:
    r"""``text`` with every control character written as ``\xNN``.

    >>> visible("R1\x1b[2J")
    'R1\\x1b[2J'
    """
    return text.translate(_CONTROLS)


class _Terminal(Console):
    """A console that shows control characters of the text it prints (:func:`visible`)."""

    def print(self, *objects: Any, **kwargs: Any) -> None:
        super().print(*(visible(o) if isinstance(o, str) else o for o in objects), **kwargs)


out = _Terminal(highlight=False, soft_wrap=True)
err = _Terminal(stderr=True, highlight=False, soft_wrap=True)


def _fail_input(exc: Exception) -> None:
    problems = getattr(exc, "problems", None) or [exc]
    for p in problems:
        err.print(f"error: {p}", markup=False)
    if not isinstance(exc, FolderError):
        err.print(f"{len(problems)} problem(s) in the input; nothing was planned.", markup=False)
    raise typer.Exit(2)


def _fail_os(exc: OSError, where: Path) -> None:
    """A file system failure while writing (disk full, permission): one line, exit 2."""
    what = exc.strerror or str(exc)
    name = exc.filename or where
    err.print(
        f"error: {name}: {what}; nothing was written ({where} keeps its previous contents)",
        markup=False,
    )
    raise typer.Exit(2)


def _open_folder(out_dir: Path, site: Path, force: bool, also: tuple[str, ...] = ()) -> Any:
    """The output folder of a plan, checked (and locked) before any computation; a folder
    that cannot be used is one line and exit 2. ``also``: files written beside the plan's."""
    from .outputs.write import open_output_folder

    try:
        return open_output_folder(out_dir, site, force=force, also=also)
    except InputError as exc:
        _fail_input(exc)


@contextlib.contextmanager
def _reported(status: Any, out_dir: Path, errors: tuple = InputError) -> Iterator[None]:
    """Around a command's work: stop the progress display, and turn an input failure
    (``errors``) or a file system failure into one line and exit 2."""
    try:
        yield
    except errors as exc:
        if status:
            status.stop()
        _fail_input(exc)
    except OSError as exc:
        if status:
            status.stop()
        _fail_os(exc, out_dir)
    finally:
        if status:
            status.stop()


def _guarded(command: Callable[..., Any]) -> Callable[..., Any]:
    """Turn any failure a command did not foresee into one line on stderr and exit 2, never a
    traceback: a file system error names its file; anything else is named as an internal
    error of routeplan (``ROUTEPLAN_DEBUG=1`` shows the traceback, for a bug report)."""

    @functools.wraps(command)
    def run_command(*args: Any, **kwargs: Any) -> Any:
        try:
            return command(*args, **kwargs)
        except (typer.Exit, typer.Abort, SystemExit):
            raise
        except KeyboardInterrupt:
            err.print("interrupted: nothing more was written", markup=False)
            raise typer.Exit(130) from None
        except Exception as exc:
            if os.environ.get("ROUTEPLAN_DEBUG"):
                raise
            if isinstance(exc, OSError):
                where = exc.filename or "routeplan"
                err.print(f"error: {where}: {exc.strerror or exc}", markup=False)
            else:
                text = " ".join(str(exc).split())[:300]
                err.print(
                    f"error: internal error ({type(exc).__name__}: {text}); this is a fault of "
                    "routeplan, not of the input: please report it with the output of the same "
                    "command run with ROUTEPLAN_DEBUG=1",
                    markup=False,
                )
            raise typer.Exit(2) from None

    return run_command


@app.callback()
def main(
    version: Annotated[
        bool,
        typer.Option(
            "--version", callback=lambda v: _version(v), is_eager=True, help="Print the version."
        ),
    ] = False,
) -> None:
    """routeplan: PV cable routing and sizing from site GIS layers."""


def _version(value: bool) -> None:
    if value:
        out.print(f"routeplan {__version__}", markup=False)
        raise typer.Exit(0)


@app.command()
@_guarded
def check(
    site: Annotated[Path, typer.Argument(help="Site folder holding site.toml and the layers.")],
) -> None:
    """Validate a site's layers and settings and summarise them; exit 2 listing every problem."""
    from .check import check_site

    try:
        report = check_site(site)
    except InputError as exc:
        _fail_input(exc)
        return
    s = report.site
    out.print(f"site     {s.name}", markup=False)
    out.print(f"CRS      {s.crs_note}", markup=False)
    _print_table(
        None,
        ["layer", "features", "source"],
        [[name, str(n), s.sources.get(name, "-")] for name, n in report.counts.items()],
        right={"features"},
    )
    out.print(
        f"strings  {report.strings}  ({report.dc_kw / 1000:.2f} MWdc; inverters "
        f"{report.ac_kva / 1000:.2f} MVA)",
        markup=False,
    )
    out.print(
        f"trench   {report.trench_m:,.1f} m in {report.counts['trenches']} trenches", markup=False
    )
    for key, m in s.modules.items():
        bifacial = ""
        if m.isc_bifacial_a == m.isc_bifacial_a:  # given (not NaN)
            bifacial = f" (bifacial Isc {m.isc_bifacial_a:g} A)"
        elif m.bifaciality == m.bifaciality:
            bifacial = f" (bifaciality {m.bifaciality:g})"
        out.print(
            f"module   {key}: Isc {m.isc_a:g} A{bifacial}, Imp {m.imp_a:g} A, Voc {m.voc_v:g} V, "
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
    for rec in report.assigned().itertuples(index=False):
        out.print(
            f"assigned {rec.layer[:-1] if rec.layer != 'grid' else rec.layer} {rec.feature_id} → "
            f"{rec.to_id} ({rec.rule}, route {rec.route_m:.1f} m)",
            markup=False,
        )
    out.print("ok: no problems found", markup=False)


@app.command()
@_guarded
def plan(
    site: Annotated[Path, typer.Argument(help="Site folder holding site.toml and the layers.")],
    out_dir: Annotated[
        Path,
        typer.Option(
            "--out",
            "-o",
            help="Output folder: new, empty, or written by routeplan plan before (its files "
            "are replaced; no other file is touched).",
        ),
    ] = Path("routeplan_out"),
    quiet: Annotated[bool, typer.Option("--quiet", "-q", help="No progress or summary.")] = False,
    basemap: BasemapOption = False,
    aggregate_above: AggregateOption = 20000,
    use_cache: Annotated[
        bool,
        typer.Option(
            "--cache/--no-cache",
            help="Reuse what the inputs did not change since the last plan into the same "
            "--out folder (its .routeplan-cache); --no-cache plans from scratch and keeps none.",
        ),
    ] = True,
    force: ForceOption = False,
    watch: Annotated[
        bool,
        typer.Option(
            "--watch",
            help="Keep running after the plan: plan into --out again whenever site.toml or a "
            "layer's file changes (bad input is reported and the last outputs stay); Ctrl-C "
            "stops, with the last run's exit status.",
        ),
    ] = False,
) -> None:
    """Route and size every circuit; write the cable and trench schedules, quantities, GIS
    layers, workbook, summary and map. Exit 0 when every limit is met, 1 when something fails
    a limit (outputs written), 2 on bad input or an unusable output folder (nothing
    written)."""
    map_options = {"basemap": basemap, "aggregate_strings_above": aggregate_above}
    if watch:
        _watch(site, out_dir, quiet, map_options, use_cache, force)
        return
    from .cache import PlanCache
    from .outputs.write import write_plan
    from .pipeline import plan as run_plan

    folder = _open_folder(out_dir, site, force)
    show = not quiet and out.is_terminal
    status = out.status("starting", spinner="dots") if show else None
    say = (lambda stage: status.update(stage)) if status else (lambda stage: None)
    with folder, _reported(status, out_dir):
        if status:
            status.start()
        cache = PlanCache(folder) if use_cache else None
        try:
            result = run_plan(site, progress=say, cache=cache)
            write_plan(result, folder, progress=say, map_options=map_options)
        except BaseException:
            if cache is not None:  # its children stopped before the folder is cleaned up
                cache.discard()
            raise
    if not quiet:
        _print_plan(result, out_dir, cache)
    raise typer.Exit(0 if result.ok else 1)


def _print_plan(result: Any, out_dir: Path, cache: Any) -> None:
    """The plan's summary, its failing circuits and what the cache saved."""
    failing = failing_lines(result.circuits, result.segments, result.inputs)
    failing += bill_notes(result.quantities)
    _print_summary(result.summary, out_dir, failing)
    if cache is not None and cache.bypassed:
        out.print(f"cache: not used: {cache.bypassed}", markup=False)
    elif result.cache is not None:
        out.print(_cache_line(result.cache), markup=False)


def _watch(
    site: Path, out_dir: Path, quiet: bool, map_options: dict, use_cache: bool, force: bool
) -> None:
    """``routeplan plan --watch``: plan, then plan again at every change of the site's files
    (:mod:`routeplan.watch`) until Ctrl-C or SIGTERM; exit with the last run's status (a run
    stopped while writing leaves the last outputs, all or nothing). Bad input or a
    file system failure is reported and waited out, as is an output folder that cannot be used
    after the first run (a file of routeplan's edited since: move it away and save again), or
    a site folder gone for a while (renamed, replaced by a sync tool); an output folder that
    cannot be used at the start, or a site path that is not a folder then, ends it, as
    ``plan`` does."""
    import signal
    import time

    from .watch import Watcher

    # Ctrl-C and SIGTERM (a service manager stopping it) stop the watch alike. While a run
    # plans, the signal interrupts it at once (its outputs stay all or nothing); between runs
    # it is only recorded and ends the watch at the next poll (``check``): an interrupt
    # raised there could land in a weakref callback, which Python ignores, or in an
    # extension's import, after which Python ends the process by SIGINT whatever its status.
    stopping: list[int] = []  # the signals received
    running = [False]

    def stop(signum: int, frame: Any) -> None:
        stopping.append(signum)
        if running[0]:
            raise KeyboardInterrupt

    def check() -> None:
        if stopping:
            raise KeyboardInterrupt

    def sleep(seconds: float) -> None:
        check()
        time.sleep(seconds)
        check()

    def run() -> tuple[Any, float]:
        running[0] = True
        try:
            return watcher.run()
        finally:
            running[0] = False

    def unraisable(info: Any) -> None:
        # an interrupt of a run that landed in a weakref callback or a finalizer: Python goes
        # on without it, the watch stops at its next poll; no traceback for the user
        if not (stopping and info.exc_type is KeyboardInterrupt):
            hook_before(info)

    hook_before = sys.unraisablehook
    sys.unraisablehook = unraisable
    handlers = {signal.SIGTERM: signal.signal(signal.SIGTERM, stop)}
    if signal.getsignal(signal.SIGINT) is signal.default_int_handler:  # not if ignored
        handlers[signal.SIGINT] = signal.signal(signal.SIGINT, stop)
    watcher = Watcher(site, out_dir, map_options, force=force, use_cache=use_cache)
    code, first = 2, True
    try:
        while True:
            check()
            try:
                result, seconds = run()
            except FolderError as exc:
                if first:
                    _fail_input(exc)
                err.print(f"error: {exc.problems[0]}", markup=False)
                err.print(
                    "nothing was planned; the next change of the site's files is planned again",
                    markup=False,
                )
                code = 2
            except InputError as exc:
                if first and not site.is_dir():  # nothing to watch (later: moved, say)
                    _fail_input(exc)
                problems = getattr(exc, "problems", None) or [exc]
                for p in problems:
                    err.print(f"error: {p}", markup=False)
                err.print(
                    f"{len(problems)} problem(s) in the input; nothing was planned (the outputs "
                    f"in {out_dir}, if any, are the last run's); waiting for the next change",
                    markup=False,
                )
                code = 2
            except OSError as exc:
                name = exc.filename or out_dir
                err.print(
                    f"error: {name}: {exc.strerror or exc}; nothing was written ({out_dir} "
                    "keeps the last outputs)",
                    markup=False,
                )
                code = 2
            else:
                code = 0 if result.ok else 1
                if not quiet:
                    _print_plan(result, out_dir, result.cache)
                    out.print(
                        f"{time.strftime('%H:%M:%S')} planned in {seconds:.2f} s", markup=False
                    )
                watcher.prepare(result.design)
            first = False
            if not quiet:
                out.print(f"watching {site} for changes (Ctrl-C stops)", markup=False)
            watcher.wait(sleep=sleep)
    except KeyboardInterrupt:
        if not quiet:
            out.print("stopped watching", markup=False)
        raise typer.Exit(code) from None
    finally:
        watcher.close()
        for signum, handler in handlers.items():
            signal.signal(signum, handler)
        sys.unraisablehook = hook_before


@app.command()
@_guarded
def place(
    site: Annotated[Path, typer.Argument(help="Site folder holding site.toml and the layers.")],
    out_dir: Annotated[
        Path,
        typer.Option(
            "--out",
            "-o",
            help="Output folder: the ranked candidates (placement.csv, placement.gpkg, the map "
            "placement.html) and the best position's plan; new, empty, or written by routeplan "
            "before.",
        ),
    ],
    inverter: Annotated[
        str | None, typer.Option("--inverter", help="Id of the inverter pad to place.")
    ] = None,
    combiner: Annotated[
        str | None, typer.Option("--combiner", help="Id of the combiner to place.")
    ] = None,
    radius: Annotated[
        float,
        typer.Option(
            help="Candidates within this straight-line distance of the current position, m."
        ),
    ] = 100.0,
    step: Annotated[
        float, typer.Option(help="Spacing of the candidates along each trench, m.")
    ] = 10.0,
    quiet: Annotated[bool, typer.Option("--quiet", "-q", help="No progress or summary.")] = False,
    force: ForceOption = False,
) -> None:
    """Rank candidate positions of one inverter pad or combiner along the trenches: each is
    planned (the whole plant, every limit checked; the candidates shared among the cores) and
    ranked by conductor cost and capitalised losses (\\[costs] in site.toml;
    without prices, by conductor mass), feasible positions first. Writes placement.csv,
    placement.gpkg, the map placement.html and the best position's plan. Exit 0 when the
    best position meets every limit, 1 when none does, 2 on bad input or an unusable output
    folder."""
    from .check import load
    from .map.placement import write_placement_map
    from .outputs.write import PLACE_FILES, write_plan
    from .placement import PlacementError, current_unroutable, search, write_placement

    if (inverter is None) == (combiner is None):
        err.print("error: give exactly one of --inverter ID and --combiner ID", markup=False)
        raise typer.Exit(2)
    kind, feature = ("inverter", inverter) if inverter is not None else ("combiner", combiner)
    folder = _open_folder(out_dir, site, force, PLACE_FILES)
    show = not quiet and out.is_terminal
    status = out.status("starting", spinner="dots") if show else None

    def placement_files(work: Path) -> list[str]:
        names = write_placement(table, layout.crs, work)
        return names + write_placement_map(
            work, layout, kind, str(feature), best, radius_m=radius, step_m=step
        )

    with folder, _reported(status, out_dir, (PlacementError, *InputError)):
        if status:
            status.start()
        layout, design = load(site)
        table, plans = search(
            layout,
            design,
            kind,
            str(feature),
            radius,
            step,
            progress=(lambda i, n: status.update(f"candidate {i + 1} of {n}")) if status else None,
        )
        if not plans:
            why = current_unroutable(table)
            where = (
                f"no trench passes within {radius:g} m"
                if len(table) == 1
                else f"none of the {len(table)} candidate positions could be routed"
            )
            raise PlacementError(f"{kind} {feature!r}: {where}; at the current position: {why}")
        best = next(iter(plans.values()))
        write_plan(best, folder, extra=placement_files)
    if not quiet:
        top = table.iloc[0]
        out.print(
            f"{len(table)} candidate position(s) of {kind} {feature} within {radius:g} m "
            f"(every {step:g} m along the trenches); "
            f"{int(table['feasible'].sum())} meet every limit",
            markup=False,
        )
        unit = str(top["objective_unit"])
        delta = float(top["delta_objective"])
        if delta == delta:  # not nan: the current position was planned
            against = f"{delta:+,.1f} {unit} against the current position"
        else:
            against = "the current position cannot be routed: " + current_unroutable(table)
        out.print(
            f"best: candidate {int(top['candidate'])} at ({top['x']:.2f}, {top['y']:.2f}), "
            f"{top['moved_m']:.1f} m from the current position on trench "
            f"{top['trench_id'] or '(current)'}; objective {top['objective']:,.1f} {unit} "
            f"({against})",
            markup=False,
        )
        out.print(
            f"outputs: {out_dir} (placement.csv, placement.gpkg, placement.html, the best plan)",
            markup=False,
        )
        out.print(CAUTION, markup=False)
    raise typer.Exit(0 if bool(table.iloc[0]["feasible"]) else 1)


#: how the cache line names a stage, where its name alone says too little
_STAGE_WORDS = {
    "noding": "trench noding",
    "local": "the last plan (re-planned locally: only the blocks the edit changes sized again)",
}


def _cache_line(cache) -> str:
    """What the plan cache saved this run (stages reused, output rows and tiles copied)."""
    if not cache.found:
        return "cache: none in this folder yet (the next run into it reuses this one)"
    kept = [_STAGE_WORDS.get(k, k) for k, v in cache.reused.items() if v]
    line = "cache: reused " + (", ".join(kept) if kept else "no stage (inputs changed)")
    u = cache.output_reuse
    if u.updated and not cache.reused.get("outputs"):
        done = []
        rows = u.gpkg_rows_rewritten
        if rows >= 0:
            done.append(f"{rows:,} GeoPackage row{'s' * (rows != 1)} rewritten")
        chunks = sum(u.chunks_copied.values())
        if chunks:
            done.append(f"{chunks:,} schedule chunk{'s' * (chunks != 1)} copied")
        tiles = u.map_tiles_reused
        if tiles > 0:
            done.append(f"{tiles:,} map tile{'s' * (tiles != 1)} reused")
        if done:
            line += "; outputs updated: " + ", ".join(done)
    return line


#: the plan summary's columns
SUMMARY_HEADERS = [
    "kind",
    "circuits",
    "fail",
    "capacity",
    "drop",
    "other",
    "worst drop %",
    "worst utilisation",
    "loss kW",
]


def _print_table(
    title: str | None, headers: list[str], rows: list[list[str]], right: set[str]
) -> None:
    """A table that is never cut: on a terminal wide enough, a rich table whose columns keep
    their full width; on a narrower one, one line per row (``first: header value, …``, wrapped
    by the terminal); piped or redirected, plain text columns without box characters and
    without a width limit. Cells are user text: shown with :func:`visible`."""
    rows = [[visible(c) for c in r] for r in rows]
    widths = [max([cell_len(h), *(cell_len(r[j]) for r in rows)]) for j, h in enumerate(headers)]
    if not out.is_terminal:
        if title:
            out.print(visible(title), markup=False)
        for line in [headers, *rows]:
            cells = [
                " " * (w - cell_len(c)) + c if h in right else c + " " * (w - cell_len(c))
                for c, w, h in zip(line, widths, headers, strict=True)
            ]
            out.print("  ".join(cells).rstrip(), markup=False)
        return
    # a rich table with a box: "│ " + cell + " " per column, and the closing "│"; cells as
    # Text, so that brackets in user text are not read as rich markup
    if sum(widths) + 3 * len(widths) + 1 <= out.width:
        table = Table(title=Text(visible(title)) if title else None, header_style="bold")
        for h, w in zip(headers, widths, strict=True):
            table.add_column(h, justify="right" if h in right else "left", min_width=w)
            table.columns[-1].no_wrap = True
        for r in rows:
            table.add_row(*(Text(c) for c in r))
        out.print(table)
        return
    if title:
        out.print(visible(title), markup=False)
    for r in rows:
        pairs = ", ".join(f"{h} {c}" for h, c in zip(headers[1:], r[1:], strict=True))
        out.print(f"{r[0]}: {pairs}", markup=False)


def _print_summary(summary: dict, out_dir: Path, failing: list[str] | None = None) -> None:
    rows = [
        [
            kind,
            str(k["circuits"]),
            str(k["fail"]),
            str(k["fail_capacity"]),
            str(k["fail_drop"]),
            str(k["fail_other"]),
            _num(k["worst_vdrop_pct"], 3),
            _num(k["worst_utilisation"], 3),
            _num(k["loss_w"] / 1000, 2),
        ]
        for kind, k in summary["circuits"].items()
    ]
    title = f"{summary['site']['name']} — plan"
    _print_table(title, SUMMARY_HEADERS, rows, right=set(SUMMARY_HEADERS[1:]))
    w = summary["worst_vdrop_pct"]
    lim = summary["drop_limits_pct"]
    sub = ""
    if summary["circuits"].get("subarray", {}).get("circuits"):
        sub = f"sub-array {_num(w['subarray'], 3)} % ({lim['subarray']:g}), "
    out.print(
        f"worst voltage drop: string {_num(w['string'], 3)} % (limit {lim['string']:g}), {sub}"
        f"array {_num(w['array'], 3)} % ({lim['array']:g}), DC total {_num(w['dc_total'], 3)} % "
        f"({lim['dc_total']:g}), AC {_num(w['ac'], 3)} % ({lim['ac']:g})",
        markup=False,
    )
    seg = summary["segments"]
    out.print(
        f"trench segments: {seg['count']}, over capacity: {seg['over_capacity']}", markup=False
    )
    inputs = summary.get("inverter_inputs", {})
    if inputs.get("count"):
        out.print(
            f"inverter DC inputs: {inputs['count']}, over a limit: {inputs['over_limit']} "
            "(inverter_inputs.csv)",
            markup=False,
        )
    us = summary.get("units") == "us"
    cables = ", ".join(
        f"{c['material']} {c.get('size_label') or format(c['size_mm2'], 'g') + ' mm²'} "
        + (f"{c['conductor_ft']:,.0f} ft" if us and "conductor_ft" in c else "")
        + ("" if us and "conductor_ft" in c else f"{c['conductor_m']:,.0f} m")
        for c in summary.get("conductor_m", [])
    )
    what = "conductor feet" if us else "conductor metres"
    out.print(f"{what}: {cables} (allowances included)", markup=False)
    if us and "run_ft_total" in summary:
        run = summary["run_ft_total"]
        out.print(
            f"run feet: {run:,.0f} ft (each circuit's cable once; 1 ft = 0.3048 m)", markup=False
        )
    elif "run_m_total" in summary:
        run = summary["run_m_total"]
        out.print(f"run metres: {run:,.0f} m (each circuit's cable once)", markup=False)
    out.print(
        f"losses: {summary['loss_w_total'] / 1000:,.2f} kW at operating current; "
        f"≈ {summary['energy_loss_kwh_total'] / 1000:,.1f} MWh/year (estimate)",
        markup=False,
    )
    for a in summary.get("assigned", []):
        out.print(
            f"assigned: {a['id']} → {a['to']} ({a['rule']}, route {a['route_m']:.1f} m)",
            markup=False,
        )
    for line in failing or []:
        out.print(line, markup=False)
    out.print(f"outputs: {out_dir}", markup=False)
    out.print(
        "result: "
        + (
            "every circuit and trench segment within its limits"
            if summary["ok"]
            else (
                "SOME CIRCUITS, TRENCH SEGMENTS OR INVERTER INPUTS FAIL A LIMIT "
                "(see status, note and remedy)"
            )
        ),
        markup=False,
    )
    out.print(CAUTION, markup=False)


#: failing ids listed per kind before "… and N more"
FIRST_IDS = 5


def first_ids(ids: list[str], first: int = FIRST_IDS) -> str:
    """The first ``first`` ids, comma-separated, then how many more.

    >>> first_ids(["R1/S1", "R1/S2", "R2/S1"], 2)
    'R1/S1, R1/S2 … and 1 more'
    """
    shown = ", ".join(visible(i) for i in ids[:first])
    more = len(ids) - first
    return shown + (f" … and {more:,} more" if more > 0 else "")


def failing_lines(circuits, segments, inputs, first: int = FIRST_IDS) -> list[str]:
    """What fails, by id, in schedule order: the first failing circuits of each kind, the
    trench segments over capacity and the inverter DC inputs over a limit (one line each,
    none when nothing fails)."""
    lines = []
    kinds = circuits["kind"].to_numpy(dtype=object)
    bad = (circuits["status"] != "ok").to_numpy()
    for kind in dict.fromkeys(kinds[bad].tolist()):
        ids = circuits["circuit_id"].to_numpy(dtype=object)[bad & (kinds == kind)].tolist()
        lines.append(f"failing {kind} circuits ({len(ids):,}): {first_ids(ids, first)}")
    over = segments.loc[segments["status"] != "ok", "segment_id"].astype(str).tolist()
    if over:
        lines.append(f"trench segments over capacity ({len(over):,}): {first_ids(over, first)}")
    if len(inputs):
        bad_inputs = inputs[inputs["status"] != "ok"]
        pairs = zip(bad_inputs["inverter_id"], bad_inputs["input"], strict=True)
        names = [f"{i} input {n}" for i, n in pairs]
        if names:
            lines.append(
                f"inverter DC inputs over a limit ({len(names):,}): {first_ids(names, first)}"
            )
    return lines


def bill_notes(quantities) -> list[str]:
    """The bill's notes, each once (a line whose rated voltage no designation covers)."""
    notes = quantities["note"].dropna().astype(str) if "note" in quantities else []
    return [f"quantities: {n}" for n in dict.fromkeys(notes) if n]


def _num(v: float | None, digits: int) -> str:
    return "-" if v is None else f"{v:.{digits}f}"


@app.command()
@_guarded
def diff(
    old_dir: Annotated[Path, typer.Argument(help="Output folder of the earlier plan.")],
    new_dir: Annotated[Path, typer.Argument(help="Output folder of the later plan.")],
    out_dir: Annotated[
        Path | None,
        typer.Option("--out", "-o", help="Also write every change (diff.csv) into this folder."),
    ] = None,
    map_file: Annotated[
        Path | None,
        typer.Option(
            "--map",
            help="Also write a change map (one offline HTML file): changed circuits old and "
            "new, changed trench segments, moved equipment, the plant totals. A file of that "
            "name that routeplan did not write is never replaced.",
        ),
    ] = None,
    force: ForceOption = False,
) -> None:
    """Show what changed between two plans: plant totals, circuits (their own changes first,
    those that only follow from a circuit they feed summarised), trench segments matched
    along their trench (split, merged, changed) and quantities, each old → new and delta."""
    from .diff import (
        CHANGE_MAP_MARK,
        DiffError,
        change_map_html,
        diff_lines,
        diff_outputs,
        open_diff_folder,
        write_diff,
    )
    from .folder import check_own_file, write_own_file

    folder = None
    try:  # checked before the comparison
        if map_file is not None:
            check_own_file(map_file, CHANGE_MAP_MARK)
        if out_dir is not None:
            folder = open_diff_folder(out_dir, force=force)
    except FolderError as exc:
        _fail_input(exc)
    try:
        d = diff_outputs(old_dir, new_dir)
        page = change_map_html(d).encode("utf-8") if map_file is not None else b""
        if folder is not None:
            write_diff(d, folder)
    except DiffError as exc:
        err.print(f"error: {exc}", markup=False)
        raise typer.Exit(2) from None
    except FolderError as exc:  # diff.csv or the map could not be put in place
        _fail_input(exc)
    except OSError as exc:
        _fail_os(exc, out_dir or Path("."))
    finally:
        if folder is not None:
            folder.close()
    if map_file is not None:
        try:
            write_own_file(map_file, page, CHANGE_MAP_MARK)
        except FolderError as exc:  # replaced meanwhile by a file that is not routeplan's
            _fail_input(exc)
        except OSError as exc:
            _fail_os(exc, map_file)
    for line in diff_lines(d):
        out.print(line, markup=False)
    if not d.empty:
        out.print(CAUTION, markup=False)


@app.command("map")
@_guarded
def map_cmd(
    out_dir: Annotated[Path, typer.Argument(help="Output folder of 'routeplan plan'.")],
    basemap: BasemapOption = False,
    aggregate_above: AggregateOption = 20000,
    force: ForceOption = False,
) -> None:
    """Redraw map.html from an output folder, without planning again."""
    from .map.page import MapError, write_map

    try:
        path = write_map(
            out_dir, basemap=basemap, aggregate_strings_above=aggregate_above, force=force
        )
    except FolderError as exc:
        _fail_input(exc)
        return
    except MapError as exc:
        err.print(f"error: {exc}", markup=False)
        raise typer.Exit(2) from None
    except OSError as exc:
        _fail_os(exc, out_dir)
        return
    out.print(f"map: {path}", markup=False)


@app.command()
@_guarded
def report(
    out_dir: Annotated[Path, typer.Argument(help="Output folder of 'routeplan plan'.")],
    pdf: Annotated[
        Path,
        typer.Option(
            "--pdf",
            help="Print the folder's report.html to this PDF file with headless Chromium. A "
            "file of that name that routeplan did not write is never replaced.",
        ),
    ],
    paper: Annotated[
        str,
        typer.Option("--paper", help="Paper size of the PDF: a4 or letter."),
    ] = "a4",
) -> None:
    """Print a plan's calculation report (report.html) to PDF with headless Chromium."""
    from .report.pdf import PAPER, write_report_pdf

    if paper.lower() not in PAPER:
        err.print(f"error: --paper: {paper!r}; expected one of {', '.join(PAPER)}", markup=False)
        raise typer.Exit(2)
    try:
        path = write_report_pdf(out_dir, pdf, paper.lower())
    except FolderError as exc:
        _fail_input(exc)
        return
    except OSError as exc:
        _fail_os(exc, pdf)
        return
    out.print(f"report: {path}", markup=False)


@app.command()
@_guarded
def synth(
    mw: Annotated[float, typer.Option("--mw", help="Plant size, MWdc.")],
    out_dir: Annotated[
        Path,
        typer.Option(
            "--out", "-o", help="Site folder to write: new, empty, or written by synth before."
        ),
    ],
    seed: Annotated[int, typer.Option("--seed", help="Random seed (same seed, same site).")] = 1,
    geographic: Annotated[
        bool, typer.Option("--geographic", help="Write lon/lat (EPSG:4326) instead of UTM.")
    ] = False,
    fmt: Annotated[str, typer.Option("--format", help="gpkg (one site.gpkg) or geojson.")] = "gpkg",
    topology: Annotated[
        str,
        typer.Option(
            "--topology",
            help="How blocks collect DC: central (string combiners to one inverter skid), "
            "subarray (string combiners to recombiners at the skid) or string (rows to "
            "multi-input string inverters).",
        ),
    ] = "central",
    force: ForceOption = False,
) -> None:
    """Write an invented utility-scale site folder for trials and benchmarks: its layers
    pass `check`; a few of its circuits may fail a limit, as in a first layout."""
    from .synth import generate_site

    try:
        info = generate_site(
            mw, seed, out_dir, geographic=geographic, fmt=fmt, force=force, topology=topology
        )
    except FolderError as exc:
        _fail_input(exc)
        return
    except ValueError as exc:
        err.print(f"error: {exc}", markup=False)
        raise typer.Exit(2) from None
    except OSError as exc:
        _fail_os(exc, out_dir)
        return
    equipment = f"{info.combiners} combiners, {info.inverters} inverters"
    if info.topology == "subarray":
        equipment = (
            f"{info.combiners} combiners ({info.recombiners} of them recombiners), "
            f"{info.inverters} inverters"
        )
    elif info.topology == "string":
        equipment = f"{info.inverters} string inverters"
    out.print(
        f"site: {out_dir} — {info.mwdc:.1f} MWdc, {info.rows} rows, {info.strings} strings, "
        f"{equipment}, {info.trenches} trenches ({info.crs})",
        markup=False,
    )


def _fmt(v: object) -> str:
    if isinstance(v, float):
        return "unset" if v != v else f"{v:g}"
    return str(v)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(app())
