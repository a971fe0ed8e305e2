"""Strict site.toml settings through the command line: typos, wrong types, unsafe quantities and
absurd sizes are one line each naming the key, exit status 2, never a traceback, and the
user's site files are left byte for byte as they were.
"""

from __future__ import annotations

import tomllib
from pathlib import Path

import pytest
from typer.testing import CliRunner

from routeplan.cli import app
from routeplan.config import DESIGN_TABLES, MAX_SIZES, parse_design
from routeplan.synth import MW_RANGE, SEED_LIMIT, generate_site
from tests.conftest import SITE_TOML, base_frames, write_site

runner = CliRunner()
WITHOUT_DESIGN = SITE_TOML.replace("[design]\nsnap_m = 20.0\n", "")
assert WITHOUT_DESIGN != SITE_TOML


def in_design(line: str) -> str:
    return SITE_TOML.replace("[design]\n", f"[design]\n{line}\n")


def snapshot(root: Path) -> dict[str, bytes]:
    return {str(p.relative_to(root)): p.read_bytes() for p in sorted(root.rglob("*"))}


def run_check(root: Path) -> tuple[int, list[str]]:
    """``routeplan check root``: (exit code, error lines); the site's files must not change."""
    before = snapshot(root)
    result = runner.invoke(app, ["check", str(root)])
    assert snapshot(root) == before  # the user's files, byte for byte, and no new file
    assert "Traceback" not in result.output + result.stderr
    assert result.exception is None or isinstance(result.exception, SystemExit)
    return result.exit_code, [ln for ln in result.stderr.splitlines() if ln.startswith("error:")]


# ---- every case a reviewer found, through `routeplan check` --------------------------------


@pytest.mark.parametrize(
    ("toml", "line"),
    [
        pytest.param(
            SITE_TOML + "\n[allowance]\nslack_pct = 5\n",
            "error: site.toml 'allowance': unknown table; did you mean 'allowances'?",
            id="allowance",
        ),
        pytest.param(
            SITE_TOML.replace("max_fuse_a = 25", "max_fuse = 15"),
            "error: site.toml 'modules.mod1.max_fuse': unknown key; did you mean 'max_fuse_a'?",
            id="max_fuse",
        ),
        pytest.param(
            SITE_TOML.replace('name = "Test site"', 'name = "Test site"\ncrss = "EPSG:32633"'),
            "error: site.toml 'site.crss': unknown key; did you mean 'crs'?",
            id="crss",
        ),
        pytest.param(
            in_design("max_parallel = 4.7"),
            "error: site.toml 'design.max_parallel': 4.7 must be a whole number",
            id="max_parallel",
        ),
        pytest.param(
            in_design('depth_m = "9**9**9 mm"'),
            "error: site.toml 'design.depth_m': '9**9**9 mm' is not a quantity: "
            "expected '<number> <unit>', e.g. '800 mm'",
            id="depth_m-expression",
        ),
        pytest.param(
            'design = "rules"\n' + WITHOUT_DESIGN,
            "error: site.toml 'design': must be a table ([design]), not a string",
            id="design-string",
        ),
        pytest.param(
            "allowances = 5\n" + SITE_TOML,
            "error: site.toml 'allowances': must be a table ([allowances]), not an integer",
            id="allowances-integer",
        ),
        pytest.param(
            in_design("drop_pct = 5"),
            "error: site.toml 'design.drop_pct': must be a table ([design.drop_pct]), "
            "not an integer",
            id="drop_pct-integer",
        ),
        pytest.param(
            in_design("sizes_mm2 = 4"),
            "error: site.toml 'design.sizes_mm2': must be a table ([design.sizes_mm2]), "
            "not an integer",
            id="sizes_mm2-integer",
        ),
        pytest.param(
            in_design('material = "Cu"'),
            "error: site.toml 'design.material': must be a table ([design.material]), not a string",
            id="material-string",
        ),
    ],
)
def test_reviewer_cases_exit_2_naming_the_key(tmp_path, toml, line):
    code, errors = run_check(write_site(tmp_path / "s", toml=toml))
    assert code == 2
    assert errors == [line]


def test_strings_1e9_on_a_row_exits_2(tmp_path):
    frames = base_frames()
    frames["rows"]["strings"] = [1e9, 3]
    frames["combiners"]["max_strings"] = [None]
    code, errors = run_check(write_site(tmp_path / "s", frames))
    assert code == 2
    assert errors == ["error: rows 'R1': strings is 1e+09, must be ≤ 1000"]


def test_unit_expression_as_a_trench_attribute_exits_2(tmp_path):
    frames = base_frames()
    frames["trenches"]["depth_m"] = ["9**9**9 mm", "800 mm"]
    root = write_site(tmp_path / "s", frames)
    code, errors = run_check(root)
    assert code == 2
    assert errors == [
        "error: trenches 'T1': depth_m is '9**9**9 mm', expected a number or a quantity "
        "such as '800 mm'"
    ]


@pytest.mark.parametrize(
    "toml",
    [
        pytest.param(SITE_TOML + "\n[allowance]\nslack_pct = 5\n", id="allowance"),
        pytest.param(in_design('depth_m = "9**9**9 mm"'), id="depth_m-expression"),
        pytest.param('design = "rules"\n' + WITHOUT_DESIGN, id="design-string"),
    ],
)
def test_plan_refuses_the_same_settings(tmp_path, toml):
    root = write_site(tmp_path / "s", toml=toml)
    before = snapshot(root)
    result = runner.invoke(app, ["plan", str(root), "--out", str(tmp_path / "out"), "-q"])
    assert result.exit_code == 2
    assert snapshot(root) == before
    assert result.stderr.startswith("error: site.toml '")
    assert "Traceback" not in result.output + result.stderr


def test_every_settings_problem_in_one_run(tmp_path):
    toml = (
        in_design("max_parallel = 4.7\nmaterial = 'Cu'")
        .replace("max_fuse_a = 25", "max_fuse = 15")
        .replace('name = "Test site"', 'name = "Test site"\ncrss = "EPSG:32633"')
        + "\n[allowance]\nslack_pct = 5\n"
    )
    code, errors = run_check(write_site(tmp_path / "s", toml=toml))
    assert code == 2
    keys = {line.split("'")[1] for line in errors}
    assert len(errors) == 5
    assert keys == {
        "allowance",
        "modules.mod1.max_fuse",
        "site.crss",
        "design.max_parallel",
        "design.material",
    }


def test_byte_order_mark_site_checks_clean(tmp_path):
    root = write_site(tmp_path / "s")
    (root / "site.toml").write_bytes(SITE_TOML.encode("utf-8-sig"))  # EF BB BF first
    before = snapshot(root)
    result = runner.invoke(app, ["check", str(root)])
    assert result.exit_code == 0, result.stderr
    assert "ok: no problems found" in result.output
    assert snapshot(root) == before


# ---- parse_design ---------------------------------------------------------------------------


def test_whole_float_is_taken_as_an_integer():
    cfg, problems = parse_design({"design": {"max_parallel": 4.0, "max_circuits": 12.0}})
    assert problems == []
    assert cfg["max_parallel"] == 4 and isinstance(cfg["max_parallel"], int)
    assert cfg["max_circuits"] == 12


@pytest.mark.parametrize(
    ("config", "where", "message"),
    [
        ({"design": {"max_circuits": 2.5}}, "design.max_circuits", "2.5 must be a whole number"),
        ({"design": {"max_parallel": True}}, "design.max_parallel", "must be a number, not a "),
        ({"design": {"snap_m": [1]}}, "design.snap_m", "must be a number or a quantity such as"),
        ({"design": {"laying": 1}}, "design.laying", "must be a string, one of direct, duct"),
        ({"design": {"rules": "IEC"}}, "design.rules", "'IEC'; expected one of iec, nec"),
        ({"design": {"dept_m": 1}}, "design.dept_m", "unknown key; did you mean 'depth_m'?"),
        ({"design": {"materials": {}}}, "design.materials", "did you mean 'material'?"),
        ({"design": {"depth_m": {"x": 1}}}, "design.depth_m", "must be a number or a quantity"),
        ({"allowances": {"slack": 5}}, "allowances.slack", "did you mean 'slack_pct'?"),
        ({"allowances": {"slack_pct": "5 m"}}, "allowances.slack_pct", "is not a quantity in %"),
        ({"design": {"material": {"ac": "al"}}}, "design.material.ac", "'al'; expected one of"),
        ({"design": {"material": {"ac": 1}}}, "design.material.ac", "must be a string, one of"),
        ({"design": {"material": {"dc": "Cu"}}}, "design.material.dc", "unknown kind; expected"),
        ({"design": {"insulation": []}}, "design.insulation", "must be a table"),
        ({"design": {"drop_pct": {"acc": 1}}}, "design.drop_pct.acc", "did you mean 'ac'?"),
        ({"design": {"drop_pct": {"ac": False}}}, "design.drop_pct.ac", "not a boolean"),
        ({"design": {"sizes_mm2": {"ac": 95}}}, "design.sizes_mm2.ac", "must be an array"),
        ({"design": {"sizes_mm2": {"ac": "95"}}}, "design.sizes_mm2.ac", "must be an array"),
        ({"design": {"sizes_mm2": {"ac": []}}}, "design.sizes_mm2.ac", "non-empty array"),
        ({"design": {"sizes_mm2": {"ac": [95, "x"]}}}, "design.sizes_mm2.ac", "size 2: 'x'"),
        ({"design": {"sizes_mm2": {"ac": [95, 0]}}}, "design.sizes_mm2.ac", "size 2: 0 mm²"),
        (
            {"design": {"sizes_mm2": {"ac": [16] * (MAX_SIZES + 1)}}},
            "design.sizes_mm2.ac",
            f"{MAX_SIZES + 1} sizes; at most {MAX_SIZES}",
        ),
        ({"desing": {}}, "desing", "unknown table; did you mean 'design'?"),
        ({"module": {}}, "module", "unknown table; did you mean 'modules'?"),
        ({"zzz": 1}, "zzz", "unknown key; expected one of site, modules, layers, design"),
    ],
)
def test_design_problems_name_the_key(config, where, message):
    _, problems = parse_design(config)
    found = [(p.feature_id, p.message) for p in problems]
    assert any(w == where and message in m for w, m in found), found
    assert all(p.layer == "site.toml" for p in problems)


def test_design_units_accepted():
    cfg, problems = parse_design(
        {
            "design": {
                "sizes_mm2": {"string": ["4 mm²", "6 mm2", 10]},
                "clear_s": "200 ms",
                "fault_ka": 25,
            }
        }
    )
    assert problems == []
    assert cfg.sizes_mm2["string"] == (4.0, 6.0, 10.0)
    assert cfg["clear_s"] == 0.2  # milli = 1e-3 (SI Brochure 9th ed., Table 7)


def test_demo_site_settings_are_clean():
    config = tomllib.loads((Path(__file__).parents[2] / "demo_site" / "site.toml").read_text())
    _, problems = parse_design(config)
    assert problems == []
    assert set(config) <= {"site", "modules", "layers", *DESIGN_TABLES}


# ---- routeplan synth arguments --------------------------------------------------------------


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["--mw", "1e7"], "error: mw is 10000000.0; expected a capacity from 0.1 to 5,000 MWdc"),
        (["--mw", "0.05"], "error: mw is 0.05; expected a capacity from 0.1 to 5,000 MWdc"),
        (["--mw", "nan"], "error: mw is nan; expected a capacity from 0.1 to 5,000 MWdc"),
        (["--mw", "inf"], "error: mw is inf; expected a capacity from 0.1 to 5,000 MWdc"),
        (
            ["--mw", "5", "--seed", str(2**32)],
            "error: seed is 4294967296; expected an integer from 0 to 2**32 - 1",
        ),
        (
            ["--mw", "5", "--seed", "-1"],
            "error: seed is -1; expected an integer from 0 to 2**32 - 1",
        ),
        (
            ["--mw", "5", "--format", "shp"],
            "error: fmt is 'shp'; expected one of gpkg, geojson",
        ),
    ],
)
def test_synth_refuses_absurd_arguments(tmp_path, args, message):
    out = tmp_path / "site"
    result = runner.invoke(app, ["synth", *args, "--out", str(out)])
    assert result.exit_code == 2
    assert result.stderr.splitlines() == [message]
    assert not out.exists()  # refused before anything is written


def test_synth_range_limits_are_accepted(tmp_path):
    assert MW_RANGE == (0.1, 5_000.0)
    info = generate_site(MW_RANGE[0], SEED_LIMIT - 1, tmp_path / "small", fmt="geojson")
    assert info.strings >= 1
