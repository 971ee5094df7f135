"""Bill of quantities and GIS layers of the demo, opened with openpyxl and geopandas."""

import json
import math

import geopandas as gpd
import pyogrio
import pytest
from click.testing import CliRunner
from openpyxl import load_workbook

from planner.cli import main


@pytest.fixture(scope="module", params=["scenario.toml", "scenario_network.toml"])
def out(request, demo_run):
    return demo_run(request.param)[0]


def stretches_and_features(plan):
    if plan["schema"] == "gravplan.network/1":
        return ([s for lk in plan["links"] for s in lk["stretches"]],
                [f for lk in plan["links"] for f in lk["features"]],
                sum(len(lk["break_pressure_tanks"]) for lk in plan["links"]))
    return plan["stretches"], plan["features"], len(plan["break_pressure_tanks"])


def test_xlsx_totals_and_quantities_match_the_plan(out):
    plan = json.loads((out / "plan.json").read_text())
    stretches, features, tanks = stretches_and_features(plan)
    ws = load_workbook(out / "quantities.xlsx").active
    rows = [r for r in ws.iter_rows(min_row=2, values_only=True)]
    body = [r for r in rows if r[0] not in ("total", "note")]
    total = next(r[5] for r in rows if r[0] == "total")
    assert total == pytest.approx(sum(r[2] * r[4] for r in body))
    # pipe: every option bought covers its laid length plus 3 %, in whole lengths or coils
    laid = {}
    for s in stretches:
        laid[s["label"]] = laid.get(s["label"], 0.0) + s["length_m"]
    pipes = {r[1].split(":")[0]: r for r in body if r[0] == "pipe"}
    assert set(pipes) == set(laid)
    for label, r in pipes.items():
        assert r[2] >= laid[label] * 1.03 - 1e-6
        unit = 100.0 if "coil" in r[1] else 12.0 if "12 m" in r[1] else 6.0
        assert r[2] == pytest.approx(math.ceil(laid[label] * 1.03 / unit - 1e-9) * unit)
    count = {r[0]: 0 for r in body}
    for r in body:
        count[r[0]] += r[2]
    assert count.get("air valve", 0) == sum(f["kind"] == "air_valve" for f in features)
    assert count.get("washout", 0) == sum(f["kind"] == "washout" for f in features)
    assert count.get("break-pressure tank", 0) == tanks
    csv_total = float((out / "quantities.csv").read_text().splitlines()[-2].split(",")[-1])
    assert csv_total == pytest.approx(total)


def test_geopackage_layers_crs_and_attributes(out):
    names = {str(n) for n, _ in pyogrio.list_layers(out / "design.gpkg")}
    assert names == {"stretches", "features", "outlets", "tanks", "profile_points"}
    st = gpd.read_file(out / "design.gpkg", layer="stretches")
    assert st.crs.to_epsg() == 32737
    assert {"label", "od_mm", "pn_bar", "flow_lps", "vel_mps", "p_min_m", "p_max_m"} <= set(st.columns)
    plan = json.loads((out / "plan.json").read_text())
    stretches, features, _ = stretches_and_features(plan)
    assert len(st) == len(stretches)
    assert st["length_m"].sum() == pytest.approx(sum(s["length_m"] for s in stretches), rel=1e-6)
    assert len(gpd.read_file(out / "design.gpkg", layer="features")) == len(features)
    gj = gpd.read_file(out / "outlets.geojson")
    assert gj.crs.to_epsg() == 4326 and len(gj) >= 2


def test_permit_sheets_pdf_pages_and_svg(out):
    import re
    import xml.etree.ElementTree as ET

    plan = json.loads((out / "plan.json").read_text())
    stems = ["profile"] if plan["schema"] != "gravplan.network/1" else \
        [d["file"][:-4] for d in plan["drawings"]]
    for stem in stems:
        pdf = (out / f"{stem}.pdf").read_bytes()
        pages = len(re.findall(rb"/Type\s*/Page[^s]", pdf))
        svgs = sorted(out.glob(f"{stem}_sheet*.svg"))
        assert pages == len(svgs) >= 2                  # 2 km a sheet on lines of 4-6 km
        for svg in svgs:
            root = ET.parse(svg).getroot()
            texts = [t for t in root.iter() if t.tag.endswith("text")]
            words = " ".join("".join(t.itertext()) for t in texts)
            assert "sheet" in words and "Planning aid only" in words   # title block, notes


def test_report_pages(out):
    import re

    html_text = (out / "report.html").read_text()
    for heading in ("Inputs", "Criteria", "Results", "Findings", "Drawings", "Bill of quantities",
                    "Limitations", "Cautions"):
        assert heading in html_text
    pdf = (out / "report.pdf").read_bytes()
    assert len(re.findall(rb"/Type\s*/Page[^s]", pdf)) >= 2


def test_markup_in_a_name_is_shown_as_text(demo_folder, tmp_path):
    import shutil

    for name in ("dem.tif", "route.geojson"):
        shutil.copy(demo_folder / name, tmp_path / name)
    text = (demo_folder / "scenario_given_pipe.toml").read_text().replace(
        'name = "Varo spring - Tamsel - Orun fields gravity main (demo)"',
        'name = "Line <script>alert(1)</script> & <b>bold</b>"')
    (tmp_path / "s.toml").write_text(text)
    res = CliRunner().invoke(main, ["plan", str(tmp_path / "s.toml"), "--out", str(tmp_path / "o")])
    assert res.exit_code in (0, 2), res.output
    for page in ("report.html", "map.html"):
        body = (tmp_path / "o" / page).read_text()
        assert "<script>alert(1)</script>" not in body
        assert "&lt;script&gt;alert(1)&lt;/script&gt;" in body
