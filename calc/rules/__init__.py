"""Rule sets: which standards' tables and rules size a circuit.

A rule set is a :class:`RuleSet` subclass in its own module under ``calc/rules/`` with its data
files in ``calc/data/``; the engine only calls the methods below. Adding a rule set (e.g. NEC with
AWG sizes) means one new module, its data files and one line in ``_MODULES`` — no edits elsewhere.

The methods after the abstract ones are *hooks* with the IEC behaviour as their default; a rule
set whose rules differ in structure (NEC 2023: two ampacity conditions, conductors counted for
grouping, protection by 240.4) overrides them (see :mod:`calc.rules.nec`) and declares so in the
capability attributes beside them (``terminal_condition``, ``short_section_exception``,
``buried_review``, ``short_circuit_checked``, ``protection_per_size``; ``grouping_uses_spacing``
for every rule set),
which the engine and ``routeplan.remedy`` read instead of calling a hook to find out.

>>> get_rules("iec").name, get_rules("nec").name
('iec', 'nec')
>>> get_rules("bs7671")
Traceback (most recent call last):
...
calc.errors.UnknownOptionError: rules must be one of 'iec', 'nec'; got 'bs7671'
"""

from __future__ import annotations

import abc
import functools
import importlib
from typing import ClassVar

import numpy as np
from numpy.typing import ArrayLike

from calc import pv, resistance
from calc.errors import InputError, check_option
from calc.kinds import KIND_AC

__all__ = ["SIZE_RTOL", "RuleSet", "get_rules", "rule_names"]

#: relative tolerance of a conductor size against a rule set's standard sizes
#: (:meth:`RuleSet.standard_size_mm2`; :func:`calc.nec.sizes.size_index` matches alike)
SIZE_RTOL = 1e-6

# rule set name -> "module:class"
_MODULES: dict[str, str] = {"iec": "calc.rules.iec:IecRules", "nec": "calc.rules.nec:NecRules"}


class RuleSet(abc.ABC):
    """Interface of a rule set (all arrays SI floats; sizes in mm²).

    Kinds: the codes of :mod:`calc.kinds` (0 string, 1 array, 2 ac, 3 sub-array). Environments:
    "air", "D1" (duct in ground), "D2" (direct in ground). Insulation "PV" denotes the PV string
    cable of the rule set.
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

    #: whether :meth:`group_factor` changes with the clear spacing between circuits (iec: IEC
    #: 60364-5-52 Tables B.52.18 / B.52.19; nec: no, Table 310.15(C)(1) takes the trench's
    #: conductors as one bundle); a wider spacing is a remedy only where it does
    grouping_uses_spacing: ClassVar[bool]

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
    #: where :meth:`air_group_factor` takes each arrangement's factors from (the design
    #: basis names it beside the setting)
    air_arrangement_source: ClassVar[str] = "IEC 60364-5-52 Table B.52.17 item"

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

    # ---- hooks (the defaults are the IEC behaviour; see the module docstring)

    #: what the grouping factors (:meth:`group_factor`, :meth:`air_group_factor`) count:
    #: ``"circuits"`` (cable sets) or ``"conductors"`` (current-carrying conductors, see
    #: :meth:`current_carrying_conductors`)
    group_counts: ClassVar[str] = "circuits"
    #: where the maximum d.c. voltage rule comes from (named in the circuit's note)
    voc_source: ClassVar[str] = "IEC 62548"
    #: a.c. frequency a design takes unless it sets one [Hz]
    default_frequency_hz: ClassVar[float] = 50.0
    #: the PV fuses' designation in the protection text
    fuse_word: ClassVar[str] = "gPV"
    #: the PV string cable the rule set rates (insulation "PV"), as settings' messages name it
    pv_cable: ClassVar[str] = "PV cable (EN 50618 / IEC 62930)"
    #: why the string cable is copper (the messages of a string material set otherwise)
    pv_cable_copper: ClassVar[str] = "PV cable, whose tabulated ratings are for copper conductors"
    #: the conductor types the feeder insulation names stand for, where the names alone do not
    #: say it ("" for none; nec: Table 310.4(A))
    feeder_types: ClassVar[str] = ""

    # which hooks below change the IEC steps, declared: the engine reads these rather than
    # calling a hook to find out

    #: each conductor set is held to a second capacity, before correction and adjustment
    #: (:meth:`terminal_capacity_a`, :meth:`terminal_required_a`; nec: 690.8(B)(1), 110.14(C))
    terminal_condition: ClassVar[bool] = False
    #: a short governing stretch may be disregarded (:meth:`short_section`; nec: the
    #: 310.14(A)(2) exception)
    short_section_exception: ClassVar[bool] = False
    #: every circuit routed in the ground carries :meth:`buried_note`, for review (nec: Table
    #: 310.16 represents neither soil, depth nor spacing)
    buried_review: ClassVar[bool] = False
    #: with a fault level given, the a.c. cables' adiabatic withstand is checked with
    #: :meth:`k_adiabatic`; where False, each a.c. circuit carries :meth:`short_circuit_note`
    #: instead (nec: no adiabatic table)
    short_circuit_checked: ClassVar[bool] = True
    #: each candidate size is checked against the circuit's overcurrent device
    #: (:meth:`conductor_protected`; nec: 240.4); where False the cable is held to the device
    #: through the design current instead (IEC 60364-4-43 433.1). The engine checks it with
    #: the ampacity limited by the terminations, so it goes with :attr:`terminal_condition`
    protection_per_size: ClassVar[bool] = False

    def breaker_text(self, in_a: float, ib_a: float, iz_a: float, device: str) -> str:
        """The a.c. breaker's line of the schedule's protection text."""
        return f"breaker {in_a:g} A ({device}): Ib {ib_a:.0f} A ≤ In ≤ Iz {iz_a:.0f} A"

    def check_design(self, design) -> None:
        """Refuse design settings the rule set does not support (raises
        :class:`~calc.errors.InputError` naming the key). IEC: ``terminal_temp_c`` is an NEC
        110.14(C) setting; ``buried_rating`` must be ``"table"``."""
        if design.terminal_temp_c is not None:
            raise InputError(f"terminal_temp_c applies to rules 'nec' only (rules '{self.name}')")
        if design.buried_rating != "table":
            raise InputError(
                f"buried_rating = '{design.buried_rating}' is not available (rules "
                f"'{self.name}' rate buried circuits by the tables only)"
            )

    def current_carrying_conductors(self, kind: np.ndarray, phases: np.ndarray) -> np.ndarray:
        """Current-carrying conductors of one cable set of each circuit [1]: 2 for d.c. and
        single-phase, 3 for three-phase (a balanced neutral carries no current). Used only
        when :attr:`group_counts` is ``"conductors"``."""
        return np.where((np.asarray(kind) == KIND_AC) & (np.asarray(phases) == 3), 3, 2)

    def terminal_capacity_a(
        self, kind: int, material: str, insulation: str, sizes_mm2: np.ndarray, design
    ) -> np.ndarray | None:
        """Capacity one conductor set must have *before* correction and adjustment [A] (e.g.
        NEC 690.8(B)(1) with the 110.14(C) termination column), per size; ``None`` where the
        rule set has no such condition (IEC; :attr:`terminal_condition` False). It is the
        terminations' capacity, the same wherever the cable runs (in the ground or in air):
        the engine asks for it once per kind."""
        return None

    def terminal_required_a(self, i_design_a: np.ndarray) -> np.ndarray:
        """Current the :meth:`terminal_capacity_a` condition must carry [A] (NEC: 1.25 × the
        690.8(A) maximum current); only called where :attr:`terminal_condition`."""
        return np.asarray(i_design_a, dtype=float)

    def conductor_protected(
        self, ocpd_a: np.ndarray, ampacity_a: np.ndarray, sizes_mm2: np.ndarray, material: str
    ) -> np.ndarray | None:
        """Per circuit and size, whether the circuit's overcurrent device (nan = none)
        protects the conductors (NEC 240.4); only called where :attr:`protection_per_size`;
        ``None`` where the rule set holds the cable to a current instead (IEC 60364-4-43 433.1
        through the design current)."""
        return None

    def buried_note(self, env: str) -> str:
        """Review note for every circuit routed in the ground in ``env`` ("D1", "D2" or both,
        "D1+D2"); only called where :attr:`buried_review`. "" when the rule set's buried
        ratings represent the installation (IEC: soil, depth, grouping)."""
        return ""

    def short_section(self, stretch_m: np.ndarray, circuit_m: np.ndarray) -> np.ndarray | None:
        """Per stretch, whether it is short enough for its lower capacity to be disregarded at a
        transition (the higher capacity of the rest of the circuit applies; NEC 310.14(A)(2)
        exception); only called where :attr:`short_section_exception`; ``None`` where the rule
        set has no such exception (IEC). nan lengths: not short."""
        return None

    def voc_max_v(self, voc_v, voc_coeff_pct_per_c, min_temp_c: float) -> np.ndarray:
        """Highest string open-circuit voltage at the lowest expected temperature [V]
        (IEC: :func:`calc.pv.voc_max_v`)."""
        return pv.voc_max_v(voc_v, voc_coeff_pct_per_c, min_temp_c)

    def r_at_temp_ohm_km(self, r20_ohm_km, temp_c, material: str) -> np.ndarray:
        """Conductor resistance at temperature [Ω/km] (IEC 60287-1-1:
        :func:`calc.resistance.r_at_temp_ohm_km`)."""
        return resistance.r_at_temp_ohm_km(r20_ohm_km, temp_c, material)

    def nominal_sizes_mm2(self) -> np.ndarray:
        """Every standard conductor size of the rule set, ascending [mm²] (IEC 60228:2004)."""
        from calc.tables import load_table

        return np.unique(load_table("iec60228_2004_conductor_resistance.csv")["size_mm2"])

    def standard_size_mm2(self, sizes_mm2: ArrayLike) -> np.ndarray:
        """The standard size (:meth:`nominal_sizes_mm2`) each given size is [mm²], nan where
        it is none: equal within a relative :data:`SIZE_RTOL`, so that a size converted from
        other units, or an area computed from its definition (NEC: the AWG diameters),
        matches its nominal value."""
        s = np.asarray(sizes_mm2, dtype=float)
        nominal = self.nominal_sizes_mm2()
        match = np.isclose(s[..., None], nominal, rtol=SIZE_RTOL, atol=0.0)
        return np.where(match.any(axis=-1), nominal[match.argmax(axis=-1)], np.nan)

    def size_text(self, size_mm2: float) -> str:
        """A size as the schedule's notes name it (IEC: ``"16 mm²"``)."""
        return f"{size_mm2:g} mm²"

    def short_circuit_note(self) -> str:
        """Note for a.c. circuits whose adiabatic withstand is not checked when a fault level
        is given; only called where :attr:`short_circuit_checked` is False ("" = :meth:`k_adiabatic`
        checks it)."""
        return ""


def rule_names() -> tuple[str, ...]:
    """Names of the available rule sets."""
    return tuple(_MODULES)


@functools.cache
def get_rules(name: str) -> RuleSet:
    """The rule set registered under ``name`` (raises with the valid names otherwise)."""
    check_option("rules", name, rule_names())
    module, cls = _MODULES[name].split(":")
    return getattr(importlib.import_module(module), cls)()
