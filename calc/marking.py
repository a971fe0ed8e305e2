"""Conductor identification (colours and alphanumeric marks) per circuit, by regional system.

The systems and every colour, each with its source and tag, are in
``conductor_identification.csv``: ``iec`` (IEC 60445:2021 clause 6.2), ``gb`` (BS 7671:2018
Table 51), ``au`` (AS/NZS 3000:2018 Table 3.4), ``in`` (IS 732:2019), ``us`` (NEC 2023 200.6 and
250.119, phase colours by system voltage as common practice), ``ca`` (CSA C22.1 Rule 4-038),
``cn`` (GB 50303-2015, GB/T 7947-2010), ``jp`` (JIS C 0446) and ``ru`` (GOST R 50462-2009). The
default follows the rule set (:data:`DEFAULT_FOR_RULES`).

How a conductor is written in the schedule's ``marking`` text:

* the standard names a colour: ``L1 brown``;
* the standard names none (``not specified`` in the data): ``L+ per project specification``,
  followed by ``(common practice: red)`` where the data gives a common-practice colour — never an
  invented colour presented as the standard's;
* the system adopts a common-practice colour where its standard requires only identification
  (the ``us`` phase colours): the colour, and the conductors so coloured listed at the end,
  ``[common practice: L1, L2, L3]``.

Colours that earlier editions gave (``older`` rows) are for the report's design basis only
(:func:`identification_rows`): they tell a site team what existing installations may show.
"""

from __future__ import annotations

import functools

import numpy as np
from numpy.typing import ArrayLike

from calc.errors import check_option
from calc.tables import load_table

__all__ = [
    "DEFAULT_FOR_RULES",
    "MARKING_SYSTEMS",
    "conductor_marking",
    "default_marking",
    "identification_rows",
    "marking_text",
]

TABLE = "conductor_identification.csv"

#: the systems of the data file, in its order
MARKING_SYSTEMS: tuple[str, ...] = tuple(dict.fromkeys(load_table(TABLE)["system"].tolist()))

#: the identification system used when ``[design] marking`` is not set, per rule set
DEFAULT_FOR_RULES: dict[str, str] = {"iec": "iec", "nec": "us"}

#: shown for a conductor whose colour the standard leaves open
OPEN = "per project specification"
NOT_SPECIFIED = "not specified"


def default_marking(rules: str) -> str:
    """The identification system that goes with a rule set (``iec`` → ``iec``, ``nec`` → ``us``).

    >>> default_marking("iec"), default_marking("nec")
    ('iec', 'us')
    """
    check_option("rules", rules, tuple(DEFAULT_FOR_RULES))
    return DEFAULT_FOR_RULES[rules]


def _limits(t, rows: np.ndarray) -> np.ndarray:
    """The rows' voltage limits, blank (any voltage) as +inf."""
    v = t["ac_v_max"][rows]
    return np.where(np.isnan(v), np.inf, v)


@functools.cache
def _voltage_groups(system: str, circuit: str) -> tuple[float, ...]:
    """The distinct voltage limits of a system's rows for one circuit type, ascending."""
    t = load_table(TABLE)
    rows = np.flatnonzero(t.where(system=system, circuit=circuit))
    return tuple(float(v) for v in np.unique(_limits(t, rows)))


@functools.cache
def marking_text(system: str, circuit: str, ac_v_max: float = float("inf")) -> str:
    """One line naming each conductor of a circuit type and its identification.

    ``circuit`` is ``dc``, ``dc3``, ``ac1`` or ``ac3``; ``ac_v_max`` picks the rows of a system
    whose colours depend on the voltage (the rows written for that limit; +inf: the rows for
    any voltage).

    >>> marking_text("iec", "ac3")
    'L1 brown, L2 black, L3 grey, N blue (if run), PE green-and-yellow'
    >>> marking_text("iec", "dc")
    'L+ red, L- white'
    >>> for part in marking_text("jp", "dc").split(", "):
    ...     print(part)
    L+ per project specification (common practice: red)
    L- per project specification (common practice: blue)
    """
    check_option("marking", system, MARKING_SYSTEMS)
    t = load_table(TABLE)
    rows = np.flatnonzero(t.where(system=system, circuit=circuit))
    rows = rows[_limits(t, rows) == ac_v_max]
    if not rows.size:
        raise ValueError(f"no {circuit} rows for marking {system!r} up to {ac_v_max} V")
    standard: dict[str, str] = {}
    practice: dict[str, str] = {}
    order: dict[str, None] = {}  # the conductors in the data file's order (older rows aside)
    for r in rows:
        name, colour, basis = str(t["conductor"][r]), str(t["colour"][r]), t["basis"][r]
        if basis == "standard":
            standard[name] = colour
        elif basis == "practice":
            practice[name] = colour
        else:
            continue
        order[name] = None
    parts: list[str] = []
    adopted: list[str] = []
    for conductor in order:
        colour = standard.get(conductor)
        if colour is None:  # the system adopts the common practice
            parts.append(f"{conductor} {practice[conductor]}")
            adopted.append(conductor)
        elif colour == NOT_SPECIFIED:
            hint = f" (common practice: {practice[conductor]})" if conductor in practice else ""
            parts.append(f"{conductor} {OPEN}{hint}")
        else:
            parts.append(f"{conductor} {colour}")
    text = ", ".join(parts)
    if adopted:
        text += " [common practice: " + ", ".join(adopted) + "]"
    return text


def identification_rows(system: str) -> list[dict[str, str]]:
    """Every row of one system (standard, common practice and older colours) with its source and
    tag, in the data file's order: the design basis of the report.

    >>> row = identification_rows("gb")[0]
    >>> row["circuit"], row["conductor"], row["colour"], row["source"], row["tag"]
    ('dc', 'L+', 'brown', 'BS 7671:2018 Table 51', 'confirmed')
    """
    check_option("marking", system, MARKING_SYSTEMS)
    t = load_table(TABLE)
    out = []
    for r in np.flatnonzero(t.where(system=system)):
        v = t["ac_v_max"][r]
        out.append(
            {
                "circuit": str(t["circuit"][r]),
                "ac_v_max": "" if np.isnan(v) else f"{v:g}",
                "conductor": str(t["conductor"][r]),
                "colour": str(t["colour"][r]),
                "basis": str(t["basis"][r]),
                "source": str(t["source"][r]),
                "tag": str(t["tag"][r]),
            }
        )
    return out


def conductor_marking(
    kind: ArrayLike, phases: ArrayLike, ac_v: ArrayLike, system: str = "iec"
) -> np.ndarray:
    """Identification text per circuit (object array of str): two-wire d.c. for kinds 0/1/3,
    single- or three-phase a.c. for kind 2 (``phases`` 1 or 3). Where a system's a.c. colours
    depend on the voltage, the rows with the smallest limit at or above the circuit's
    line-to-line ``ac_v`` (V) apply; an unknown voltage (nan) counts as 0 V.

    >>> conductor_marking([0, 2], [0, 1], [0.0, 230.0]).tolist()[1]
    'L brown, N blue, PE green-and-yellow'
    """
    check_option("marking", system, MARKING_SYSTEMS)
    k = np.asarray(kind)
    ph = np.asarray(phases)
    u = np.nan_to_num(np.asarray(ac_v, dtype=float), nan=0.0)
    ac3 = _voltage_groups(system, "ac3")
    texts = [marking_text(system, "dc"), marking_text(system, "ac1")]
    texts += [marking_text(system, "ac3", v) for v in ac3]
    # the first limit at or above the voltage; the last group (+inf) takes everything above
    group = np.minimum(np.searchsorted(np.asarray(ac3), u, side="left"), len(ac3) - 1)
    sel = np.where(k != 2, 0, np.where(ph == 1, 1, 2 + group))
    return np.asarray(texts, dtype=object)[sel]
