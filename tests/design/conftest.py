"""Fixtures of the design tests: a ramp of ground and a straight route down it."""

import numpy as np
import pytest

from tests.conftest import E0, N0, write_raster


def ramp(h=100, w=400, z0=1200.0, fall=0.04, cell=10.0):
    """Ground falling eastwards by ``fall`` m per m."""
    u = (np.arange(w) + 0.5) * cell
    return np.tile(z0 - fall * u, (h, 1))


@pytest.fixture
def ramp_site(tmp_path, write_geojson):
    write_raster(tmp_path / "dem.tif", ramp(), top=N0 + 1000)
    write_geojson([(E0 + 100, N0 + 500), (E0 + 3600, N0 + 500)])
    return tmp_path


