"""Input checks of the sizing engine: every problem named, with the circuits or segments.

Each test gives several problems at once and compares the whole message, so a problem that goes
unreported, a wrong index or a changed limit shows. Values on the boundary of each rule (zero
length, one string, a power factor of 1, bifaciality 0 and 1, a bifacial Isc equal to Isc) are
given too and must not be reported.
"""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from calc import DesignParams, InputError, SizingInput, UnknownOptionError, size_circuits


def _six(**changes):
    """Two strings on array 2, one array, two a.c. circuits and one circuit of kind 7."""
    n = 6
    base = dict(
        kind=np.array([0, 0, 1, 2, 2, 7]),
        cable_m=np.array([0.0, 50.0, 80.0, 100.0, 100.0, 10.0]),
        air_m=np.zeros(n),
        parent=np.array([2, 2, -1, -1, -1, -1]),
        isc_a=np.full(n, 13.0),
        imp_a=np.full(n, 12.0),
        vmp_v=np.full(n, 1000.0),
        n_strings=np.array([1.0, 1.0, 2.0, 1.0, 1.0, 1.0]),
        strings_in_parallel=np.ones(n),
        ac_kva=np.full(n, 100.0),
        ac_v=np.full(n, 400.0),
        phases=np.full(n, 3),
        pf=np.full(n, np.nan),
        bifaciality=np.full(n, np.nan),
        isc_bifacial_a=np.full(n, np.nan),
        ac_max_a=np.full(n, np.nan),
        dc_group=np.full(n, -1),
    )
    for key, value in changes.items():
        base[key] = np.array(value)
    return SizingInput(**base)


def _message(inp, design=None):
    with pytest.raises(InputError) as e:
        size_circuits(inp, design)
    return str(e.value)


def test_every_circuit_problem_in_one_message():
    inp = _six(
        kind=[0, 0, 1, 2, 2, 7],
        cable_m=[0.0, -1.0, 80.0, 100.0, 100.0, 10.0],  # 0 m is a valid length
        air_m=[0.0, 0.0, 0.0, np.nan, 0.0, 0.0],
        isc_a=[0.0, 13.0, 13.0, 13.0, 13.0, 13.0],
        vmp_v=[1000.0, 1000.0, np.nan, 1000.0, 1000.0, 1000.0],
        n_strings=[1.0, 0.5, 2.0, 1.0, 1.0, 1.0],  # one string is valid
        ac_kva=[np.nan, 100.0, 100.0, 100.0, 0.0, 100.0],  # not needed by d.c. circuits
        phases=[3, 3, 3, 2, 1, 3],
        pf=[np.nan, np.nan, np.nan, 1.0, 1.2, np.nan],  # cos φ = 1 is valid
        ac_max_a=[np.nan, np.nan, np.nan, 0.0, np.nan, np.nan],
        bifaciality=[1.0, 1.5, 0.0, np.nan, np.nan, np.nan],  # 0 and 1 are valid
        isc_bifacial_a=[np.nan, np.nan, 12.0, np.nan, np.nan, 13.0],  # equal to Isc is valid
        dc_group=[-5, -1, -2, -1, -1, -1],  # checked for arrays only
        parent=[2, 3, -1, -1, 2, -1],
    )
    assert _message(inp) == (
        "kind must be 0, 1, 2 or 3 at circuits [5]; "
        "cable_m must be >= 0 m at circuits [1]; "
        "air_m must be >= 0 m at circuits [3]; "
        "isc_a must be > 0 for d.c. circuits [0]; "
        "vmp_v must be > 0 for d.c. circuits [2]; "
        "n_strings must be >= 1 for d.c. circuits [1]; "
        "ac_kva must be > 0 for a.c. circuits [4]; "
        "phases must be 1 or 3 at a.c. circuits [3]; "
        "pf must be in (0, 1] at a.c. circuits [4]; "
        "ac_max_a must be > 0 at a.c. circuits [3]; "
        "bifaciality must be within 0-1 at d.c. circuits [1]; "
        "isc_bifacial_a must be >= isc_a at d.c. circuits [2]; "
        "dc_group must be >= -1 at array circuits [2]; "
        "parent must be the index of an array or sub-array circuit (strings: or -1; sub-array "
        "circuits: always; others: -1) at circuits [1, 4]"
    )


def test_the_remaining_circuit_rules():
    # imp_a, strings_in_parallel and ac_v; a parent beyond the last circuit or below -1
    inp = _six(
        imp_a=[12.0, -1.0, 12.0, 12.0, 12.0, 12.0],
        strings_in_parallel=[1.0, 1.0, 0.0, 1.0, 1.0, 1.0],
        ac_v=[400.0, 400.0, 400.0, 400.0, np.nan, 400.0],
        parent=[6, -2, -1, -1, -1, -1],
        kind=[0, 0, 1, 2, 2, 0],
    )
    assert _message(inp) == (
        "imp_a must be > 0 for d.c. circuits [1]; "
        "strings_in_parallel must be >= 1 for d.c. circuits [2]; "
        "ac_v must be > 0 for a.c. circuits [4]; "
        "parent must be the index of an array or sub-array circuit (strings: or -1; sub-array "
        "circuits: always; others: -1) at circuits [0, 1]"
    )


def test_more_than_five_circuits_are_counted():
    inp = _six(cable_m=[-1.0] * 6, air_m=[-1.0, 0, 0, 0, 0, -1.0], kind=[0, 0, 1, 2, 2, 0])
    assert _message(inp) == (
        "cable_m must be >= 0 m at circuits [0, 1, 2, 3, 4] and 1 more; "
        "air_m must be >= 0 m at circuits [0, 5]"
    )
    inp = _six(cable_m=[-1.0] * 5 + [0.0], kind=[0, 0, 1, 2, 2, 0])  # five: all named
    assert _message(inp) == "cable_m must be >= 0 m at circuits [0, 1, 2, 3, 4]"


def test_lengths_of_the_arrays():
    inp = _six(kind=[0, 0, 1, 2, 2, 0])
    inp.isc_a = np.full(5, 13.0)
    inp.dc_group = np.full(7, -1)
    inp.seg_depth_m = np.array([0.7])
    inp.seg_laying = np.array([0, 0])
    inp.seg_count = np.array([1.0, 2.0, 3.0])
    inp.inc_circuit = np.array([0, 1])
    inp.inc_segment = np.array([0])
    assert _message(inp) == (
        "isc_a must have length 6 (one per circuit); dc_group must have length 6 (one per circuit)"
    )
    inp.isc_a, inp.dc_group = np.full(6, 13.0), np.full(6, -1)
    assert _message(inp) == (
        "seg_laying must have length 1 (one per segment); "
        "seg_count must have length 1 (one per segment); "
        "inc_circuit and inc_segment must have the same length"
    )
    with pytest.raises(InputError) as e:
        size_circuits(SizingInput(kind=np.zeros((2, 2)), cable_m=np.zeros(4)))
    assert str(e.value) == "kind must be a 1-d array"


def test_every_segment_problem_in_one_message():
    # depth to the axis must exceed half the diameter: 0.04 m cable (direct), 0.11 m duct
    inp = _six(kind=[0, 0, 1, 2, 2, 0])
    inp.seg_depth_m = np.array([0.7, 0.02, 0.05, 0.05, 0.7, 0.7])
    inp.seg_laying = np.array([2, 0, 1, 0, 0, 0])  # 0.05 m direct is deep enough
    inp.seg_spacing_m = np.array([0.0, 0.0, 0.0, 0.0, -0.1, 0.0])  # 0 (touching) is valid
    inp.seg_soil_k_m_w = np.array([2.5, 2.5, 2.5, 2.5, 2.5, 0.0])
    inp.seg_count = np.array([0.0, 1.0, 1.0, 1.0, np.nan, 1.0])  # 0 is valid
    inp.inc_circuit = np.array([0, 6, 1, -1, 2])
    inp.inc_segment = np.array([0, 0, 6, 0, -1])
    assert _message(inp) == (
        "seg_laying must be 0 (direct) or 1 (duct) at segments [0]; "
        "seg_spacing_m must be >= 0 at segments [4]; "
        "seg_soil_k_m_w must be > 0 at segments [5]; "
        "seg_count must be >= 0 at segments [4]; "
        "seg_depth_m must exceed half the cable/duct diameter at segments [1, 2]; "
        "incidence pairs out of range at positions [1, 2, 3, 4]"
    )


def test_air_stretch_problems():
    inp = _six(kind=[0, 0, 1, 2, 2, 0])
    inp.air_inc_circuit = np.array([0, 1])
    inp.air_inc_stretch = np.array([0])
    assert _message(inp) == "air_inc_circuit and air_inc_stretch must have the same length"
    inp.air_inc_stretch = np.array([0, 1])
    inp.air_count = np.array([2.0, -1.0])
    assert _message(inp) == "air_count must be 2 numbers >= 0 (one per air stretch)"
    inp.air_count = np.array([2.0])  # the incidence names two stretches
    assert _message(inp) == "air_count must be 2 numbers >= 0 (one per air stretch)"
    inp.air_count = np.array([0.0, 0.0])  # 0: the incident circuits are counted
    inp.air_behind_modules = np.array([True])
    assert _message(inp) == "air_behind_modules must have length 2 (one per air stretch)"
    inp.air_behind_modules = None
    inp.air_inc_circuit = np.array([0, 6, -1])
    inp.air_inc_stretch = np.array([0, 1, 1])
    assert _message(inp) == "air incidence pairs out of range at positions [1, 2]"


@pytest.mark.parametrize(
    ("field", "value", "message"),
    [
        ("material_array", "Fe", "material_array must be one of 'Cu', 'Al'; got 'Fe'"),
        ("material_ac", "Fe", "material_ac must be one of 'Cu', 'Al'; got 'Fe'"),
        ("insulation_array", "EPR", "insulation_array must be one of 'XLPE', 'PVC'; got 'EPR'"),
        ("insulation_ac", "EPR", "insulation_ac must be one of 'XLPE', 'PVC'; got 'EPR'"),
        ("conductor_temp", "hot", "conductor_temp must be one of 'max', 'loading'; got 'hot'"),
        (
            "marking",
            "uk",
            "marking must be one of 'iec', 'gb', 'au', 'in', 'us', 'ca', 'cn', 'jp', 'ru'; "
            "got 'uk'",
        ),
        (
            "array_protection",
            "none",
            "array_protection must be one of 'fuse', 'cable'; got 'none'",
        ),
        (
            "ac_breaker_device",
            "ul489",
            "ac_breaker_device must be one of 'iec60898-1', 'iec60947-2'; got 'ul489'",
        ),
        (
            "air_arrangement",
            ("bunched", "bunched", "pile", "bunched"),
            "air_arrangement (ac) must be one of 'bunched', 'wall', 'ceiling', 'tray', 'ladder', "
            "'spaced'; got 'pile'",
        ),
    ],
)
def test_unknown_design_options_list_the_valid_ones(field, value, message):
    with pytest.raises(UnknownOptionError) as e:
        size_circuits(_six(kind=[0, 0, 1, 2, 2, 0]), DesignParams(**{field: value}))
    assert str(e.value) == message


def test_every_design_number_problem_in_one_message():
    design = DesignParams(
        drop_string_pct=0.0,
        drop_array_pct=-1.0,
        drop_dc_total_pct=np.nan,
        drop_ac_pct=0.0,
        loss_hours_h=0.0,
        cable_od_m=0.0,
        duct_od_m=-0.1,
        power_factor=0.0,
        frequency_hz=-50.0,
        rear_irradiance_ratio=1.5,
        max_parallel=0,
        fault_ka=20.0,
    )
    assert _message(_six(kind=[0, 0, 1, 2, 2, 0]), design) == (
        "drop_string_pct must be > 0; drop_array_pct must be > 0; drop_dc_total_pct must be > 0; "
        "drop_ac_pct must be > 0; loss_hours_h must be > 0; cable_od_m must be > 0; "
        "duct_od_m must be > 0; power_factor must be in (0, 1]; frequency_hz must be >= 0; "
        "rear_irradiance_ratio must be within 0-1; max_parallel must be >= 1; "
        "fault_ka and clear_s must be given together"
    )
    design = DesignParams(power_factor=1.2, fault_ka=0.0, clear_s=0.2, rear_irradiance_ratio=-0.1)
    assert _message(_six(kind=[0, 0, 1, 2, 2, 0]), design) == (
        "power_factor must be in (0, 1]; rear_irradiance_ratio must be within 0-1; "
        "fault_ka and clear_s must be > 0"
    )
    design = DesignParams(fault_ka=20.0, clear_s=0.0)
    assert _message(_six(kind=[0, 0, 1, 2, 2, 0]), design) == "fault_ka and clear_s must be > 0"
    design = DesignParams(air_arrangement=("bunched", "bunched"))
    assert _message(_six(kind=[0, 0, 1, 2, 2, 0]), design) == (
        "air_arrangement must name one arrangement per kind (string, array, ac, subarray)"
    )


def test_boundary_design_values_are_valid():
    # cos φ = 1, d.c. (0 Hz), rear ratio 0 and 1, one conductor per phase, a 1 s fault
    for design in (
        DesignParams(power_factor=1.0, frequency_hz=0.0, rear_irradiance_ratio=0.0),
        DesignParams(rear_irradiance_ratio=1.0, max_parallel=1, fault_ka=1.0, clear_s=1.0),
    ):
        assert size_circuits(_six(kind=[0, 0, 1, 2, 2, 0]), design).ok.all()


def test_size_lists_must_be_ascending_and_tabulated():
    inp = _six(kind=[0, 0, 1, 2, 2, 0])
    for sizes in ((), (95.0, 70.0), (95.0, 95.0)):
        assert _message(inp, DesignParams(sizes_ac_mm2=sizes)) == (
            "sizes for ac circuits must be a non-empty ascending list"
        )
    assert _message(inp, DesignParams(sizes_array_mm2=((16.0, 25.0),))) == (
        "sizes for array circuits must be a non-empty ascending list"
    )
    # EN 50618:2014 Table A.3 ends at 240 mm² (from memory): no PV cable rating in air at 300
    assert _message(inp, DesignParams(sizes_string_mm2=(4.0, 300.0))) == (
        "string sizes [300.0] mm² Cu/PV have no tabulated capacity for environment air with 2 "
        "loaded conductors (iec rules); remove them from the size list"
    )
    # IEC 60364-5-52:2009 Table B.52.12 (in air) gives 400 mm² for three loaded conductors
    # (trefoil) only; a.c. circuits are checked for two (single-phase) as well
    assert _message(inp, DesignParams(sizes_ac_mm2=(300.0, 400.0))) == (
        "ac sizes [400.0] mm² Cu/XLPE have no tabulated capacity for environment air with 2 "
        "loaded conductors (iec rules); remove them from the size list"
    )


def test_documented_defaults():
    # SizingInput: air_m 0, parent -1, n_strings 1, strings_in_parallel 1, phases 3,
    # dc_group -1; segments: depth 0.7 m, direct (D2), touching, 2.5 K·m/W, count 1 - the
    # IEC 60364-5-52 reference conditions, so every buried factor is 1.0; pf: the design's 0.9
    inp = SizingInput(
        kind=np.array([0, 2], dtype=np.int8),
        cable_m=np.array([30.0, 30.0]),
        isc_a=np.array([13.0, np.nan]),
        imp_a=np.array([12.0, np.nan]),
        vmp_v=np.array([1000.0, np.nan]),
        ac_kva=np.array([np.nan, 50.0]),
        ac_v=np.array([np.nan, 400.0]),
        seg_depth_m=np.array([0.7, 0.7]),
        inc_circuit=np.array([0, 1]),
        inc_segment=np.array([0, 0]),
    )
    r = size_circuits(inp)
    assert r.governing_env.tolist() == ["D2", "D2"] and r.governing_segment.tolist() == [0, 0]
    assert r.seg_soil_factor.tolist() == [1.0, 1.0] and r.seg_depth_factor.tolist() == [1.0, 1.0]
    # segment 0 carries both circuits (B.52.18, 2 touching: 0.75); segment 1 none: count 1
    assert r.seg_count_final.tolist() == [2.0, 1.0]
    assert r.seg_group_factor.tolist() == [0.75, 1.0]
    assert np.isnan(r.backfeed_a[0])  # not an array
    assert r.design_current_a[0] == 1.25 * 13.0  # one string, S = 1: 1.25 · I_SC
    assert r.parallel.tolist() == [1, 1] and r.marking[1].startswith("L1 brown")  # 3-phase
    # cos φ 0.9 (DesignParams.power_factor): P = 50 kVA × 0.9
    assert_allclose(r.loss_pct[1], 100 * r.loss_w[1] / 45e3)
    assert r.vdrop_total_pct[0] == r.vdrop_pct[0]  # parent -1: no array


def test_incidence_in_any_order_with_repeats():
    # pairs are sorted by circuit and a repeated pair counts once
    inp = _six(kind=[0, 0, 1, 2, 2, 0], parent=[2, 2, -1, -1, -1, -1])
    inp.seg_depth_m = np.array([0.7, 0.7])
    inp.seg_count = np.array([0.0, 0.0])
    inp.inc_circuit = np.array([3, 0, 3, 1, 0])
    inp.inc_segment = np.array([1, 0, 1, 0, 0])
    inp.air_inc_circuit = np.array([4, 4, 5])
    inp.air_inc_stretch = np.array([0, 0, 0])
    r = size_circuits(inp)
    assert r.seg_count_final.tolist() == [2.0, 1.0]
    assert r.air_count_final.tolist() == [2.0]
    assert r.governing_segment.tolist()[:2] == [0, 0] and r.governing_segment[3] == 1


def test_scalars_and_integral_floats_are_accepted():
    # one value for every circuit; indices and ids given as floats with integral values (as a
    # table column with missing values holds them) are taken as integers
    inp = SizingInput(
        kind=np.array([1, 0, 0, 1], dtype=np.int8),
        cable_m=50.0,
        air_m=50.0,
        parent=np.array([-1.0, 0.0, 0.0, -1.0]),
        isc_a=13.0,
        imp_a=12.0,
        vmp_v=1000.0,
        n_strings=np.array([2.0, 1.0, 1.0, 2.0]),
        dc_group=np.array([7.0, -1.0, -1.0, 7.0]),
    )
    r = size_circuits(inp)
    assert r.ok.all()
    # the arrays share input 7: backfeed 1.25 × 26 A; the strings' drops add to array 0's
    assert_allclose(r.backfeed_a[[0, 3]], [32.5, 32.5])
    assert_allclose(r.vdrop_total_pct[1:3], r.vdrop_pct[1:3] + r.vdrop_pct[0])
