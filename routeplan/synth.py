"""Synthetic ground-mount PV plants written in routeplan's site format.

:func:`generate_site` writes a complete site folder (``site.toml`` plus the layers ``rows``,
``combiners``, ``inverters``, ``trenches`` and ``grid``) for a plant of a requested DC
capacity; :func:`synth_site` builds the same site in memory, so tests need no files. The
plant is deterministic for a given seed, and its blocks collect DC in one of three ways
(``topology``, see *Topologies*).

Every site made here is an invented scenario: it describes no real place, project or
product. All numbers are invented demo values; where a comment calls one *typical*, it is
common practice, not a value taken from a standard. A design made with routeplan — from a
synthetic site or a real one — is a design aid, subject to local codes and to review by a
qualified, licensed person.

Plant layout
------------
The plant is built in a local frame (``a`` along the module rows, ``c`` across them) and
mapped to map axes at the end: tracker rows run north-south (``x = c, y = a``), fixed-tilt
tables east-west (``x = a, y = c``). Coordinates are metres of a UTM zone, offset to an
invented origin.

- **Block** (one inverter pad; typical 3.6-5 MWdc): ``n_lat`` (1 or 2) *laterals* across
  the block, each with a band of rows on either side. A *corridor* (internal track) splits
  the block into a left and a right half; the block *branch* trench runs along it and the
  inverter pad stands beside it. One band-half is a *group*; a group's rows, counted outward
  from the corridor, are split into contiguous chunks of at most ``max_strings`` strings,
  one combiner per chunk.
- **Laterals** (typical, common practice: string cables never share a trench with the
  feeders): a lateral is three parallel trenches. The *array lateral* on its centre line
  reaches the branch and carries only array (combiner) circuits. ``BAND_M`` to either side,
  one short *string lateral* per combiner runs along the near ends of its chunk's rows
  (which stop ``STUB_M`` short of it); it joins nothing but its combiner's *link*, a
  ``BAND_M`` cross trench to the array lateral. A string therefore shares its trench only
  with the strings on the same side of its own combiner (at most ``max_strings``, about
  half of them on any one stretch); the combiner stands between the rows' near ends and its
  string lateral, where its link starts. One combiner per block, the *end combiner* (the
  outermost of the first group), stands at the outer end of its chunk instead, as if kept
  by the block's edge road: all its strings run one way along its string lateral, up to
  ``max_strings`` on one stretch — the draft-layout shortcut that a design check should
  catch, so generated plants are mostly, not entirely, buildable.
- **Plant**: columns of blocks; a main road (the *spine* trench) crosses every column, with
  blocks north and south of it; each column's branch runs from the ring on one side to the
  ring on the other, crossing the spine; a *ring* trench along the perimeter road joins the
  branch ends and the spine's ends, so every route has a competing path. A lead from the
  spine's west (or south) end reaches the substation (the medium-voltage collection that
  would use it is outside the LV cable schedule).
- **Grid points**: each inverter skid feeds its own LV/MV transformer station, a grid point
  opposite its pad across the branch (typical, common practice: the LV AC link of a central
  inverter to its transformer is a few metres of parallel cables in air, not a trench run).
  The pad's outline has a *cable entry*, a vertex ``ENTRY_M`` proud of its side, facing the
  branch, so the pad and its transformer join the branch at one point: the AC circuit is
  its two stubs, sized in air, with ``max_parallel`` sets.
- Trenches are drawn split at every junction (crossings and T-junctions are shared end
  points); the rows and the equipment are not: the router taps them onto the laterals and
  the branches, which splits those into many segments.
- Ducts (``laying = "duct"``, with ``max_circuits``) where an array lateral crosses its
  block's track (sized for the cable sets of its array circuits, see ``FEEDER_SET_A``, plus
  spare ways) and where a branch crosses the main road (spare ways only: no circuit of this
  layout uses them); the ring leaves every optional attribute empty, so the ``[design]``
  defaults apply there.
- The plant is meant to be mostly buildable as generated: ``[design] max_parallel = 12``
  (central-inverter LV links), string laterals spaced 0.1 m, feeder trenches 0.25 m. The
  end combiners' strings fail where ``max_strings`` and the soil make their grouping too
  tight (at 1 GW, seed 1: 4,800 strings, about 7 % of the circuits, in the ``central`` and
  ``subarray`` topologies; 4,320 strings, about 6 %, in ``string``); how many varies with
  the size and the seed (an audit found 18 strings at 5 MW, seed 1), and some plan with none.
  Soil zones range up to dry sand (3.0 K·m/W, ``SOIL_K_CHOICES``).

Topologies
----------
The rows, the trenches (but for the duct banks' ways) and the grid points are the same in
every topology for a given seed; only the equipment differs (``TOPOLOGY_DESIGN`` gives each
its ``[design]`` table):

- ``central`` (the default): as above. Each combiner's array cable runs to the block's skid;
  the skid has one DC input, so the arrays are in parallel there and fused against each
  other's backfeed where the rules need it.
- ``subarray``: the same string combiners feed *recombiners* (sub-array combiners) at the
  skid instead: one per group of a 1-lateral block, one per lateral half of a 2-lateral
  block (four per block, about 1 MWdc each). They stand side by side, ``RECOMBINER_STEP_M``
  apart, on the pad's cable-entry line across the branch (between it and the transformer),
  so each joins the branch where the pad does: the *sub-array* cables follow the array
  cables' former routes, and each recombiner's array cable is its two stubs in air, a few
  metres. Each recombiner lands on its own DC input of the skid (``dc_inputs`` = its
  recombiners, the recombiner's ``input``): an array of about 70 strings could not be fused
  against the others' backfeed (the largest gPV rating is 630 A), so its sub-array cables
  are the ones fused, against the rest of their recombiner. Drop limits: sub-array 1.5 %
  (the long run), array 0.5 %.
- ``string``: a *string inverter* stands where each combiner would (same chunk of rows, id
  ``SI<block>-<n>``), and the central skid is gone: each inverter's AC circuit follows the
  former array route (link, lateral, branch) to the block's transformer station, which
  stays opposite the former pad. The inverter (one model per plant, invented ratings typical
  of 1500 V units) has an MPPT input per row of its fullest chunk and a string terminal per
  string of the fullest row; every row names its input (``input``: its rank among its
  inverter's rows, outward from the corridor), so a row's strings are in parallel on one
  input — string-fused where the IEC 62548 rule needs it, as at a combiner —, rated
  ``INPUT_A_PER_STRING`` and ``INPUT_ISC_A_PER_STRING`` per terminal. A row left without
  ``to`` (``unassigned_rows``) names no input and its strings are spread by the planner.
  The rating is the next ``STRING_INVERTER_KVA_STEP`` above ``max_strings`` strings at the
  plant's DC/AC ratio (225–350 kVA), at ``STRING_INVERTER_AC_V``; the lateral ducts
  have ways for ceil(Ib / ``AC_SET_A``) sets per inverter. The AC circuits of a block meet
  in its branch near the station (tens of cable sets in one trench: 2–3 parallel sets each,
  where a designer might split the trench or collect them in AC combiners first).
"""

from __future__ import annotations

import dataclasses
import itertools
import json
import math
import numbers
import tomllib
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import geopandas as gpd
import numpy as np
import pandas as pd
import pyogrio
import pyproj
import shapely

__all__ = [
    "FORMATS",
    "LAYERS",
    "MOUNTS",
    "MW_RANGE",
    "SEED_LIMIT",
    "TOPOLOGIES",
    "SynthInfo",
    "SynthSite",
    "generate_site",
    "synth_site",
]

#: layer names written, in writing order (the site format's names).
LAYERS: tuple[str, ...] = ("rows", "combiners", "inverters", "trenches", "grid")
#: output formats: one ``site.gpkg`` holding every layer, or one ``<layer>.geojson`` per layer.
FORMATS: tuple[str, ...] = ("gpkg", "geojson")
#: mounting structures: single-axis trackers (1 module in portrait) or fixed-tilt tables (2P).
MOUNTS: tuple[str, ...] = ("tracker", "fixed")
#: how a block collects its DC (see the module docstring): string combiners feeding a central
#: inverter skid; string combiners feeding sub-array combiners (recombiners) at the skid; rows
#: straight to string inverters.
TOPOLOGIES: tuple[str, ...] = ("central", "subarray", "string")
#: range of plant sizes [MWdc]. Below 0.1 MWdc a plant is a handful of strings (one string
#: is about 15 kWdc, so the size generated is off by up to ~15 %), no trial of utility-scale
#: routing. 5,000 MWdc is five times the benchmark's largest plant (1 GW): about 320,000
#: strings, generated in about a second, and planned with about five times the 1 GW run's
#: time and memory. A larger request (``--mw 1e7``: 640 million strings) would exhaust memory.
MW_RANGE: tuple[float, float] = (0.1, 5_000.0)
#: seeds are integers in [0, SEED_LIMIT): 2**32 seeds are plenty, and the seed is written into
#: site.toml (name and header), where a bounded integer stays short and exact.
SEED_LIMIT = 2**32

#: projected CRS of every synthetic site: WGS 84 / UTM zone 33N. The origin is invented.
PROJECTED_CRS = "EPSG:32633"
GEOGRAPHIC_CRS = "EPSG:4326"

# --- geometry of the layout [m]; typical, common practice values, invented for the demo ---
STUB_M = 3.0  # row near end to its string lateral (the row's tap stub)
COMBINER_OFFSET_M = 1.5  # combiner box to its string lateral, on the rows' side
BAND_M = 1.0  # array lateral (centre) to the string lateral of each band
CORRIDOR_M = 12.0  # internal block track: branch trench and inverter pad
PAIR_GAP_M = 6.0  # track between back-to-back bands of two laterals in one block
BLOCK_GAP_M = 8.0  # road between blocks stacked along the rows
COLUMN_GAP_M = 10.0  # road between block columns
ROAD_HALF_M = 8.0  # half width of the main road strip; the spine runs on its centre line
RING_MARGIN_M = 10.0  # perimeter road: ring trench to the outermost rows
LEAD_M = 50.0  # spine end to the substation fence
PAD_LENGTH_M, PAD_WIDTH_M = 12.0, 2.5  # inverter skid pad footprint
PAD_OFFSET_M = 3.5  # pad centre line to the branch trench; the transformer stands mirrored
ENTRY_M = 0.25  # cable entry of the pad: a vertex of its outline that points at the branch
STRING_LATERAL_OVERHANG_M = 1.0  # string lateral beyond its outermost rows' taps
MODULE_GAP_M = 0.02  # clearance between neighbouring modules on a row
DRIVE_GAP_M = 1.0  # tracker drive/slew gap in a row
RECOMBINER_STEP_M = 0.7  # recombiner cabinets side by side, from the branch to the transformer

# --- string inverters (topology "string"); invented ratings, typical of 1500 V units ---
# one MPPT input per row (tracker or table): the input has a string terminal for each string
# of the plant's fullest row, rated per terminal for either module (Imp ≤ 13.72 A, Isc ≤ 14.62 A)
INPUT_A_PER_STRING = 15.0  # maximum operating input current per string terminal [A]
INPUT_ISC_A_PER_STRING = 20.0  # maximum input short-circuit current per string terminal [A]
STRING_INVERTER_KVA_STEP = 25.0  # ratings offered in 25 kVA steps
STRING_INVERTER_AC_V = 800.0  # output, line to line [V]: the usual one of 1500 V units

#: invented module types (STC datasheet values), typical of large-format crystalline modules.
#: ``per_string`` keeps the string's open-circuit voltage near 1360 V at STC, leaving margin
#: under a 1500 V DC system limit at cold temperatures (typical, common practice).
MODULE_TYPES: dict[str, dict[str, float | int]] = {
    "m580": {
        "pmax_w": 580.0,
        "isc_a": 14.62,
        "imp_a": 13.72,
        "voc_v": 50.4,
        "vmp_v": 42.3,
        "per_string": 27,
        "max_fuse_a": 25.0,
        "voc_temp_coeff_pct_per_c": -0.25,
    },
    "m600": {
        "pmax_w": 600.0,
        "isc_a": 14.38,
        "imp_a": 13.61,
        "voc_v": 52.4,
        "vmp_v": 44.1,
        "per_string": 26,
        "max_fuse_a": 30.0,
        "voc_temp_coeff_pct_per_c": -0.26,
    },
}
#: module outline [m] (length, width) per module type; invented, typical sizes.
MODULE_SIZE_M: dict[str, tuple[float, float]] = {"m580": (2.278, 1.134), "m600": (2.382, 1.134)}

#: duct bank sizes offered at road crossings (2x2 ... 6x8 ways); typical, common practice.
DUCT_BANKS: tuple[int, ...] = (4, 6, 9, 12, 16, 24, 32, 48)
#: derated capacity of one array cable set assumed when sizing duct banks [A]: a 240-300 mm²
#: Al feeder in a spaced group (typical, common practice); an array circuit of n strings is
#: given ceil(1.25 × Isc × n / FEEDER_SET_A) ways.
FEEDER_SET_A = 180.0
#: derated capacity of one AC cable set of a string inverter assumed when sizing duct banks [A]:
#: a 240-300 mm² Al three-phase set in a trench crowded with the block's other AC circuits
#: (typical, common practice); an AC circuit of rated current Ib is given ceil(Ib / AC_SET_A)
#: ways.
AC_SET_A = 100.0
#: soil thermal resistivities drawn per soil zone [K·m/W]; typical range of site surveys.
SOIL_K_CHOICES: tuple[float, ...] = (1.0, 1.2, 1.5, 2.0, 2.5, 3.0)

#: trench kinds: id prefix, depth_m, laying, spacing_m (typical, common practice; NaN/None =
#: left empty so the ``[design]`` default applies).
TRENCH_KINDS: dict[str, tuple[str, float, str | None, float]] = {
    "spine": ("TS", 1.0, "direct", 0.2),  # inverter AC circuits along the main road
    "lead": ("TSS", 1.0, "duct", 0.2),  # into the substation
    "branch": ("TB", 0.8, "direct", 0.25),  # block column: array circuits to the pad
    "branch_duct": ("TBD", 1.0, "duct", 0.25),  # branch under the main road
    "lateral": ("TL", 0.8, "direct", 0.25),  # array lateral: array circuits, spaced
    "lateral_duct": ("TLD", 0.8, "duct", 0.25),  # array lateral under the block's track
    "string_lateral": ("TSL", 0.6, "direct", 0.1),  # one combiner's strings, spaced
    "link": ("TCL", 0.8, "direct", 0.25),  # combiner to its array lateral: one array circuit
    "ring": ("TR", math.nan, None, math.nan),  # perimeter road: design defaults
}

#: site.toml [design] and [allowances]: the site format's example values.
DESIGN: dict[str, Any] = {
    "rules": "iec",
    "ground_temp_c": 25.0,
    "air_temp_c": 35.0,
    "soil_k_m_w": 1.5,
    "depth_m": 0.8,
    "laying": "direct",
    "spacing_m": 0.0,
    "snap_m": 30.0,
    "power_factor": 1.0,
    "max_parallel": 12,  # central-inverter LV links: many parallel sets (typical)
    "min_ambient_c": -5.0,  # the invented site's record low (strings stay below 1500 V Voc)
    "material": {"string": "Cu", "array": "Al", "ac": "Al"},
    "drop_pct": {"string": 1.0, "array": 1.5, "dc_total": 2.0, "ac": 1.0},
    # feeders at an inverter skid run on cable ladders, one layer, not bunched (typical)
    "air_arrangement": {"array": "ladder", "ac": "ladder"},
}
ALLOWANCES: dict[str, float] = {"termination_m": 1.5, "slack_pct": 3.0}
#: site.toml [design] per topology: the central plant's, with the sub-array cables (Al, on
#: ladders in air like the array cables; the long run from a string combiner to the skid takes
#: the array cable's former 1.5 % and the few metres of array cable from the recombiner 0.5 %)
#: or without the array and sub-array keys for string inverters.
TOPOLOGY_DESIGN: dict[str, dict[str, Any]] = {
    "central": DESIGN,
    "subarray": {
        **DESIGN,
        "material": {"string": "Cu", "subarray": "Al", "array": "Al", "ac": "Al"},
        "drop_pct": {"string": 1.0, "subarray": 1.5, "array": 0.5, "dc_total": 2.0, "ac": 1.0},
        "air_arrangement": {"subarray": "ladder", "array": "ladder", "ac": "ladder"},
    },
    "string": {
        **DESIGN,
        "material": {"string": "Cu", "ac": "Al"},
        "drop_pct": {"string": 1.0, "dc_total": 2.0, "ac": 1.0},
        "air_arrangement": {"ac": "ladder"},
    },
}
#: one line on each topology for the site.toml header
TOPOLOGY_NOTES: dict[str, str] = {
    "central": "string combiners feed one inverter skid per block",
    "subarray": "string combiners feed recombiners at the skid",
    "string": "rows feed multi-input string inverters along the laterals",
}


@dataclass(frozen=True)
class SynthInfo:
    """What :func:`synth_site` / :func:`generate_site` made.

    ``mwdc`` is the DC capacity actually generated [MW] (strings x modules per string x
    module ``pmax_w``); it differs from the request by the rounding to whole strings and
    identical blocks. ``trenches`` counts trench features (not noded segments).
    ``combiners`` counts every combiner feature, the ``recombiners`` (sub-array combiners)
    among them; ``inverters`` counts central skids or string inverters. ``circuits``: the
    circuits the plan of the site holds by kind (``string``, ``subarray``, ``array``,
    ``ac``). ``files`` lists the files written (empty for an in-memory site).
    """

    mwdc: float
    crs: str
    rows: int
    strings: int
    combiners: int
    inverters: int
    trenches: int
    blocks: int
    mount: str
    module: str
    unassigned_rows: int
    topology: str
    recombiners: int
    circuits: dict[str, int]
    files: tuple[str, ...] = ()


@dataclass(frozen=True)
class SynthSite:
    """An in-memory synthetic site: ``frames`` (layer name -> GeoDataFrame, in :data:`LAYERS`
    order), the ``site.toml`` text, and its :class:`SynthInfo`."""

    frames: dict[str, gpd.GeoDataFrame]
    toml: str
    info: SynthInfo


@dataclass(frozen=True)
class _Design:
    """The seeded choices of one plant (see :func:`_draw_design`)."""

    mount: str
    module: str
    pitch_m: float  # row to row, across the rows
    row_depth_m: float  # fixed tables: footprint depth across the row (0 for trackers)
    strings_per_row: int  # full rows
    max_strings: int  # combiner inputs
    block_mw: float  # target block size [MWdc]
    dc_ac: float  # DC/AC ratio of a block
    ac_v: float  # inverter output, line to line [V]
    aspect: float  # plant extent across / along the rows
    soil_k: tuple[float, ...]  # per soil zone, in order along the spine [K·m/W]
    origin: tuple[float, float]  # easting, northing of the local frame's origin [m]


@dataclass(frozen=True)
class _Block:
    """One block in its local frame (``a`` along rows, ``c`` across, origin at a corner)."""

    a_len: float
    c_len: float
    corridor_c: float  # branch centre line
    lateral_a: np.ndarray  # (n_lat,)
    row_a_near: np.ndarray  # row end next to its lateral
    row_a_far: np.ndarray
    row_c: np.ndarray
    row_strings: np.ndarray
    row_combiner: np.ndarray  # index into the block's combiners
    row_central: np.ndarray  # bool: the row nearest its combiner (one per combiner)
    comb_a: np.ndarray
    comb_c: np.ndarray
    comb_strings: np.ndarray
    comb_half: np.ndarray  # index of the lateral half (2 * lateral + right) it is on
    comb_lat: np.ndarray  # index of its lateral
    comb_side: np.ndarray  # its band: -1 before the lateral, +1 after
    comb_group: np.ndarray  # its group: 4 * lateral + 2 * (band after) + right half
    comb_c0: np.ndarray  # extent of its string lateral across the rows (c)
    comb_c1: np.ndarray
    pad_a: float
    pad_c: float


def _check_option(name: str, value: Any, choices: Sequence[str]) -> str:
    """``value`` if it is one of ``choices``, else ValueError listing the valid choices."""
    if value not in choices:
        raise ValueError(f"{name} is {value!r}; expected one of {', '.join(choices)}")
    return value


def _draw_design(rng: np.random.Generator, mount: str | None) -> _Design:
    """Draw a plant's design choices; always the same draws in the same order."""
    drawn_mount = str(rng.choice(MOUNTS, p=[0.6, 0.4]))
    module = str(rng.choice(sorted(MODULE_TYPES)))
    tracker_pitch = round(float(rng.uniform(5.5, 7.0)), 1)  # 1P trackers, GCR ~0.35-0.4
    tracker_spr = int(rng.choice([2, 3], p=[0.25, 0.75]))
    fixed_pitch = round(float(rng.uniform(8.5, 11.0)), 1)  # 2P portrait tables
    fixed_spr = int(rng.choice([3, 4]))
    tilt_deg = float(rng.uniform(20.0, 30.0))
    max_strings = int(rng.choice([16, 20, 24], p=[0.2, 0.3, 0.5]))  # combiner inputs
    block_mw = float(rng.uniform(3.6, 5.0))
    dc_ac = round(float(rng.uniform(1.15, 1.25)), 2)
    ac_v = float(rng.choice([630.0, 660.0, 690.0, 800.0]))
    aspect = float(rng.uniform(0.7, 1.6))
    n_zones = int(rng.integers(1, 4))
    soil_k = tuple(float(k) for k in rng.choice(SOIL_K_CHOICES, size=n_zones))
    origin = (float(rng.integers(420, 580) * 1000), float(rng.integers(4300, 4700) * 1000))
    mount = drawn_mount if mount is None else mount
    length_m, _ = MODULE_SIZE_M[module]
    fixed = mount == "fixed"
    return _Design(
        mount=mount,
        module=module,
        pitch_m=fixed_pitch if fixed else tracker_pitch,
        row_depth_m=round((2 * length_m + MODULE_GAP_M) * math.cos(math.radians(tilt_deg)), 2)
        if fixed
        else 0.0,
        strings_per_row=fixed_spr if fixed else tracker_spr,
        max_strings=max_strings,
        block_mw=block_mw,
        dc_ac=dc_ac,
        ac_v=ac_v,
        aspect=aspect,
        soil_k=soil_k,
        origin=origin,
    )


def _row_length_m(d: _Design, strings: np.ndarray) -> np.ndarray:
    """Row length along its axis [m]: modules side by side (tracker 1P, fixed 2P)."""
    n = np.asarray(strings) * int(MODULE_TYPES[d.module]["per_string"])
    pitch = MODULE_SIZE_M[d.module][1] + MODULE_GAP_M
    if d.mount == "tracker":
        return np.where(n > 0, n * pitch + DRIVE_GAP_M, 0.0)
    return np.ceil(n / 2) * pitch


def _split_group(strings: int, per_row: int) -> np.ndarray:
    """Strings per row of a group: fewest rows, near-equal, longer rows first (inner)."""
    if strings <= 0:
        return np.zeros(0, dtype=int)
    n = -(-strings // per_row)
    base, extra = divmod(strings, n)
    return np.array([base + 1] * extra + [base] * (n - extra), dtype=int)


def _chunks(strings: np.ndarray, max_strings: int) -> np.ndarray:
    """Combiner index of each row: contiguous chunks of at most ``max_strings`` strings."""
    total = int(strings.sum())
    n = -(-total // max_strings)
    while n < len(strings):
        mid = np.cumsum(strings) - strings / 2
        labels = np.minimum(n - 1, np.floor(mid * n / total)).astype(int)
        sums = np.bincount(labels, weights=strings, minlength=n)
        if sums.max() <= max_strings and (sums > 0).all():
            return labels
        n += 1
    return np.arange(len(strings))


def _block(d: _Design, strings: int, n_lat: int) -> _Block:
    """The block template holding ``strings`` strings on ``n_lat`` laterals."""
    groups = 4 * n_lat  # lateral x band (before/after) x half (left/right)
    unit = 2 if d.strings_per_row == 2 else 1  # 2-string rows: share out whole rows
    per_group = np.full(groups, strings // unit // groups)
    per_group[: strings // unit % groups] += 1
    per_group *= unit
    per_group[0] += strings - per_group.sum()
    splits = [_split_group(int(g), d.strings_per_row) for g in per_group]
    row_len_max = float(_row_length_m(d, np.concatenate(splits)).max())
    n_rows_max = max(1, max(len(s) for s in splits))
    band = row_len_max + STUB_M + BAND_M
    lateral_a = band + np.arange(n_lat) * (2 * band + PAIR_GAP_M)
    half_w = n_rows_max * d.pitch_m
    cc = half_w + CORRIDOR_M / 2
    rows: list[tuple[np.ndarray, ...]] = []
    combs: list[tuple[np.ndarray, ...]] = []
    n_comb = 0
    for k, s in enumerate(splits):
        if not len(s):
            continue
        lat, side, half = k // 4, (-1, 1)[(k // 2) % 2], (-1, 1)[k % 2]
        i = np.arange(len(s))
        c = cc + half * (CORRIDOR_M / 2 + (i + 0.5) * d.pitch_m)
        a_near = np.full(len(s), lateral_a[lat] + side * (BAND_M + STUB_M))
        a_far = a_near + side * _row_length_m(d, s)
        labels = _chunks(s, d.max_strings)
        n = int(labels.max()) + 1
        comb_c = np.bincount(labels, weights=c, minlength=n) / np.bincount(labels, minlength=n)
        if k == 0:  # the block's end combiner: at the outer end of its chunk, by the road
            comb_c[n - 1] = c[np.flatnonzero(labels == n - 1)[-1]]
        central = np.zeros(len(s), dtype=bool)
        for j in range(n):
            members = np.flatnonzero(labels == j)
            central[members[np.argmin(np.abs(c[members] - comb_c[j]))]] = True
        rows.append((a_near, a_far, c, s, labels + n_comb, central))
        lo = np.full(n, np.inf)
        hi = np.full(n, -np.inf)
        np.minimum.at(lo, labels, c)
        np.maximum.at(hi, labels, c)
        combs.append(
            (
                np.full(n, lateral_a[lat] + side * (BAND_M + COMBINER_OFFSET_M)),
                comb_c,
                np.bincount(labels, weights=s, minlength=n).astype(int),
                np.full(n, 2 * lat + (half > 0)),
                np.full(n, lat),
                np.full(n, side),
                np.full(n, k),
                lo - STRING_LATERAL_OVERHANG_M,
                hi + STRING_LATERAL_OVERHANG_M,
            )
        )
        n_comb += n
    r = [np.concatenate(x) for x in zip(*rows, strict=True)]
    cb = [np.concatenate(x) for x in zip(*combs, strict=True)]
    a_len = n_lat * 2 * band + (n_lat - 1) * PAIR_GAP_M
    # pad on the corridor: between two laterals, or clear of the middle lateral's crossing
    pad_a = a_len / 2 if n_lat % 2 == 0 else float(lateral_a[n_lat // 2]) + PAD_LENGTH_M / 2 + 4.0
    return _Block(
        a_len=a_len,
        c_len=2 * half_w + CORRIDOR_M,
        corridor_c=cc,
        lateral_a=lateral_a,
        row_a_near=r[0],
        row_a_far=r[1],
        row_c=r[2],
        row_strings=r[3].astype(int),
        row_combiner=r[4].astype(int),
        row_central=r[5].astype(bool),
        comb_a=cb[0],
        comb_c=cb[1],
        comb_strings=cb[2],
        comb_half=cb[3].astype(int),
        comb_lat=cb[4].astype(int),
        comb_side=cb[5].astype(int),
        comb_group=cb[6].astype(int),
        comb_c0=cb[7],
        comb_c1=cb[8],
        pad_a=pad_a,
        pad_c=cc + PAD_OFFSET_M,
    )


def _duct_bank(circuits: np.ndarray) -> np.ndarray:
    """Smallest duct bank holding ``circuits`` plus spare ways (25 %, at least 2)."""
    need = circuits + np.maximum(2, np.ceil(0.25 * circuits)).astype(int)
    banks = np.asarray(DUCT_BANKS)
    i = np.searchsorted(banks, need)
    return np.where(i < len(banks), banks[np.minimum(i, len(banks) - 1)], need)


@dataclass(frozen=True)
class _Plant:
    """Where the blocks stand, in the local frame: columns of equal blocks north (``a > 0``)
    and south of the main road, whose centre line is ``a = 0``."""

    blk: _Block
    per_block: int  # strings per block
    north: np.ndarray  # blocks per column north of the main road
    south: np.ndarray
    col_x: np.ndarray  # c of each column's left edge
    block_col: np.ndarray  # column of each block
    block_a: np.ndarray  # each block's local origin (its lowest a and c corner)
    block_c: np.ndarray

    @property
    def col_c(self) -> np.ndarray:
        """Branch centre line of each column."""
        return self.col_x + self.blk.corridor_c

    @property
    def left(self) -> float:
        """Ring trench on the first column's outer side; the spine and the lead meet it."""
        return float(self.col_x[0] - RING_MARGIN_M)

    @property
    def right(self) -> float:
        return float(self.col_x[-1] + self.blk.c_len + RING_MARGIN_M)


def _plant(d: _Design, mw: float, rng: np.random.Generator) -> _Plant:
    """Equal blocks (the squarer of 1 or 2 laterals) in columns with an irregular outline."""
    mod = MODULE_TYPES[d.module]
    total = max(1, round(mw * 1e6 / (float(mod["pmax_w"]) * int(mod["per_string"]))))
    n_blocks = max(1, round(mw / d.block_mw))
    unit = 2 if d.strings_per_row == 2 else 1  # whole 2-string rows
    per_block = max(1, round(total / n_blocks / unit) * unit)
    blk = min(
        (_block(d, per_block, n) for n in (1, 2)),
        key=lambda b: abs(math.log(b.a_len / b.c_len)),
    )
    step_a, step_c = blk.a_len + BLOCK_GAP_M, blk.c_len + COLUMN_GAP_M
    n_cols = int(np.clip(round(math.sqrt(d.aspect * n_blocks * step_a / step_c)), 1, n_blocks))
    heights = np.full(n_cols, n_blocks // n_cols)
    heights[: n_blocks % n_cols] += 1
    heights = rng.permutation(heights)
    for _ in range(n_cols):  # move single blocks between columns
        i, j = rng.integers(n_cols, size=2)
        if i != j and heights[i] > 1:
            heights[i] -= 1
            heights[j] += 1
    north = (heights + rng.integers(0, 2, n_cols)) // 2
    south = heights - north
    col_x = np.arange(n_cols) * step_c
    block_col = np.repeat(np.arange(n_cols), heights)
    block_a = np.concatenate(
        [
            np.concatenate(
                [
                    ROAD_HALF_M + np.arange(n) * step_a,
                    -ROAD_HALF_M - blk.a_len - np.arange(s) * step_a,
                ]
            )
            for n, s in zip(north, south, strict=True)
        ]
    )
    return _Plant(blk, per_block, north, south, col_x, block_col, block_a, col_x[block_col])


def _segments(a0, c0, a1, c1) -> np.ndarray:
    """(n, 4) array of 2-point segments (a0, c0, a1, c1) in the local frame; broadcasts."""
    parts = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in (a0, c0, a1, c1)))
    return np.column_stack([np.ravel(v) for v in parts])


def _lateral_template(blk: _Block, sets: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The laterals of one block in its local frame: (segments (n, 4), kind, max_circuits).

    Per lateral: the array lateral on its centre line, from its outermost link to the
    branch, split at every link and at the track's edges (ducts across the track); per
    combiner (or string inverter), its string lateral (split where its link starts) and its
    link. ``sets``: the cable sets of each combiner's feeder (array, sub-array or AC cable),
    for the duct banks under the track.
    """
    cc = blk.corridor_c
    track = (cc - CORRIDOR_M / 2, cc, cc + CORRIDOR_M / 2)
    segs: list[np.ndarray] = []
    kinds: list[np.ndarray] = []
    mcs: list[np.ndarray] = []
    for lat, a in enumerate(blk.lateral_a):
        mine = blk.comb_lat == lat
        c = np.unique(np.concatenate([blk.comb_c[mine], track]))
        duct = (c[:-1] >= track[0]) & (c[1:] <= track[2])
        segs.append(_segments(a, c[:-1], a, c[1:]))
        kinds.append(np.where(duct, "lateral_duct", "lateral"))
        ways = np.bincount(blk.comb_half[mine] - 2 * lat, weights=sets[mine], minlength=2)
        banks = _duct_bank(ways.astype(int))  # per half: the array cable sets crossing
        mcs.append(np.where(duct, np.where(c[1:] <= cc, banks[0], banks[1]), 0))
        band_a = a + blk.comb_side[mine] * BAND_M
        cj = blk.comb_c[mine]
        segs += [
            _segments(band_a, blk.comb_c0[mine], band_a, cj),
            _segments(band_a, cj, band_a, blk.comb_c1[mine]),
            _segments(band_a, cj, a, cj),
        ]
        n = int(mine.sum())
        kinds += [np.repeat("string_lateral", 2 * n), np.repeat("link", n)]
        mcs.append(np.zeros(3 * n, dtype=int))
    return np.concatenate(segs), np.concatenate(kinds), np.concatenate(mcs).astype(int)


def _trenches(p: _Plant, sets: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Trench segments split at every junction: (segments (n, 4), kind (n,), max_circuits
    (n,), 0 where not set). Shared junctions are computed once, so ends match exactly.
    ``sets``: cable sets of each combiner's (string inverter's) feeder, see
    :func:`_lateral_template`."""
    blk, nb, n_cols = p.blk, len(p.block_a), len(p.north)
    step_a = blk.a_len + BLOCK_GAP_M
    col_c = p.col_c
    # laterals of one block (its local frame), then tiled over the blocks
    tpl, kind_tpl, mc_tpl = _lateral_template(blk, sets)
    lat_a = p.block_a[:, None] + blk.lateral_a  # (blocks, laterals): shared with the branches
    shift = np.column_stack([p.block_a, p.block_c, p.block_a, p.block_c])
    seg_lat = (tpl[None, :, :] + shift[:, None, :]).reshape(-1, 4)
    kind_lat = np.tile(kind_tpl, nb)
    mc_lat = np.tile(mc_tpl, nb)
    # branches: ring | laterals | main road crossing (duct) | spine | ... | ring
    top = ROAD_HALF_M + np.maximum(p.north * step_a - BLOCK_GAP_M, 0) + RING_MARGIN_M
    bottom = -(ROAD_HALF_M + np.maximum(p.south * step_a - BLOCK_GAP_M, 0) + RING_MARGIN_M)
    branch: list[np.ndarray] = []
    kind_branch: list[str] = []
    mc_branch: list[int] = []
    for j in range(n_cols):
        cuts = [bottom[j], -ROAD_HALF_M, 0.0, ROAD_HALF_M, top[j]]
        a = np.unique(np.concatenate([cuts, lat_a[p.block_col == j].ravel()]))
        branch.append(_segments(a[:-1], col_c[j], a[1:], col_c[j]))
        for a0, a1 in itertools.pairwise(a):
            duct = a0 >= -ROAD_HALF_M and a1 <= ROAD_HALF_M
            kind_branch.append("branch_duct" if duct else "branch")
            mc_branch.append(int(_duct_bank(np.array([0]))[0]) if duct else 0)  # spare ways
    # spine along the main road, lead to the substation, ring along the perimeter road
    left, right = p.left, p.right
    spine_c = np.concatenate([[left], col_c, [right]])
    seg_spine = _segments(0.0, spine_c[:-1], 0.0, spine_c[1:])
    seg_lead = _segments(0.0, left, 0.0, left - LEAD_M)
    bounds = np.concatenate([[left], p.col_x[1:] - COLUMN_GAP_M / 2, [right]])
    ring = [(top[j], c) for j in range(n_cols) for c in (bounds[j], col_c[j], bounds[j + 1])]
    ring += [(0.0, right)]
    ring += [
        (bottom[j], c)
        for j in reversed(range(n_cols))
        for c in (bounds[j + 1], col_c[j], bounds[j])
    ]
    ring += [(0.0, left), ring[0]]
    pts = np.array([q for q, r in itertools.pairwise(ring) if q != r] + [ring[-1]])
    seg_ring = _segments(pts[:-1, 0], pts[:-1, 1], pts[1:, 0], pts[1:, 1])

    segs = np.concatenate([seg_spine, seg_lead, *branch, seg_lat, seg_ring])
    kinds = np.concatenate(
        [
            np.repeat("spine", len(seg_spine)),
            ["lead"],
            kind_branch,
            kind_lat,
            np.repeat("ring", len(seg_ring)),
        ]
    )
    max_circuits = np.concatenate(
        [np.zeros(len(seg_spine) + 1, int), mc_branch, mc_lat, np.zeros(len(seg_ring), int)]
    )
    return segs, kinds, max_circuits


def _lines(x0, y0, x1, y1) -> np.ndarray:
    """2-point LineStrings from coordinate arrays."""
    return shapely.linestrings(np.stack([np.column_stack([x0, y0]), np.column_stack([x1, y1])], 1))


def _rects(x0, y0, x1, y1) -> np.ndarray:
    """Axis-aligned rectangles (exterior counter-clockwise) spanning two corners."""
    xmin, xmax = np.minimum(x0, x1), np.maximum(x0, x1)
    ymin, ymax = np.minimum(y0, y1), np.maximum(y0, y1)
    corners = ((xmin, ymin), (xmax, ymin), (xmax, ymax), (xmin, ymax), (xmin, ymin))
    return shapely.polygons(np.stack([np.column_stack(c) for c in corners], axis=1))


def _ids(prefix: str, numbers: np.ndarray, width: int) -> list[str]:
    return [f"{prefix}{n:0{width}d}" for n in numbers]


def synth_site(
    mw: float,
    seed: int,
    *,
    geographic: bool = False,
    mount: str | None = None,
    unassigned_rows: int = 0,
    topology: str = "central",
) -> SynthSite:
    """Build a synthetic ground-mount PV plant in memory.

    Parameters
    ----------
    mw : float
        Requested DC capacity [MWdc], within :data:`MW_RANGE` (0.1 to 5,000).
    seed : int
        Seed of every random choice, 0 ≤ seed < 2**32 (:data:`SEED_LIMIT`); the same seed
        gives the same site.
    geographic : bool
        True: layers in WGS 84 lon/lat (EPSG:4326), converted from the projected frame with
        pyproj; False: layers in the projected CRS (:data:`PROJECTED_CRS`).
    mount : {None, 'tracker', 'fixed'}
        Mounting structure; None lets the seed choose.
    unassigned_rows : int
        Rows left without a ``to`` (for the router's automatic assignment), at most one per
        combiner (string inverter): the row nearest its combiner, so the combiner keeps room
        for it.
    topology : {'central', 'subarray', 'string'}
        How the blocks collect DC (:data:`TOPOLOGIES`, see the module docstring). The rows,
        trenches and grid points are the same in every topology for a given seed.

    Returns
    -------
    SynthSite
        Frames, site.toml text and counts. The layout (and site.toml) does not depend on
        ``geographic`` or ``unassigned_rows``.

    Raises
    ------
    ValueError
        For an ``mw`` that is not a number within :data:`MW_RANGE`, a ``seed`` that is not
        an integer in [0, 2**32), an unknown ``mount`` or ``topology``, or ``unassigned_rows``
        out of range.
    """
    low, high = MW_RANGE
    if (
        isinstance(mw, bool)
        or not isinstance(mw, numbers.Real)
        or not math.isfinite(mw)
        or not low <= mw <= high
    ):
        raise ValueError(f"mw is {mw!r}; expected a capacity from {low:g} to {high:,g} MWdc")
    if (
        isinstance(seed, bool)
        or not isinstance(seed, int | np.integer)
        or not 0 <= seed < SEED_LIMIT
    ):
        raise ValueError(f"seed is {seed!r}; expected an integer from 0 to 2**32 - 1")
    if mount is not None:
        _check_option("mount", mount, MOUNTS)
    _check_option("topology", topology, TOPOLOGIES)
    if (
        isinstance(unassigned_rows, bool)
        or not isinstance(unassigned_rows, int | np.integer)
        or unassigned_rows < 0
    ):
        raise ValueError(f"unassigned_rows is {unassigned_rows!r}; expected an integer ≥ 0")
    rng = np.random.default_rng(seed)
    d = _draw_design(rng, mount)
    p = _plant(d, mw, rng)
    blk, nb = p.blk, len(p.block_a)
    mod = MODULE_TYPES[d.module]
    string_kw = float(mod["pmax_w"]) * int(mod["per_string"]) / 1e3
    block_kw = p.per_block * string_kw
    ac_kva = math.ceil(block_kw / d.dc_ac / 50.0) * 50.0  # skid rating in 50 kVA steps
    si_kva = _string_inverter_kva(d.max_strings * string_kw, d.dc_ac)
    if topology == "string":  # each string inverter's AC cable sets (ways of the duct banks)
        ib = _ac_current_a(si_kva, STRING_INVERTER_AC_V)
        sets = np.full(len(blk.comb_c), math.ceil(ib / AC_SET_A))
    else:  # array or sub-array cable sets
        sets = np.ceil(1.25 * float(mod["isc_a"]) * blk.comb_strings / FEEDER_SET_A)
    segs, kinds, max_circuits = _trenches(p, sets)

    # map to x/y: round in the local frame (shared points stay equal), then place at the origin
    e0, n0 = d.origin
    tracker = d.mount == "tracker"

    def xy(a, c) -> tuple[np.ndarray, np.ndarray]:
        a, c = np.round(np.asarray(a, float), 3), np.round(np.asarray(c, float), 3)
        return (c + e0, a + n0) if tracker else (a + e0, c + n0)

    def tile(block_a: np.ndarray | float, block_c: np.ndarray | float):
        return xy((p.block_a[:, None] + block_a).ravel(), (p.block_c[:, None] + block_c).ravel())

    if tracker:
        row_geom = _lines(*tile(blk.row_a_near, blk.row_c), *tile(blk.row_a_far, blk.row_c))
    else:
        half = d.row_depth_m / 2
        row_geom = _rects(
            *tile(blk.row_a_near, blk.row_c - half), *tile(blk.row_a_far, blk.row_c + half)
        )
    comb_geom = shapely.points(np.column_stack(tile(blk.comb_a, blk.comb_c)))
    # pad outline (a, c), counter-clockwise in the local frame, with its cable entry
    pl, pw = PAD_LENGTH_M / 2, PAD_WIDTH_M / 2
    near = blk.pad_c - pw  # the side facing the branch
    outline = [
        (-pl, near),
        (0.0, near - ENTRY_M),
        (pl, near),
        (pl, blk.pad_c + pw),
        (-pl, blk.pad_c + pw),
        (-pl, near),
    ]
    ring = np.stack([np.column_stack(tile(blk.pad_a + da, c)) for da, c in outline], axis=1)
    pad_geom = shapely.orient_polygons(shapely.polygons(ring))
    trench_geom = _lines(*xy(segs[:, 0], segs[:, 1]), *xy(segs[:, 2], segs[:, 3]))
    # the transformer station mirrors the pad across the branch
    grid_geom = shapely.points(np.column_stack(tile(blk.pad_a, 2 * blk.corridor_c - blk.pad_c)))

    # ids and references: R<block>-<row>, CB<block>-<n>, INV<block>, TX<block>, T<kind><n>;
    # RC<block>-<k> (recombiners), SI<block>-<n> (string inverters, where combiners stand)
    nr, nc = len(blk.row_c), len(blk.comb_c)
    wb = max(3, len(str(nb)))
    inv_ids = _ids("INV", np.arange(1, nb + 1), wb)
    block_ids = [i[3:] for i in inv_ids]
    tx_ids = [f"TX{b}" for b in block_ids]
    prefix = "SI" if topology == "string" else "CB"
    comb_ids = [
        f"{prefix}{b}-{k}" for b in block_ids for k in _ids("", np.arange(1, nc + 1), len(str(nc)))
    ]
    row_ids = [f"R{b}-{r}" for b in block_ids for r in _ids("", np.arange(1, nr + 1), len(str(nr)))]
    row_to = np.array(comb_ids, dtype=object)[
        (np.arange(nb)[:, None] * nc + blk.row_combiner).ravel()
    ]
    central = np.flatnonzero(np.tile(blk.row_central, nb))
    if unassigned_rows > len(central):
        what = "string inverter" if topology == "string" else "combiner"
        raise ValueError(
            f"unassigned_rows is {unassigned_rows}; this site has {len(central)} {what}s and "
            f"leaves at most one row per {what} unassigned"
        )
    if unassigned_rows:  # own stream: the layout does not depend on it
        pick = np.random.default_rng([seed, 1]).choice(central, unassigned_rows, replace=False)
        row_to[pick] = None
    trench_ids = []
    counters: dict[str, int] = {}
    for k in kinds:
        counters[k] = counters.get(k, 0) + 1
        trench_ids.append(f"{TRENCH_KINDS[k][0]}{counters[k]:05d}")
    attrs = np.array([TRENCH_KINDS[k][1:] for k in kinds], dtype=object)
    # soil zones along the spine, by segment midpoint; the ring is left to the defaults
    edges = np.linspace(p.left, p.right, len(d.soil_k) + 1)[1:-1]
    soil = np.asarray(d.soil_k)[np.searchsorted(edges, (segs[:, 1] + segs[:, 3]) / 2)]
    soil[kinds == "ring"] = np.nan

    crs = PROJECTED_CRS
    strings = np.tile(blk.row_strings, nb)
    frames = {
        "rows": gpd.GeoDataFrame(
            {"id": row_ids, "strings": strings, "module": d.module, "to": row_to},
            geometry=row_geom,
            crs=crs,
        ),
        "combiners": gpd.GeoDataFrame(
            {
                "id": comb_ids,
                "to": np.repeat(inv_ids, nc),
                "max_strings": np.full(nb * nc, d.max_strings),
            },
            geometry=comb_geom,
            crs=crs,
        ),
        "inverters": gpd.GeoDataFrame(
            {
                "id": inv_ids,
                "ac_kva": np.full(nb, ac_kva),
                "ac_v": np.full(nb, d.ac_v),
                "phases": np.full(nb, 3),
                "to": tx_ids,
            },
            geometry=pad_geom,
            crs=crs,
        ),
        "trenches": gpd.GeoDataFrame(
            {
                "id": trench_ids,
                "depth_m": attrs[:, 0].astype(float),
                "laying": attrs[:, 1],
                "spacing_m": attrs[:, 2].astype(float),
                "soil_k_m_w": soil,
                "max_circuits": pd.array(
                    [int(n) if n > 0 else None for n in max_circuits], dtype="Int64"
                ),
            },
            geometry=trench_geom,
            crs=crs,
        ),
        "grid": gpd.GeoDataFrame({"id": tx_ids}, geometry=grid_geom, crs=crs),
    }
    n_rc = 0  # recombiners in the plant
    if topology == "subarray":
        frames, per_block = _with_recombiners(frames, blk, inv_ids, block_ids, tile)
        n_rc = nb * per_block
    elif topology == "string":
        frames = _with_string_inverters(frames, blk, nb, tx_ids, si_kva)
    if geographic:
        to_geo = pyproj.Transformer.from_crs(PROJECTED_CRS, GEOGRAPHIC_CRS, always_xy=True)

        def convert(coords: np.ndarray) -> np.ndarray:
            return np.column_stack(to_geo.transform(coords[:, 0], coords[:, 1]))

        for name, frame in frames.items():
            geoms = shapely.transform(frame.geometry.values, convert)
            frames[name] = frame.set_geometry(gpd.GeoSeries(geoms, crs=GEOGRAPHIC_CRS))
        crs = GEOGRAPHIC_CRS

    n_combiners = len(frames["combiners"])
    n_inverters = len(frames["inverters"])
    info = SynthInfo(
        mwdc=round(nb * block_kw / 1e3, 6),
        crs=crs,
        rows=nb * nr,
        strings=int(strings.sum()),
        combiners=n_combiners,
        inverters=n_inverters,
        trenches=len(segs),
        blocks=nb,
        mount=d.mount,
        module=d.module,
        unassigned_rows=int(unassigned_rows),
        topology=topology,
        recombiners=n_rc,
        circuits={
            "string": int(strings.sum()),
            "subarray": n_combiners - n_rc if n_rc else 0,
            "array": n_rc if n_rc else n_combiners,
            "ac": n_inverters,
        },
    )
    toml = _site_toml(mw, seed, d, blk, info, si_kva if topology == "string" else ac_kva)
    return SynthSite(frames=frames, toml=toml, info=info)


def _ac_current_a(kva: float, ac_v: float) -> float:
    """Rated output current of a three-phase inverter [A]: S / (√3 U)."""
    return kva * 1e3 / (math.sqrt(3) * ac_v)


def _string_inverter_kva(dc_kw: float, dc_ac: float) -> float:
    """Rating of a string inverter for ``dc_kw`` of strings at the plant's DC/AC ratio: the next
    :data:`STRING_INVERTER_KVA_STEP` above ``dc_kw / dc_ac`` [kVA]."""
    return math.ceil(dc_kw / dc_ac / STRING_INVERTER_KVA_STEP) * STRING_INVERTER_KVA_STEP


def _with_recombiners(
    frames: dict[str, gpd.GeoDataFrame],
    blk: _Block,
    inv_ids: list[str],
    block_ids: list[str],
    tile,
) -> tuple[dict[str, gpd.GeoDataFrame], int]:
    """Topology ``subarray``: the string combiners feed recombiners at the skid, each on its
    own DC input of the inverter. Returns the frames and the number of recombiners per block."""
    nb = len(inv_ids)
    n_lat = len(blk.lateral_a)
    # a recombiner per group (1 lateral: 4 groups) or per lateral half (2 laterals: 4 halves)
    key = blk.comb_group if n_lat == 1 else blk.comb_half
    used, rc_of = np.unique(key, return_inverse=True)  # only recombiners that collect something
    n_rc = len(used)
    rc_ids = [f"RC{b}-{k + 1}" for b in block_ids for k in range(n_rc)]
    # side by side on the pad's cable entry line, across the branch towards the transformer:
    # every recombiner joins the branch where the pad does
    rc_c = blk.corridor_c - RECOMBINER_STEP_M * (np.arange(n_rc) + 1)
    rc_geom = shapely.points(np.column_stack(tile(np.full(n_rc, blk.pad_a), rc_c)))
    comb = frames["combiners"]
    to = np.asarray(rc_ids, dtype=object).reshape(nb, n_rc)[:, rc_of].ravel()
    combiners = gpd.GeoDataFrame(
        {
            "id": [*comb["id"], *rc_ids],
            "to": [*to, *np.repeat(inv_ids, n_rc)],
            "max_strings": pd.array([*comb["max_strings"], *([None] * len(rc_ids))], "Int64"),
            "input": pd.array([None] * len(comb) + [*np.tile(np.arange(1, n_rc + 1), nb)], "Int64"),
        },
        geometry=np.concatenate([comb.geometry.values, rc_geom]),
        crs=comb.crs,
    )
    inverters = frames["inverters"].assign(dc_inputs=np.full(nb, n_rc))
    return {**frames, "combiners": combiners, "inverters": inverters}, n_rc


def _with_string_inverters(
    frames: dict[str, gpd.GeoDataFrame],
    blk: _Block,
    nb: int,
    tx_ids: list[str],
    kva: float,
) -> dict[str, gpd.GeoDataFrame]:
    """Topology ``string``: string inverters where the combiners would stand (the rows' ``to``
    already names them), AC to the block's transformer station; no combiner, no skid."""
    comb = frames["combiners"]
    nc = len(blk.comb_c)
    n = nb * nc
    inputs, terminals, row_input = _string_inverter_inputs(blk)
    rows = frames["rows"]
    given = pd.array(np.tile(row_input, nb), dtype="Int64")
    given[rows["to"].isna().to_numpy()] = pd.NA  # a row left for the planner names no input
    rows = rows.assign(input=given)
    inverters = gpd.GeoDataFrame(
        {
            "id": comb["id"].to_numpy(),
            "ac_kva": np.full(n, kva),
            "ac_v": np.full(n, STRING_INVERTER_AC_V),
            "phases": np.full(n, 3),
            "to": np.repeat(tx_ids, nc),
            "dc_inputs": np.full(n, inputs),
            "input_max_a": np.full(n, INPUT_A_PER_STRING * terminals),
            "input_max_isc_a": np.full(n, INPUT_ISC_A_PER_STRING * terminals),
            "input_max_strings": np.full(n, terminals),
        },
        geometry=comb.geometry.values,
        crs=comb.crs,
    )
    empty = gpd.GeoDataFrame(
        {"id": pd.Series(dtype=object), "to": pd.Series(dtype=object)},
        geometry=gpd.GeoSeries([], crs=comb.crs),
        crs=comb.crs,
    )
    return {**frames, "rows": rows, "combiners": empty, "inverters": inverters}


def _string_inverter_inputs(blk: _Block) -> tuple[int, int, np.ndarray]:
    """The MPPT inputs of the plant's string inverter and the input each row of the block
    template lands on: (inputs, string terminals per input, input of each row).

    One input per row: a row's strings are in parallel on the input of its rank among its
    inverter's rows, counted outward from the corridor; the inverter has an input for each
    row of its fullest chunk and a terminal for each string of the fullest row.
    """
    owner = blk.row_combiner
    order = np.argsort(owner, kind="stable")
    first = np.searchsorted(owner[order], owner[order], side="left")
    rank = np.empty(len(owner), dtype=np.int64)
    rank[order] = np.arange(len(owner)) - first + 1
    inputs = int(np.bincount(owner).max()) if len(owner) else 1
    return inputs, int(blk.row_strings.max()), rank


def generate_site(
    mw: float,
    seed: int,
    out: Path | str,
    *,
    geographic: bool = False,
    fmt: str = "gpkg",
    mount: str | None = None,
    unassigned_rows: int = 0,
    force: bool = False,
    topology: str = "central",
) -> SynthInfo:
    """Write a synthetic ground-mount PV plant as a site folder.

    Parameters
    ----------
    mw, seed, geographic, mount, unassigned_rows, topology
        As for :func:`synth_site`.
    out : path
        Site folder; created when missing. It is written through its manifest
        (:mod:`routeplan.folder`): a new or empty folder, or one ``synth`` wrote before, whose
        files (of either format, so the folder never holds two candidates for a layer) are
        replaced; ``force`` writes into a folder holding other files too (they are kept).
    fmt : {'gpkg', 'geojson'}
        ``gpkg``: one ``site.gpkg`` holding every layer; ``geojson``: one file per layer.

    Returns
    -------
    SynthInfo
        Counts, the DC capacity generated, the CRS and the files written.

    Raises
    ------
    ValueError
        For an unknown ``fmt`` or any argument :func:`synth_site` refuses.
    routeplan.errors.FolderError
        When the folder cannot be written (see :meth:`routeplan.folder.OutputFolder.open`).
    """
    from .folder import OutputFolder

    _check_option("fmt", fmt, FORMATS)
    _check_option("topology", topology, TOPOLOGIES)
    names = ("site.toml", "site.gpkg", *(f"{name}.geojson" for name in LAYERS))
    with OutputFolder.open(out, "site", force=force, expect=names) as folder:
        site = synth_site(
            mw,
            seed,
            geographic=geographic,
            mount=mount,
            unassigned_rows=unassigned_rows,
            topology=topology,
        )
        work = folder.work
        (work / "site.toml").write_text(site.toml, encoding="utf-8")
        files = ["site.toml"]
        for name, frame in site.frames.items():
            if fmt == "gpkg":
                pyogrio.write_dataframe(frame, work / "site.gpkg", layer=name, driver="GPKG")
            else:
                pyogrio.write_dataframe(frame, work / f"{name}.geojson", driver="GeoJSON")
                files.append(f"{name}.geojson")
        if fmt == "gpkg":
            files.append("site.gpkg")
        folder.commit(files)
    return dataclasses.replace(site.info, files=tuple(files))


def _site_toml(
    mw: float, seed: int, d: _Design, blk: _Block, info: SynthInfo, ac_kva: float
) -> str:
    """site.toml of a synthetic plant: the site format's tables, a header saying what it is.
    ``ac_kva``: the rating of a central skid, or of a string inverter (topology ``string``)."""
    mod = MODULE_TYPES[d.module]
    strings = blk.row_strings
    block_mwdc = blk.row_strings.sum() * float(mod["pmax_w"]) * int(mod["per_string"]) / 1e6
    inputs, terminals, _ = _string_inverter_inputs(blk)
    collection = {
        "central": [
            f"combiners: max_strings {d.max_strings}, "
            f"{blk.comb_strings.min()}-{blk.comb_strings.max()} strings each",
        ],
        "subarray": [
            f"combiners: max_strings {d.max_strings}, "
            f"{blk.comb_strings.min()}-{blk.comb_strings.max()} strings each, feeding "
            f"{info.recombiners // max(info.blocks, 1)} recombiners per block at the skid, each "
            "on its own DC input",
        ],
        "string": [
            f"string inverters: {ac_kva:g} kVA, {inputs} MPPT inputs of {terminals} strings "
            f"({INPUT_A_PER_STRING * terminals:g} A, {INPUT_ISC_A_PER_STRING * terminals:g} A "
            f"Isc), one row per input, {blk.comb_strings.min()}-{blk.comb_strings.max()} "
            "strings each; AC to one transformer station per block",
        ],
    }[info.topology]
    if info.topology == "string":
        blocks = (
            f"{info.blocks} blocks of {blk.row_strings.sum()} strings ({block_mwdc:.3f} MWdc), "
            f"{len(blk.comb_c)} string inverters each (DC/AC at most {d.dc_ac:g})"
        )
    else:
        blocks = (
            f"{info.blocks} blocks of {blk.row_strings.sum()} strings ({block_mwdc:.3f} MWdc),"
            f" one {ac_kva:g} kVA inverter skid each (DC/AC {d.dc_ac:g})"
        )
    header = [
        "Synthetic PV plant: an invented scenario written by routeplan.synth; it describes no",
        "real place, project or product. Every value is an invented demo value; values called",
        "typical are common practice, not taken from a standard. routeplan is a design aid:",
        "any design must follow local codes and be reviewed by a qualified, licensed person.",
        "",
        f"requested {mw:g} MWdc, seed {seed}; generated {info.mwdc:.3f} MWdc",
        blocks,
        f"mount: {d.mount}, pitch {d.pitch_m:g} m, {strings.min()}-{strings.max()} strings per row",
        *collection,
    ]
    name = f"Synthetic plant {mw:g} MWdc, seed {seed}"
    if info.topology != "central":
        header.insert(6, f"topology: {info.topology} ({TOPOLOGY_NOTES[info.topology]})")
        name += f", {info.topology} topology"
    doc: dict[str, Any] = {
        "site": {"name": name, "crs": PROJECTED_CRS},
        "modules": {d.module: dict(mod)},
        "design": TOPOLOGY_DESIGN[info.topology],
        "allowances": ALLOWANCES,
    }
    comments = {
        ("site",): "working CRS: WGS 84 / UTM zone 33N; the site's origin in it is invented",
        ("modules", d.module): "invented module, STC datasheet values (typical of its class)",
        ("design",): "demo design inputs (typical, common practice)",
    }
    text = "".join(f"# {line}".rstrip() + "\n" for line in header)
    text += _toml_tables(doc, (), comments)
    tomllib.loads(text)  # the emitter's output must parse
    return text


def _toml_tables(table: dict[str, Any], path: tuple[str, ...], comments: dict) -> str:
    """TOML text of nested tables: scalars first, then each sub-table as ``[a.b]``."""
    scalars = {k: v for k, v in table.items() if not isinstance(v, dict)}
    subs = {k: v for k, v in table.items() if isinstance(v, dict)}
    text = ""
    if path and (scalars or not subs):
        text += "\n" + (f"# {comments[path]}\n" if path in comments else "")
        text += "[" + ".".join(_toml_key(p) for p in path) + "]\n"
    text += "".join(f"{_toml_key(k)} = {_toml_value(v)}\n" for k, v in scalars.items())
    for k, v in subs.items():
        text += _toml_tables(v, (*path, k), comments)
    return text


def _toml_key(key: str) -> str:
    bare = key and all(ch.isascii() and (ch.isalnum() or ch in "_-") for ch in key)
    return key if bare else json.dumps(key, ensure_ascii=False)


def _toml_value(v: Any) -> str:
    """A TOML literal for a bool, int, float, str or list of those."""
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int | np.integer):
        return str(int(v))
    if isinstance(v, float | np.floating):
        v = float(v)
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, str):
        return json.dumps(v, ensure_ascii=False)
    if isinstance(v, list | tuple):
        return "[" + ", ".join(_toml_value(x) for x in v) + "]"
    raise TypeError(f"no TOML literal for {type(v).__name__}")
