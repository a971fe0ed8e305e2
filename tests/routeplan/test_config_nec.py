"""Design settings' messages under ``rules = "nec"`` name the rule set's cable (NFPA 70 NEC 2023:
PV wire listed to UL 4703 for PV source circuits, 690.31(C)(1); feeder conductor types of Table
310.4(A) such as USE-2, XHHW-2 at 90 °C — the bill's designations, routeplan/data/
bill_designations.csv), not the IEC / EN products; under ``rules = "iec"`` they are unchanged.
The design basis gives each rule set's own defaults and sources."""

from __future__ import annotations

from routeplan.config import parse_design

WRONG = {"insulation": {"string": "90C", "array": "PV"}, "material": {"string": "Al"}}


def _messages(rules: str, design: dict) -> list[str]:
    _, problems = parse_design({"design": {"rules": rules, **design}})
    return [p.message for p in problems]


def test_nec_messages_name_pv_wire_and_the_feeder_types():
    got = _messages("nec", WRONG)
    assert got == [
        "string circuits use PV wire (UL 4703, NEC 2023 690.31(C)(1)): set 'PV'",
        "PV wire (UL 4703, NEC 2023 690.31(C)(1)) is rated here for string circuits only: set "
        "'90C' or '75C' or '60C' (e.g. USE-2, XHHW-2 or THWN-2 at 90 °C, NEC 2023 Table "
        "310.4(A))",
        "string circuits use PV wire (UL 4703, NEC 2023 690.31(C)(1)), sized here as copper "
        "conductors: set 'Cu'",
    ]
    assert not any("EN 50618" in m or "IEC" in m for m in got)


def test_iec_messages_are_unchanged():
    got = _messages("iec", {**WRONG, "insulation": {"string": "XLPE", "array": "PV"}})
    assert got == [
        "string circuits use PV cable (EN 50618 / IEC 62930): set 'PV'",
        "PV cable (EN 50618 / IEC 62930) is rated here for string circuits only: set 'XLPE' or "
        "'PVC'",
        "string circuits use PV cable, whose tabulated ratings are for copper conductors: set 'Cu'",
    ]


def _basis_notes(rules: str) -> dict[str, tuple[str, str]]:
    from routeplan.report.basis import settings

    config = {"design": {"rules": rules}}
    design, problems = parse_design(config)
    assert not problems
    return {s.key: (s.value, s.note) for s in settings(design, config)}


def test_the_design_basis_gives_each_rule_sets_own_defaults_and_air_source():
    """The design basis shows the defaults in force: under nec the feeders' insulation is the
    90 °C column (Table 310.16, the rule set's first), not XLPE; and the air arrangement's
    factors come from Table 310.15(C)(1) (bunched) under nec, from IEC 60364-5-52 Table
    B.52.17 under iec."""
    nec = _basis_notes("nec")
    assert nec["design.insulation.array"][0] == "90C"
    assert "default: string PV, subarray 90C, array 90C, ac 90C" in nec["design.insulation.ac"][1]
    assert "XLPE" not in nec["design.insulation.ac"][1]
    air = nec["design.air_arrangement.string"][1]
    assert "Table 310.15(C)(1)" in air and "B.52.17" not in air
    iec = _basis_notes("iec")
    note = iec["design.insulation.ac"][1]
    assert "default: string PV, subarray XLPE, array XLPE, ac XLPE" in note
    assert "IEC 60364-5-52 Table B.52.17" in iec["design.air_arrangement.string"][1]
