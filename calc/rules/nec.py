"""NEC rule set ``"nec"`` — NFPA 70 National Electrical Code, 2023 edition (NEC 2023).

Registered in :mod:`calc.rules` (``[design] rules = "nec"``). The functions are those of
:mod:`calc.nec`; this class fits them to the engine's interface and overrides its hooks:

* **690.8(B), two conditions** (:meth:`NecRules.terminal_capacity_a`): the engine's design current
  is the 690.8(A) maximum current I_max (source circuit 1.25 × Isc, bifacial Isc where given;
  output circuit the sum of its source circuits'; inverter output circuit the continuous output
  current, 705.28 / 690.8(A)(3), from memory) and is held against the insulation's column after
  ambient correction (310.15(B)(1)) and adjustment (310.15(C)(1)) — condition (2); condition (1)
  holds 1.25 × I_max (1.5625 × Isc for a source circuit) against the table column of the
  termination (110.14(C): ``terminal_temp_c``, 75 °C unless the equipment is marked for 90 °C;
  never above the insulation's rating) of Table 310.16, uncorrected, whatever the environment
  (110.14(C)(1): termination provisions are based on Table 310.16 unless the equipment is listed
  and marked otherwise, also for a conductor in free air). The schedule's utilisation is the
  larger of the two ratios (the governing one).
* **Grouping** counts current-carrying conductors (Table 310.15(C)(1)): 2 per d.c. or
  single-phase circuit, 3 per three-phase circuit (the neutral of a balanced three-phase circuit
  is not counted, 310.15(E)), each parallel set counted. In air the arrangement ``"bunched"``
  applies the table to all the conductors sharing a stretch; ``"spaced"`` (conductors not in a
  raceway with spacing maintained, 310.15(C)(1)'s condition, from memory) applies none. In a
  trench segment every conductor routed through it is taken as one raceway or bundle (the
  conservative reading: the design keys do not say which circuits share a raceway).
* **In the ground** (``"D1"`` duct, ``"D2"`` direct burial) Table 310.16 (raceway, cable or earth)
  rates the conductor with the earth temperature as the ambient; soil thermal resistivity, depth
  and spacing are not represented (factors 1), so every such circuit carries a review note
  (:meth:`NecRules.buried_note`). ``buried_rating = "engineered"`` (310.14(B): IEC 60287 /
  Neher–McGrath) is refused until that method exists.
* **310.14(A)(2) exception**: the governing stretch (trench segment or air stretch) may be
  disregarded where it is no longer than 10 ft or 10 % of the rest of the circuit, whichever is
  less (:meth:`NecRules.short_section`); only that one stretch, and only where another remains.
  Needs the stretches' lengths (``seg_length_m``, ``air_length_m``).
* **Protection**: source-circuit fuses where the other parallel strings can feed more than the
  module's maximum series fuse (690.9(A)), rated ≥ 1.25 × I_max (690.9(B)) at the next 240.6(A)
  rating and ≤ the module's maximum series fuse; an unfused source circuit carries the others'
  (n − 1) × I_max. Output-circuit fuses where the other circuits on the inverter input feed more
  than the conductor's ampacity. Inverter output breaker ≥ 1.25 × the continuous output current
  (next 240.6(A) rating). Every device must protect its conductor per 240.4(B)/(C)/(D) with the
  ampacity after correction, adjustment and the 110.14(C) limit
  (:meth:`NecRules.conductor_protected`). No IEC 60364-4-43 I2 rule.
* **Short-circuit withstand**: the NEC has no adiabatic k table; with a fault level given the
  check is not made and every a.c. circuit says so (:meth:`NecRules.short_circuit_note`).
* **690.7** maximum voltage: the module's Voc coefficient, else Table 690.7(A)
  (:func:`calc.nec.pv.max_voltage_v`), against ``dc_rated_v`` (600, 1000 or 1500 V equipment).
* Resistance: Chapter 9 Table 8 (75 °C) with the table's temperature note; a.c.: Table 9 (60 Hz
  only; set ``frequency_hz = 60``).

Insulation names are the temperature ratings ``"90C"``, ``"75C"``, ``"60C"`` (e.g. THWN-2, XHHW-2,
USE-2 are 90 °C types) and ``"PV"`` for PV wire (90 °C wet/dry, from memory). Sizes are mm² of the
NEC sizes (:func:`calc.nec.sizes.size_from_label`).
"""

from __future__ import annotations

from typing import ClassVar

import numpy as np

from calc import protection as iec_protection
from calc import pv
from calc.errors import InputError, check_option
from calc.kinds import KIND_STRING
from calc.nec import ampacity, impedance, protection, sizes
from calc.nec import pv as nec_pv
from calc.protection import ArrayFuse, Breaker, OverloadCheck, ProtectionCheck
from calc.ratings import fuse_in_range, smallest_rating_a
from calc.rules import RuleSet
from calc.tables import load_table

__all__ = ["NecRules"]

_RATING = {"90C": 90, "75C": 75, "60C": 60, "PV": 90}
#: ``buried_rating`` values: "table" (Table 310.16 with a review note) or "engineered" (refused)
BURIED_RATINGS = ("table", "engineered")
_REL = 1e-9


def _i_max(isc_a) -> np.ndarray:
    """690.8(A)(1)(a)(1) maximum current 1.25 · Isc [A]; nan passes (circuits of other kinds)."""
    return ampacity.nec_rule("source_isc_factor") * np.asarray(isc_a, dtype=float)


class NecRules(RuleSet):
    """NFPA 70 NEC 2023 rule set (AWG / kcmil conductors); see the module docstring."""

    name: ClassVar[str] = "nec"
    description: ClassVar[str] = (
        "NFPA 70 NEC 2023: Tables 310.16/310.17, 310.15(B)(1), Table 310.15(C)(1), 110.14(C), "
        "690.7, 690.8, 690.9, 240.4, 240.6(A), Chapter 9 Tables 8 and 9, Table 250.122"
    )
    materials: ClassVar[tuple[str, ...]] = ("Cu", "Al")
    insulations: ClassVar[tuple[str, ...]] = ("90C", "75C", "60C")
    breaker_devices: ClassVar[tuple[str, ...]] = ("nec240.6a",)
    air_arrangements: ClassVar[tuple[str, ...]] = ("bunched", "spaced")
    air_arrangement_source: ClassVar[str] = (
        "bunched: NEC 2023 Table 310.15(C)(1) adjustment; spaced: none"
    )
    group_counts: ClassVar[str] = "conductors"
    voc_source: ClassVar[str] = "NEC 2023 690.7"
    fuse_word: ClassVar[str] = "(240.6(A), 690.9)"
    pv_cable: ClassVar[str] = "PV wire (UL 4703, NEC 2023 690.31(C)(1))"
    pv_cable_copper: ClassVar[str] = (
        "PV wire (UL 4703, NEC 2023 690.31(C)(1)), sized here as copper conductors"
    )
    feeder_types: ClassVar[str] = "USE-2, XHHW-2 or THWN-2 at 90 °C, NEC 2023 Table 310.4(A)"
    #: Chapter 9 Table 9 is for 60 Hz
    default_frequency_hz: ClassVar[float] = 60.0
    #: Table 310.15(C)(1) takes a trench's conductors as one bundle, whatever the spacing
    grouping_uses_spacing: ClassVar[bool] = False
    terminal_condition: ClassVar[bool] = True
    short_section_exception: ClassVar[bool] = True
    buried_review: ClassVar[bool] = True
    short_circuit_checked: ClassVar[bool] = False
    protection_per_size: ClassVar[bool] = True

    def breaker_text(self, in_a, ib_a, iz_a, device):
        """Breaker ≥ 1.25 × the continuous current; 240.4 against the ampacity."""
        return (
            f"breaker {in_a:g} A (240.6(A)): ≥ {ampacity.nec_rule('ocpd_factor'):g} × {ib_a:.0f} A "
            f"continuous; conductor ampacity {iz_a:.0f} A (240.4)"
        )

    def _rating(self, insulation: str) -> int:
        check_option("insulation", insulation, tuple(_RATING))
        return _RATING[insulation]

    def insulation_rating_c(self, insulation: str) -> int:
        """The insulation's temperature rating [°C], the Table 310.16/310.17 column of its
        ampacity (``PV`` wire: 90 °C); refused for an insulation the rule set lacks."""
        return self._rating(insulation)

    # ---- design settings

    def terminal_c(self, design) -> int:
        """110.14(C) termination temperature [°C]: ``design.terminal_temp_c``, else 75 °C
        (``nec_2023_rules.csv`` ``terminal_default_c``, common practice)."""
        t = design.terminal_temp_c
        return int(ampacity.nec_rule("terminal_default_c") if t is None else t)

    def check_design(self, design) -> None:
        """``terminal_temp_c`` must be 60, 75 or 90 °C; ``buried_rating`` ``"table"`` (the
        engineered method, 310.14(B), is not available yet)."""
        t = design.terminal_temp_c
        if t is not None and t not in ampacity.RATINGS_C:
            raise InputError(f"terminal_temp_c must be 60, 75 or 90 (°C, 110.14(C)); got {t!r}")
        check_option("buried_rating", design.buried_rating, BURIED_RATINGS)
        if design.buried_rating == "engineered":
            raise InputError(
                "buried_rating = 'engineered' (NEC 2023 310.14(B): IEC 60287 / Neher–McGrath) is "
                "not available yet: set 'table' (Table 310.16; each buried circuit noted for "
                "review)"
            )

    # ---- conductors

    def default_sizes_mm2(self, kind: int, material: str) -> tuple[float, ...]:
        """String: 12–6 AWG; feeders 6 AWG–1000 kcmil (``nec_2023_default_size_lists.csv``,
        common practice)."""
        t = load_table("nec_2023_default_size_lists.csv")
        labels = t["size_label"][t.where(kind="string" if kind == KIND_STRING else "feeder")]
        return tuple(float(v) for v in sizes.size_from_label(labels))

    def size_text(self, size_mm2: float) -> str:
        """The AWG / kcmil label (``"10 AWG"``, ``"250 kcmil"``)."""
        return str(sizes.size_label(size_mm2))

    def nominal_sizes_mm2(self) -> np.ndarray:
        """The NEC sizes 14 AWG … 1000 kcmil [mm²] (Chapter 9 Table 8)."""
        return sizes.sizes_mm2()

    def r20_ohm_km(self, kind: int, material: str, sizes_mm2: np.ndarray) -> np.ndarray:
        """Chapter 9 Table 8 (stranded, uncoated Cu or Al) at 75 °C, brought to 20 °C by the
        table's note R2 = R1 [1 + α (T2 − 75)] (derived)."""
        return impedance.dc_resistance_ohm_km(sizes_mm2, material, 20.0)

    def alpha20_per_k(self, material: str) -> float:
        """α at 20 °C equivalent to the Table 8 note's α75: α20 = α75 / (1 + α75 (20 − 75)), so
        that R20 (1 + α20 (θ − 20)) reproduces R75 (1 + α75 (θ − 75)) exactly (derived)."""
        a75, t_ref = impedance.table8_alpha_per_k(material)
        return a75 / (1.0 + a75 * (20.0 - t_ref))

    def r_at_temp_ohm_km(self, r20_ohm_km, temp_c, material: str) -> np.ndarray:
        """Chapter 9 Table 8 note: R = R20 [1 + α20 (θ − 20)] with :meth:`alpha20_per_k`."""
        a = self.alpha20_per_k(material)
        return np.asarray(r20_ohm_km, dtype=float) * (1.0 + a * (np.asarray(temp_c) - 20.0))

    def theta_max_c(self, insulation: str, env: str) -> float:
        return float(self._rating(insulation))

    # ---- ampacity

    def base_capacity_a(
        self, kind, material, insulation, loaded, env, sizes_mm2, pv_installation
    ) -> np.ndarray:
        """Table 310.17 in air; Table 310.16 (raceway, cable or earth) in the ground ("D1",
        "D2"), the insulation's column. ``loaded`` ≤ 3 is the tables' own condition; more
        conductors are adjusted by :meth:`group_factor`."""
        check_option("environment", env, ("air", "D1", "D2"))
        loc = "free_air" if env == "air" else "raceway"
        return ampacity.table_ampacity_a(sizes_mm2, material, self._rating(insulation), loc)

    def terminal_capacity_a(self, kind, material, insulation, sizes_mm2, design):
        """690.8(B)(1) with 110.14(C): the Table 310.16 value in the column of min(insulation
        rating, termination temperature), uncorrected; wherever the cable runs, also in air
        (110.14(C)(1): termination provisions are based on Table 310.16 unless the equipment is
        listed and marked otherwise)."""
        col = min(self._rating(insulation), self.terminal_c(design))
        return ampacity.table_ampacity_a(sizes_mm2, material, col, "raceway")

    def terminal_required_a(self, i_design_a):
        """690.8(B)(1): 1.25 × the 690.8(A) maximum current [A]."""
        return ampacity.nec_rule("conductor_factor") * np.asarray(i_design_a, dtype=float)

    def air_temp_factor(self, temp_c, insulation):
        """310.15(B)(1) table, 30 °C base; a temperature beyond the column raises (the
        conductor may not be used there)."""
        f = float(ampacity.ambient_factor(temp_c, self._rating(insulation)))
        if np.isnan(f):
            raise InputError(
                f"NEC 2023 310.15(B)(1): no ambient correction for {insulation} conductors at "
                f"{temp_c:g} °C (the table corrects a {self._rating(insulation)} °C conductor up "
                f"to {ampacity.ambient_limit_c(self._rating(insulation)):g} °C ambient)"
            )
        return f

    def ground_temp_factor(self, temp_c, insulation):
        """The 310.15(B)(1) table with the earth temperature as ambient (30 °C base)."""
        return self.air_temp_factor(temp_c, insulation)

    def soil_factor(self, soil_k_m_w, laying):
        """1: Table 310.16 has no soil correction (each buried circuit carries
        :meth:`buried_note` instead)."""
        return np.ones(np.shape(soil_k_m_w))

    def depth_factor(self, depth_m, diameter_m):
        """1: Table 310.16 has no depth correction (see :meth:`buried_note`)."""
        return np.ones(np.broadcast_shapes(np.shape(depth_m), np.shape(diameter_m)))

    def group_factor(self, count, spacing_m, laying):
        """Table 310.15(C)(1) by the current-carrying conductors in the segment (``count``:
        conductors, :attr:`group_counts`), all taken as one raceway or bundle whatever the
        spacing (conservative; see :meth:`buried_note`). A segment without conductors: 1."""
        n = np.maximum(np.asarray(count, dtype=float), 1.0)
        return ampacity.adjustment_factor(np.ceil(n))

    def air_group_factor(self, count, arrangement):
        """Table 310.15(C)(1) by the current-carrying conductors sharing the stretch where
        ``"bunched"``; 1 where ``"spaced"`` (spacing maintained, not in a raceway)."""
        n = np.maximum(np.asarray(count, dtype=float), 1.0)
        arr = np.broadcast_to(np.asarray(arrangement, dtype=object), n.shape)
        bad = ~np.isin(arr, self.air_arrangements)
        if np.any(bad):
            check_option("air_arrangement", str(arr[bad][0]), self.air_arrangements)
        return np.where(arr == "spaced", 1.0, ampacity.adjustment_factor(np.ceil(n)))

    def buried_note(self, env: str) -> str:
        where = {"D1": "in duct", "D2": "direct-buried", "D1+D2": "in duct and direct-buried"}
        check_option("buried environment", env, tuple(where))
        return (
            f"{where[env]}: NEC 2023 Table 310.16 at the ground temperature, the trench's "
            "conductors as one bundle; soil, depth and spacing not represented (no 310.14(B) "
            "calculation): review"
        )

    def short_section(self, stretch_m, circuit_m):
        """310.14(A)(2) exception: a stretch no longer than 10 ft and than 10 % of the circuit
        length at the higher ampacity (the circuit less the stretch; conservative reading of
        "the circuit length figured at the higher ampacity")."""
        stretch = np.asarray(stretch_m, dtype=float)
        rest = np.asarray(circuit_m, dtype=float) - stretch
        return stretch <= ampacity.short_section_max_m(rest) * (1.0 + _REL)

    # ---- impedance

    def reactance_ohm_km(self, sizes_mm2, insulation, phases):
        """Chapter 9 Table 9 reactance, PVC conduit (three single conductors, 60 Hz)."""
        return impedance.reactance_ohm_km(sizes_mm2, "pvc")

    def ac_resistance_factor(self, sizes_mm2, material, r_ohm_km, frequency_hz, phases):
        """R_ac / R_dc from Chapter 9 Table 9 (PVC conduit) over Table 8, both at 75 °C; 1 for d.c.

        Table 9 gives small sizes to two significant figures (3.1 against Table 8's 3.14 Ω/kft),
        where skin effect is negligible: the ratio is floored at 1. Table 9 is for 60 Hz; other
        frequencies are refused. Sizes Table 9 lacks (700, 800, 900 kcmil) are refused.
        """
        ph = np.asarray(phases)
        s = np.asarray(sizes_mm2, dtype=float)
        shape = np.broadcast_shapes(s.shape, np.shape(r_ohm_km), ph.shape)
        f = np.where(ph == 0, 0.0, frequency_hz)
        if not np.any(f > 0):
            return np.ones(shape)
        if np.any((f > 0) & ~np.isclose(f, 60.0)):
            raise InputError(
                "rules 'nec' (NEC 2023): a.c. resistance is from Chapter 9 Table 9, for 60 Hz: "
                "set frequency_hz = 60"
            )
        ratio = impedance.ac_resistance_ohm_km(s, material, "pvc") / (
            impedance.dc_resistance_ohm_km(s, material, 75.0)
        )
        if np.any(np.isnan(ratio)):
            raise _not_yet("a.c. resistance of 700, 800, 900 kcmil", "not in Chapter 9 Table 9")
        return np.broadcast_to(np.where(f > 0, np.maximum(ratio, 1.0), 1.0), shape).copy()

    def k_adiabatic(self, material, insulation, sizes_mm2):
        raise _not_yet("adiabatic short-circuit k", "the NEC has no such table")

    def short_circuit_note(self) -> str:
        return (
            "short-circuit withstand not checked: NEC 2023 has no adiabatic table (ICEA P-32-382 "
            "not applied): review"
        )

    # ---- currents and protection

    def string_protection(self, isc_a, strings_in_parallel, max_fuse_a, fuse_a, ratings_a):
        """690.9(A)/(B) source-circuit fuses (a :class:`calc.pv.StringProtection`).

        Required where the other parallel source circuits can feed a fault more than the
        module's maximum series fuse: (n − 1) · 1.25 · Isc > max fuse (not given: required above
        ``unfused_max_strings_no_ocpr`` strings in parallel, 2: common practice, as 2 cannot
        backfeed more than one string's own current). Rating:
        the smallest of ``ratings_a`` ≥ 1.25 · I_max = 1.5625 · Isc, which must not exceed the
        module's maximum series fuse; a fuse fixed by the combiner is checked against the same
        range.
        """
        isc = np.asarray(isc_a, dtype=float)
        n = np.asarray(strings_in_parallel, dtype=float)
        ocpr = np.asarray(max_fuse_a, dtype=float)
        fixed = np.asarray(fuse_a, dtype=float)
        isc, n, ocpr, fixed = np.broadcast_arrays(isc, n, ocpr, fixed)
        i_max = _i_max(isc)
        no_ocpr = np.isnan(ocpr)
        unfused = ampacity.nec_rule("unfused_max_strings_no_ocpr")
        required = np.where(
            no_ocpr, n > unfused, (n - 1.0) * i_max > np.nan_to_num(ocpr) * (1 + _REL)
        )
        lower = ampacity.nec_rule("ocpd_factor") * i_max
        upper = np.where(no_ocpr, np.inf, ocpr)
        ratings = np.sort(np.asarray(ratings_a, dtype=float))
        fuse, ok = fuse_in_range(lower, upper, required, fixed, ratings)
        has_fixed = ~np.isnan(fixed)
        note = np.full(isc.shape, "", dtype=object)
        assumed = no_ocpr & (required | has_fixed)
        note[assumed] = (
            "max_fuse_a not given: source-circuit fuses assumed required from 3 parallel strings "
            "(690.9(A)); check the fuse against the module maximum series fuse rating"
        )
        bad = ~ok
        for i in np.flatnonzero(bad):
            what = f"fixed fuse {fixed[i]:g} A" if has_fixed[i] else "no 240.6(A) fuse rating"
            text = (
                f"{what} within 1.25 × I_max {lower[i]:.1f} A … module maximum series fuse "
                f"{upper[i]:g} A (690.9(B))"
            )
            note[i] = f"{note[i]}; {text}" if note[i] else text
        return pv.StringProtection(required, fuse, lower, upper, ok, note.astype(str))

    def string_design_current_a(self, isc_a, strings_in_parallel, fuse_a) -> np.ndarray:
        """690.8(A)(1)(a)(1) maximum current 1.25 · Isc; an unfused source circuit among n in
        parallel also carries the others' (n − 1) · 1.25 · Isc (690.9(A) exception, the
        conductor then needs no device) [A]."""
        i_max = _i_max(isc_a)
        n = np.asarray(strings_in_parallel, dtype=float)
        unfused = np.isnan(np.asarray(fuse_a, dtype=float))
        return np.where(unfused, np.maximum(i_max, (n - 1.0) * i_max), i_max)

    def array_design_current_a(self, isc_a, n_strings) -> np.ndarray:
        """690.8(A)(2): the sum of the source circuits' maximum currents, 1.25 · Isc · n [A]."""
        return _i_max(isc_a) * np.asarray(n_strings, dtype=float)

    def ac_current_a(self, ac_kva, ac_v, phases):
        return pv.ac_current_a(ac_kva, ac_v, phases)

    def gpv_fuse_ratings_a(self, allowed_a=None, setting="fuse_ratings_a"):
        """240.6(A) standard ratings including the fuse-only 1, 3, 6, 10 A."""
        return _restricted(protection.standard_ratings_a(fuses=True), allowed_a, setting)

    def breaker_ratings_a(self, device, allowed_a=None):
        check_option("breaker device", device, self.breaker_devices)
        return _restricted(protection.standard_ratings_a(), allowed_a, "breaker_ratings_a")

    def i2_factor(self, device):
        raise _not_yet("conventional operating current I2", "an IEC 60364-4-43 concept")

    def bifacial_isc_a(self, isc_a, bifaciality, rear_irradiance_ratio=None, isc_bifacial_a=np.nan):
        """The datasheet bifacial Isc where given, else Isc (1 + φ G_rear/G_front) — the IEC
        rule set's design Isc (:func:`calc.protection.bifacial_isc_a`), as issue 17 asks; 690.8
        takes the module's rated Isc, and the listing's bifacial rating governs where given."""
        return iec_protection.bifacial_isc_a(
            isc_a, bifaciality, rear_irradiance_ratio, isc_bifacial_a
        )

    def backfeed_a(self, isc_array_a, group, source=None):
        """What the other circuits on the inverter input feed into a fault: the sum of their
        690.8(A) maximum currents, 1.25 · (Σ Isc − own Isc) (:func:`calc.protection.backfeed_a`)."""
        return iec_protection.backfeed_a(isc_array_a, group, source)

    def array_fuse(self, isc_array_a, ratings_a=None):
        """690.9(B) output-circuit device: the smallest of ``ratings_a`` (240.6(A)) ≥ 1.25 ·
        I_max = 1.5625 · Isc; ``upper_a`` inf (its conductor limits it, 240.4)."""
        isc = np.asarray(isc_array_a, dtype=float)
        lower = ampacity.nec_rule("ocpd_factor") * _i_max(isc)
        r = np.sort(np.asarray(self.gpv_fuse_ratings_a() if ratings_a is None else ratings_a))
        pick = smallest_rating_a(r, lower)
        ok = np.isfinite(pick)
        factor = ampacity.nec_rule("ocpd_factor")
        note = np.where(ok, "", f"no 240.6(A) rating ≥ {factor:g} × I_max").astype(str)
        return ArrayFuse(pick, lower, np.full(isc.shape, np.inf), ok, note)

    def array_min_capacity_a(self, isc_array_a, backfeed_current_a, fuse_a):
        """With an output-circuit device the conductor needs its own 690.8(A) maximum current
        (1.25 · Isc); that the device protects it is :meth:`conductor_protected`'s check."""
        return _i_max(isc_array_a)

    def array_cable_check(self, iz_a, backfeed_current_a, fuse_a):
        """The conductor carries the backfeed (ampacity ≥ it) or a device is fitted (its
        240.4 protection checked while sizing)."""
        iz = np.asarray(iz_a, dtype=float)
        bf = np.asarray(backfeed_current_a, dtype=float)
        needed = ~(iz >= bf * (1.0 - _REL))
        ok = ~needed | np.isfinite(np.asarray(fuse_a, dtype=float))
        note = np.full(iz.shape, "", dtype=object)
        for i in np.flatnonzero(~ok):
            note[i] = f"backfeed {bf[i]:.0f} A > ampacity {iz[i]:.0f} A and no device (690.9(A))"
        return ProtectionCheck(needed, ok, note.astype(str))

    def ac_max_current_a(self, ac_kva, ac_v, phases, ac_max_a):
        """690.8(A)(3) / 705.28(A) (from memory): the inverter's continuous output current
        rating, else the rated current."""
        return pv.ac_max_current_a(ac_kva, ac_v, phases, ac_max_a)

    def ac_breaker(self, ib_a, device, allowed_a=None, setting="breaker_ratings_a"):
        """Inverter output breaker: the smallest 240.6(A) rating ≥ 1.25 × the continuous output
        current (690.9(B) / 705.30, from memory); ``i2_a`` nan (no I2 rule); ``iz_min_a`` the
        continuous current (690.8(B)(2)); 240.4 is checked per size."""
        check_option("breaker device", device, self.breaker_devices)
        ratings = _restricted(protection.standard_ratings_a(), allowed_a, setting)
        ib = np.atleast_1d(np.asarray(ib_a, dtype=float))
        factor = ampacity.nec_rule("ocpd_factor")
        lower = factor * ib
        pick = smallest_rating_a(ratings, lower)
        ok = np.isfinite(pick)
        note = np.full(ib.shape, "", dtype=object)
        for i in np.flatnonzero(~ok):
            note[i] = f"{factor:g} × I {lower[i]:.1f} A above the largest rating {ratings[-1]:g} A"
        return Breaker(pick, np.full(ib.shape, np.nan), ib.copy(), ok, note.astype(str))

    def overload_check(self, ib_a, in_a, iz_a, i2_a):
        """In ≥ 1.25 × continuous current and 240.4(B)/(C) on the sized ampacity (In ≤ Iz, or
        In ≤ 800 A and the next 240.6(A) rating above Iz); 240.4(D) of small conductors is
        checked per size while sizing. No I2 rule (``i2_ok`` all True)."""
        ib = np.asarray(ib_a, dtype=float)
        inn = np.asarray(in_a, dtype=float)
        iz = np.asarray(iz_a, dtype=float)
        factor = ampacity.nec_rule("ocpd_factor")
        ib_ok = inn >= factor * ib * (1.0 - _REL)
        next_up = (inn <= ampacity.nec_rule("next_size_up_max_a")) & (
            inn == protection.next_standard_rating_a(iz)
        )
        iz_ok = (inn <= iz * (1.0 + _REL)) | next_up
        ok = ib_ok & iz_ok
        note = np.full(ib.shape, "", dtype=object)
        for i in np.flatnonzero(~ok):
            parts = []
            if not ib_ok[i]:
                parts.append(f"In {inn[i]:g} A < {factor:g} × I {factor * ib[i]:.1f} A")
            if not iz_ok[i]:
                parts.append(f"In {inn[i]:g} A does not protect ampacity {iz[i]:.1f} A (240.4)")
            note[i] = "; ".join(parts)
        return OverloadCheck(ib_ok, iz_ok, np.ones(ib.shape, bool), ok, note.astype(str))

    def conductor_protected(self, ocpd_a, ampacity_a, sizes_mm2, material):
        """240.4(B)/(C)/(D) (:func:`calc.nec.protection.conductor_protected`) where a device is
        fitted (``ocpd_a`` finite); True where none."""
        ocpd = np.asarray(ocpd_a, dtype=float)
        has = np.isfinite(ocpd)
        prot = protection.conductor_protected(
            np.where(has, ocpd, 0.0), ampacity_a, sizes_mm2, material
        )
        return ~has | prot

    def voc_max_v(self, voc_v, voc_coeff_pct_per_c, min_temp_c):
        """690.7(A): the module's Voc coefficient where given, else Table 690.7(A)."""
        return nec_pv.max_voltage_v(voc_v, 1, min_temp_c, voc_coeff_pct_per_c)


def _not_yet(what: str, reason: str) -> InputError:
    return InputError(f"rules 'nec' (NEC 2023): {what} is not available yet: {reason}")


def _restricted(standard_a: np.ndarray, allowed_a, setting: str) -> np.ndarray:
    if allowed_a is None:
        return standard_a
    allowed = np.asarray(allowed_a, dtype=float).ravel()
    known = np.isclose(allowed[:, None], standard_a[None, :], rtol=1e-9, atol=0.0).any(axis=1)
    if not known.all():
        vals = ", ".join(f"{v:g} A" for v in allowed[~known])
        raise InputError(f"{setting}: {vals} not in the NEC 2023 240.6(A) standard ratings")
    return np.sort(np.unique(allowed))
