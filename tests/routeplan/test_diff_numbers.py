"""The diff's number check: a number cell is an ASCII decimal number as routeplan writes it,
or empty. The check has a quick path for sound columns (the characters of numbers only, then
Python's float(); Python reference, "Floating-point literals") and an exact one per cell;
both must refuse the same cells. Schedules are written by hand with the csv module."""

from __future__ import annotations

import csv
import io

import pytest

from routeplan.diff import QUANTITIES, DiffError, parse_schedule

HEADER = ["item", "kind", "material", "size_mm2", "laying", "depth_m", "unit", "quantity"]


def bill(*quantities: str) -> bytes:
    """A bill of quantities with one trench line per quantity (as text, written as given)."""
    out = io.StringIO(newline="")
    w = csv.writer(out, lineterminator="\n")
    w.writerow(HEADER)
    for k, q in enumerate(quantities):
        w.writerow(["trench", "", "", "", "direct", f"0.{k + 5}", "m", q])
    return out.getvalue().encode("utf-8")


@pytest.mark.parametrize("cell", ["1.2.3", "1e", "--1", "+", ".", "1e+", "e5", "1-2"])
def test_a_cell_of_number_characters_that_is_no_number_is_refused(cell):
    """Only digits, '.', signs and 'e': the quick path's character test passes, float()
    must then refuse it, naming the line and the column."""
    with pytest.raises(DiffError) as e:
        parse_schedule(bill("12.50", cell), QUANTITIES, "q.csv")
    assert str(e.value) == f"q.csv: line 3: column quantity: {cell!r} is not a number"


@pytest.mark.parametrize(
    ("cells", "bad", "line"),
    [
        (("7\n",), "7\n", 2),  # one record: its cell ends with a line end (quoted)
        (("7\n", "8\n"), "7\n", 2),  # every cell ends with one
        (("1.5", "7\n", "2"), "7\n", 3),  # one cell among others
    ],
)
def test_a_number_with_a_line_end_in_its_cell_is_refused(cells, bad, line):
    """float() reads "7\\n" as 7 (it strips blanks); the schedule never writes it, and the
    diff must not take it: a line end inside a cell is no number."""
    with pytest.raises(DiffError) as e:
        parse_schedule(bill(*cells), QUANTITIES, "q.csv")
    assert str(e.value) == f"q.csv: line {line}: column quantity: {bad!r} is not a number"


def test_sound_numbers_pass_both_ways():
    frame = parse_schedule(bill("12.50", "+3E-2", "-.5", "1.", "0"), QUANTITIES, "q.csv")
    assert frame["quantity"].tolist() == ["12.50", "+3E-2", "-.5", "1.", "0"]
