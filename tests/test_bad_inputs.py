"""The bad-input corpus (tests/bad_inputs/cases.toml) run through the command line.

Every error case must exit non-zero with a message that names the file, key or place
and says what is wrong, print no traceback, and leave the output folder exactly as it
was (an earlier result survives).  Warning cases must load and warn.
"""

from __future__ import annotations

import os
import shutil
import tomllib
import warnings
from pathlib import Path
from xml.sax.saxutils import escape

import numpy as np
import pytest
import rasterio
from click.testing import CliRunner

from planner.cli import main

HERE = Path(__file__).resolve().parent / "bad_inputs"
CASES = tomllib.loads((HERE / "cases.toml").read_text(encoding="utf-8"))["case"]
BASES = {"line": "scenario.toml", "network": "scenario_network.toml", "given": "scenario_given_pipe.toml"}


def test_corpus_size_and_ids():
    ids = [c["id"] for c in CASES]
    assert len(ids) == len(set(ids))
    assert sum(c.get("kind", "error") == "error" for c in CASES) >= 40


@pytest.fixture(scope="module")
def dems(demo_folder, tmp_path_factory):
    """The demo DEM, and copies of it without a CRS, all nodata, and in feet."""
    folder = tmp_path_factory.mktemp("bad_dems")
    with rasterio.open(demo_folder / "dem.tif") as src:
        z, prof = src.read(1), src.profile
    out = {"demo": demo_folder / "dem.tif"}
    for name, data, extra in (("nocrs", z, {"crs": None}),
                              ("nodata", np.full_like(z, -9999.0), {"nodata": -9999.0}),
                              ("feet", z / 0.3048, {})):
        path = folder / f"dem_{name}.tif"
        p = dict(prof, **extra)
        if p.get("crs") is None:
            p.pop("crs", None)
        with rasterio.open(path, "w", **p) as ds:
            ds.write(data.astype(p["dtype"]), 1)
            if name == "feet":
                ds.set_band_unit(1, "ft")
        out[name] = path
    fifo = folder / "dem_fifo.tif"
    os.mkfifo(fifo)                     # a named pipe: a reader would wait for ever
    out["fifo"] = fifo
    vrt = folder / "dem_tiles.vrt"      # a GDAL VRT whose second tile is not there
    shutil.copy(demo_folder / "dem.tif", folder / "tile_a.tif")
    t, w, h = prof["transform"], prof["width"], prof["height"]
    sources = "".join(
        f'<SimpleSource><SourceFilename relativeToVRT="1">{name}</SourceFilename>'
        f'<SourceBand>1</SourceBand><SrcRect xOff="0" yOff="0" xSize="{w}" ySize="{h}"/>'
        f'<DstRect xOff="{x0}" yOff="0" xSize="{w}" ySize="{h}"/></SimpleSource>'
        for name, x0 in (("tile_a.tif", 0), ("tile_b.tif", w)))
    vrt.write_text(f'<VRTDataset rasterXSize="{2 * w}" rasterYSize="{h}">'
                   f"<SRS>{escape(prof['crs'].to_wkt())}</SRS>"
                   f"<GeoTransform>{t.c}, {t.a}, {t.b}, {t.f}, {t.d}, {t.e}</GeoTransform>"
                   f'<VRTRasterBand dataType="Float32" band="1">{sources}</VRTRasterBand>'
                   "</VRTDataset>")
    out["vrt_missing_tile"] = vrt
    return out


def _prepare(case, tmp_path, demo_folder, dems):
    work = tmp_path / "work"
    work.mkdir()
    base = case.get("base", "line")
    text = (demo_folder / BASES[base]).read_text(encoding="utf-8")
    dem = case.get("dem", "demo")
    dem_path = dems[dem] if dem in dems else HERE / "files" / dem
    text = text.replace('dem = "dem.tif"', f'dem = "{dem_path.as_posix()}"')
    route_name = "network.geojson" if base == "network" else "route.geojson"
    shutil.copy(demo_folder / route_name, work / route_name)
    route = work / route_name
    if "route" in case:
        route = work / case["route"]
        shutil.copy(HERE / "files" / case["route"], route)
        text = text.replace(f'file = "{route_name}"', f'file = "{case["route"]}"')
    for old, new in case.get("edit", []):
        new = new.replace("{files}", (HERE / "files").as_posix())
        assert old in text, f"{case['id']}: {old!r} is not in the base scenario"
        text = text.replace(old, new)
    if "append" in case:
        text += case["append"]          # the base scenarios end with their [criteria] table
    scenario = work / "scenario.toml"
    scenario.write_text(text, encoding="utf-8")
    return scenario, route, dem_path


@pytest.mark.parametrize("case", CASES, ids=[c["id"] for c in CASES])
def test_bad_input(case, tmp_path, demo_folder, dems):
    scenario, route, dem = _prepare(case, tmp_path, demo_folder, dems)
    out = tmp_path / "out"
    out.mkdir()
    earlier = '{"earlier": "result"}\n'
    (out / "plan.json").write_text(earlier)
    if case.get("kind") == "warning":
        from planner.scenario import load_scenario
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            load_scenario(scenario)
        text = " | ".join(str(w.message) for w in caught)
        for word in case["expect"]:
            assert word.lower() in text.lower(), f"{word!r} not in: {text}"
        return
    args = case.get("args", ["plan", "{scenario}", "--out", "{out}", "--overwrite"])
    args = [a.format(scenario=scenario, out=out, route=route, dem=dem, files=HERE / "files",
                     work=scenario.parent) for a in args]
    res = CliRunner().invoke(main, args)
    message = res.output
    assert res.exit_code == case.get("exit", 1), f"exit {res.exit_code}: {message}"
    assert isinstance(res.exception, SystemExit), repr(res.exception)
    assert "Traceback" not in message
    for word in case["expect"]:
        assert word.lower() in message.lower(), f"{word!r} not in: {message}"
    assert sorted(p.name for p in out.iterdir()) == ["plan.json"]
    assert (out / "plan.json").read_text() == earlier
    assert not list(tmp_path.glob(".*")), "a staging folder or temporary file is left"
