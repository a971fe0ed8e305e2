"""Mutation testing of routeplan's core modules with mutmut 3 (a development habit, not CI).

Run from the repository root, in an environment with ``pip install -e '.[test,mutation]'``::

    python tools/mutation.py calc                # mutate calc/, run tests/calc and calc's doctests
    python tools/mutation.py map_text            # one routeplan core module and its fast tests
    python tools/mutation.py diff                # (likewise: pipeline, network, routing)
    python tools/mutation.py routeplan           # routeplan's core modules and their fast tests
    python tools/mutation.py all                 # everything [tool.mutmut] lists, its whole subset
    python tools/mutation.py calc --retest       # test the survivors again (after new tests)
    python tools/mutation.py calc --report       # only the score per module and the survivors
    python tools/mutation.py calc --jobs 2       # more workers (default 1: a shared machine)

``[tool.mutmut]`` in ``pyproject.toml`` lists every core module (``source_paths``), the
packages copied beside them (``also_copy``) and the fast test subset of every group
(``pytest_add_cli_args_test_selection``); a plain ``mutmut run`` uses all of it. mutmut has one
test selection per run, and the calc modules are called by the slow whole-plan tests too, so
this script runs one group (*target*) at a time: it narrows ``source_paths`` to the target's
files and the selection to the target's subset (both must be in ``[tool.mutmut]``), in a folder
of its own, ``.mutation/<target>/`` (symbolic links to the sources and a ``pyproject.toml``
with the narrowed table), so that each target keeps its results. mutmut's own commands work
there: ``cd .mutation/calc && mutmut show calc.vdrop.x_vdrop_v__mutmut_3`` (or ``browse``).

A target may also name mutant patterns (``fnmatch``, as ``mutmut run`` takes them): the
``pipeline`` target mutates the whole of ``routeplan/pipeline.py`` but runs and reports only
the mutants of the functions that build the tables and the bill of quantities
(``circuit_table``, ``segment_table``, ``quantity_table``, ``summarise`` and their helpers),
with only the tests that called those functions. mutmut tests a mutant named on its command
line again on every run, so each run of such a target tests all of its mutants (the
pipeline's take some 15 minutes with ``--jobs 1`` on a busy 2-core machine) and
``--retest`` adds nothing to it. To test a few mutants again, name them yourself:
``cd .mutation/pipeline && mutmut run --max-children 1 "routeplan.pipeline.x_summarise__mutmut_*"``.

A target may also leave some tests of its files out (``deselect``, passed to pytest as
``--deselect``): mutmut runs, for a mutant, every test that called its function, and nearly
every test of the ``network`` and ``routing`` files builds a network or routes a site, so a
handful of slow ones (hypothesis searches of 60 generated sites, sites written to files and
planned through the command line, generated plants of hundreds of trenches) made each
surviving mutant cost seconds: about 0.3 mutants/s for ``network``. Those two targets run
``tests/routeplan/test_network_units.py`` and ``test_routing_units.py`` (small hand-built
geometry checked against shapely, networkx and hand computation) with the fast tests of
their other files, and leave the slow ones out; measured on the shared 2-core machine, a
whole ``network`` run (1,441 mutants) takes about 7 minutes (3.6 mutants/s), a ``routing`` run
(1,617) about 18 (1.5/s). The slow tests still run in the suite. A change of a target's
configuration (its tests or deselected ones) makes mutmut test every mutant again.

The process runs at ``nice 10``. The report counts, per module, the mutants killed (a test
failed or timed out), survived, without tests and not yet checked; mutants that
``tests/MUTATION.md`` records as equivalent (a line naming the mutant and the word
``equivalent``) are left out of the score: score = killed / (total - equivalent).

mutmut keeps a mutant's result until its function changes: a plain run tests only new and
changed functions; ``--retest`` then tests the survivors again, against today's tests.
mutmut also keeps which test called which function (``mutants/mutmut-stats.json``) and
traces only new tests again: after changing what an existing test calls (a fixture's scope,
say), delete that file so that the next run traces every test. A fixture shared by several
tests (``scope="module"``) is traced for the first test only, so that mutants of the
functions it calls run that test alone: the fast subsets plan in function-scoped fixtures.
"""

from __future__ import annotations

import argparse
import fnmatch
import json
import os
import re
import shutil
import subprocess
import sys
import tomllib
from collections import Counter, defaultdict
from dataclasses import dataclass
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
WORK = ROOT / ".mutation"
RECORD = ROOT / "tests" / "MUTATION.md"


@dataclass(frozen=True)
class Target:
    """One group of core modules and the fast tests that check them."""

    prefix: str  # source_paths entries that start with this belong to the target
    tests: tuple[str, ...] | None  # None: the whole selection of [tool.mutmut]
    mutants: tuple[str, ...] = ()  # mutant-name patterns to run and report; () for all
    deselect: tuple[str, ...] = ()  # test ids of the subset's files kept out of the run

    def covers(self, name: str) -> bool:
        """Whether the mutant ``name`` belongs to the target's run and report."""
        return not self.mutants or any(fnmatch.fnmatchcase(name, p) for p in self.mutants)


#: the functions of routeplan/pipeline.py that build the tables and the bill of quantities
PIPELINE_TABLES = tuple(
    f"routeplan.pipeline.x_{f}__mutmut_*"
    for f in (
        "circuit_table",
        "_pf",
        "segment_table",
        "quantity_table",
        "_devices",
        "assigned_destinations",
        "summarise",
        "_max",
    )
)


_NET = "tests/routeplan"
#: the tests of test_trench_checks.py on whole sites: generated, or written to files and
#: checked or planned through the command line
_TRENCH_CHECKS_CLI = (
    "test_generated_sites_pass",
    "test_refused_in_one_line",
    "test_attribute_overlap_and_far_equipment_together",
    "test_setting_and_far_equipment_together",
    "test_no_network_checks_with_a_refused_tolerance",
    "test_unreadable_file_stops_before_the_network_checks",
    "test_empty_layer_file_is_one_line",
    "test_missing_layer_is_one_line",
    "test_reference_into_a_site_without_grid_is_one_line",
    "test_features_left_without_destination_by_one_far_feature",
    "test_layer_without_id_column_is_one_line",
    "test_refused_module_table_is_one_line",
    "test_features_naming_one_missing_id_are_one_line",
    "test_bill_counts_each_corridor_once",
    "test_bill_of_a_generated_site_counts_each_corridor_once",
    "test_layers_keep_a_partial_site_only_when_every_file_was_read",
)

TARGETS = {
    "calc": Target("calc/", ("tests/calc", "calc")),
    "routeplan": Target(
        "routeplan/",
        (
            "tests/routeplan/test_routing.py",
            "tests/routeplan/test_route_crs.py",
            "tests/routeplan/test_network.py",
            "tests/routeplan/test_trench_checks.py",
            "tests/routeplan/test_circuits.py",
            "tests/routeplan/test_plan.py",
            "tests/routeplan/test_protection_plan.py",
            "tests/routeplan/test_text_safety.py",
            "tests/map/test_map.py",
            "tests/routeplan/test_diff_robust.py",
            "tests/routeplan/test_cli_check.py",
            "routeplan",
        ),
    ),
    "map_text": Target(
        "routeplan/map/text.py",
        ("tests/map/test_map_text.py", "tests/map/test_map_text_paths.py"),
    ),
    # the comparison, its reading and its terminal lines (the change map is a map: its
    # escaping is map_text's, its drawing is checked in a browser)
    "diff": Target(
        "routeplan/diff/",
        (
            "tests/routeplan/test_diff_tables.py",
            "tests/routeplan/test_diff_survivors.py",
            "tests/routeplan/test_diff_numbers.py",
            "tests/routeplan/test_diff_survivors_dec04.py",
        ),
        ("routeplan.diff.core.*", "routeplan.diff.compare.*", "routeplan.diff.text.*"),
    ),
    "pipeline": Target(
        "routeplan/pipeline.py",
        ("tests/routeplan/test_pipeline_tables.py", "tests/routeplan/test_pipeline_survivors.py"),
        PIPELINE_TABLES,
    ),
    "network": Target(
        "routeplan/network.py",
        (
            "tests/routeplan/test_network_units.py",
            "tests/routeplan/test_network.py",
            # the one network-level test of that file (the others plan whole sites)
            "tests/routeplan/test_segment_ids_split.py"
            "::test_a_tap_joining_an_existing_node_renames_no_segment",
            "tests/routeplan/test_network_loops.py",
            "tests/routeplan/test_trench_checks.py",
            "tests/routeplan/test_chainage_survivors.py",
        ),
        deselect=(
            # 60 hypothesis examples of three builds each: the memo is checked by hand-built
            # cases in test_network.py and test_network_units.py
            f"{_NET}/test_network.py::test_a_build_with_the_last_builds_memo_equals_a_cold_build",
            # whole sites written to files and planned through the command line
            f"{_NET}/test_network_loops.py::"
            "test_a_trench_shorter_than_the_tolerance_is_reported_in_one_line",
            *(f"{_NET}/test_trench_checks.py::{t}" for t in _TRENCH_CHECKS_CLI),
        ),
    ),
    # what a failing circuit's remedy says: whole plans sized again (the tests plan the demo),
    # and the exact texts on small hand-built circuits (iec, and nec's 240.4 and default lists)
    "remedy": Target(
        "routeplan/remedy.py",
        (
            "tests/routeplan/test_remedy.py",
            "tests/routeplan/test_remedy_units.py",
            "tests/routeplan/test_remedy_nec.py",
        ),
    ),
    # the bill of quantities: the hand-built schedules of test_quantities.py, checked line by
    # line; its tests that plan whole sites (the demo, the small site, through the command line:
    # tens of seconds each on a busy machine, for every surviving mutant) still run in the suite
    "quantities": Target(
        "routeplan/quantities.py",
        ("tests/routeplan/test_quantities.py",),
        deselect=tuple(
            f"{_NET}/test_quantities.py::{t}"
            for t in (
                "test_demo_bill_is_the_sum_of_its_schedule",
                "test_demo_trench_metres_are_the_trench_layers_lengths",
                "test_demo_bill_has_every_family",
                "test_sizes_are_written_as_sizes",
                "test_demo_designations_follow_the_standards",
                "test_demo_bill_in_the_workbook_has_numbers",
                "test_bill_of_a_small_site_single_or_three_phase",
                "test_a_plan_rated_above_the_pv_cable_says_so",
            )
        ),
    ),
    "routing": Target(
        "routeplan/routing.py",
        (
            "tests/routeplan/test_routing_units.py",
            "tests/routeplan/test_routing.py",
            "tests/routeplan/test_routing_api.py",
            "tests/routeplan/test_route_crs.py",
        ),
        deselect=(
            # generated sites of up to a few hundred nodes, routed in full and compared with
            # networkx path by path: small hand-built graphs in test_routing_units.py do it
            f"{_NET}/test_routing.py::test_routes_agree_with_networkx",
            f"{_NET}/test_routing_api.py::"
            "test_routes_on_sites_larger_than_the_first_radius_agree_with_networkx",
        ),
    ),
    "all": Target("", None),
}

KILLED = {"killed", "timeout", "caught by type check"}


class MutationSetupError(Exception):
    """The configuration or the environment cannot run the requested target."""


def _toml_value(value: object) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int | float):
        return repr(value)
    if isinstance(value, str):
        return json.dumps(value)
    if isinstance(value, list):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    raise MutationSetupError(f"pyproject.toml [tool.mutmut]: cannot write the value {value!r}")


def narrowed_config(pyproject_text: str, target: Target) -> tuple[str, dict]:
    """Return pyproject.toml's text with ``[tool.mutmut]`` narrowed to ``target``, and the table.

    Raises
    ------
    MutationSetupError
        When ``[tool.mutmut]`` is missing, lists none of the target's files, or lacks one of
        the target's test paths.
    """
    table = dict(tomllib.loads(pyproject_text).get("tool", {}).get("mutmut", {}))
    if not table:
        raise MutationSetupError("pyproject.toml: no [tool.mutmut] table")
    sources = [p for p in table.get("source_paths", []) if p.startswith(target.prefix)]
    if not sources:
        raise MutationSetupError(
            f"pyproject.toml [tool.mutmut] source_paths: nothing under '{target.prefix}'"
        )
    table["source_paths"] = sources
    if target.tests is not None:
        listed = table.get("pytest_add_cli_args_test_selection", [])
        missing = [t for t in target.tests if t not in listed]
        if missing:
            raise MutationSetupError(
                "pyproject.toml [tool.mutmut] pytest_add_cli_args_test_selection: "
                f"missing {', '.join(missing)}"
            )
        table["pytest_add_cli_args_test_selection"] = list(target.tests)
    if target.deselect:
        args = table.get("pytest_add_cli_args", [])
        table["pytest_add_cli_args"] = [*args, *(f"--deselect={t}" for t in target.deselect)]
    body = "".join(f"{key} = {_toml_value(value)}\n" for key, value in table.items())
    lines = pyproject_text.splitlines(keepends=True)
    start = next(i for i, line in enumerate(lines) if line.strip() == "[tool.mutmut]")
    end = next(
        (i for i in range(start + 1, len(lines)) if lines[i].startswith("[")),
        len(lines),
    )
    text = "".join(lines[: start + 1]) + body + "\n" + "".join(lines[end:])
    return text, table


def prepare(name: str) -> tuple[Path, dict]:
    """Create or refresh ``.mutation/<name>/``: links to the sources and the narrowed config."""
    text, table = narrowed_config((ROOT / "pyproject.toml").read_text("utf-8"), TARGETS[name])
    work = WORK / name
    work.mkdir(parents=True, exist_ok=True)
    tops = {Path(p).parts[0] for p in table["source_paths"] + table.get("also_copy", [])}
    for top in sorted(tops | {"tests"}):
        link = work / top
        if not link.is_symlink():
            link.symlink_to(ROOT / top, target_is_directory=(ROOT / top).is_dir())
    config = work / "pyproject.toml"
    if not config.exists() or config.read_text("utf-8") != text:
        config.write_text(text, "utf-8")
    return work, table


def _mutmut() -> str:
    beside = Path(sys.executable).with_name("mutmut")
    found = str(beside) if beside.exists() else shutil.which("mutmut")
    if found is None:
        raise MutationSetupError("mutmut is not installed: pip install -e '.[test,mutation]'")
    return found


def results(work: Path) -> dict[str, str]:
    """Return every mutant's status (``killed``, ``survived``, ...) by its mutmut name."""
    out = subprocess.run(
        [_mutmut(), "results", "--all", "true"],
        cwd=work,
        capture_output=True,
        text=True,
        check=True,
    ).stdout
    found = (re.match(r"\s+(\S+__mutmut_\d+): (.+)$", line) for line in out.splitlines())
    return {m[1]: m[2].strip() for m in found if m}


def equivalents() -> set[str]:
    """Return the mutants ``tests/MUTATION.md`` records as equivalent."""
    if not RECORD.exists():
        return set()
    names = set()
    for line in RECORD.read_text("utf-8").splitlines():
        if "equivalent" in line:
            names.update(re.findall(r"[\w.]+__mutmut_\d+", line))
    return names


def report(status: dict[str, str], equivalent: set[str]) -> str:
    """Return the score table per module and the list of mutants not killed.

    ``left`` counts the mutants that survived, had no test, or were suspicious; ``pending``
    those not checked yet. score = killed / (total - equivalent - pending).
    """
    by_module: dict[str, Counter] = defaultdict(Counter)
    survivors = []
    for name, state in sorted(status.items()):
        module = name.split(".x_")[0].split(".xǁ")[0]
        if state in KILLED:
            kind = "killed"
        elif state == "not checked":
            kind = "pending"
        elif name in equivalent:
            kind = "equivalent"
        else:
            kind = "left"
            survivors.append(f"  {name}: {state}")
        by_module[module][kind] += 1
        by_module[module]["total"] += 1
    cols = ("total", "killed", "equivalent", "left", "pending")
    rows = [f"{'module':24}" + "".join(f"{c:>11}" for c in cols) + f"{'score':>8}"]
    for module, c in sorted(by_module.items()):
        scored = c["total"] - c["equivalent"] - c["pending"]
        score = f"{100 * c['killed'] / scored:7.1f}%" if scored else "       -"
        rows.append(f"{module:24}" + "".join(f"{c[k]:11}" for k in cols) + score)
    if survivors:
        rows += ["", "not killed (survived, no tests or suspicious), not recorded as equivalent:"]
        rows += survivors
    return "\n".join(rows)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("target", choices=sorted(TARGETS))
    mode = parser.add_mutually_exclusive_group()
    mode.add_argument("--retest", action="store_true", help="test the survivors again")
    mode.add_argument("--report", action="store_true", help="only print the scores")
    parser.add_argument("--jobs", type=int, default=1, help="mutmut workers (default 1)")
    args = parser.parse_args(argv)
    try:
        target = TARGETS[args.target]
        work, _ = prepare(args.target)
        if not args.report:
            os.nice(10)
            run = [_mutmut(), "run", "--max-children", str(args.jobs)]
            # new and changed functions first (mutmut keeps every other result); named
            # patterns: every mutant they match, again (so --retest has nothing to add) ...
            subprocess.run(run + list(target.mutants), cwd=work, check=False)
            if args.retest and not target.mutants:
                # ... then the mutants that survived, against today's tests
                names = [n for n, s in results(work).items() if s not in KILLED | {"not checked"}]
                if names:
                    subprocess.run(run + names, cwd=work, check=False)
                else:
                    print("no survivors to test again")
        status = {n: s for n, s in results(work).items() if target.covers(n)}
        print(report(status, equivalents()))
    except (MutationSetupError, subprocess.CalledProcessError) as e:
        print(f"tools/mutation.py: {e}", file=sys.stderr)
        return 2
    return 0


if __name__ == "__main__":
    sys.exit(main())
