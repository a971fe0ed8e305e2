"""The settings' notes, shown beside each value in the report's "Settings in force", name the
reference condition as the default and do not call the site's value the reference.

Source: IEC 60364-5-52:2009 (Ed.3) Annex B, reference conditions of the buried methods: ground
20 °C, soil 2.5 K·m/W, depth 0.7 m (confirmed, ../shared/REFERENCE_VALUES.md §3.0 and §8.4).
"""

from __future__ import annotations

import pytest

from routeplan.config import DESIGN_KEYS

NOTES = {k.name: k for k in DESIGN_KEYS}


@pytest.mark.parametrize(
    ("name", "reference"),
    [("ground_temp_c", "20 °C"), ("soil_k_m_w", "2.5 K·m/W"), ("depth_m", "0.7 m")],
)
def test_reference_condition_is_named_as_the_default(name, reference):
    key = NOTES[name]
    assert f"default: {reference}, the IEC 60364-5-52 reference" in key.note
    # a site's own value (25 °C, 1.5 K·m/W, 0.9 m) is shown beside this note: the note must not
    # read as a statement about that value
    assert not key.note.startswith("IEC 60364-5-52 reference")
