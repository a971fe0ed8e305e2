"""Command-line conventions, run as a user runs them (a subprocess of this worktree's code):
``--version``, ``-h`` on every command, help text broken only where the terminal width
requires it (80 and 200 columns), summary tables never cut — plain text when piped, one line
per row on a narrow terminal — and, after ``plan``, the failing ids per kind."""

from __future__ import annotations

import fcntl
import itertools
import json
import os
import pty
import re
import select
import struct
import subprocess
import sys
import termios
from importlib.metadata import version
from pathlib import Path

import pandas as pd
import pytest
import typer
from typer.testing import CliRunner

import routeplan.cli as cli
from routeplan.cli import app, failing_lines

from ..conftest import SITE_TOML, base_frames, write_site

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "demo_site"
runner = CliRunner()
#: every command of the command line (a command added later is covered too)
COMMANDS = sorted(typer.main.get_command(app).commands)


def run(*args: str, columns: int = 80) -> subprocess.CompletedProcess:
    """``python -m routeplan.cli ARGS`` from this worktree, output piped, at ``columns``."""
    env = {**os.environ, "COLUMNS": str(columns), "PYTHONPATH": str(ROOT)}
    env.pop("TERMINAL_WIDTH", None)
    return subprocess.run(
        [sys.executable, "-m", "routeplan.cli", *args],
        cwd=ROOT,
        env=env,
        capture_output=True,
        text=True,
        encoding="utf-8",
        timeout=300,
    )


def test_version_exit_0():
    r = run("--version")
    assert (r.returncode, r.stdout, r.stderr) == (0, f"routeplan {version('routeplan')}\n", "")


@pytest.mark.parametrize("command", ["", *COMMANDS])
def test_short_help_is_help(command):
    args = [command] if command else []
    short, long = run(*args, "-h"), run(*args, "--help")
    assert short.returncode == long.returncode == 0
    assert short.stdout == long.stdout and "Usage:" in short.stdout
    assert short.stderr == long.stderr == ""


def breaks_before_the_width(text: str) -> list[str]:
    """Lines of a help page that end before the width forced them to: a line continued on the
    next (inside a panel: the next line's first column empty; outside: the next non-blank
    line) although the next word would have fitted after it. Typer's own "[default: …]" and
    "[required]" notes start a line of their own and are not counted."""
    lines = text.split("\n")
    found = []
    for prev, line in itertools.pairwise(lines):
        boxed = line.startswith("│") and line.rstrip().endswith("│") and prev.startswith("│")
        if boxed:
            body, before = line.rstrip()[1:-1], prev.rstrip()[1:-1]
            if len(body) < 2 or body[1] != " " or not body.strip() or len(before) != len(body):
                continue  # a command's entry, an empty line or a border
            if body.split()[0].startswith(("-", "*")):
                continue  # an option's or argument's entry
            limit = len(body) - 1  # the right padding
        else:
            if line.startswith(("╭", "╰", "│")) or prev.startswith(("╭", "╰", "│")):
                continue
            if not line.strip() or not prev.strip():
                continue
            body, before, limit = line, prev, len(line) - 1  # padded: 1 column each side
        word = body.split()[0]
        if word.startswith("["):
            continue
        if len(before.rstrip()) + 1 + len(word) <= limit:
            found.append(f"{prev.rstrip()!r} | {word!r}")
    return found


@pytest.mark.parametrize("columns", [80, 200])
@pytest.mark.parametrize("command", ["", *COMMANDS])
def test_help_breaks_only_at_the_width(command, columns):
    r = run(*([command] if command else []), "--help", columns=columns)
    assert r.returncode == 0
    lines = r.stdout.split("\n")
    assert max(len(x) for x in lines) <= columns
    assert breaks_before_the_width(r.stdout) == []


@pytest.mark.parametrize("command", COMMANDS)
def test_help_shows_the_whole_docstring(command):
    # rich reads help text as markup: "([costs] in site.toml; …)" was shown as "( in
    # site.toml; …)", the table's name dropped as an unknown style tag; a docstring writes
    # "\\[" for a bracket shown as written
    doc = typer.main.get_command(app).commands[command].help or ""
    words = " ".join(doc.replace("\\[", "[").split())
    page = " ".join(run(command, "--help", columns=200).stdout.replace("│", " ").split())
    assert words in page


def test_the_break_check_finds_a_docstring_break():
    # the group's command list as rich shows a docstring with its own line breaks (the
    # check above must be able to fail)
    page = (
        "│ plan   Route and size every circuit; write the cable and trench schedules,"
        + " " * 15
        + "│\n│        quantities, GIS layers, workbook, summary and map."
        + " " * 32
        + "│\n"
    )
    assert len(breaks_before_the_width(page)) == 1


def expected_rows(summary: dict) -> list[str]:
    """The summary table's lines as plain text: columns padded to their widest cell (two
    spaces apart), numbers right-aligned; values from summary.json."""
    head = ["kind", "circuits", "fail", "capacity", "drop", "other", "worst drop %"]
    head += ["worst utilisation", "loss kW"]
    rows = [head]
    for kind, k in summary["circuits"].items():
        rows.append(
            [
                kind,
                str(k["circuits"]),
                str(k["fail"]),
                str(k["fail_capacity"]),
                str(k["fail_drop"]),
                str(k["fail_other"]),
                f"{k['worst_vdrop_pct']:.3f}",
                f"{k['worst_utilisation']:.3f}",
                f"{k['loss_w'] / 1000:.2f}",
            ]
        )
    widths = [max(len(r[j]) for r in rows) for j in range(len(head))]
    return [
        "  ".join(
            c.ljust(w) if j == 0 else c.rjust(w)
            for j, (c, w) in enumerate(zip(r, widths, strict=True))
        )
        for r in rows
    ]


@pytest.mark.parametrize("columns", [60, 200])
def test_piped_summary_is_plain_and_whole(tmp_path, columns):
    out = tmp_path / "out"
    r = run("plan", str(DEMO), "--out", str(out), "--no-cache", columns=columns)
    assert r.returncode == 0, r.stderr
    summary = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    lines = r.stdout.splitlines()
    i = lines.index("Cerro Pardo Solar (demo, 6 MWdc) — plan")
    assert lines[i + 1 : i + 6] == expected_rows(summary)
    assert lines[i + 1] == (
        "kind      circuits  fail  capacity  drop  other  worst drop %  worst utilisation  loss kW"
    )
    # plain text: no box drawing, no escape sequence, nothing cut short; the same at any width
    assert not any(ch in r.stdout for ch in "┃│┏━└…\x1b")
    assert lines[-1].startswith("Results are a design aid")
    cable = next(x for x in lines if x.startswith("conductor metres: "))
    assert cable.endswith("(allowances included)")


def test_narrow_terminal_gives_one_line_per_kind(monkeypatch, tmp_path):
    """On a terminal of 60 columns (rich console forced to a terminal) the table does not
    fit: each kind is one line, never cut (the terminal wraps it)."""
    summary = json.loads(
        json.dumps(
            {
                "site": {"name": "S"},
                "circuits": {
                    "string": {
                        "circuits": 384,
                        "fail": 2,
                        "fail_capacity": 1,
                        "fail_drop": 1,
                        "fail_other": 0,
                        "worst_vdrop_pct": 0.8291,
                        "worst_utilisation": 1.2,
                        "loss_w": 25670.0,
                    }
                },
                "worst_vdrop_pct": {"string": 0.8291, "array": None, "dc_total": None, "ac": None},
                "drop_limits_pct": {"string": 1.0, "array": 1.5, "dc_total": 2.0, "ac": 1.0},
                "segments": {"count": 3, "over_capacity": 0},
                "cable_m": [],
                "loss_w_total": 25670.0,
                "energy_loss_kwh_total": 1.0,
                "ok": False,
            }
        )
    )
    for width, table in ((60, False), (200, True)):
        term = cli._Terminal(
            highlight=False, soft_wrap=True, force_terminal=True, width=width, color_system=None
        )
        monkeypatch.setattr(cli, "out", term)
        with term.capture() as captured:
            cli._print_summary(summary, tmp_path, ["failing string circuits (2): R1/S1, R1/S2"])
        lines = captured.get().splitlines()
        assert lines[0] == "S — plan"
        if table:
            assert lines[2].split("┃")[1:-1] == [
                " kind   ", " circuits ", " fail ", " capacity ", " drop ", " other ",
                " worst drop % ", " worst utilisation ", " loss kW ",
            ]  # fmt: skip
        else:
            assert lines[1] == (
                "string: circuits 384, fail 2, capacity 1, drop 1, other 0, worst drop % 0.829, "
                "worst utilisation 1.200, loss kW 25.67"
            )
        assert "failing string circuits (2): R1/S1, R1/S2" in lines
        assert "…" not in captured.get()


def test_failing_lines_name_the_first_ids_per_kind():
    circuits = pd.DataFrame(
        {
            "circuit_id": [f"R{k}/S1" for k in range(1, 9)] + ["A:CB1", "A:CB2", "AC:INV1"],
            "kind": ["string"] * 8 + ["array", "array", "ac"],
            "status": ["fail"] * 7 + ["ok", "ok", "fail", "ok"],
        }
    )
    segments = pd.DataFrame({"segment_id": ["T1@0.0-10.0", "T2@0.0-3.5"], "status": ["over", "ok"]})
    inputs = pd.DataFrame(
        {"inverter_id": ["INV1", "INV1"], "input": [1, 2], "status": ["ok", "over"]}
    )
    assert failing_lines(circuits, segments, inputs) == [
        "failing string circuits (7): R1/S1, R2/S1, R3/S1, R4/S1, R5/S1 … and 2 more",
        "failing array circuits (1): A:CB2",
        "trench segments over capacity (1): T1@0.0-10.0",
        "inverter DC inputs over a limit (1): INV1 input 2",
    ]
    none = circuits.assign(status="ok")
    assert failing_lines(none, segments.assign(status="ok"), inputs.assign(status="ok")) == []


def test_plan_lists_failing_ids(tmp_path):
    # 8 strings (rows of 4) whose drop limit no size meets, and trenches for one circuit each
    frames = base_frames()
    frames["rows"]["strings"] = [4, 4]
    frames["trenches"]["max_circuits"] = [1, 1]
    toml = SITE_TOML + "\n[design.drop_pct]\nstring = 0.001\n"
    site = write_site(tmp_path / "site", frames, toml=toml)
    result = runner.invoke(app, ["plan", str(site), "--out", str(tmp_path / "out"), "--no-cache"])
    assert result.exit_code == 1, result.output
    lines = result.stdout.splitlines()
    schedule = pd.read_csv(tmp_path / "out" / "cable_schedule.csv")
    failing = schedule.loc[schedule["status"] == "fail", "circuit_id"].tolist()
    assert failing == ["R1/S1", "R1/S2", "R1/S3", "R1/S4", "R2/S1", "R2/S2", "R2/S3", "R2/S4"]
    assert "failing string circuits (8): R1/S1, R1/S2, R1/S3, R1/S4, R2/S1 … and 3 more" in lines
    trench = pd.read_csv(tmp_path / "out" / "trench_schedule.csv")
    over = trench.loc[trench["status"] == "over", "segment_id"].tolist()
    assert over  # every segment carries more than one circuit
    shown = ", ".join(over[:5]) + (f" … and {len(over) - 5} more" if len(over) > 5 else "")
    assert f"trench segments over capacity ({len(over)}): {shown}" in lines


@pytest.mark.parametrize("terminal", [True, False])
def test_table_cells_are_text_not_markup(monkeypatch, terminal):
    """A layer source or site name from the user's files holding brackets or an escape is
    shown as written (rich markup not applied, control characters as \\xNN), on a terminal
    and piped."""
    term = cli._Terminal(
        highlight=False, soft_wrap=True, force_terminal=terminal, width=120, color_system=None
    )
    monkeypatch.setattr(cli, "out", term)
    with term.capture() as captured:
        cli._print_table("[bold]S", ["layer", "source"], [["rows", "gis/[red]r\x1b.shp"]], set())
    text = captured.get()
    assert text.splitlines()[0] == "[bold]S"
    assert "gis/[red]r\\x1b.shp" in text and "\x1b" not in text


def run_in_terminal(args: list[str], columns: int) -> str:
    """``python -m routeplan.cli ARGS`` on a pseudo-terminal ``columns`` wide (pty, its size
    set with TIOCSWINSZ): the output as the terminal shows it — escape sequences removed, each
    line as left after its last carriage return (the progress spinner's)."""
    master, slave = pty.openpty()
    fcntl.ioctl(slave, termios.TIOCSWINSZ, struct.pack("HHHH", 24, columns, 0, 0))
    env = {**os.environ, "PYTHONPATH": str(ROOT), "COLUMNS": str(columns), "TERM": "xterm"}
    proc = subprocess.Popen(
        [sys.executable, "-m", "routeplan.cli", *args],
        cwd=ROOT,
        env=env,
        stdin=slave,
        stdout=slave,
        stderr=slave,
        close_fds=True,
    )
    os.close(slave)
    chunks = []
    while select.select([master], [], [], 120)[0]:
        try:
            data = os.read(master, 65536)
        except OSError:  # the child closed the terminal
            break
        if not data:
            break
        chunks.append(data)
    assert proc.wait(timeout=120) == 0
    os.close(master)
    text = re.sub(r"\x1b\[[0-9;?]*[A-Za-z]", "", b"".join(chunks).decode("utf-8"))
    return "\n".join(x.split("\r")[-1] for x in text.replace("\r\n", "\n").split("\n"))


@pytest.mark.parametrize("columns", [60, 120])
def test_summary_on_a_real_terminal(tmp_path, columns):
    out = tmp_path / "out"
    shown = run_in_terminal(["plan", str(DEMO), "--out", str(out), "--no-cache"], columns)
    summary = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    lines = shown.splitlines()
    i = lines.index("Cerro Pardo Solar (demo, 6 MWdc) — plan")
    _, *rows = [r.split() for r in expected_rows(summary)]
    if columns == 60:  # the table needs 101 columns: one line per kind, never cut
        for k, (kind, k_row) in enumerate(zip(summary["circuits"], rows, strict=True)):
            assert lines[i + 1 + k] == (
                f"{kind}: circuits {k_row[1]}, fail {k_row[2]}, capacity {k_row[3]}, drop "
                f"{k_row[4]}, other {k_row[5]}, worst drop % {k_row[6]}, worst utilisation "
                f"{k_row[7]}, loss kW {k_row[8]}"
            )
    else:  # a boxed table, every header whole
        assert [c.strip() for c in lines[i + 2].split("┃")[1:-1]] == [
            "kind", "circuits", "fail", "capacity", "drop", "other", "worst drop %",
            "worst utilisation", "loss kW",
        ]  # fmt: skip
        assert [c.strip() for c in lines[i + 4].split("│")[1:-1]] == rows[0]
    assert "…" not in shown


def test_ctrl_c_while_the_command_line_imports_is_one_line_and_exit_130():
    # Ctrl-C in the first half second, while numpy, pandas and geopandas load, printed a
    # traceback of 20-34 lines (a hostile-input sweep). Here the interrupt comes as geopandas
    # is imported, in a process of its own, as `routeplan` and `python -m routeplan` start.
    code = (
        "import builtins\n"
        "real = builtins.__import__\n"
        "def imp(name, *a, **k):\n"
        "    if name == 'geopandas':\n"
        "        raise KeyboardInterrupt\n"
        "    return real(name, *a, **k)\n"
        "builtins.__import__ = imp\n"
        "from routeplan.entry import main\n"
        "main()\n"
    )
    done = subprocess.run(
        [sys.executable, "-c", code, "plan", "x", "--out", "y"],
        cwd=ROOT,
        capture_output=True,
        text=True,
        check=False,
        timeout=120,
    )
    assert done.returncode == 130, done.stderr
    assert done.stderr == "interrupted: nothing was written\n"
    assert done.stdout == ""
