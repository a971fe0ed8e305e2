"""``[design] rules = "nec"`` plans the demo geometry end to end (NFPA 70 NEC 2023).

The site is the demo's geometry with its ``[design]`` switched to the NEC rule set: the NEC
insulation names and size lists are the rule set's defaults (90 °C conductors, 12–6 AWG PV wire,
6 AWG–1000 kcmil feeders), the breaker kind and the 60 Hz frequency follow the rule set.
"""

from __future__ import annotations

import re
import shutil
from pathlib import Path

import numpy as np
import pytest

from calc.nec.sizes import sizes_mm2
from routeplan.config import parse_design
from routeplan.errors import DesignError
from routeplan.pipeline import plan

DEMO = Path(__file__).resolve().parents[2] / "demo_site"


def _nec_site(tmp_path: Path, extra: str = "") -> Path:
    site = tmp_path / "us"
    shutil.copytree(DEMO, site)
    toml = (site / "site.toml").read_text(encoding="utf-8")
    toml = toml.replace('rules = "iec"', 'rules = "nec"' + extra)
    # the demo's IEC choices: sizes in mm², XLPE, IEC 60364-5-52 air arrangements, IEC breaker
    for table in ("sizes_mm2", "insulation", "air_arrangement"):
        toml = re.sub(rf"\n\[design\.{table}\].*?\n\n", "\n\n", toml, flags=re.S)
    toml = re.sub(r"\n(marking|ac_breaker_device|frequency_hz) = [^\n]*", "", toml)
    (site / "site.toml").write_text(toml, encoding="utf-8")
    return site


@pytest.fixture(scope="module")
def nec_plan(tmp_path_factory):
    return plan(_nec_site(tmp_path_factory.mktemp("nec")))


def test_config_takes_the_rule_sets_defaults():
    cfg, problems = parse_design({"design": {"rules": "nec"}})
    assert not problems
    assert cfg["ac_breaker_device"] == "nec240.6a" and cfg["frequency_hz"] == 60.0
    assert cfg.insulation == {"string": "PV", "subarray": "90C", "array": "90C", "ac": "90C"}
    assert cfg["marking"] == "us"
    cfg, problems = parse_design({"design": {"rules": "nec", "insulation": {"ac": "XLPE"}}})
    assert [p.message for p in problems] == ["'XLPE'; expected one of 90C, 75C, 60C, PV"]
    cfg, problems = parse_design({"design": {"rules": "nec", "ac_breaker_device": "iec60898-1"}})
    assert "not a breaker of rules 'nec'" in problems[0].message


def test_demo_geometry_plans_under_nec_in_awg_and_kcmil(nec_plan):
    r = nec_plan.sizing
    assert r.rules == "nec"
    # every size is an NEC size (Chapter 9 Table 8), none an IEC 60228 one
    assert np.isin(np.round(r.size_mm2, 6), np.round(sizes_mm2(), 6)).all()
    # 690.8(B): the uncorrected condition is evaluated for every circuit and never exceeded
    assert np.isfinite(r.terminal_required_a).all()
    ok = r.ok
    assert (r.terminal_required_a[ok] <= r.terminal_ampacity_a[ok] * (1 + 1e-9)).all()
    assert (r.utilisation >= r.terminal_required_a / r.terminal_ampacity_a - 1e-12).all()
    # the demo's trenches are direct-buried: every circuit in them carries the review note
    buried = r.governing_env == "D2"
    assert buried.any()
    assert all("Table 310.16" in n and "review" in n for n in r.note[buried])


def test_engineered_buried_rating_is_refused_naming_the_key(tmp_path):
    site = _nec_site(tmp_path, '\nburied_rating = "engineered"')
    # one problem, one line, naming site.toml's [design] (the CLI prints it and exits 2)
    with pytest.raises(DesignError, match="buried_rating = 'engineered'") as exc:
        plan(site)
    assert "\n" not in str(exc.value)


@pytest.mark.parametrize(
    ("extra", "rules", "message"),
    [
        # NEC 2023 110.14(C): terminations are rated 60, 75 or 90 °C
        ("\nterminal_temp_c = 80.0", "nec", "terminal_temp_c must be 60, 75 or 90"),
        ("\nterminal_temp_c = 90.0", "iec", "terminal_temp_c applies to rules 'nec' only"),
        ('\nburied_rating = "engineered"', "nec", "buried_rating = 'engineered'"),
    ],
)
def test_a_refused_nec_setting_is_named_by_its_key(tmp_path, extra, rules, message):
    site = _nec_site(tmp_path, extra)
    if rules != "nec":
        toml = site / "site.toml"
        toml.write_text(toml.read_text().replace('rules = "nec"', f'rules = "{rules}"'))
    with pytest.raises(DesignError) as exc:
        plan(site)
    [problem] = exc.value.problems
    assert problem.feature_id == "design." + extra.split("=")[0].strip()
    assert problem.message.startswith(message)


def test_an_unknown_breaker_device_is_one_problem_under_nec():
    """A device no rule set knows is named once (with every known device), not a second time
    as "not a breaker of rules 'nec'" about the default put in its place."""
    _, problems = parse_design({"design": {"rules": "nec", "ac_breaker_device": "bogus"}})
    lines = [str(p) for p in problems if p.feature_id == "design.ac_breaker_device"]
    assert len(lines) == 1 and "'bogus'" in lines[0], lines
