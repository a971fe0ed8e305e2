"""Missing values (None) in the capacity and correction-factor functions of calc.ampacity.

A value missing from a user's table reaches calc as ``None`` as often as ``nan``. calc reads
every numeric argument as float, so ``None`` becomes ``nan`` and takes the documented nan path:
refused with the function's one-line :class:`~calc.errors.InputError` where a number is required,
``nan`` ("not tabulated") where the function reports a missing table cell.
"""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from calc.ampacity import air_group_factor, depth_factor, free_air_capacity_a
from calc.errors import InputError


def test_missing_circuit_count_in_air_is_refused_with_the_count_message():
    # IEC 60364-5-52:2009 Table B.52.17 needs a number of circuits; a missing one is not 1
    with pytest.raises(InputError) as e:
        air_group_factor([None], "tray")
    assert str(e.value) == "number of circuits in air must be >= 0"
    with pytest.raises(InputError) as e:
        air_group_factor([3, None], ["tray", "ladder"])
    assert str(e.value) == "number of circuits in air must be >= 0"
    # the same counts given as numbers: B.52.17 item 4, 3 circuits on a perforated tray 0.82
    assert_allclose(air_group_factor([3, 3], ["tray", "ladder"]), [0.82, 0.82])


@pytest.mark.parametrize(("depth", "diameter"), [([None], 0.04), ([1.0], [None])])
def test_missing_depth_or_diameter_is_refused_with_the_depth_message(depth, diameter):
    with pytest.raises(InputError) as e:
        depth_factor(depth, diameter)
    assert str(e.value) == "depth to the cable axis must exceed half the cable or duct diameter"


def test_missing_size_has_no_free_air_rating():
    # IEC 60364-5-52:2009 B.52.12: 240 mm² Cu XLPE trefoil (method F) 607 A; a missing size is
    # not tabulated: nan, as for a size the table does not list
    got = free_air_capacity_a([240, None], "Cu", "XLPE", 3)
    assert got[0] == 607.0 and np.isnan(got[1])
    got = free_air_capacity_a([None], "Al", "XLPE", 3)
    assert np.isnan(got).tolist() == [True]
