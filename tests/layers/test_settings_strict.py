"""Strict checks of the parts of site.toml that ``layers`` reads, and bounds on attributes.

``[site]``, ``[modules.<key>]`` and ``[layers]``: an unknown key is a problem naming the dotted
key with the closest known name; a wrong type names the key and the type expected.
"""

from __future__ import annotations

import math
import tomllib

import pytest

import layers
from layers.validate import FIELDS, MODULE_KEYS_OPTIONAL
from tests.conftest import SITE_TOML, base_frames, write_site


def problems(toml: str, frames=None) -> list[str]:
    """Every problem ``build_site`` finds for the base site with this site.toml."""
    with pytest.raises(layers.SiteError) as info:
        layers.build_site(base_frames() if frames is None else frames, tomllib.loads(toml))
    return [str(p) for p in info.value.problems]


def test_base_site_is_valid():
    site = layers.build_site(base_frames(), tomllib.loads(SITE_TOML))
    assert site.name == "Test site"


@pytest.mark.parametrize(
    ("old", "new", "message"),
    [
        (
            "max_fuse_a = 25",
            "max_fuse = 15",
            "site.toml 'modules.mod1.max_fuse': unknown key; did you mean 'max_fuse_a'?",
        ),
        (
            'name = "Test site"',
            'name = "Test site"\ncrss = "EPSG:32633"',
            "site.toml 'site.crss': unknown key; did you mean 'crs'?",
        ),
        (
            'name = "Test site"',
            'name = "Test site"\nowner = "someone"',
            "site.toml 'site.owner': unknown key; expected one of name, crs, source_crs",
        ),
        (
            'name = "Test site"',
            "name = 7",
            "site.toml 'site.name': must be a string, not an integer",
        ),
        (
            'name = "Test site"',
            "crs = 32633",
            "site.toml 'site.crs': must be a string such as \"EPSG:32633\", not an integer",
        ),
        (
            'name = "Test site"',
            "source_crs = true",
            "site.toml 'site.source_crs': must be a string such as \"EPSG:32633\", not a boolean",
        ),
        (
            "isc_a = 13.0",
            "isc_a = true",  # a boolean is never a number
            "site.toml 'modules.mod1.isc_a': must be a number or a quantity such as '25 A', "
            "not a boolean",
        ),
        (
            "isc_a = 13.0",
            'isc_a = "13 V"',
            "site.toml 'modules.mod1.isc_a': '13 V' is not a quantity in A: "
            "V cannot be converted to A",
        ),
        (
            "per_string = 26",
            "per_string = 26.5",
            "site.toml 'modules.mod1.per_string': 26.5 must be a whole number",
        ),
        (
            "max_fuse_a = 25",
            "max_fuse_a = 25\npmax_w = -1",
            "site.toml 'modules.mod1.pmax_w': -1 must be > 0",
        ),
        (
            "max_fuse_a = 25",
            "max_fuse_a = [25]",
            "site.toml 'modules.mod1.max_fuse_a': must be a number or a quantity such as "
            "'25 A', not an array",
        ),
    ],
)
def test_site_and_module_keys(old, new, message):
    assert old in SITE_TOML
    assert message in problems(SITE_TOML.replace(old, new))


def test_whole_float_per_string_is_taken_as_an_integer():
    site = layers.build_site(
        base_frames(), tomllib.loads(SITE_TOML.replace("per_string = 26", "per_string = 26.0"))
    )
    assert site.modules["mod1"].per_string == 26
    assert isinstance(site.modules["mod1"].per_string, int)


def test_optional_module_keys_are_numbers_in_extra():
    assert MODULE_KEYS_OPTIONAL == (
        "max_fuse_a",
        "pmax_w",
        "bifaciality",
        "isc_bifacial_a",
        "voc_temp_coeff_pct_per_c",
    )
    toml = SITE_TOML.replace("max_fuse_a = 25", 'max_fuse_a = 25\npmax_w = "0.535 kW"')
    module = layers.build_site(base_frames(), tomllib.loads(toml)).modules["mod1"]
    assert module.extra == {"pmax_w": 535.0}  # kilo = 1e3 (SI Brochure 9th ed., Table 7)


@pytest.mark.parametrize(
    ("line", "message"),
    [
        ("bifaciality = 1.2", "'modules.mod1.bifaciality': 1.2 must be within 0–1"),
        ("bifaciality = -0.1", "'modules.mod1.bifaciality': -0.1 must be within 0–1"),
        (
            "isc_bifacial_a = 12.0",
            "'modules.mod1.isc_bifacial_a': 12 is below isc_a 13 (the bifacial Isc includes "
            "the rear side's gain)",
        ),
    ],
)
def test_bifacial_module_keys(line, message):
    toml = SITE_TOML.replace("max_fuse_a = 25", f"max_fuse_a = 25\n{line}")
    assert problems(toml) == [f"site.toml {message}"]


def test_bifacial_module_keys_are_read():
    toml = SITE_TOML.replace("max_fuse_a = 25", "max_fuse_a = 25\nbifaciality = 0\n")
    module = layers.build_site(base_frames(), tomllib.loads(toml)).modules["mod1"]
    assert module.bifaciality == 0.0  # 0 is allowed: a monofacial module
    assert math.isnan(module.isc_bifacial_a)
    assert module.max_fuse_a == 25.0


@pytest.mark.parametrize(
    ("toml", "message"),
    [
        (
            'site = "Test"\n' + SITE_TOML.replace('[site]\nname = "Test site"\n', ""),
            "site.toml 'site': must be a table ([site]), not a string",
        ),
        (
            "modules = 3\n" + SITE_TOML.split("[modules.mod1]")[0],
            "site.toml 'modules': must be tables [modules.<key>] (one per module type), "
            "not an integer",
        ),
        (
            SITE_TOML.split("[modules.mod1]")[0] + "[modules]\nmod1 = 13.0\n",
            "site.toml 'modules.mod1': must be a table ([modules.mod1]), not a float",
        ),
    ],
)
def test_wrong_typed_tables(toml, message):
    assert message in problems(toml)


def test_every_problem_at_once():
    toml = (
        SITE_TOML.replace("max_fuse_a = 25", "max_fuse = 15")
        .replace('name = "Test site"', 'name = "Test site"\ncrss = "x"')
        .replace("per_string = 26", "per_string = 2.5")
    )
    found = problems(toml)
    for key in ("modules.mod1.max_fuse", "site.crss", "modules.mod1.per_string"):
        assert any(f"site.toml '{key}':" in p for p in found), key


def test_byte_order_mark_is_accepted(tmp_path):
    root = write_site(tmp_path / "s")
    (root / "site.toml").write_bytes(b"\xef\xbb\xbf" + SITE_TOML.encode("utf-8"))
    assert layers.read_site(root).name == "Test site"


def test_site_toml_in_another_encoding_is_one_problem(tmp_path):
    root = write_site(tmp_path / "s")
    (root / "site.toml").write_bytes(SITE_TOML.replace("Test site", "Tést").encode("latin-1"))
    with pytest.raises(layers.SiteError) as info:
        layers.read_site(root)
    assert str(info.value.problems[0]).startswith("site.toml: cannot be parsed: not UTF-8 text")


@pytest.mark.parametrize(
    ("toml", "message"),
    [
        (
            SITE_TOML + '[layers]\ngird = "grid.geojson"\n',
            "site.toml 'layers.gird': unknown layer; did you mean 'grid'?",
        ),
        (
            "layers = 4\n" + SITE_TOML,
            "site.toml 'layers': [layers] must be a table of layer = 'file', not an integer",
        ),
        (
            SITE_TOML + "[layers]\ngrid = 4\n",
            "site.toml 'layers.grid': must be a file name, not an integer",
        ),
        (
            SITE_TOML + '[layers]\ngrid = ""\n',
            "site.toml 'layers.grid': must be a file name, not an empty string",
        ),
    ],
)
def test_layers_table(tmp_path, toml, message):
    root = write_site(tmp_path / "s", toml=toml)
    with pytest.raises(layers.SiteError) as info:
        layers.read_site(root)
    assert message in [str(p) for p in info.value.problems]


def test_site_tables_constant():
    assert layers.SITE_TABLES == ("site", "modules", "layers")


# ---- bounds on attributes ------------------------------------------------------------------


@pytest.mark.parametrize(
    ("layer", "column", "value", "feature", "message"),
    [
        ("rows", "strings", 1e9, "R1", "strings is 1e+09, must be ≤ 1000"),
        ("rows", "strings", 1001, "R1", "strings is 1001, must be ≤ 1000"),
        ("combiners", "max_strings", 20_000, "CB1", "max_strings is 20000, must be ≤ 10000"),
        ("trenches", "max_circuits", 1e18, "T1", "max_circuits is 1e+18, must be ≤ 10000"),
        ("inverters", "ac_kva", 1e300, "INV1", "ac_kva is 1e+300, must be ≤ 100000"),
        (
            "trenches",
            "depth_m",
            "9**9**9 mm",  # a unit string is parsed, never evaluated
            "T1",
            "depth_m is '9**9**9 mm', expected a number or a quantity such as '800 mm'",
        ),
    ],
)
def test_attribute_bounds(layer, column, value, feature, message):
    frames = base_frames()
    frame = frames[layer]
    frame[column] = frame[column].astype(object) if column in frame else None
    frame.loc[0, column] = value
    assert f"{layer} {feature!r}: {message}" in problems(SITE_TOML, frames)


def test_bounds_are_inclusive():
    frames = base_frames()
    frames["rows"]["strings"] = [1000, 2]
    frames["combiners"]["max_strings"] = [None]
    site = layers.build_site(frames, tomllib.loads(SITE_TOML))
    assert site.rows["strings"].tolist() == [1000, 2]
    assert next(f.high for f in FIELDS["rows"] if f.name == "strings") == 1000
