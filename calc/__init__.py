"""calc — electrical engine of routeplan: PV cable sizing, voltage drop, losses.

**Safety.** Wrong cable sizing starts fires. Every result of this package is a design aid: it does
not replace the standards themselves, local codes and regulations, the cable and equipment makers'
data, or the review and sign-off of the design by a qualified (where required, licensed) person.
Several tabulated values were recalled rather than read from the standards; they are tagged
``memory`` in the data files (``calc/data/*.csv``) and must be checked against the editions in force
before use.

Interface (stable; the routing/pipeline side calls only this)::

    from calc import SizingInput, DesignParams, SizingResult, size_circuits
    from calc import KIND_STRING, KIND_ARRAY, KIND_AC, KIND_NAMES
    result = size_circuits(inp: SizingInput, design: DesignParams = DesignParams(),
                           rules: str = "iec") -> SizingResult

* ``SizingInput`` — numpy arrays per circuit (``kind``, ``cable_m``, ``air_m``, ``parent``,
  ``isc_a``, ``imp_a``, ``vmp_v``, ``n_strings``, ``strings_in_parallel``, ``max_fuse_a``,
  ``fuse_a``, ``bifaciality``, ``isc_bifacial_a``, ``dc_group``, ``ac_kva``, ``ac_v``,
  ``phases``, ``pf``, ``ac_max_a``), per trench segment (``seg_depth_m``, ``seg_laying``,
  ``seg_spacing_m``, ``seg_soil_k_m_w``, ``seg_count``, ``seg_length_m``) and the incidence
  pairs ``inc_circuit`` / ``inc_segment``; per stretch in air ``air_count``, ``air_length_m``
  and the incidence ``air_inc_circuit`` / ``air_inc_stretch``.
* ``DesignParams`` — temperatures, materials, insulation, drop limits, size lists, parallel limit,
  conductor-temperature mode, power factor, loss hours, fault level, conductor identification
  system.
* ``SizingResult`` — per circuit: size, parallel sets, currents, capacities and every factor at the
  governing environment, drops, losses, fuse, status ``ok`` and ``note``, marking; per segment the
  factors and final counts; per kind the loss totals.
* ``calc.rules.get_rules(name)`` — rule sets (``"iec"``; ``"nec"``, NFPA 70 NEC 2023 with AWG /
  kcmil sizes, :mod:`calc.rules.nec`); an unknown name lists the valid ones.

Units: SI floats, the unit in every name (``_m``, ``_a``, ``_v``, ``_mm2``, ``_pct``, ``_k_m_w``,
``_c``, ``_kva``, ``_w``, ``_kwh``). No geometry, no file I/O beyond the packaged tables, no
printing.

Modules: :mod:`calc.resistance` (IEC 60228, IEC 60287-1-1, BS 7671 reactance), :mod:`calc.ampacity`
(IEC 60364-5-52:2009 Annex B, EN 50618, IEC 60287-2-1 depth), :mod:`calc.pv` (IEC 62548:2016),
:mod:`calc.protection` (array backfeed and fuses, bifacial I_SC, gPV fuse and breaker ratings,
IEC 60364-4-43 433.1), :mod:`calc.vdrop`, :mod:`calc.losses`, :mod:`calc.shortcircuit`
(IEC 60364-4-43, IEC 60949),
:mod:`calc.marking` (IEC 60445 and eight regional systems), :mod:`calc.engine`,
:mod:`calc.rules`, :mod:`calc.tables`, :mod:`calc.kinds` (the circuit kind codes),
:mod:`calc.ratings` (the smallest standard device rating at or above a current),
:mod:`calc.errors` (``CalcError`` and its subclasses).

NEC: :mod:`calc.nec` (NFPA 70 NEC 2023: AWG/kcmil sizes, Tables 310.16/310.17 and their
corrections, Chapter 9 Tables 8 and 9, 690.7/690.8/690.9, 240.4/240.6(A), Table 250.122) and
:class:`calc.rules.nec.NecRules`, not yet registered as a rule set (see its docstring).
"""

from calc.engine import (
    ARRAY_PROTECTION,
    FEEDER_KINDS,
    KIND_AC,
    KIND_ARRAY,
    KIND_NAMES,
    KIND_STRING,
    KIND_SUBARRAY,
    DesignParams,
    SizingInput,
    SizingResult,
    buried_deep_enough,
    failure_causes,
    larger_sizes_mm2,
    protection_failures,
    size_circuits,
    size_list_mm2,
)
from calc.errors import (
    CalcError,
    ConvergenceError,
    DataFileError,
    InputError,
    TableRangeError,
    UnknownOptionError,
)
from calc.marking import MARKING_SYSTEMS, default_marking, identification_rows
from calc.protection import bnpi_rear_ratio
from calc.rules import get_rules, rule_names

__all__ = [
    "ARRAY_PROTECTION",
    "FEEDER_KINDS",
    "KIND_AC",
    "KIND_ARRAY",
    "KIND_NAMES",
    "KIND_STRING",
    "KIND_SUBARRAY",
    "MARKING_SYSTEMS",
    "CalcError",
    "ConvergenceError",
    "DataFileError",
    "DesignParams",
    "InputError",
    "SizingInput",
    "SizingResult",
    "TableRangeError",
    "UnknownOptionError",
    "bnpi_rear_ratio",
    "buried_deep_enough",
    "default_marking",
    "failure_causes",
    "get_rules",
    "identification_rows",
    "larger_sizes_mm2",
    "protection_failures",
    "rule_names",
    "size_circuits",
    "size_list_mm2",
]
