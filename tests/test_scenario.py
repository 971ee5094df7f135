"""Scenario loading and validation."""

import pytest

from planner.errors import InputError, InputFileError
from planner.scenario import load_scenario
from planner.units import LPS
from tests.conftest import ROOT

GOOD = """
[project]
name = "test line"
[terrain]
dem = "dem.tif"
[route]
file = "route.geojson"
[source]
top_water_above_ground_m = 1.0
low_water_above_ground_m = 0.5
yield_lps = 2
[pipe]
material = "PE100"
inside_diameter_mm = 61.4
roughness_mm = 0.007
pressure_rating_bar = 10
[[outlets]]
name = "tap"
chainage_m = 100
flow_lps = 0.5
"""


def write(tmp_path, text):
    p = tmp_path / "s.toml"
    p.write_text(text, encoding="utf-8")
    return p


def test_demo_scenario_loads_in_si_units():
    sc = load_scenario(ROOT / "demo_terrain" / "scenario_given_pipe.toml")
    assert sc.pipe.inside_diameter_m == pytest.approx(0.0614)
    assert sc.pipe.rating_pa == pytest.approx(16e5)
    assert sc.outlets[0].flow_m3s == pytest.approx(1.7 * LPS)
    assert sc.terrain.dem[0] == ROOT / "demo_terrain" / "dem.tif"     # relative to the file
    assert [t.chainage_m for t in sc.tanks] == [2000, 3400]
    design = load_scenario(ROOT / "demo_terrain" / "scenario.toml")
    assert design.pipe is None and design.design.catalogues == ("pe100",)
    assert design.design.max_static_pressure_m == 100


def test_defaults(tmp_path):
    sc = load_scenario(write(tmp_path, GOOD))
    assert sc.criteria.friction == "colebrook" and sc.criteria.cover_m == 0.8
    assert sc.outlets[0].min_pressure_m == 10.0


def test_every_problem_is_reported_with_its_key(tmp_path):
    bad = GOOD.replace('pressure_rating_bar = 10', 'pressure_rating_bar = -1\ncolour = "blue"') \
              .replace("flow_lps = 0.5", "flow_lps = 0") \
              .replace("[route]", "[criteria]\nfriction = 'manning'\ntemperature_c = 80\n[route]")
    with pytest.raises(InputError) as info:
        load_scenario(write(tmp_path, bad))
    text = str(info.value)
    for expected in ["pipe.pressure_rating_bar: must be > 0", "pipe.colour: unknown key",
                     "outlets[1].flow_lps: must be > 0",
                     "criteria.friction: expected one of colebrook, hazen-williams, got "
                     "'manning'", "criteria.temperature_c"]:
        assert expected in text
    assert "5 problem(s)" in text


@pytest.mark.parametrize("edit, match", [
    (("[pipe]", "[pipes]"), r"pipes: unknown section; did you mean \[pipe\]"),
    (("inside_diameter_mm", "inside_diametre_mm"), "did you mean 'inside_diameter_mm'"),
    (("low_water_above_ground_m = 0.5", "low_water_above_ground_m = 1.5"), "must not be above"),
    (("chainage_m = 100", "location = [36.8]"), r"location: expected \[longitude, latitude\]"),
    (("chainage_m = 100", ""), "exactly one of chainage_m or location"),
    (('dem = "dem.tif"', ""), r"terrain.dem: missing"),
    (("roughness_mm = 0.007", ""), "roughness_mm: needed"),
    (('name = "test line"', "name = 3"), "project.name: expected a text string, got 3"),
])
def test_single_problems(tmp_path, edit, match):
    with pytest.raises(InputError, match=match):
        load_scenario(write(tmp_path, GOOD.replace(*edit)))


def test_bad_files(tmp_path):
    with pytest.raises(InputFileError, match="not found"):
        load_scenario(tmp_path / "nope.toml")
    with pytest.raises(InputFileError, match="not valid TOML.*line 2"):
        load_scenario(write(tmp_path, "[project]\nname = \n"))


def test_outlet_demand_tables(tmp_path):
    text = GOOD.replace("flow_lps = 0.5", 'demand = { kind = "domestic", population = 500, '
                        'per_capita_lpd = 30, peak_factor = 2.5 }')
    sc = load_scenario(write(tmp_path, text))
    assert sc.outlets[0].flow_m3s == pytest.approx(500 * 30e-3 * 2.5 / 86400)
    assert sc.outlets[0].daily_volume_m3 == pytest.approx(15.0)
    assert "500 people" in sc.outlets[0].basis
    for bad, match in [('demand = { kind = "pond" }', "expected one of domestic"),
                       ('demand = { kind = "taps" }', r"demand.taps: missing"),
                       ('demand = { kind = "taps", taps = 2, colour = 1 }', "unknown key"),
                       ('flow_lps = 1\ndemand = { kind = "taps", taps = 2 }', "exactly one of")]:
        with pytest.raises(InputError, match=match):
            load_scenario(write(tmp_path, GOOD.replace("flow_lps = 0.5", bad)))


def test_uncertainty_product_must_be_known_unless_sigma_is_given(demo_folder, tmp_path):
    from planner.errors import InputError
    from planner.scenario import load_scenario

    text = (demo_folder / "scenario.toml").read_text()
    bad = text.replace('product = "copernicus-glo30"', 'product = "copernicus-glo90"')
    (tmp_path / "a.toml").write_text(bad)
    with pytest.raises(InputError, match="did you mean 'copernicus-glo30'"):
        load_scenario(tmp_path / "a.toml")
    (tmp_path / "b.toml").write_text(bad.replace('product = "copernicus-glo90"',
                                                 'product = "copernicus-glo90"\nsigma_m = 2.0'))
    assert load_scenario(tmp_path / "b.toml").uncertainty.sigma_m == 2.0


def test_a_catalogue_path_is_read_beside_the_scenario(tmp_path, monkeypatch):
    """docs/scenario.md: paths inside the file are relative to its folder; a catalogue
    CSV too, whatever the working directory (built-in names stay names)."""
    import shutil

    from planner.catalogue.pipes import DATA, load_options

    folder = tmp_path / "project"
    folder.mkdir()
    shutil.copy(DATA / "pe100.csv", folder / "our_pipes.csv")
    head, rest = GOOD.split("[pipe]")
    text = (head + '[design]\ncatalogues = ["our_pipes.csv", "pvc-u"]\n'
            + rest[rest.index("[[outlets]]"):])
    (folder / "s.toml").write_text(text)
    monkeypatch.chdir(tmp_path)                      # not the scenario's folder
    sc = load_scenario(folder / "s.toml")
    assert sc.design.catalogues == (str(folder / "our_pipes.csv"), "pvc-u")
    assert load_options(sc.design.catalogues)
