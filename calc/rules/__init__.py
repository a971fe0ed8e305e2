"""Rule sets: which standards' tables and rules size a circuit.

A rule set is a :class:`RuleSet` subclass in its own module under ``calc/rules/`` with its data
files in ``calc/data/``; the engine only calls the methods below. Adding a rule set (e.g. NEC with
AWG sizes) means one new module, its data files and one line in ``_MODULES`` — no edits elsewhere.

>>> get_rules("iec").name
'iec'
>>> get_rules("nec")
Traceback (most recent call last):
...
calc.errors.UnknownOptionError: rules must be one of 'iec'; got 'nec'
"""

from __future__ import annotations

import abc
import functools
import importlib
from typing import ClassVar

import numpy as np

from calc.errors import check_option

__all__ = ["RuleSet", "get_rules", "rule_names"]

# rule set name -> "module:class"
_MODULES: dict[str, str] = {"iec": "calc.rules.iec:IecRules"}


class RuleSet(abc.ABC):
    """Interface of a rule set (all arrays SI floats; sizes in mm²).

    Kinds: 0 string, 1 array, 2 ac, 3 sub-array. Environments: "air", "D1" (duct in ground),
    "D2" (direct in ground). Insulation "PV" denotes the PV string cable of the rule set.
    """

    name: ClassVar[str]
    description: ClassVar[str]
    materials: ClassVar[tuple[str, ...]]
    insulations: ClassVar[tuple[str, ...]]

    @abc.abstractmethod
    def default_sizes_mm2(self, kind: int, material: str) -> tuple[float, ...]:
        """Default ascending size list for a kind and material."""

    @abc.abstractmethod
    def r20_ohm_km(self, kind: int, material: str, sizes_mm2: np.ndarray) -> np.ndarray:
        """Conductor resistance at 20 °C [Ω/km] of the cable used for a kind."""

    @abc.abstractmethod
    def alpha20_per_k(self, material: str) -> float:
        """Temperature coefficient of resistance at 20 °C [1/K]."""

    @abc.abstractmethod
    def theta_max_c(self, insulation: str, env: str) -> float:
        """Conductor temperature on which the capacity in ``env`` is based [°C]."""

    @abc.abstractmethod
    def base_capacity_a(
        self,
        kind: int,
        material: str,
        insulation: str,
        loaded: int,
        env: str,
        sizes_mm2: np.ndarray,
        pv_installation: str,
    ) -> np.ndarray:
        """Tabulated capacity at reference conditions [A]; nan where not tabulated."""

    @abc.abstractmethod
    def air_temp_factor(self, temp_c: float, insulation: str) -> float:
        """Correction factor for ambient air temperature [1]."""

    @abc.abstractmethod
    def ground_temp_factor(self, temp_c: float, insulation: str) -> float:
        """Correction factor for ground temperature [1]."""

    @abc.abstractmethod
    def soil_factor(self, soil_k_m_w: np.ndarray, laying: np.ndarray) -> np.ndarray:
        """Correction factor for soil thermal resistivity [1]."""

    @abc.abstractmethod
    def depth_factor(self, depth_m: np.ndarray, diameter_m: np.ndarray) -> np.ndarray:
        """Correction factor for laying depth [1]."""

    @abc.abstractmethod
    def group_factor(
        self, count: np.ndarray, spacing_m: np.ndarray, laying: np.ndarray
    ) -> np.ndarray:
        """Reduction factor for grouped buried circuits [1]."""

    @abc.abstractmethod
    def reactance_ohm_km(self, sizes_mm2: np.ndarray, insulation: str, phases: int) -> np.ndarray:
        """Series reactance per conductor [Ω/km]."""

    @abc.abstractmethod
    def ac_resistance_factor(
        self,
        sizes_mm2: np.ndarray,
        material: str,
        r_ohm_km: np.ndarray,
        frequency_hz: float,
        phases: np.ndarray,
    ) -> np.ndarray:
        """Ratio of a.c. to d.c. conductor resistance R/R' [1] (skin and proximity effect).

        ``r_ohm_km`` is the d.c. resistance at the conductor temperature; ``phases`` 0 (d.c.),
        1 or 3. All array arguments broadcast together (e.g. sizes ``[S]``, resistance ``[k, S]``,
        phases ``[k, 1]``); the result has the broadcast shape and is exactly 1 where
        ``phases == 0`` or ``frequency_hz == 0``.
        """

    @abc.abstractmethod
    def k_adiabatic(self, material: str, insulation: str, sizes_mm2: np.ndarray) -> np.ndarray:
        """Adiabatic short-circuit factor k [A·s^0.5/mm²]."""

    @abc.abstractmethod
    def string_protection(self, isc_a, strings_in_parallel, max_fuse_a, fuse_a, ratings_a):
        """String overcurrent protection (returns a :class:`calc.pv.StringProtection`)."""

    @abc.abstractmethod
    def string_design_current_a(self, isc_a, strings_in_parallel, fuse_a) -> np.ndarray:
        """Minimum capacity of string cables [A]."""

    @abc.abstractmethod
    def array_design_current_a(self, isc_a, n_strings) -> np.ndarray:
        """Minimum capacity of array cables [A]."""

    @abc.abstractmethod
    def ac_current_a(self, ac_kva, ac_v, phases) -> np.ndarray:
        """Rated a.c. current [A]."""

    # grouping in air
    #: names of the arrangements of cables in air that :meth:`air_group_factor` accepts
    air_arrangements: ClassVar[tuple[str, ...]]

    @abc.abstractmethod
    def air_group_factor(self, count: np.ndarray, arrangement) -> np.ndarray:
        """Reduction factor for groups of circuits in air [1]; ``arrangement`` (one name, or one
        per circuit) from :attr:`air_arrangements`."""

    # ---- overcurrent protection (see calc.protection for the IEC decision rules)

    breaker_devices: ClassVar[tuple[str, ...]]

    @abc.abstractmethod
    def gpv_fuse_ratings_a(self, allowed_a=None, setting: str = "fuse_ratings_a") -> np.ndarray:
        """PV fuse ratings [A], ascending; ``allowed_a`` restricts them (unknown values raise,
        naming ``setting``)."""

    @abc.abstractmethod
    def breaker_ratings_a(self, device: str, allowed_a=None) -> np.ndarray:
        """Circuit-breaker ratings [A] of a device kind in ``breaker_devices``, ascending."""

    @abc.abstractmethod
    def i2_factor(self, device: str) -> float:
        """Conventional operating current I2 / In of a device kind ("gpv" or a breaker) [1]."""

    @abc.abstractmethod
    def bifacial_isc_a(
        self, isc_a, bifaciality, rear_irradiance_ratio=None, isc_bifacial_a=np.nan
    ) -> np.ndarray:
        """Design module short-circuit current with the bifacial rear-side gain [A]."""

    @abc.abstractmethod
    def backfeed_a(self, isc_array_a, group, source=None) -> np.ndarray:
        """Current the rest of an inverter input feeds into a fault on one array or sub-array
        cable [A] (``source``: the cables making up the input's whole current)."""

    @abc.abstractmethod
    def array_fuse(self, isc_array_a, ratings_a=None):
        """Array fuse range and rating (returns a :class:`calc.protection.ArrayFuse`)."""

    @abc.abstractmethod
    def array_min_capacity_a(self, isc_array_a, backfeed_current_a, fuse_a) -> np.ndarray:
        """Minimum capacity of array cables with the backfeed and any array fuse [A]."""

    @abc.abstractmethod
    def array_cable_check(self, iz_a, backfeed_current_a, fuse_a):
        """Backfeed check of sized array cables (a :class:`calc.protection.ProtectionCheck`)."""

    @abc.abstractmethod
    def ac_max_current_a(self, ac_kva, ac_v, phases, ac_max_a) -> np.ndarray:
        """a.c. design current Ib: the inverter's maximum output current, else rated [A]."""

    @abc.abstractmethod
    def ac_breaker(self, ib_a, device: str, allowed_a=None, setting: str = "breaker_ratings_a"):
        """Breaker of a.c. circuits of a device kind (a :class:`calc.protection.Breaker`);
        ``allowed_a`` restricts the ratings (unknown values raise, naming ``setting``)."""

    @abc.abstractmethod
    def overload_check(self, ib_a, in_a, iz_a, i2_a):
        """Cable / overload-device coordination (a :class:`calc.protection.OverloadCheck`)."""


def rule_names() -> tuple[str, ...]:
    """Names of the available rule sets."""
    return tuple(_MODULES)


@functools.cache
def get_rules(name: str) -> RuleSet:
    """The rule set registered under ``name`` (raises with the valid names otherwise)."""
    check_option("rules", name, rule_names())
    module, cls = _MODULES[name].split(":")
    return getattr(importlib.import_module(module), cls)()
