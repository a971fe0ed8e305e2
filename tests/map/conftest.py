"""Fixtures of the map tests: the demo plan's layers and output folders (see map_fixtures)."""

from __future__ import annotations

from pathlib import Path

import geopandas as gpd
import pytest

from .map_fixtures import HOSTILE, make_frames, write_output_folder


@pytest.fixture
def plan_frames() -> tuple[dict[str, gpd.GeoDataFrame], str]:
    """The demo plan's layers (fresh copies) and site name."""
    return make_frames()


@pytest.fixture
def plan_dir(tmp_path: Path) -> Path:
    """An output folder of the demo plan."""
    frames, site = make_frames()
    return write_output_folder(tmp_path / "out", frames, site)


@pytest.fixture
def hostile_plan_dir(tmp_path: Path) -> Path:
    """The demo plan with ids and site name that would run as script if not escaped."""
    frames, site = make_frames(HOSTILE)
    return write_output_folder(tmp_path / "hostile", frames, site)
