"""The route editor in Debian's Chromium, driven by playwright, with no internet.

- ``gravplan draw``: draw a line by clicks, place the source and an outlet, download
  the GeoJSON and the scenario, and plan them with the command-line path.
- ``gravplan serve``: draw by clicks, watch the profile and the cost update, drag a
  vertex, undo, save, and compare the saved file with what was drawn.
The expected numbers come from the planner itself on the same geometry, which the
other tests check against fluids, iapws and scipy.
"""

from __future__ import annotations

import json
import shutil
import threading

import numpy as np
import pytest

from planner import api
from planner.app.draw import write_draw_page
from planner.app.server import App
from tests.test_map_browser import CHROMIUM, FLAGS

import playwright.sync_api as pw   # a test extra: `make test` installs it

EVIL = 'Tamsel <img src=x onerror="window.pwned=1"> & co'


@pytest.fixture(scope="module")
def browser():
    with pw.sync_playwright() as p:
        b = p.chromium.launch(executable_path=CHROMIUM, headless=True,
                              args=[f for f in FLAGS if not f.startswith(("--window", "--host-resolver",
                                                                    "--virtual-time"))])
        yield b
        b.close()


def _page(browser, *, allow_local=False):
    # bypass_csp only lets playwright's own wait_for_function run; the page's policy
    # is checked in tests/test_app.py
    pg = browser.new_page(viewport={"width": 1400, "height": 900}, accept_downloads=True,
                          bypass_csp=True)
    errors, blocked = [], []
    pg.on("pageerror", lambda e: errors.append(str(e)))

    def route(r):
        url = r.request.url
        if url.startswith(("file:", "data:", "blob:")) or (allow_local and url.startswith("http://127.0.0.1")):
            r.continue_()
        else:
            blocked.append(url)
            r.abort()
    pg.route("**/*", route)
    return pg, errors, blocked


def _demo_vertices(demo_folder, every=3):
    """A subset of the demo route's vertices, from the source down to the end."""
    route = json.loads((demo_folder / "route.geojson").read_text())
    g = route["features"][0]["geometry"] if route.get("type") == "FeatureCollection" else route["geometry"]
    coords = g["coordinates"]
    return coords[::every] + ([coords[-1]] if (len(coords) - 1) % every else [])


def _click_line(pg, lonlats):
    """Draw a polyline by clicking at the screen positions of ``lonlats``."""
    pg.click(".leaflet-draw-draw-polyline")
    box = pg.locator("#map").bounding_box()
    pts = [pg.evaluate(f"(() => {{ const p = gp.map.latLngToContainerPoint([{lat}, {lon}]); return [p.x, p.y]; }})()")
           for lon, lat in lonlats]
    for x, y in pts:
        pg.mouse.click(box["x"] + x, box["y"] + y)
        pg.wait_for_timeout(60)
    pg.mouse.click(box["x"] + pts[-1][0], box["y"] + pts[-1][1])      # finish on the last vertex
    return pts


def test_draw_page_offline_to_a_plan(browser, demo_folder, tmp_path):
    page = write_draw_page(demo_folder / "dem.tif", tmp_path / "draw.html")
    pg, errors, blocked = _page(browser)
    pg.goto(page.as_uri())
    pg.wait_for_selector(".leaflet-image-layer")
    assert pg.locator(".leaflet-overlay-pane path").count() > 10            # contours
    verts = _demo_vertices(demo_folder)
    pg.evaluate(f"gp.map.fitBounds([[{min(v[1] for v in verts)}, {min(v[0] for v in verts)}], "
                f"[{max(v[1] for v in verts)}, {max(v[0] for v in verts)}]])")
    pg.wait_for_timeout(300)
    pts = _click_line(pg, verts)
    box = pg.locator("#map").bounding_box()
    for (x, y), role in ((pts[0], "source"), (pts[-1], "outlet")):
        pg.click(".leaflet-draw-draw-marker")
        pg.mouse.click(box["x"] + x, box["y"] + y)
        pg.wait_for_timeout(100)
        assert pg.locator("#pointform select[name=role]").input_value() == role
    pg.fill("#pointform input[name=name]", "Orun hydrant")
    pg.fill("#pointform input[name=flow_lps]", "1.5")
    # the elevation under the cursor agrees with the DEM there (display grid: within 3 m)
    pg.mouse.move(box["x"] + pts[2][0], box["y"] + pts[2][1])
    text = pg.locator("#cursor").text_content()
    z_page = float(text.split("ground ")[1].split(" m")[0])
    lat, lon = (float(t.strip(",")) for t in text.split()[:2])
    with _open(demo_folder) as dem:
        from pyproj import Transformer
        x, y = Transformer.from_crs("EPSG:4326", dem.crs, always_xy=True).transform(lon, lat)
        z_dem = float(dem.sample(np.array([x]), np.array([y]))[0][0])
    assert z_page == pytest.approx(z_dem, abs=3.0)
    assert "km drawn; 1 source, 1 outlet" in pg.locator("#status").text_content()
    with pg.expect_download() as dl:
        pg.click("#export")
    dl.value.save_as(tmp_path / "route.geojson")
    with pg.expect_download() as dl:
        pg.click("#export-scenario")
    dl.value.save_as(tmp_path / "scenario.toml")
    assert not errors and not blocked

    fc = json.loads((tmp_path / "route.geojson").read_text())
    line = [f for f in fc["features"] if f["geometry"]["type"] == "LineString"]
    assert len(line) == 1
    got = np.asarray(line[0]["geometry"]["coordinates"])
    # the clicks land within a pixel of the demo vertices (about 10 m at this zoom)
    assert np.allclose(got[[0, -1]], np.asarray(verts)[[0, -1]], atol=2e-4)
    assert len(got) == len(verts)
    sc = api.load_scenario(tmp_path / "scenario.toml")
    assert [o.name for o in sc.outlets] == ["Orun hydrant"]
    assert sc.outlets[0].flow_m3s == pytest.approx(1.5e-3)
    plan = api.plan_any(sc)
    assert plan.profile.length_m == pytest.approx(5800, rel=0.02)
    assert plan.outlets[0].pressure_head_m >= 10 - 1e-6 and plan.mode == "design"


def _open(folder):
    from planner.geo.terrain import open_dem
    return open_dem(folder / "dem.tif")


@pytest.fixture
def live(demo_folder, tmp_path):
    """``gravplan serve`` on a copy of the demo whose outlet sits 3 km down any line."""
    shutil.copy(demo_folder / "route.geojson", tmp_path / "route.geojson")
    (tmp_path / "scenario.toml").write_text(f"""
[project]
name = '{EVIL}'
[terrain]
dem = "{(demo_folder / 'dem.tif').as_posix()}"
[route]
file = "route.geojson"
spacing_m = 10
[source]
name = "Varo spring"
top_water_above_ground_m = 1.0
low_water_above_ground_m = 0.5
[design]
catalogues = ["pe100"]
max_static_pressure_m = 100
[[outlets]]
name = "Tamsel stand"
chainage_m = 3000
flow_lps = 2
min_pressure_m = 10
""")
    app = App(api.load_scenario(tmp_path / "scenario.toml"), port=0)
    threading.Thread(target=app.serve_forever, daemon=True).start()
    yield app, tmp_path
    app.shutdown()


def _result(pg, n_before):
    pg.wait_for_function(f"gp.requests > {n_before}", timeout=30000)
    return pg.evaluate("gp.last")


def test_serve_draw_edit_undo_save(browser, live, demo_folder):
    app, folder = live
    original = (folder / "route.geojson").read_text()
    pg, errors, blocked = _page(browser, allow_local=True)
    pg.goto(app.url)
    first = _result(pg, 0)
    assert first["ok"], first.get("error")
    # the scenario's name is shown as text, never as markup
    assert pg.locator("#title").text_content() == EVIL
    assert pg.locator("#title img").count() == 0 and pg.evaluate("window.pwned") is None

    # start again from nothing, and draw the line by clicks
    n = pg.evaluate("gp.requests")
    pg.evaluate("gp.setDrawing({type: 'FeatureCollection', features: []})")
    empty = _result(pg, n)
    assert not empty["ok"] and pg.locator("#error").is_visible()
    assert "no line yet" in pg.locator("#error").text_content()
    n = pg.evaluate("gp.requests")
    verts = _demo_vertices(demo_folder)
    _click_line(pg, verts)
    drawn = _result(pg, n)
    assert drawn["ok"], drawn.get("error")
    assert pg.locator("#error").is_hidden()
    assert pg.locator("#p-hgl").get_attribute("d").count("L") > 100       # profile panel
    assert "pipe cost" in pg.locator("#cost").text_content()
    assert pg.locator("path.gp-piece").count() > 20                        # coloured route
    assert f"{drawn['cost']:,.0f}" in pg.locator("#cost").text_content()
    clicked = pg.evaluate("gp.getDrawing()")

    # drag a vertex: the design follows
    pg.click(".leaflet-draw-edit-edit")
    handle = pg.locator(".leaflet-editing-icon").nth(2).bounding_box()
    n = pg.evaluate("gp.requests")
    pg.mouse.move(handle["x"] + 5, handle["y"] + 5)
    pg.mouse.down()
    pg.mouse.move(handle["x"] + 45, handle["y"] + 35, steps=5)
    pg.mouse.up()
    moved = _result(pg, n)
    assert moved["ok"], moved.get("error")
    assert moved["length_m"] != drawn["length_m"]
    pg.click(".leaflet-draw-actions a[title='Save changes']")
    pg.wait_for_function("gp.idle()", timeout=30000)
    steps = len(pg.evaluate("gp.history()"))

    # undo: back to the line as clicked, and to its design
    n = pg.evaluate("gp.requests")
    pg.click("#undo")
    undone = _result(pg, n)
    assert len(pg.evaluate("gp.history()")) == steps - 1
    assert undone["length_m"] == pytest.approx(drawn["length_m"], abs=0.05)
    assert undone["cost"] == pytest.approx(drawn["cost"], abs=0.5)
    assert pg.evaluate("gp.getDrawing()") == clicked

    # save: the route file holds what was drawn; the previous one is the backup
    pg.click("#save")
    pg.wait_for_selector("#saved")
    assert (folder / "route.geojson.bak").read_text() == original
    saved = json.loads((folder / "route.geojson").read_text())
    got = np.asarray(saved["features"][0]["geometry"]["coordinates"])
    want = np.asarray(clicked["features"][0]["geometry"]["coordinates"])
    assert got.shape == want.shape and np.allclose(got, want, atol=1e-7)
    assert not errors and not blocked
    pg.screenshot(path=str(folder / "serve.png"))


def test_serve_shows_drawing_errors_in_the_page(browser, live):
    app, _ = live
    pg, errors, _ = _page(browser, allow_local=True)
    pg.goto(app.url)
    _result(pg, 0)
    n = pg.evaluate("gp.requests")
    # a second line on a single-line scenario
    pg.evaluate("gp.setDrawing({type: 'FeatureCollection', features: ["
                "{type: 'Feature', properties: {}, geometry: {type: 'LineString', coordinates: [[37.30, -3.40], [37.31, -3.41]]}},"
                "{type: 'Feature', properties: {}, geometry: {type: 'LineString', coordinates: [[37.32, -3.40], [37.33, -3.41]]}}]})")
    res = _result(pg, n)
    assert not res["ok"]
    assert "network = true" in pg.locator("#error").text_content()
    assert not errors


def test_serve_a_branched_system(browser, demo_folder):
    """A network scenario: every path from the source gets its own profile."""
    app = App(api.load_scenario(demo_folder / "scenario_network.toml"), port=0)
    threading.Thread(target=app.serve_forever, daemon=True).start()
    try:
        pg, errors, blocked = _page(browser, allow_local=True)
        pg.goto(app.url)
        res = _result(pg, 0)
        assert res["ok"], res.get("error")
        options = pg.locator("#path option").all_text_contents()
        assert len(options) == 3 and all(o.startswith("main") for o in options)
        assert pg.locator("#pathpick").is_visible()
        pg.select_option("#path", "2")
        assert pg.locator("#p-hgl").get_attribute("d").count("L") > 50
        assert not errors and not blocked
    finally:
        app.shutdown()
