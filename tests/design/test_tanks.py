"""Break-pressure tank placement on hand-built profiles."""

import numpy as np
import pytest

from planner.design.tanks import place_tanks
from planner.errors import DesignError


def ramp(drop=300.0, length=3000.0, spacing=10.0):
    ch = np.arange(0, length + 1, spacing)
    ground = 1000 - drop * ch / length
    return ch, ground, ground - 0.8


def static_heads(ch, pipe, source_level, sites):
    level = np.full(ch.size, source_level)
    for s in sites:
        level[s.index:] = s.level
    return level - pipe


def test_static_head_stays_within_the_limit_with_the_fewest_tanks():
    ch, ground, pipe = ramp()
    sites = place_tanks(ch, ground, pipe, source_level=1001.0, limit_head=100.0, water_depth=1.0)
    assert np.all(static_heads(ch, pipe, 1001.0, sites) <= 100.0 + 1e-9)
    # each tank is as low as it may be, so none can be dropped
    for k in range(len(sites)):
        fewer = sites[:k] + sites[k + 1:]
        assert np.any(static_heads(ch, pipe, 1001.0, fewer) > 100.0)
    assert all("would exceed 100 m" in s.rule for s in sites)


def test_forbidden_stretch_and_fixed_tanks():
    ch, ground, pipe = ramp()
    forbidden = (ch > 800) & (ch < 1100)
    sites = place_tanks(ch, ground, pipe, source_level=1001.0, limit_head=100.0, water_depth=1.0,
                        forbidden=forbidden, fixed=[(50, float(ground[50] + 1.0))])
    assert sites[0].fixed and sites[0].index == 50
    assert not any(forbidden[s.index] for s in sites)
    assert np.all(static_heads(ch, pipe, 1001.0, sites) <= 100.0 + 1e-9)


def test_impossible_placement_is_explained():
    ch, ground, pipe = ramp()
    with pytest.raises(DesignError, match="no break-pressure tank can be placed"):
        place_tanks(ch, ground, pipe, source_level=1001.0, limit_head=100.0, water_depth=1.0,
                    forbidden=ch > 10)
