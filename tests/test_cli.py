"""The command line: exit codes, messages without tracebacks, files written."""

import json

import pytest
from click.testing import CliRunner

from planner.cli import main
from tests.conftest import E0, N0


@pytest.fixture
def runner():
    return CliRunner()


def test_help_for_every_command(runner):
    for args in ([], ["profile"], ["plan"], ["demo"], ["draw"], ["serve"], ["catalogue"]):
        res = runner.invoke(main, args + ["--help"])
        assert res.exit_code == 0 and "Usage" in res.output and "Example" in res.output


def test_profile_writes_csv(runner, plane_dem, write_geojson, tmp_path):
    route = write_geojson([(E0 + 100, N0 + 500), (E0 + 600, N0 + 500)])
    out = tmp_path / "p.csv"
    res = runner.invoke(main, ["profile", str(route), "--dem", str(plane_dem), "--spacing", "5",
                               "--out", str(out)])
    assert res.exit_code == 0, res.output
    lines = out.read_text().splitlines()
    assert lines[0].startswith("chainage_m,slope_length_m,x,y,lon,lat,ground_m,pipe_m")
    assert len(lines) == 1 + 101


@pytest.mark.parametrize("make_args, match", [
    (lambda d, r, t: ["profile", str(t / "none.geojson"), "--dem", str(d)], "route file not found"),
    (lambda d, r, t: ["profile", str(r), "--dem", str(t / "none.tif")], "DEM file not found"),
    (lambda d, r, t: ["plan", str(t / "none.toml")], "scenario file not found"),
])
def test_user_errors_exit_1_without_traceback(runner, plane_dem, write_geojson, tmp_path,
                                              make_args, match):
    route = write_geojson([(E0 + 100, N0 + 500), (E0 + 600, N0 + 500)])
    res = runner.invoke(main, make_args(plane_dem, route, tmp_path))
    assert res.exit_code == 1
    assert match in res.output and "Traceback" not in res.output
    assert res.output.startswith("error: ")


def test_route_off_the_dem_names_the_chainage(runner, plane_dem, write_geojson):
    route = write_geojson([(E0 + 100, N0 + 500), (E0 + 5000, N0 + 500)])
    res = runner.invoke(main, ["profile", str(route), "--dem", str(plane_dem)])
    assert res.exit_code == 1 and "leaves the DEM" in res.output and "chainage" in res.output


def test_plan_refuses_to_overwrite(runner, demo_folder, demo_run, tmp_path):
    import shutil

    out = tmp_path / "out"
    scenario = str(demo_folder / "scenario.toml")
    shutil.copytree(demo_run("scenario.toml")[0], out)      # an earlier plan in --out
    before = (out / "plan.json").read_bytes()
    res = runner.invoke(main, ["plan", scenario, "--out", str(out)])
    assert res.exit_code == 1 and "--overwrite" in res.output
    assert (out / "plan.json").read_bytes() == before
    assert runner.invoke(main, ["plan", scenario, "--out", str(out), "--overwrite"]).exit_code == 0
    assert json.loads((out / "plan.json").read_text())["schema"] == "gravplan.plan/1"


def test_plan_with_design_errors_exits_2_and_keeps_files(runner, demo_folder, tmp_path):
    text = (demo_folder / "scenario_given_pipe.toml").read_text().replace(
        "inside_diameter_mm = 61.4", "inside_diameter_mm = 30")
    sc = demo_folder / "thin.toml"
    sc.write_text(text)
    res = runner.invoke(main, ["plan", str(sc), "--out", str(tmp_path / "o")])
    assert res.exit_code == 2
    findings = json.loads((tmp_path / "o" / "plan.json").read_text())["findings"]
    codes = {f["code"] for f in findings if f["severity"] == "error"}
    # a 30 mm pipe cannot carry 2.7 L/s over the spur: the HGL drops below the pipe
    assert "sub-atmospheric" in codes
    assert "error   pressure below atmospheric" in res.output


def test_draw_writes_an_offline_page(runner, demo_folder, tmp_path):
    import re
    out = tmp_path / "draw.html"
    res = runner.invoke(main, ["draw", str(demo_folder / "dem.tif"), "--out", str(out),
                               "--scenario", str(demo_folder / "scenario.toml")])
    assert res.exit_code == 0, res.output
    page = out.read_text()
    assert not re.search(r'<(script|link|img)[^>]+(src|href)="?(https?:)?//', page)
    data = json.loads(page.split('type="application/json">')[1].split("</script>")[0])
    assert data["mode"] == "draw"
    roles = [f["properties"].get("role") for f in data["drawing"]["features"]]
    assert roles.count("source") == 1 and roles.count("outlet") == 2     # the demo's


@pytest.mark.parametrize("args, words", [
    (["draw", "nope.tif"], "DEM file not found"),
    (["draw", "README.md"], "cannot open as a raster"),
    (["serve", "nothere.toml"], "scenario file not found"),
])
def test_editor_commands_user_errors(runner, args, words):
    res = runner.invoke(main, args)
    assert res.exit_code == 1 and words in res.output and "Traceback" not in res.output


def test_serve_reports_a_busy_port(runner, demo_folder):
    import socket
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        s.listen()
        port = s.getsockname()[1]
        res = runner.invoke(main, ["serve", str(demo_folder / "scenario.toml"), "--port", str(port)])
    assert res.exit_code == 1 and "choose another --port" in res.output
