"""The live editor's session and server, without a browser.

The re-planned answers are checked against ``plan_scenario`` on the same route (the
command line's own path, itself checked against fluids and iapws in
tests/test_demo_end_to_end.py); the server's safety rules are checked as the issue
states them: loopback only, request size limit, malformed input answered with a
message, no file paths taken from the page.
"""

from __future__ import annotations

import json
import threading
import urllib.error
import urllib.request
from dataclasses import replace

import numpy as np
import pytest

from planner import api
from planner.app.draw import route_drawing
from planner.app.server import MAX_BODY, App
from planner.app.session import DrawingError, LiveSession, parse_drawing


def _line(coords, name="main"):
    return {"type": "Feature", "properties": {"name": name},
            "geometry": {"type": "LineString", "coordinates": coords}}


def _fc(*features):
    return {"type": "FeatureCollection", "features": list(features)}


@pytest.mark.parametrize("drawing, words", [
    ([1, 2], "not GeoJSON"),
    ({"type": "FeatureCollection"}, "no list of features"),
    (_fc(), "no line yet"),
    (_fc({"type": "Feature", "geometry": None}), "feature 1 has no geometry"),
    (_fc(_line([[37.3, -3.4]])), "fewer than two distinct points"),
    (_fc(_line([[37.3, -3.4], [37.3, -3.4]])), "fewer than two distinct points"),
    (_fc(_line([[37.3, -3.4], ["x", -3.41]])), "numbers"),
    (_fc(_line([[37.3, -3.4], [None, -3.41]])), "vertex 2"),
    (_fc(_line([[37.3, -3.4], [237.3, -3.41]])), "longitude"),
    (_fc({"type": "Feature", "properties": {}, "geometry": {"type": "Polygon", "coordinates": []}}),
     "Polygon"),
])
def test_malformed_drawings_are_explained(drawing, words):
    with pytest.raises(DrawingError) as err:
        parse_drawing(drawing)
    assert words.lower() in str(err.value).lower()


def test_drawing_with_points_and_names():
    lines, points = parse_drawing(_fc(
        _line([[37.30, -3.40], [37.31, -3.41]], "main"),
        {"type": "Feature", "properties": {"role": "source", "name": "spring <b>"},
         "geometry": {"type": "Point", "coordinates": [37.30, -3.40]}}))
    assert [n for _, n in lines] == ["main"]
    assert points[0]["role"] == "source" and points[0]["name"] == "spring <b>"


def test_vertex_limit():
    coords = np.column_stack([np.linspace(37.3, 37.35, 20_001), np.full(20_001, -3.4)]).tolist()
    with pytest.raises(DrawingError, match="more than 20,000 vertices"):
        parse_drawing(_fc(_line(coords)))


@pytest.fixture(scope="module")
def session(demo_folder):
    s = LiveSession(api.load_scenario(demo_folder / "scenario.toml"))
    yield s
    s.close()


def test_live_answer_matches_the_command_line_plan(session, demo_folder):
    """The live digest carries the same design as plan_scenario with the LP as final method."""
    sc = api.load_scenario(demo_folder / "scenario.toml")
    ref = api.plan(replace(sc, design=replace(sc.design, whole_pieces=False)))
    res = session.replan(route_drawing(sc))
    assert res["ok"], res.get("error")
    assert res["cost"] == pytest.approx(ref.pipe_cost, abs=1.0)
    assert res["length_m"] == pytest.approx(ref.profile.length_m, abs=0.1)
    tanks = [p["chainage"] for p in res["points"] if p["kind"] == "break_pressure_tank"]
    assert tanks == pytest.approx([round(t.chainage_m) for t in ref.tanks], abs=1)
    residual = {p["name"]: p["residual"] for p in res["points"] if p["kind"] == "outlet"}
    for o in ref.outlets:
        # the digest gives residuals to 0.1 m
        assert residual[o.name] == pytest.approx(o.pressure_head_m, abs=0.06)
        assert residual[o.name] >= o.min_pressure_m - 0.05        # the design meets its limit
    prof = res["paths"][0]["profile"]
    assert len(prof["chainage"]) <= 1300
    # the HGL of the digest is the plan's, point for point
    # (the digest rounds chainages to 0.01 m: take the nearest point, not the next one)
    i = int(np.argmin(np.abs(ref.profile.chainage_m - prof["chainage"][len(prof["chainage"]) // 2])))
    assert prof["hgl"][len(prof["chainage"]) // 2] == pytest.approx(ref.energy.hgl[i], abs=0.02)
    assert "split-pipe" in res["basis"]


def test_live_errors_are_answers_not_exceptions(session):
    far = _fc(_line([[10.0, 50.0], [10.01, 50.01]]))
    res = session.replan(far)
    assert res["ok"] is False and "DEM" in res["error"]
    two = session.replan(_fc(_line([[37.30, -3.40], [37.31, -3.41]]),
                             _line([[37.32, -3.40], [37.33, -3.41]], "b")))
    assert two["ok"] is False and "network = true" in two["error"]


def test_moving_a_vertex_changes_the_design(session, demo_folder):
    sc = api.load_scenario(demo_folder / "scenario.toml")
    base = route_drawing(sc)
    first = session.replan(base)
    coords = base["features"][0]["geometry"]["coordinates"]
    moved = [list(c) for c in coords]
    k = len(moved) // 3
    moved[k] = [moved[k][0] + 0.002, moved[k][1] + 0.002]
    second = session.replan(_fc(_line(moved)))
    assert second["ok"], second.get("error")
    assert second["length_m"] != first["length_m"]
    assert second["cost"] != first["cost"]


# ---- the HTTP server ------------------------------------------------------------------

@pytest.fixture(scope="module")
def server(demo_folder, tmp_path_factory):
    import shutil

    folder = tmp_path_factory.mktemp("serve")
    for name in ("scenario.toml", "route.geojson"):
        shutil.copy(demo_folder / name, folder / name)
    text = (folder / "scenario.toml").read_text()
    (folder / "scenario.toml").write_text(text.replace('dem = "dem.tif"',
                                                       f'dem = "{(demo_folder / "dem.tif").as_posix()}"'))
    app = App(api.load_scenario(folder / "scenario.toml"), port=0)
    t = threading.Thread(target=app.serve_forever, daemon=True)
    t.start()
    yield app, folder
    app.shutdown()


def _post(url, body: bytes, *, ctype="application/json", headers=None):
    req = urllib.request.Request(url, data=body, headers={"Content-Type": ctype, **(headers or {})})
    try:
        with urllib.request.urlopen(req, timeout=120) as r:
            return r.status, json.loads(r.read())
    except urllib.error.HTTPError as e:
        return e.code, json.loads(e.read())


def test_binds_loopback_only(server):
    app, _ = server
    assert app.httpd.server_address[0] == "127.0.0.1"


def test_page_and_state(server):
    app, _ = server
    with urllib.request.urlopen(app.url, timeout=10) as r:
        page = r.read().decode()
        assert r.headers["Content-Security-Policy"]
    import re
    assert "gp-data" in page
    assert not re.search(r'<(script|link|img)[^>]+(src|href)="?(https?:)?//', page)
    with urllib.request.urlopen(app.url + "api/state", timeout=10) as r:
        state = json.loads(r.read())
    assert state["saves_to"] == "route.geojson"
    assert state["drawing"]["features"][0]["geometry"]["type"] == "LineString"


def test_plan_over_http(server):
    app, _ = server
    status, res = _post(app.url + "api/plan", json.dumps(app.drawing).encode())
    assert status == 200 and res["ok"] and res["cost"] > 0


@pytest.mark.parametrize("body, ctype, status, words", [
    (b"{not json", "application/json", 400, "not valid JSON"),
    (b"\xff\xfe", "application/json", 400, "not valid JSON"),
    (b"{}", "text/plain", 415, "application/json"),
    (b'{"type": "FeatureCollection", "features": []}', "application/json", 200, "no line yet"),
    (b'{"type": "Feature", "geometry": {"type": "LineString", "coordinates": [[1e400, 0], [1, 1]]}}',
     "application/json", 200, "finite"),
    (b"[" * 100_000 + b"]" * 100_000, "application/json", 400, "nested too deeply"),
    (b"null", "application/json", 400, "must be a JSON object, not NoneType"),
    (b'{"type": ' + b"7" * 5000 + b"}", "application/json", 400, "not valid JSON"),
    (b"[1, 2]", "application/json", 400, "must be a JSON object, not list"),
])
def test_malformed_requests_get_messages(server, body, ctype, status, words):
    app, _ = server
    code, res = _post(app.url + "api/plan", body, ctype=ctype)
    assert code == status and res["ok"] is False and words in res["error"]


def test_request_size_limit(server):
    """A body announced above the limit is refused before it is read."""
    import http.client

    app, _ = server
    conn = http.client.HTTPConnection("127.0.0.1", app.httpd.server_address[1], timeout=10)
    conn.putrequest("POST", "/api/plan")
    conn.putheader("Content-Type", "application/json")
    conn.putheader("Content-Length", str(MAX_BODY + 1))
    conn.endheaders()
    r = conn.getresponse()
    res = json.loads(r.read())
    conn.close()
    assert r.status == 413 and "at most" in res["error"]


def test_foreign_host_and_origin_refused(server):
    app, _ = server
    code, _ = _post(app.url + "api/plan", b"{}", headers={"Host": "attacker.example"})
    assert code == 403
    code, res = _post(app.url + "api/plan", b"{}", headers={"Origin": "http://attacker.example"})
    assert code == 403 and "editor page" in res["error"]


def test_save_writes_only_the_route_file_and_keeps_a_backup(server):
    app, folder = server
    before = (folder / "route.geojson").read_text()
    drawing = json.loads(json.dumps(app.drawing))
    coords = drawing["features"][0]["geometry"]["coordinates"]
    coords[1] = [coords[1][0] + 0.001, coords[1][1]]
    # a path in the body is ignored: the target is fixed when the server starts
    drawing["path"] = "/etc/passwd"
    code, res = _post(app.url + "api/save", json.dumps(drawing).encode())
    assert code == 200 and res["ok"] and res["saved"] == "route.geojson"
    assert (folder / "route.geojson.bak").read_text() == before
    saved = json.loads((folder / "route.geojson").read_text())
    got = saved["features"][0]["geometry"]["coordinates"]
    assert np.allclose(np.asarray(got)[:, :2], np.asarray(coords)[:, :2], atol=1e-9)
    # and `gravplan plan` reads the saved file as is
    sc = api.load_scenario(folder / "scenario.toml")
    assert api.build_profile(sc).length_m > 0
    # a bad drawing is refused and the file is untouched
    code, res = _post(app.url + "api/save", b'{"type": "FeatureCollection", "features": []}')
    assert res["ok"] is False
    assert json.loads((folder / "route.geojson").read_text()) == saved


def test_fifty_simultaneous_plan_requests_are_all_answered(server):
    """A burst larger than the standard library's listen backlog of 5: no reset, no error."""
    from concurrent.futures import ThreadPoolExecutor

    app, _ = server
    body = json.dumps(app.drawing).encode()

    def plan(_):
        try:
            return _post(app.url + "api/plan", body)[0]
        except OSError as exc:            # a reset or refused connection
            return repr(exc)

    with ThreadPoolExecutor(max_workers=50) as pool:
        answers = list(pool.map(plan, range(50)))
    assert answers == [200] * 50, [a for a in answers if a != 200][:3]
