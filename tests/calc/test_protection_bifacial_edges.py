"""calc.protection at its edges: the bifacial design I_SC (φ = 1, a datasheet bifacial I_SC equal
to the front I_SC, missing values) and a project's fuse list that is a rating only nearly.
"""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from calc.errors import InputError
from calc.protection import bifacial_isc_a, gpv_fuse_ratings_a

GPV = (
    "1, 2, 3, 4, 5, 6, 8, 10, 12, 15, 16, 20, 25, 30, 32, 35, 40, 50, 63, 80, 100, 125, 160, 200, "
    "250, 315, 355, 400, 500, 630"
)


def test_full_bifaciality_is_accepted():
    # φ = 1 is the top of the range (rear as good as front). I_SC,BIFI = I_SC · (1 + φ · G_r/G_f)
    # with the IEC 61215-1:2021 nameplate ratio 135/1000 (calc.protection, formula from memory):
    # 14 A · (1 + 1.0 · 0.135) = 15.89 A (hand calculation)
    assert_allclose(bifacial_isc_a([14.0], [1.0]), [15.89], rtol=1e-12)


def test_a_datasheet_bifacial_isc_equal_to_the_front_isc_is_accepted():
    # A module rated with no rear gain: I_SC,BIFI = I_SC = 14 A is not "below I_SC".
    assert_allclose(bifacial_isc_a([14.0], [0.0], isc_bifacial_a=[14.0]), [14.0], rtol=0)
    # equal within the rating tolerance (1 part in 10⁹, calc.protection._REL) is equal too
    just_below = 14.0 * (1.0 - 1e-9)
    assert_allclose(bifacial_isc_a([14.0], [0.0], isc_bifacial_a=[just_below]), [just_below])


def test_missing_values_in_the_bifacial_current():
    # nan (None) reads as "not known": bifaciality -> monofacial (I_SC), datasheet bifacial I_SC
    # -> computed, I_SC -> unknown. 14 · (1 + 0.8 · 0.135) = 15.512 A (hand calculation).
    got = bifacial_isc_a(
        [14.0, None, 14.0, 14.0], [0.8, 0.8, None, 0.8], isc_bifacial_a=[None, None, None, 15.2]
    )
    assert_allclose(got[[0, 2, 3]], [15.512, 14.0, 15.2], rtol=1e-12)
    assert np.isnan(got[1])


def test_a_missing_rear_irradiance_ratio_is_refused():
    with pytest.raises(InputError) as err:
        bifacial_isc_a([14.0, 14.0], [0.7, 0.7], rear_irradiance_ratio=[0.1, None])
    assert str(err.value) == "rear_irradiance_ratio must be finite and >= 0; got nan at index 1"


@pytest.mark.parametrize("near", [16.0001, 16.0 + 2e-8])
def test_a_fuse_list_value_near_a_rating_but_not_on_it_is_refused(near):
    # The comparison tolerance is 1 part in 10⁹ (calc.protection._REL): 16.0001 A and
    # 16.00000002 A (1.25 parts in 10⁹ off) are not the 16 A rating.
    with pytest.raises(InputError) as err:
        gpv_fuse_ratings_a([10.0, near])
    assert str(err.value) == (
        f"fuse_ratings_a: {near:g} A is not in the IEC 60269-6 gPV fuse rating list ({GPV} A)"
    )
