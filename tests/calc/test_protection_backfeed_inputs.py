"""Backfeed into array and sub-array cables (calc.protection.backfeed_a) through the IEC rule set.

IEC 62548:2016 (from memory): B_i = 1.25 · (Σ I_SC of the input's source cables − I_SC,i).
"""

import pytest
from numpy.testing import assert_allclose

from calc.errors import InputError
from calc.rules import get_rules


def test_rule_set_passes_the_source_cables_on():
    # one array cable (100 A) ends at the inverter; two sub-array cables (40 A, 60 A) below it.
    # Sources: the array cable only, Σ = 100 A. B = 1.25 × (100 − 100) = 0,
    # 1.25 × (100 − 40) = 75 A, 1.25 × (100 − 60) = 50 A. Were every cable a source (Σ = 200 A):
    # 125, 200 and 175 A.
    iec = get_rules("iec")
    assert_allclose(
        iec.backfeed_a([100.0, 40.0, 60.0], [1, 1, 1], [True, False, False]), [0, 75, 50]
    )
    assert_allclose(iec.backfeed_a([100.0, 40.0, 60.0], [1, 1, 1]), [125, 200, 175])


def test_missing_array_isc_is_refused():
    with pytest.raises(InputError) as e:
        get_rules("iec").backfeed_a([100.0, None], [1, 1])
    assert str(e.value) == "isc_array_a must be finite and >= 0; got nan at index 1"
