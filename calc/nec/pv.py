"""PV circuit currents, conductor ampacity and maximum voltage, NEC 2023 Article 690.

* 690.8(A)(1)(a)(1): PV source-circuit maximum current = 1.25 × the sum of the parallel modules'
  rated Isc (the bifacial Isc where the design gives one, as in the IEC rule set);
* 690.8(A)(2): PV output circuit = the sum of its parallel source circuits' maximum currents;
* 690.8(B): conductor ampacity ≥ the larger of (1) 1.25 × maximum current before correction and
  adjustment and (2) the maximum current after them — combined with 110.14(C) here: (1) is checked
  against the table column of min(insulation, termination) and (2) against the insulation column
  corrected and adjusted (the usual application of the two rules);
* 690.7(A): maximum voltage = string Voc corrected to the lowest expected ambient temperature, by
  the module's Voc temperature coefficient or, as the alternative, Table 690.7(A).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from calc.errors import InputError, TableRangeError
from calc.nec import ampacity
from calc.tables import load_table

__all__ = [
    "conductor_ampacity_ok",
    "max_voltage_v",
    "output_circuit_max_current_a",
    "required_table_ampacity_a",
    "smallest_size_mm2",
    "source_circuit_max_current_a",
    "voc_table_factor",
]

_T690 = "nec_2023_table_690_7_a_voc_factors.csv"


def source_circuit_max_current_a(
    isc_a: ArrayLike, modules_in_parallel: ArrayLike = 1
) -> np.ndarray:
    """PV source-circuit maximum current, 690.8(A)(1)(a)(1): 1.25 × Σ Isc of parallel modules [A].

    >>> source_circuit_max_current_a([13.0, 10.0])
    array([16.25, 12.5 ])
    """
    isc = np.asarray(isc_a, dtype=float)
    if np.any(~(isc >= 0)):
        raise InputError("module Isc must be ≥ 0 A")
    return ampacity.nec_rule("source_isc_factor") * isc * np.asarray(modules_in_parallel)


def output_circuit_max_current_a(
    source_max_a: ArrayLike, circuit: ArrayLike, n_circuits: int | None = None
) -> np.ndarray:
    """PV output-circuit maximum current, 690.8(A)(2): sum of the maximum currents of the source
    circuits feeding it [A]. ``circuit[i]`` is the output circuit of source circuit ``i``.

    >>> output_circuit_max_current_a([16.25, 16.25, 12.5], [0, 0, 1])
    array([32.5, 12.5])
    """
    c = np.asarray(circuit, dtype=int)
    if c.size and c.min() < 0:
        raise InputError("output circuit numbers must be ≥ 0")
    return np.bincount(c, weights=np.asarray(source_max_a, dtype=float), minlength=n_circuits or 0)


def required_table_ampacity_a(
    i_max_a: ArrayLike, correction: ArrayLike = 1.0, adjustment: ArrayLike = 1.0
) -> np.ndarray:
    """Smallest table ampacity satisfying 690.8(B) in one column [A]:
    max(1.25 · I_max, I_max / (F_correction · F_adjustment)).

    >>> float(required_table_ampacity_a(16.25))  # 1.25 × 1.25 × 13 A
    20.3125
    >>> round(float(required_table_ampacity_a(16.25, 0.87, 0.80)), 3)  # 16.25 / 0.696
    23.348
    """
    i = np.asarray(i_max_a, dtype=float)
    k = ampacity.nec_rule("conductor_factor")
    return np.maximum(k * i, i / (np.asarray(correction) * np.asarray(adjustment)))


def conductor_ampacity_ok(
    sizes_mm2: ArrayLike,
    material: str,
    i_max_a: ArrayLike,
    insulation_c: int,
    terminal_c: int,
    ambient_c: ArrayLike,
    current_carrying: ArrayLike = 3,
    location: str = "raceway",
) -> np.ndarray:
    """690.8(B) with 110.14(C): True where the size carries ``i_max_a`` (broadcasting).

    (B)(1): table ampacity at min(insulation, terminal) °C ≥ 1.25 · I_max (no correction), and
    the terminal column of Table 310.16 too (110.14(C)(1): termination provisions are based on
    Table 310.16 also where the conductor is in free air, Table 310.17);
    (B)(2): table ampacity at the insulation rating × ambient factor × adjustment ≥ I_max.
    A size not tabulated (nan) or an ambient beyond the column is not ok.
    """
    col1 = min(insulation_c, terminal_c)
    i = np.asarray(i_max_a, dtype=float)
    k = ampacity.nec_rule("conductor_factor")
    b1 = ampacity.table_ampacity_a(sizes_mm2, material, col1, location) >= k * i
    # 110.14(C)(1): the terminations' column of Table 310.16, also for conductors in free air
    b1 &= ampacity.table_ampacity_a(sizes_mm2, material, terminal_c, "raceway") >= k * i
    corrected = ampacity.ampacity_a(
        sizes_mm2, material, insulation_c, ambient_c, current_carrying, location
    )
    b2 = corrected >= i
    return b1 & b2


def smallest_size_mm2(
    candidates_mm2: ArrayLike,
    material: str,
    i_max_a: ArrayLike,
    insulation_c: int,
    terminal_c: int,
    ambient_c: ArrayLike,
    current_carrying: ArrayLike = 3,
    location: str = "raceway",
    ocpd_a: ArrayLike | None = None,
) -> np.ndarray:
    """Smallest of the ascending ``candidates_mm2`` meeting :func:`conductor_ampacity_ok` for each
    circuit [mm²]; nan where none does. With ``ocpd_a`` (the circuit's device rating [A]) the size
    must also be protected by it (240.4, :func:`calc.nec.protection.conductor_protected`, with the
    ampacity after correction, adjustment and the terminal limit). Circuits are arrays of one
    length (ambient and count per circuit or scalars); the candidate list is walked as one array
    (no loop over circuits).
    """
    cand = np.asarray(candidates_mm2, dtype=float)
    i = np.asarray(i_max_a, dtype=float)[:, None]
    amb = np.asarray(ambient_c, dtype=float)
    ccc = np.asarray(current_carrying)
    ok = conductor_ampacity_ok(
        cand[None, :],
        material,
        i,
        insulation_c,
        terminal_c,
        amb[:, None] if amb.ndim else amb,
        ccc[:, None] if ccc.ndim else ccc,
        location,
    )
    if ocpd_a is not None:
        from calc.nec.protection import conductor_protected

        amp = ampacity.ampacity_a(
            cand[None, :],
            material,
            insulation_c,
            amb[:, None] if amb.ndim else amb,
            ccc[:, None] if ccc.ndim else ccc,
            location,
            terminal_c,
        )
        ocpd = np.asarray(ocpd_a, dtype=float)
        ocpd = ocpd[:, None] if ocpd.ndim else ocpd
        ok &= conductor_protected(ocpd, amp, cand[None, :], material)
    first = ok.argmax(axis=1)
    return np.where(ok.any(axis=1), cand[first], np.nan)


def voc_table_factor(t_min_c: ArrayLike) -> np.ndarray:
    """Table 690.7(A) factor for the lowest expected ambient temperature [1] (from memory except
    the first row). Rows are whole degrees; an ambient between rows takes the colder row
    (rounded down, conservative). At or above the reference 25 °C: 1.00. Below −40 °C:
    :class:`~calc.errors.TableRangeError`.

    >>> voc_table_factor([25, 22, -10, -10.5, -40])
    array([1.  , 1.02, 1.14, 1.16, 1.25])
    """
    t = load_table(_T690)
    temp = np.floor(np.asarray(t_min_c, dtype=float))
    if np.any(np.isnan(temp)):
        raise InputError("lowest expected ambient temperature is missing (NaN)")
    if np.any(temp < t["temp_min_c"].min()):
        raise TableRangeError(
            f"Table 690.7(A) ends at {t['temp_min_c'].min():g} °C; use the module's coefficient"
        )
    lo, fac = t["temp_min_c"][::-1], t["factor"][::-1]  # ascending lower bounds
    idx = np.searchsorted(lo, temp, side="right") - 1
    return np.where(temp >= ampacity.nec_rule("voc_reference_c"), 1.0, fac[np.maximum(idx, 0)])


def max_voltage_v(
    voc_v: ArrayLike,
    modules_in_series: ArrayLike,
    t_min_c: ArrayLike,
    voc_coeff_pct_per_k: ArrayLike | None = None,
) -> np.ndarray:
    """PV maximum voltage, 690.7(A) [V].

    With the module's Voc temperature coefficient β [%/K] (negative for silicon):
    V = n · Voc · (1 + β/100 · (T_min − 25)); without it (``None`` or nan), Table 690.7(A):
    V = n · Voc · factor(T_min).

    >>> float(max_voltage_v(49.5, 24, -10, -0.27))  # 24 × 49.5 × (1 + 0.0027 × 35)
    1300.266
    >>> float(max_voltage_v(49.5, 24, -10))  # 24 × 49.5 × 1.14
    1354.32
    >>> max_voltage_v([49.5, 49.5], 24, -45, [-0.27, np.nan])  # a string without a coefficient
    Traceback (most recent call last):
    ...
    calc.errors.TableRangeError: Table 690.7(A) ends at -40 °C; use the module's coefficient
    >>> max_voltage_v([49.5, np.nan], 24, -45, [-0.27, np.nan]).round(3)  # 1188 × 1.189
    array([1412.532,      nan])
    """
    voc = np.asarray(voc_v, dtype=float) * np.asarray(modules_in_series, dtype=float)
    t = np.asarray(t_min_c, dtype=float)
    ref = ampacity.nec_rule("voc_reference_c")
    if voc_coeff_pct_per_k is None:
        return voc * voc_table_factor(t)
    beta = np.asarray(voc_coeff_pct_per_k, dtype=float)
    by_coeff = voc * (1.0 + np.nan_to_num(beta) / 100.0 * (t - ref))
    # the table only where a voltage has no coefficient (a string of a module without one; not
    # a circuit without Voc): beyond the table's range with a coefficient is no error
    voc_b, t_b, beta_b, out = np.broadcast_arrays(voc, t, beta, by_coeff)
    table = np.isnan(beta_b) & ~np.isnan(voc_b)
    if not np.any(table):
        return by_coeff
    out = out.copy()
    out[table] = voc_b[table] * voc_table_factor(t_b[table])
    return out
