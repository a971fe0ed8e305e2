"""A missing size (None) in the conductor geometry of calc.resistance is refused like an
untabulated one: calc reads it as nan, which the typical-cable file does not list."""

import pytest

from calc.errors import TableRangeError
from calc.resistance import conductor_diameter_mm


def test_missing_size_has_no_conductor_diameter():
    with pytest.raises(TableRangeError) as e:
        conductor_diameter_mm([16, None])
    assert str(e.value) == (
        "no typical single-core cable geometry for size(s) [nan] mm²; tabulated: [1.5, 2.5, 4.0, "
        "6.0, 10.0, 16.0, 25.0, 35.0, 50.0, 70.0, 95.0, 120.0, 150.0, 185.0, 240.0, 300.0, 400.0, "
        "500.0, 630.0] (file lv_single_core_xlpe_cable_geometry.csv)"
    )
