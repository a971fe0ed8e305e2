"""NEC rule set ``"nec"`` — NFPA 70 National Electrical Code, 2023 edition (NEC 2023).

**Not registered yet** (``calc.rules._MODULES`` lists only ``"iec"``; ``rules = "nec"`` is still
refused): this class implements the parts of :class:`~calc.rules.RuleSet` that the NEC 2023
functions of :mod:`calc.nec` support, and refuses the others with an
:class:`~calc.errors.InputError` naming what is missing, so that nothing passes silently.
Missing before it can be registered:

* direct burial (environment ``"D2"``), soil resistivity and grouping of buried circuits: Table
  310.16's earth ratings do not represent the site's soil, depth and spacing; an engineered method
  (310.14(B), IEC 60287 / Neher–McGrath) is a later issue — until then such circuits must carry a
  note, which needs the engine's note mechanism, not a silent factor of 1;
* 690.8(B) is a two-condition rule (1.25 × I_max before correction in the termination's column,
  I_max after correction and adjustment in the insulation's column); the engine's single design
  current cannot express the first condition: it needs a rule-set hook (next step). The design
  currents below are the 690.8(A) maximum currents;
* grouping in air counts current-carrying conductors (Table 310.15(C)(1)), not circuits: the engine
  must pass conductors per circuit (2 d.c., 3 three-phase);
* NEC overcurrent logic differs from IEC 60364-4-43 433.1 (no I2 rule; 240.4(B)/(D), 690.9(B)): the
  array-fuse, backfeed, I2 and overload-check methods are refused; :mod:`calc.nec.protection` has
  the NEC functions for the engine to call once it has NEC hooks;
* adiabatic short-circuit k (NEC has no table; ICEA P-32-382 is the US reference) is refused.

Insulation names are the temperature ratings ``"90C"``, ``"75C"``, ``"60C"`` (e.g. THWN-2, XHHW-2,
USE-2 are 90 °C types) and ``"PV"`` for PV wire (90 °C wet/dry, from memory). Sizes are mm² of the
NEC sizes (:func:`calc.nec.sizes.size_from_label`). The 110.14(C) terminal limit (75 °C by default,
``nec_2023_rules.csv``; :func:`calc.nec.ampacity.ampacity_a`) is not applied through this interface
yet: :meth:`NecRules.base_capacity_a` returns the insulation's column (next step, with 690.8(B)).
"""

from __future__ import annotations

from typing import ClassVar

import numpy as np

from calc import pv
from calc.errors import InputError, check_option
from calc.nec import ampacity, impedance, protection, sizes
from calc.nec import pv as nec_pv
from calc.rules import RuleSet
from calc.tables import load_table

__all__ = ["NecRules"]

_RATING = {"90C": 90, "75C": 75, "60C": 60, "PV": 90}


def _not_yet(what: str, reason: str) -> InputError:
    return InputError(f"rules 'nec' (NEC 2023): {what} is not available yet: {reason}")


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
    air_arrangements: ClassVar[tuple[str, ...]] = ()

    def _rating(self, insulation: str) -> int:
        check_option("insulation", insulation, tuple(_RATING))
        return _RATING[insulation]

    def default_sizes_mm2(self, kind: int, material: str) -> tuple[float, ...]:
        """String: 12–6 AWG; feeders 6 AWG–1000 kcmil (``nec_2023_default_size_lists.csv``,
        common practice)."""
        t = load_table("nec_2023_default_size_lists.csv")
        labels = t["size_label"][t.where(kind="string" if kind == 0 else "feeder")]
        return tuple(float(v) for v in sizes.size_from_label(labels))

    def r20_ohm_km(self, kind: int, material: str, sizes_mm2: np.ndarray) -> np.ndarray:
        """Chapter 9 Table 8 (stranded, uncoated Cu or Al) at 75 °C, brought to 20 °C by the
        table's note R2 = R1 [1 + α (T2 − 75)] (derived)."""
        return impedance.dc_resistance_ohm_km(sizes_mm2, material, 20.0)

    def alpha20_per_k(self, material: str) -> float:
        """α at 20 °C equivalent to the Table 8 note's α75: α20 = α75 / (1 + α75 (20 − 75)), so
        that R20 (1 + α20 (θ − 20)) reproduces R75 (1 + α75 (θ − 75)) exactly (derived)."""
        a75, t_ref = impedance.table8_alpha_per_k(material)
        return a75 / (1.0 + a75 * (20.0 - t_ref))

    def theta_max_c(self, insulation: str, env: str) -> float:
        return float(self._rating(insulation))

    def base_capacity_a(
        self, kind, material, insulation, loaded, env, sizes_mm2, pv_installation
    ) -> np.ndarray:
        """Table 310.17 in air, Table 310.16 for raceway in the ground ("D1"); ``"D2"`` refused."""
        check_option("environment", env, ("air", "D1", "D2"))
        if env == "D2":
            raise _not_yet(
                "direct burial",
                "Table 310.16's earth rating does not represent the soil, depth and spacing; "
                "an engineered rating (310.14(B)) is needed",
            )
        loc = "free_air" if env == "air" else "raceway"
        return ampacity.table_ampacity_a(sizes_mm2, material, self._rating(insulation), loc)

    def air_temp_factor(self, temp_c, insulation):
        return float(ampacity.ambient_factor(temp_c, self._rating(insulation)))

    def ground_temp_factor(self, temp_c, insulation):
        """The 310.15(B)(1) table with the earth temperature as ambient (30 °C base)."""
        return float(ampacity.ambient_factor(temp_c, self._rating(insulation)))

    def soil_factor(self, soil_k_m_w, laying):
        raise _not_yet("soil thermal resistivity", "NEC tables have no soil correction")

    def depth_factor(self, depth_m, diameter_m):
        raise _not_yet("laying depth", "NEC tables have no depth correction")

    def group_factor(self, count, spacing_m, laying):
        raise _not_yet("grouping of buried circuits", "needs an engineered method (310.14(B))")

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
            raise _not_yet("a.c. resistance other than 60 Hz", "Chapter 9 Table 9 is for 60 Hz")
        ratio = impedance.ac_resistance_ohm_km(s, material, "pvc") / (
            impedance.dc_resistance_ohm_km(s, material, 75.0)
        )
        if np.any(np.isnan(ratio)):
            raise _not_yet("a.c. resistance of 700, 800, 900 kcmil", "not in Chapter 9 Table 9")
        return np.broadcast_to(np.where(f > 0, np.maximum(ratio, 1.0), 1.0), shape).copy()

    def k_adiabatic(self, material, insulation, sizes_mm2):
        raise _not_yet("adiabatic short-circuit k", "the NEC has no such table")

    def string_protection(self, isc_a, strings_in_parallel, max_fuse_a, fuse_a, ratings_a):
        raise _not_yet("string protection decision", "690.9(A) exceptions need engine hooks")

    def string_design_current_a(self, isc_a, strings_in_parallel, fuse_a) -> np.ndarray:
        """690.8(A)(1)(a)(1) maximum current of a source circuit, 1.25 · Isc [A]."""
        return nec_pv.source_circuit_max_current_a(isc_a)

    def array_design_current_a(self, isc_a, n_strings) -> np.ndarray:
        """690.8(A)(2): the sum of the source circuits' maximum currents, 1.25 · Isc · n [A]."""
        return nec_pv.source_circuit_max_current_a(isc_a) * np.asarray(n_strings, dtype=float)

    def ac_current_a(self, ac_kva, ac_v, phases):
        return pv.ac_current_a(ac_kva, ac_v, phases)

    def air_group_factor(self, count, arrangement):
        raise _not_yet(
            "grouping in air", "Table 310.15(C)(1) counts current-carrying conductors, not circuits"
        )

    def gpv_fuse_ratings_a(self, allowed_a=None, setting="fuse_ratings_a"):
        """240.6(A) standard ratings including the fuse-only 1, 3, 6, 10 A."""
        return _restricted(protection.standard_ratings_a(fuses=True), allowed_a, setting)

    def breaker_ratings_a(self, device, allowed_a=None):
        check_option("breaker device", device, self.breaker_devices)
        return _restricted(protection.standard_ratings_a(), allowed_a, "breaker_ratings_a")

    def i2_factor(self, device):
        raise _not_yet("conventional operating current I2", "an IEC 60364-4-43 concept")

    def bifacial_isc_a(self, isc_a, bifaciality, rear_irradiance_ratio=None, isc_bifacial_a=np.nan):
        raise _not_yet("bifacial Isc", "the listing's bifacial Isc rule must be confirmed for NEC")

    def backfeed_a(self, isc_array_a, group, source=None):
        raise _not_yet("backfeed", "690.9(A) needs engine hooks")

    def array_fuse(self, isc_array_a, ratings_a=None):
        raise _not_yet("array fuse", "use calc.nec.protection.pv_ocpd through an engine hook")

    def array_min_capacity_a(self, isc_array_a, backfeed_current_a, fuse_a):
        raise _not_yet("array minimum capacity with backfeed", "690.9(A) needs engine hooks")

    def array_cable_check(self, iz_a, backfeed_current_a, fuse_a):
        raise _not_yet("array cable backfeed check", "690.9(A) needs engine hooks")

    def ac_max_current_a(self, ac_kva, ac_v, phases, ac_max_a):
        """690.8(A)(3): the inverter's continuous output current rating, else the rated current."""
        return pv.ac_max_current_a(ac_kva, ac_v, phases, ac_max_a)

    def ac_breaker(self, ib_a, device, allowed_a=None, setting="breaker_ratings_a"):
        raise _not_yet("a.c. breaker", "use calc.nec.protection (240.4, 690.9(B)) via a hook")

    def overload_check(self, ib_a, in_a, iz_a, i2_a):
        raise _not_yet("overload check", "the NEC uses 240.4, not IEC 60364-4-43 433.1")


def _restricted(standard_a: np.ndarray, allowed_a, setting: str) -> np.ndarray:
    if allowed_a is None:
        return standard_a
    allowed = np.asarray(allowed_a, dtype=float).ravel()
    known = np.isclose(allowed[:, None], standard_a[None, :], rtol=1e-9, atol=0.0).any(axis=1)
    if not known.all():
        vals = ", ".join(f"{v:g} A" for v in allowed[~known])
        raise InputError(f"{setting}: {vals} not in the NEC 2023 240.6(A) standard ratings")
    return np.sort(np.unique(allowed))
