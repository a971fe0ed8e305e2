"""Worked example in the manner of BS 7671 Appendix 4 (voltage drop from tabulated mV/A/m).

Published input: BS 7671 Appendix 4, Table 4E1B (single-core 90 °C thermosetting cables, copper),
95 mm², three-phase trefoil touching: r = 0.43 mV/A/m, x = 0.145 mV/A/m, z = 0.45 mV/A/m; d.c.
0.49 mV/A/m. Appendix 4 gives the drop as (mV/A/m) × I × L / 1000. The product with I and L below is
computed here, not quoted; the published figures are only the table coefficients.
"""

import numpy as np
import pytest

from calc.resistance import r20_ohm_km, r_at_temp_ohm_km, reactance_ohm_km
from calc.vdrop import vdrop_v

I_A, L_M = 200.0, 50.0


def test_bs7671_4e1b_95mm2_three_phase_unity_pf():
    published_v = 0.43 * I_A * L_M / 1000  # r column: 4.30 V
    r90 = r_at_temp_ohm_km(r20_ohm_km([95]), 90.0)[0]  # IEC 60228 + IEC 60287-1-1
    ours_v = vdrop_v(L_M, I_A, r90, 0.0, 1.0, 3)
    # ours 4.26 V vs 4.30 V: BS 7671 r includes a.c. resistance effects and is rounded to 2
    # significant figures (0.43 covers 0.425-0.435); tolerance 2 %
    assert ours_v == pytest.approx(published_v, rel=0.02)


def test_bs7671_4e1b_95mm2_three_phase_worst_case_pf():
    # z column (0.45 mV/A/m) is the drop when cos φ equals the cable's own r/z; compare at that φ
    published_v = 0.45 * I_A * L_M / 1000  # 4.50 V
    r90 = r_at_temp_ohm_km(r20_ohm_km([95]), 90.0)[0]
    x = reactance_ohm_km([95], "XLPE", 3)[0]
    pf = r90 / np.hypot(r90, x)
    ours_v = vdrop_v(L_M, I_A, r90, x, pf, 3)
    assert ours_v == pytest.approx(published_v, rel=0.02)  # rounding of r and x as above


def test_bs7671_4e1b_95mm2_dc():
    published_v = 0.49 * I_A * L_M / 1000  # 4.90 V
    r90 = r_at_temp_ohm_km(r20_ohm_km([95]), 90.0)[0]
    assert vdrop_v(L_M, I_A, r90) == pytest.approx(published_v, rel=0.02)


def test_published_worked_example_three_phase_feeder_and_size_choice():
    """A published worked example with its answers, beside ours.

    Source: CSE Distributors, "Voltage drop calculations" (technical tables page, stored public
    copy): a three-phase load of 100 A over a 150 m route on 35 mm² copper PVC/SWA/PVC cable,
    tabulated 1.1 mV/A/m (BS 7671 Appendix 4) → published drop 16.5 V; with 10.5 V allowed the
    cable must have ≤ 0.7 mV/A/m → published choice 70 mm² copper. (The page's prose once says
    1000 A; its arithmetic, reproduced here, uses 100 A.)
    Ours: R from IEC 60228:2004 Table 2 at 70 °C (PVC maximum, IEC 60287-1-1 α), three-phase
    √3·I·L·R (cos φ = 1, the tables' r ≈ z for these sizes).
    """
    i_a, l_m = 100.0, 150.0
    r70 = r_at_temp_ohm_km(r20_ohm_km([35.0]), 70.0)[0]
    ours_v = vdrop_v(l_m, i_a, r70, 0.0, 1.0, 3)
    published_v = 16.5
    # ours 16.3 V vs 16.5 V: the table's 1.1 mV/A/m is rounded to 2 significant figures
    # (it covers 1.05–1.15, i.e. ±4.5 %) and includes a.c. effects; tolerance 3 %
    assert ours_v == pytest.approx(published_v, rel=0.03)
    # size choice: the smallest IEC 60228 size whose three-phase drop per A per m is ≤ 0.7 mV
    sizes = np.array([35.0, 50.0, 70.0, 95.0])
    mv_per_a_m = np.sqrt(3) * r_at_temp_ohm_km(r20_ohm_km(sizes), 70.0)  # Ω/km = mV/A/m
    ours_size = sizes[np.argmax(mv_per_a_m <= 0.7)]
    assert ours_size == 70.0  # published: 70 mm²
