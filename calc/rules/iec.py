"""IEC rule set ``"iec"``.

* IEC 60364-5-52:2009 (Ed.3) Annex B: capacities (B.52.2–B.52.5, B.52.10, B.52.12) and correction
  factors (B.52.14–B.52.16, B.52.18, B.52.19) — see :mod:`calc.ampacity`;
* IEC 62548:2016: PV design currents and string protection (from memory) — see :mod:`calc.pv`;
* IEC 62548:2016 array protection against backfeed, with the bifacial I_SC that IEC 62548-1:2023
  adds (formula from memory); IEC 60269-6 gPV fuse ratings (catalogue practice); IEC 60898-1 and
  IEC 60947-2 breaker ratings and I2; IEC 60364-4-43:2008 433.1 — see :mod:`calc.protection`;
* IEC 60228:2004: conductor resistance (class 2 Cu/Al for feeders; class 5 tinned Cu for PV cable);
* IEC 60287-1-1 / -2-1: resistance at temperature, a.c. resistance (skin and proximity effect,
  IEC 60287-1-1 2.1), and T4 for the depth factor;
* EN 50618:2014 / IEC 62930:2017: PV string cable, in-air ratings Table A.3 (from memory);
* IEC 60364-4-43:2008 Table 43A: adiabatic k; BS 7671 Appendix 4: reactance.
"""

from __future__ import annotations

from typing import ClassVar

import numpy as np

from calc import ampacity, protection, pv, resistance, shortcircuit
from calc.errors import InputError, check_option
from calc.kinds import KIND_STRING
from calc.rules import RuleSet
from calc.tables import load_table


class IecRules(RuleSet):
    """IEC 60364-5-52:2009 / IEC 62548:2016 / IEC 60228:2004 / IEC 60287 rule set."""

    name: ClassVar[str] = "iec"
    description: ClassVar[str] = (
        "IEC 60364-5-52:2009 Annex B, IEC 62548:2016, IEC 60228:2004, IEC 60287, EN 50618:2014"
    )
    materials: ClassVar[tuple[str, ...]] = ("Cu", "Al")
    insulations: ClassVar[tuple[str, ...]] = ("XLPE", "PVC")
    breaker_devices: ClassVar[tuple[str, ...]] = protection.BREAKER_DEVICES

    def default_sizes_mm2(self, kind: int, material: str) -> tuple[float, ...]:
        """String: 4, 6, 10 mm² (PV cable ≥ 4 mm² is common practice); feeders: IEC 60228 16–300 mm²
        (the sizes for which Cu and Al are tabulated in every environment)."""
        t = load_table("default_size_lists.csv")
        sizes = t["size_mm2"][t.where(kind="string" if kind == KIND_STRING else "feeder")]
        return tuple(float(v) for v in sizes)

    def r20_ohm_km(self, kind: int, material: str, sizes_mm2: np.ndarray) -> np.ndarray:
        if kind == KIND_STRING:
            return resistance.r20_ohm_km(sizes_mm2, "Cu", 5, tinned=True)
        return resistance.r20_ohm_km(sizes_mm2, material, 2)

    def alpha20_per_k(self, material: str) -> float:
        return resistance.alpha20_per_k(material)

    def theta_max_c(self, insulation: str, env: str) -> float:
        t = load_table("insulation_temperatures.csv")
        col = "theta_air_c" if env == "air" else "theta_buried_c"
        return float(t[col][t.where(insulation=insulation)][0])

    def base_capacity_a(
        self, kind, material, insulation, loaded, env, sizes_mm2, pv_installation
    ) -> np.ndarray:
        check_option("environment", env, ("air", "D1", "D2"))
        if kind == KIND_STRING:
            if env == "air":
                return ampacity.pv_cable_capacity_a(sizes_mm2, pv_installation)
            return ampacity.pv_cable_buried_capacity_a(sizes_mm2, env)
        if env == "air":
            return ampacity.free_air_capacity_a(sizes_mm2, material, insulation, loaded)
        return ampacity.buried_capacity_a(sizes_mm2, material, insulation, loaded, env)

    def air_temp_factor(self, temp_c, insulation):
        return float(ampacity.air_temp_factor(temp_c, insulation))

    def ground_temp_factor(self, temp_c, insulation):
        return float(ampacity.ground_temp_factor(temp_c, insulation))

    def soil_factor(self, soil_k_m_w, laying):
        return ampacity.soil_factor(soil_k_m_w, laying)

    def depth_factor(self, depth_m, diameter_m):
        return ampacity.depth_factor(depth_m, diameter_m, ampacity.reference_condition("depth_m"))

    #: IEC 60364-5-52:2009 Tables B.52.18 / B.52.19 give factors per clear spacing
    grouping_uses_spacing: ClassVar[bool] = True

    def group_factor(self, count, spacing_m, laying):
        return ampacity.group_factor(count, spacing_m, laying)

    def reactance_ohm_km(self, sizes_mm2, insulation, phases):
        return resistance.reactance_ohm_km(sizes_mm2, insulation, phases)

    def ac_resistance_factor(self, sizes_mm2, material, r_ohm_km, frequency_hz, phases):
        """IEC 60287-1-1 (Ed.2.1 2014) 2.1: R/R' = 1 + y_s + y_p of single-core cables touching.

        Cables: single-core 0.6/1 kV, extruded insulation, circular compacted class 2 conductors;
        k_s, k_p from IEC 60287-1-1 Table 2 (Cu 1/1, Al 1/0.8); d_c derived from the nominal area
        (:func:`calc.resistance.conductor_diameter_mm`) and the axial spacing s equal to a typical
        XLPE cable diameter (:func:`calc.resistance.cable_diameter_mm`, common practice).

        * ``phases == 3``: three single-core cables in trefoil touching, IEC 60287-1-1 2.1.4.1.
          Flat formation would have s = √2 · D for the outer pair (smaller y_p), so trefoil is the
          conservative choice.
        * ``phases == 1``: two single-core cables touching, IEC 60287-1-1 2.1.3,
          y_p = 2.9 F (d_c/s)² (from memory; cross-checked against the three-cable formula, see
          :func:`calc.resistance.proximity_effect_factor`).
        * ``phases == 0``: d.c., factor 1.

        Parallel sets are taken as separate groups, each touching only its own phases (common
        practice). PVC-insulated cables are thicker than XLPE ones, so using XLPE diameters
        over-estimates y_p for them (conservative).
        """
        check_option("material", material, self.materials)
        ph = np.asarray(phases)
        bad = ~np.isin(ph, (0, 1, 3))
        if np.any(bad):
            raise InputError(f"phases must be 0 (d.c.), 1 or 3; got {np.unique(ph[bad]).tolist()}")
        sizes = np.asarray(sizes_mm2, dtype=float)
        r = np.asarray(r_ohm_km, dtype=float)
        shape = np.broadcast_shapes(sizes.shape, r.shape, ph.shape, np.shape(frequency_hz))
        f = np.where(ph == 0, 0.0, frequency_hz)
        if not np.any(f > 0):
            return np.ones(shape)
        ks, kp = resistance.skin_proximity_coefficients(material, "round_stranded", "extruded")
        dc = resistance.conductor_diameter_mm(sizes)
        s = resistance.cable_diameter_mm(sizes)
        conductors = np.where(ph == 3, 3, 2)
        return np.broadcast_to(
            resistance.ac_resistance_factor(r, f, dc, s, ks, kp, conductors), shape
        ).copy()

    def k_adiabatic(self, material, insulation, sizes_mm2):
        return shortcircuit.k_table_43a(material, insulation, sizes_mm2)

    def string_protection(self, isc_a, strings_in_parallel, max_fuse_a, fuse_a, ratings_a):
        return pv.string_protection(isc_a, strings_in_parallel, max_fuse_a, fuse_a, ratings_a)

    def string_design_current_a(self, isc_a, strings_in_parallel, fuse_a):
        return pv.string_design_current_a(isc_a, strings_in_parallel, fuse_a)

    def array_design_current_a(self, isc_a, n_strings):
        return pv.array_design_current_a(isc_a, n_strings)

    def ac_current_a(self, ac_kva, ac_v, phases):
        return pv.ac_current_a(ac_kva, ac_v, phases)

    # grouping in air: IEC 60364-5-52:2009 Table B.52.17 (see calc.ampacity.air_group_factor)
    air_arrangements: ClassVar[tuple[str, ...]] = ampacity.AIR_ARRANGEMENTS

    def air_group_factor(self, count, arrangement):
        return ampacity.air_group_factor(count, arrangement)

    def gpv_fuse_ratings_a(self, allowed_a=None, setting="fuse_ratings_a"):
        return protection.gpv_fuse_ratings_a(allowed_a, setting)

    def breaker_ratings_a(self, device, allowed_a=None):
        return protection.breaker_ratings_a(device, allowed_a)

    def i2_factor(self, device):
        return protection.i2_factor(device)

    def bifacial_isc_a(self, isc_a, bifaciality, rear_irradiance_ratio=None, isc_bifacial_a=np.nan):
        return protection.bifacial_isc_a(isc_a, bifaciality, rear_irradiance_ratio, isc_bifacial_a)

    def backfeed_a(self, isc_array_a, group, source=None):
        return protection.backfeed_a(isc_array_a, group, source)

    def array_fuse(self, isc_array_a, ratings_a=None):
        return protection.array_fuse(isc_array_a, ratings_a)

    def array_min_capacity_a(self, isc_array_a, backfeed_current_a, fuse_a):
        return protection.array_min_capacity_a(isc_array_a, backfeed_current_a, fuse_a)

    def array_cable_check(self, iz_a, backfeed_current_a, fuse_a):
        return protection.array_cable_check(iz_a, backfeed_current_a, fuse_a)

    def ac_max_current_a(self, ac_kva, ac_v, phases, ac_max_a):
        return pv.ac_max_current_a(ac_kva, ac_v, phases, ac_max_a)

    def ac_breaker(self, ib_a, device, allowed_a=None, setting="breaker_ratings_a"):
        """Smallest rating of ``device`` (optionally restricted) ≥ Ib, with the device's I2."""
        ratings = protection.breaker_ratings_a(device, allowed_a, setting)
        return protection.ac_breaker(ib_a, ratings, protection.i2_factor(device))

    def overload_check(self, ib_a, in_a, iz_a, i2_a):
        return protection.overload_check(ib_a, in_a, iz_a, i2_a)
