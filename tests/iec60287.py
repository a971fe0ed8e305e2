"""An independent reading of IEC 60287-1-1's a.c. resistance, for tests that recompute the
engine's numbers (written from the standard's formulas, not from :mod:`calc.resistance`).

IEC 60287-1-1 (Ed. 2.1) 2.1: R = R'(1 + y_s + y_p), R' the d.c. resistance at the conductor
temperature [Ω/m]. Skin effect (2.1.2): x_s² = 8πf/R'·10⁻⁷·k_s, y_s = x_s⁴/(192 + 0.8 x_s⁴)
(x_s ≤ 2.8). Proximity effect, three single-core cables (2.1.4.1): x_p² = 8πf/R'·10⁻⁷·k_p,
F = x_p⁴/(192 + 0.8 x_p⁴), y_p = F (d_c/s)² [0.312 (d_c/s)² + 1.18/(F + 0.27)]; two cables
(2.1.3, from memory): y_p = 2.9 F (d_c/s)². Table 2, round stranded conductors with extruded
insulation: Cu k_s = k_p = 1; Al k_s = 1, k_p = 0.8 (confirmed through a public reproduction,
see calc/data/iec60287_1_1_table2_skin_proximity.csv). Geometry: single-core cables touching,
s = the cable's diameter; d_c = √(4A/(π·fill)); both from the typical-cable data file (common
practice), read here with pandas.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

GEOMETRY = (
    Path(__file__).resolve().parents[1] / "calc" / "data" / "lv_single_core_xlpe_cable_geometry.csv"
)
KP = {"Cu": 1.0, "Al": 0.8}  # IEC 60287-1-1 Table 2, round stranded, extruded insulation


def _geometry(size_mm2: float) -> tuple[float, float]:
    t = pd.read_csv(GEOMETRY, comment="#")
    row = t[np.isclose(t.iloc[:, 0].astype(float), size_mm2)].iloc[0]
    fill, od = float(row.iloc[1]), float(row.iloc[2])
    return np.sqrt(4 * size_mm2 / (np.pi * fill)), od


def ac_over_dc(r_ohm_m, size_mm2: float, material: str, phases: int = 3, f_hz: float = 50.0):
    """R/R' of one conductor of ``size_mm2`` at d.c. resistance ``r_ohm_m`` [Ω/m]."""
    r = np.asarray(r_ohm_m, dtype=float)

    def y_of(k: float) -> np.ndarray:
        x4 = (8 * np.pi * f_hz / r * 1e-7 * k) ** 2
        return x4 / (192 + 0.8 * x4)

    dc, s = _geometry(size_mm2)
    ratio2 = (dc / s) ** 2
    f = y_of(KP[material])
    yp = 2.9 * f * ratio2 if phases == 1 else f * ratio2 * (0.312 * ratio2 + 1.18 / (f + 0.27))
    return 1 + y_of(1.0) + yp
