"""Joining polylines into a tree: snapping, tees, orientation, loops, pieces apart."""

import numpy as np
import pytest
from shapely.geometry import LineString

from planner.errors import InputError
from planner.geo.network import build_tree
from tests.conftest import E0, N0, lonlat


def line(*pts):
    lon, lat = lonlat(*np.array(pts, dtype=float).T)
    return LineString(np.column_stack([lon, lat]))


SOURCE = lonlat(E0, N0)


def test_three_branches_snapped_and_oriented():
    main = line((E0, N0), (E0 + 1000, N0))
    a = line((E0 + 1002, N0 + 1), (E0 + 1500, N0 + 400))          # 2 m off the main's end
    b = line((E0 + 1500, N0 - 300), (E0 + 1001, N0))              # drawn towards the junction
    net = build_tree([main, a, b], source=SOURCE, snap_tolerance_m=5)
    assert len(net.links) == 3 and len(net.nodes) == 4
    assert sum(k.turned for k in net.links) == 1 and any("turned round" in n for n in net.notes)
    junction = net.links[0].downstream
    assert {k.upstream for k in net.links[1:]} == {junction}
    assert len(net.leaves) == 2
    assert [k.id for k in net.path_to(net.leaves[0])][0] == 0


def test_tee_part_way_along_the_main_splits_it():
    main = line((E0, N0), (E0 + 2000, N0))
    branch = line((E0 + 800, N0 + 3), (E0 + 800, N0 + 600))
    net = build_tree([main, branch], source=SOURCE, snap_tolerance_m=5)
    assert len(net.links) == 3                                     # main in two, plus branch
    assert any("split" in n for n in net.notes)


def test_loops_and_pieces_apart_are_refused():
    a = line((E0, N0), (E0 + 1000, N0))
    b = line((E0 + 1000, N0), (E0 + 1000, N0 + 1000))
    c = line((E0 + 1000, N0 + 1000), (E0, N0))
    with pytest.raises(InputError, match="loop"):
        build_tree([a, b, c], source=SOURCE)
    far = line((E0 + 5000, N0), (E0 + 6000, N0))
    with pytest.raises(InputError, match="do not connect to the source"):
        build_tree([a, far], source=SOURCE)
    with pytest.raises(InputError, match="both join the same two points"):
        build_tree([a, line((E0, N0), (E0 + 500, N0 + 50), (E0 + 1000, N0))], source=SOURCE)
    with pytest.raises(InputError, match="from the nearest line end"):
        build_tree([a], source=lonlat(E0 - 3000, N0))


def test_read_lines_from_geojson(tmp_path):
    import json

    from planner.geo.network import read_lines

    feats = [{"type": "Feature", "properties": {"name": n},
              "geometry": {"type": "LineString", "coordinates": list(map(list, g.coords))}}
             for n, g in (("main", line((E0, N0), (E0 + 1000, N0))),
                          ("school branch", line((E0 + 1000, N0), (E0 + 1000, N0 + 500))))]
    p = tmp_path / "net.geojson"
    p.write_text(json.dumps({"type": "FeatureCollection", "features": feats}))
    lines = read_lines(p)
    assert [name for _, name in lines] == ["main", "school branch"]
    net = build_tree(lines, source=SOURCE)
    assert [k.name for k in net.links] == ["main", "school branch"]
