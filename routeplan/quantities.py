"""The bill of quantities: what a buyer orders, line by line, from the finished tables.

One line per cable type (kind, conductor material and size) with its designation by open
standard — EN 50618 PV cable for strings, a single-core cable of IEC 60502-1 construction for
the feeders (sub-array, array and a.c. circuits) — its conductor class (IEC 60228),
insulation, rated voltage and conductor metres (allowances included); the terminations and PV
connectors per size; fuses and breakers by rating; trench metres by laying and depth (those
that carry circuits, and apart, as ``unused trench``, those the site's trench layer draws where
no circuit of the plan runs); a total per item family. The designations' texts and the rated
voltages come from data files beside this module (``routeplan/data/``), each naming its
standard, edition and clause and tagged ``memory`` where recalled.

Counting rules (each a stated convention the tests check):

- cable: ``cable_m`` × conductors (poles/phases × parallel sets) per circuit;
- conductor ends: every conductor has two. A string's end at its module row takes a PV
  connector; its other end a PV connector where it lands on an inverter's DC input (string
  inverters) and a compression lug where it lands on a combiner. A feeder's ends all take
  lugs. So lugs = 2 × conductors for feeders, 1 × conductors for strings to a combiner, none
  for strings to an inverter; connector pairs = conductors for strings to a combiner, 2 ×
  conductors for strings to an inverter (a pair: plug and socket of one type and maker, since
  mated halves must match — IEC 62548:2016, from memory);
- fuses: one per pole (2) of each protected d.c. circuit (unearthed PV arrays are protected in
  both poles — IEC 62548, from memory; under nec too, although 690.9(C) permits one device per
  circuit where all are in one polarity: such a design needs half the count); breakers: one
  per a.c. circuit, by rating and poles. A line's ``note`` is a warning (a rated voltage beyond
  the designation's standard), which ``routeplan plan`` also prints.
- equipment grounding conductors (``rules = "nec"`` only; family ``grounding``): one per circuit
  and parallel set (250.122(F), one EGC in each parallel raceway or cable), ``cable_m`` long, sized
  by NEC 2023 Table 250.122 for the rating of the circuit's overcurrent device — the string fuse
  (``fuse_a``), the array or sub-array fuse (``array_fuse_a``) or the a.c. breaker
  (``ac_breaker_a``); a d.c. circuit without a device takes the assumed device of 690.45: the
  690.9(B) rating for 1.25 × its 690.8(A) maximum current (1.25 × ``isc_design_a``); never larger
  than the circuit's own conductors (250.122(A)). The 250.122(B) increase for conductors enlarged
  beyond the size the ampacity needs (e.g. for voltage drop) is not applied: each EGC line says so.
  Under ``rules = "iec"`` the bill has no protective-conductor lines (the IEC rule set does not
  size them; IEC 60364-5-54 is not implemented).

Under ``rules = "nec"`` the designations name the NEC 2023 clause and the product listing (UL 4703
PV wire, UL 44/854 conductor types of Table 310.4(A), UL 486A-486B lugs, UL 6703 connectors, UL
2579 PV fuses, UL 489 breakers — all from memory) instead of the IEC/EN product standards, and
sizes are written as AWG/kcmil (``size_label``; ``size_mm2`` stays). With ``units = "us"`` every
length (cable, grounding and trench lines and their totals) is in international feet
(``unit`` ``ft``, metres / 0.3048); ``depth_m`` stays in metres.

Rated voltages: the PV cable's 1.5 kV DC (EN 50618) is checked against ``design.dc_rated_v``;
a plan rated above it gets no PV cable designation and a note saying so (the line keeps its
metres). Feeders take the lowest IEC 60502-1 voltage class (0.6/1 kV, 1.8/3 kV) whose rating
covers the circuit: d.c. feeders ``dc_rated_v`` between conductors *and* to earth (an
unearthed array reaches the full voltage to earth at a first earth fault — the reason EN 50618
rates U0 = U; conservative), a.c. feeders the inverter's line voltage between phases and its
phase voltage to earth. Beyond 1.8/3 kV the line gets no designation and a note (IEC 60502-2
applies).
"""

from __future__ import annotations

import functools
import importlib.resources
import math

import numpy as np
import pandas as pd

from calc.nec import protection as nec_protection
from calc.nec import pv as nec_pv
from calc.tables import Table, parse_table

from .units import FOOT_M, length_unit, size_labels

#: item families in bill order, each followed by its total line
FAMILIES: tuple[str, ...] = (
    "cable",
    "grounding",
    "termination",
    "connector",
    "trench",
    "unused trench",
    "fuse",
    "breaker",
)
#: the total line's item per family
TOTAL_ITEM = {f: f"{f} total" for f in FAMILIES}
TOTAL_ITEM["connector"] = "connector pair total"
#: bill columns, in order (the first eight are the contract ``routeplan diff`` reads)
BILL_COLUMNS: tuple[str, ...] = (
    "item",
    "kind",
    "material",
    "size_mm2",
    "laying",
    "depth_m",
    "quantity",
    "unit",
    "rating_a",
    "poles",
    "family",
    "size_label",
    "designation",
    "cores_x_size",
    "conductor_class",
    "insulation",
    "rated_voltage",
    "standard",
    "source",
    "tag",
    "note",
)
_KIND_ORDER = {"string": 0, "subarray": 1, "array": 2, "ac": 3}
_FUSE_ITEMS = (
    ("string", "fuse_a", "string fuse"),
    ("subarray", "array_fuse_a", "sub-array fuse"),
    ("array", "array_fuse_a", "array fuse"),
)


@functools.cache
def data_table(name: str) -> Table:
    """A data file of ``routeplan/data`` (the ``#`` header names its source), parsed once."""
    text = importlib.resources.files("routeplan").joinpath("data", name).read_text("utf-8")
    return parse_table(text, name)


def designation(item: str) -> dict[str, str | float]:
    """One row of ``bill_designations.csv``: standard, edition, clause, text, tag and
    ``rated_dc_v`` (NaN where the rating is chosen per line)."""
    t = data_table("bill_designations.csv")
    i = int(np.flatnonzero(t["item"] == item)[0])
    return {c: t[c][i].item() if t[c].dtype.kind == "f" else str(t[c][i]) for c in t.columns}


def _source(d: dict) -> str:
    if not d["standard"]:
        return ""
    return f"{d['standard']}:{d['edition']}, clause {d['clause']}"


def voltage_class(u0_min_v: float, u_min_v: float, dc: bool) -> dict[str, float] | None:
    """The lowest IEC 60502-1 rated voltage (``u0_kv``, ``u_kv``, ``um_kv``, and the d.c.
    ``u0_dc_kv``, ``u_dc_kv``) covering ``u0_min_v`` to earth and ``u_min_v`` between
    conductors [V] — a.c. values, or the d.c. ratings where ``dc``; None beyond the table.

    Examples
    --------
    >>> voltage_class(800 / 3**0.5, 800, dc=False)["u_kv"]  # 800 V three-phase
    1.0
    >>> voltage_class(1500, 1500, dc=True)["u0_kv"]  # 1500 V d.c., full voltage to earth
    1.8
    >>> voltage_class(4000, 4000, dc=True) is None
    True
    """
    t = data_table("iec60502_1_rated_voltages.csv")
    u0 = t["u0_dc_kv"] if dc else t["u0_kv"]
    u = t["u_dc_kv"] if dc else t["u_kv"]
    ok = np.flatnonzero((u0 * 1000 >= u0_min_v - 1e-9) & (u * 1000 >= u_min_v - 1e-9))
    if not len(ok):
        return None
    i = int(ok[np.argmin(t["u_kv"][ok])])
    return {c: float(t[c][i]) for c in ("u0_kv", "u_kv", "um_kv", "u0_dc_kv", "u_dc_kv")}


def _kv(v: float) -> str:
    return f"{v:g}"


def _cable_line(
    kind: str,
    material: str,
    size: float,
    insulation: str,
    u_ac_v: float,
    u0_ac_v: float,
    dc_v: float,
) -> dict:
    """Designation columns of one cable type: a.c. feeders need ``u_ac_v`` between phases and
    ``u0_ac_v`` to earth [V] (each the highest of the type's circuits)."""
    size_text = f"{size:g}"
    if insulation == "PV":
        d = designation("pv_cable")
        rated = d["rated_dc_v"]
        line = {
            "conductor_class": 5,
            "insulation": "halogen-free cross-linked (EN 50618)",
            "rated_voltage": "1.5/1.5 kV DC",
            "designation": d["text"].format(cores=1, size=size_text),
            "note": "",
        }
        if dc_v > rated + 1e-9:
            line["designation"] = ""
            line["note"] = (
                f"design.dc_rated_v {dc_v:g} V exceeds EN 50618's {rated:g} V DC rating: no "
                f"PV cable of that standard fits; specify a string cable rated for {dc_v:g} V DC"
            )
        return {**line, "standard": "EN 50618", "source": _source(d), "tag": d["tag"]}
    d = designation("feeder_cable")
    if kind == "ac":
        vc = voltage_class(u0_ac_v, u_ac_v, dc=False)
        need = f"{u_ac_v:g} V AC"
    else:
        vc = voltage_class(dc_v, dc_v, dc=True)
        need = f"{dc_v:g} V DC to earth and between conductors"
    line = {
        "conductor_class": 2,
        "insulation": insulation,
        "standard": "IEC 60502-1",
        "source": _source(d),
        "tag": d["tag"],
    }
    if vc is None:
        return {
            **line,
            "rated_voltage": "",
            "designation": "",
            "note": f"{need} is beyond IEC 60502-1's 1.8/3 kV cables: a cable to IEC 60502-2 "
            "is needed (not chosen by routeplan)",
        }
    dc_text = f", {_kv(vc['u0_dc_kv'])}/{_kv(vc['u_dc_kv'])} kV DC" if kind != "ac" else ""
    rated = f"{_kv(vc['u0_kv'])}/{_kv(vc['u_kv'])} ({_kv(vc['um_kv'])}) kV{dc_text}"
    text = d["text"].format(
        cores=1,
        size=size_text,
        material=material,
        cls=2,
        insulation=line["insulation"],
        u0=_kv(vc["u0_kv"]),
        u=_kv(vc["u_kv"]),
        um=_kv(vc["um_kv"]),
        dc=f" (d.c. {_kv(vc['u0_dc_kv'])}/{_kv(vc['u_dc_kv'])} kV)" if kind != "ac" else "",
    )
    return {**line, "rated_voltage": rated, "designation": text, "note": ""}


def bill_of_quantities(
    circuits: pd.DataFrame,
    segments: pd.DataFrame,
    dc_rated_v: float,
    breaker_device: str,
    rules: str = "iec",
    units: str = "si",
) -> pd.DataFrame:
    """The bill of quantities (:data:`BILL_COLUMNS`; see the module docstring for the rules).

    Parameters
    ----------
    circuits : the cable schedule (``kind``, ``from_id``, ``to_id``, ``material``,
        ``size_mm2`` [mm²], ``parallel``, ``conductors``, ``insulation``, ``cable_m`` [m],
        ``voltage_v`` [V], ``design_current_a`` [A], ``fuse_a``, ``array_fuse_a``,
        ``ac_breaker_a`` [A]).
    segments : the trench schedule (``laying``, ``depth_m`` [m], ``length_m`` [m]).
    dc_rated_v : ``design.dc_rated_v`` [V], the d.c. rating cables and devices must have.
    breaker_device : ``design.ac_breaker_device`` (``iec60947-2`` or ``iec60898-1``; not used
        under ``rules = "nec"``, whose breakers are UL 489 at 240.6(A) ratings).
    rules : ``design.rules`` (``iec`` or ``nec``): the designations, the size labels and the
        equipment grounding conductors (nec) follow it.
    units : ``design.units``: ``si`` lengths in metres, ``us`` in international feet.

    Returns
    -------
    One row per line; ``quantity`` in metres or feet (cable, grounding, trench) or pieces;
    empty cells where a column does not apply.
    """
    unit = length_unit(units)
    nec = rules == "nec"
    kind = circuits["kind"].to_numpy(dtype=object)
    conductors = circuits["conductors"].to_numpy(dtype=np.int64)
    parallel = np.maximum(circuits["parallel"].to_numpy(dtype=np.int64), 1)
    voltage = circuits["voltage_v"].to_numpy(dtype=float)
    string = kind == "string"
    combiners = circuits.loc[~string & (kind != "ac"), "from_id"]
    to_combiner = string & circuits["to_id"].isin(set(combiners)).to_numpy()
    c = pd.DataFrame(
        {
            "kind": kind,
            "material": circuits["material"].to_numpy(dtype=object),
            "size_mm2": circuits["size_mm2"].to_numpy(dtype=float),
            "insulation": circuits["insulation"].to_numpy(dtype=object),
            "metres": circuits["cable_m"].to_numpy(dtype=float) * conductors,
            "lugs": np.where(string, np.where(to_combiner, 1, 0), 2) * conductors,
            "pairs": np.where(string, np.where(to_combiner, 1, 2), 0) * conductors,
            "voltage_v": voltage,
            "phases": conductors // parallel,
            # to earth: the phase voltage of a three-phase circuit, the whole voltage of a
            # single-phase one (per circuit: a line of one type may hold both)
            "u0_v": voltage / np.where(conductors // parallel == 3, math.sqrt(3), 1.0),
            "current_a": circuits["design_current_a"].to_numpy(dtype=float),
        }
    )
    keys = ["kind", "material", "size_mm2"]
    g = (
        c.groupby(keys, sort=False)
        .agg(
            metres=("metres", "sum"),
            lugs=("lugs", "sum"),
            pairs=("pairs", "sum"),
            insulation=("insulation", "first"),
            voltage_v=("voltage_v", "max"),
            u0_v=("u0_v", "max"),
            current_a=("current_a", "max"),
        )
        .reset_index()
    )
    lines: list[dict] = []
    lug_d = designation("nec_lug" if nec else "lug")
    con_d = designation("nec_connector" if nec else "connector")
    g["size_label"] = size_labels(g["size_mm2"].to_numpy(dtype=float), rules)
    for r in g.itertuples(index=False):
        if nec:
            cable = _nec_cable_line(r.kind, r.material, r.size_label, r.insulation, r.voltage_v,
                                    dc_rated_v)  # fmt: skip
        else:
            cable = _cable_line(
                r.kind, r.material, r.size_mm2, r.insulation, r.voltage_v, r.u0_v, dc_rated_v
            )
        common = {
            "kind": r.kind,
            "material": r.material,
            "size_mm2": r.size_mm2,
            "size_label": r.size_label,
        }
        cores = f"1×{r.size_label}" if nec else f"1×{r.size_mm2:g}"
        size_text = r.size_label if nec else f"{r.size_mm2:g}"
        lines.append(
            {
                **common,
                **cable,
                "item": "cable",
                "family": "cable",
                "quantity": float(r.metres),
                "unit": "m",
                "cores_x_size": cores,
            }
        )
        cls = cable["conductor_class"]
        if r.lugs:
            lug = "Cu" if r.material == "Cu" else "Al or bimetal Al/Cu (to Cu terminals)"
            lines.append(
                {
                    **common,
                    "item": "termination",
                    "family": "termination",
                    "quantity": float(r.lugs),
                    "unit": "pcs",
                    "cores_x_size": cores,
                    "conductor_class": cls,
                    "designation": lug_d["text"].format(
                        lug=lug, size=size_text, material=r.material, cls=cls
                    ),
                    "standard": "UL 486A-486B" if nec else "IEC 61238-1",
                    "source": _source(lug_d),
                    "tag": lug_d["tag"],
                }
            )
        if r.pairs:
            amps = math.ceil(r.current_a - 1e-9)
            lines.append(
                {
                    **common,
                    "item": "connector pair",
                    "family": "connector",
                    "quantity": float(r.pairs),
                    "unit": "pcs",
                    "cores_x_size": cores,
                    "rated_voltage": f"{dc_rated_v:g} V DC",
                    "designation": con_d["text"].format(
                        size=size_text, volts=f"{dc_rated_v:g}", amps=amps
                    ),
                    "standard": "UL 6703" if nec else "IEC 62852",
                    "source": _source(con_d),
                    "tag": con_d["tag"],
                    "note": "" if nec else _over_1500(dc_rated_v, "IEC 62852"),
                }
            )
    if nec:
        lines += _egc_lines(circuits)
    lines += _trench_lines(segments, unit)
    lines += _fuse_lines(circuits, dc_rated_v, nec)
    lines += _breaker_lines(
        circuits, c["phases"].to_numpy(), "nec240.6a" if nec else breaker_device
    )
    bill = pd.DataFrame(lines).reindex(columns=BILL_COLUMNS)
    bill = _ordered(bill)
    bill = _with_totals(bill)
    if unit != "m":  # lengths in feet: the same sums, divided once by the foot
        metres = (bill["unit"] == "m").to_numpy()
        bill.loc[metres, "quantity"] = bill.loc[metres, "quantity"].to_numpy(dtype=float) / FOOT_M
        bill.loc[metres, "unit"] = unit
    return bill


def _nec_cable_line(
    kind: str, material: str, label: str, insulation: str, u_ac_v: float, dc_v: float
) -> dict:
    """Designation columns of one cable type under the NEC rule set: PV wire (UL 4703) for
    strings, a Table 310.4(A) conductor type of the insulation's temperature rating for feeders;
    rated for ``dc_v`` (d.c.) or the inverter's line voltage ``u_ac_v`` (a.c.)."""
    d = designation("nec_pv_wire" if insulation == "PV" or kind == "string" else "nec_feeder_cable")
    volts = f"{u_ac_v:g} V AC" if kind == "ac" else f"{dc_v:g} V DC"
    text = d["text"].format(
        size=label,
        material=material,
        insulation=insulation,
        volts=f"{u_ac_v:g}" if kind == "ac" else f"{dc_v:g}",
    )
    return {
        "conductor_class": np.nan,
        "insulation": insulation,
        "rated_voltage": volts,
        "designation": text,
        "standard": "UL 4703" if d["item"] == "nec_pv_wire" else "NEC 2023 Table 310.4(A)",
        "source": _source(d),
        "tag": d["tag"],
        "note": "",
    }


#: the overcurrent device of each kind's circuits (schedule column)
_OCPD_COLUMN = {"string": "fuse_a", "subarray": "array_fuse_a", "array": "array_fuse_a",
                "ac": "ac_breaker_a"}  # fmt: skip


def egc_ratings_a(circuits: pd.DataFrame) -> tuple[np.ndarray, np.ndarray]:
    """Per circuit, the overcurrent device rating its equipment grounding conductor is sized
    for [A], and whether that device is assumed (NEC 2023 690.45: a d.c. circuit without a
    device takes the 690.9(B) rating for 1.25 × its 690.8(A) maximum current, here
    1.25 × ``isc_design_a``); NaN for an a.c. circuit without a breaker rating."""
    kind = circuits["kind"].to_numpy(dtype=object)
    rating = np.full(len(kind), np.nan)
    for k, column in _OCPD_COLUMN.items():
        m = kind == k
        rating[m] = circuits[column].to_numpy(dtype=float)[m]
    assumed = np.isnan(rating) & (kind != "ac")
    if assumed.any():
        i_max = nec_pv.source_circuit_max_current_a(
            circuits["isc_design_a"].to_numpy(dtype=float)[assumed]
        )
        rating[assumed] = nec_protection.pv_ocpd(i_max).rating_a
    return rating, assumed


def _egc_lines(circuits: pd.DataFrame) -> list[dict]:
    """Equipment grounding conductors (NEC 2023 250.122; see the module docstring)."""
    d = designation("nec_egc")
    rating, assumed = egc_ratings_a(circuits)
    size = circuits["size_mm2"].to_numpy(dtype=float)
    ok = np.isfinite(rating) & np.isfinite(size)
    if not ok.any():
        return []
    material = circuits["material"].to_numpy(dtype=object)[ok]
    r = rating[ok]
    egc_label = np.empty(len(r), dtype=object)
    egc_mm2 = np.empty(len(r))
    for mat in ("Cu", "Al"):  # Table 250.122's two columns, once per distinct rating
        m = material == mat
        if m.any():
            uniq, inverse = np.unique(r[m], return_inverse=True)
            egc_label[m] = nec_protection.egc_size_label(uniq, mat)[inverse]
            egc_mm2[m] = nec_protection.egc_size_mm2(uniq, mat)[inverse]
    own = size[ok]
    capped = egc_mm2 > own * (1.0 + 1e-9)  # 250.122(A): never larger than the circuit's own
    if capped.any():
        egc_mm2[capped] = own[capped]
        egc_label[capped] = size_labels(own[capped], "nec")
    frame = pd.DataFrame(
        {
            "kind": circuits["kind"].to_numpy(dtype=object)[ok],
            "material": material,
            "size_mm2": egc_mm2,
            "size_label": egc_label,
            "rating_a": r,
            "assumed": assumed[ok],
            "capped": capped,
            "metres": circuits["cable_m"].to_numpy(dtype=float)[ok]
            * np.maximum(circuits["parallel"].to_numpy(dtype=float)[ok], 1.0),
        }
    )
    g = (
        frame.groupby(["kind", "material", "size_mm2", "rating_a"], sort=False)
        .agg(
            metres=("metres", "sum"),
            size_label=("size_label", "first"),
            assumed=("assumed", "any"),
            capped=("capped", "any"),
        )
        .reset_index()
    )
    lines = []
    for x in g.itertuples(index=False):
        notes = []
        if x.assumed:
            notes.append(
                "sized for the assumed device of 690.45 where the circuit has none (690.9(B) "
                "rating for 1.25 × the 690.8(A) maximum current)"
            )
        if x.capped:
            notes.append("limited to the circuit's own conductor size (250.122(A))")
        notes.append(
            "250.122(B): increase in proportion where the ungrounded conductors were enlarged "
            "beyond the size the ampacity needs (e.g. for voltage drop) — not applied, check"
        )
        lines.append(
            {
                "item": "equipment grounding conductor",
                "kind": x.kind,
                "family": "grounding",
                "material": x.material,
                "size_mm2": float(x.size_mm2),
                "size_label": x.size_label,
                "rating_a": float(x.rating_a),
                "quantity": float(x.metres),
                "unit": "m",
                "cores_x_size": f"1×{x.size_label}",
                "designation": d["text"].format(
                    size=x.size_label, material=x.material, rating=f"{x.rating_a:g}"
                ),
                "standard": "NEC 2023 Table 250.122",
                "source": _source(d),
                "tag": d["tag"],
                "note": "; ".join(notes),
            }
        )
    return lines


def _over_1500(dc_v: float, standard: str) -> str:
    if dc_v <= 1500 + 1e-9:
        return ""
    return f"design.dc_rated_v {dc_v:g} V is beyond {standard}'s 1500 V DC scope: check the product"


def unused_segments(segments: pd.DataFrame) -> np.ndarray:
    """Where a trench segment carries no circuit of the plan (its ``circuits`` count is 0);
    a trench schedule without that column counts every segment as carrying circuits."""
    if "circuits" not in segments:
        return np.zeros(len(segments), dtype=bool)
    return segments["circuits"].to_numpy(dtype=float) == 0


def _trench_lines(segments: pd.DataFrame, unit: str = "m") -> list[dict]:
    """Trench metres by laying and depth: those that carry a circuit of the plan (item
    ``trench``), and apart, those the site's trench layer draws where no circuit runs (item
    ``unused trench``, its own total: a buyer decides whether to dig them;
    :func:`unused_segments`)."""
    d = designation("trench_us" if unit == "ft" else "trench")
    used = ~unused_segments(segments)
    # the three columns summed, not the whole trench schedule (geometries included)
    table = pd.DataFrame({c: segments[c].to_numpy() for c in ("laying", "depth_m", "length_m")})
    lines = []
    for item, part in (("trench", table[used]), ("unused trench", table[~used])):
        t = part.groupby(["laying", "depth_m"], sort=False)["length_m"].sum().reset_index()
        lines += [
            {
                "item": item,
                "family": item,
                "laying": r.laying,
                "depth_m": float(r.depth_m),
                "quantity": float(r.length_m),
                "unit": "m",
                "designation": d["text"].format(
                    laying=r.laying, depth=f"{r.depth_m:g}", depth_ft=f"{r.depth_m / FOOT_M:.2f}"
                ),
                "tag": d["tag"],
            }
            for r in t.itertuples(index=False)
        ]
    return lines


def _fuse_lines(circuits: pd.DataFrame, dc_v: float, nec: bool = False) -> list[dict]:
    d = designation("nec_pv_fuse" if nec else "gpv_fuse")
    kind = circuits["kind"].to_numpy(dtype=object)
    lines = []
    for k, column, item in _FUSE_ITEMS:
        rating = circuits[column].to_numpy(dtype=float)[kind == k]
        rating = rating[np.isfinite(rating)]
        values, counts = np.unique(rating, return_counts=True)
        for v, n in zip(values.tolist(), counts.tolist(), strict=True):
            lines.append(
                {
                    "item": item,
                    "kind": k,
                    "family": "fuse",
                    "rating_a": v,
                    "quantity": 2.0 * n,  # one per pole
                    "unit": "pcs",
                    "rated_voltage": f"{dc_v:g} V DC",
                    "designation": d["text"].format(rating=f"{v:g}", volts=f"{dc_v:g}"),
                    "standard": "UL 2579" if nec else "IEC 60269-6",
                    "source": _source(d),
                    "tag": d["tag"],
                    "note": "" if nec else _over_1500(dc_v, "IEC 60269-6"),
                }
            )
    return lines


def _breaker_lines(circuits: pd.DataFrame, phases: np.ndarray, device: str) -> list[dict]:
    d = designation(f"breaker_{device}")
    ac = (circuits["kind"] == "ac").to_numpy()
    frame = pd.DataFrame(
        {
            "rating_a": circuits["ac_breaker_a"].to_numpy(dtype=float)[ac],
            "poles": phases[ac],
            "voltage_v": circuits["voltage_v"].to_numpy(dtype=float)[ac],
        }
    )
    frame = frame[np.isfinite(frame["rating_a"])]
    g = frame.groupby(["rating_a", "poles"]).agg(
        n=("voltage_v", "size"), voltage_v=("voltage_v", "max")
    )
    lines = []
    # the scope clauses quoted in the data (UL 489: no scope limit in the data, none checked)
    limit = {"iec60898-1": 440.0, "nec240.6a": math.inf}.get(device, 1000.0)
    for (rating, poles), r in g.iterrows():
        volts = f"{r.voltage_v:g}"
        note = ""
        if r.voltage_v > limit + 1e-9:
            note = f"{volts} V AC is beyond {d['standard']}'s {limit:g} V AC scope"
        lines.append(
            {
                "item": "AC breaker",
                "kind": "ac",
                "family": "breaker",
                "rating_a": float(rating),
                "poles": int(poles),
                "quantity": float(r.n),
                "unit": "pcs",
                "rated_voltage": f"{volts} V AC",
                "designation": d["text"].format(
                    rating=f"{rating:g}", poles=int(poles), volts=volts
                ),
                "standard": "UL 489" if device == "nec240.6a" else d["standard"],
                "source": _source(d),
                "tag": d["tag"],
                "note": note,
            }
        )
    return lines


def _ordered(bill: pd.DataFrame) -> pd.DataFrame:
    """Families in :data:`FAMILIES` order; within one, the kinds as power flows (string →
    AC), then material, size, rating, poles, laying, depth."""
    rank = {f: i for i, f in enumerate(FAMILIES)}
    items = {"string fuse": 0, "sub-array fuse": 1, "array fuse": 2}
    bill = bill.assign(
        _f=bill["family"].map(rank),
        _i=bill["item"].map(items).fillna(0),
        _k=bill["kind"].map(_KIND_ORDER).fillna(9),
    )
    by = ["_f", "_i", "_k", "material", "size_mm2", "rating_a", "poles", "laying", "depth_m"]
    bill = bill.sort_values(by, na_position="last", kind="stable")
    return bill.drop(columns=["_f", "_i", "_k"]).reset_index(drop=True)


def _with_totals(bill: pd.DataFrame) -> pd.DataFrame:
    """The bill with a total line after each family's lines (metres or pieces)."""
    family_of = bill["family"].to_numpy(dtype=object)
    quantity, unit = bill["quantity"], bill["unit"]
    totals, order = [], []  # the total lines; the rows in order (totals after the bill's)
    for family in FAMILIES:
        lines = np.flatnonzero(family_of == family)
        if not lines.size:
            continue
        total = {c: np.nan for c in BILL_COLUMNS}
        total.update(
            item=TOTAL_ITEM[family],
            family=family,
            quantity=float(quantity.iloc[lines].sum()),
            unit=unit.iloc[lines[0]],
        )
        order += [*lines.tolist(), len(bill) + len(totals)]
        totals.append(total)
    if not totals:
        return bill
    out = pd.concat([bill, pd.DataFrame(totals, columns=BILL_COLUMNS)], ignore_index=True)
    out = out.take(order).reset_index(drop=True)
    for col in ("size_mm2", "depth_m", "quantity", "rating_a", "poles", "conductor_class"):
        out[col] = pd.to_numeric(out[col]).astype(float)
    return out
