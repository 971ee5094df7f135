"""The key table is the one place for each key: validation, SI, defaults and the docs.

Against the project's own documentation (docs/scenario.md must show the table as the code
has it) and, for the unit factors, against pyproj-independent definitions: 1 L/s =
1e-3 m^3/s, 1 bar = 1e5 Pa and 1 mm = 1e-3 m (SI Brochure, BIPM 2019, tables 8 and 9).
"""

from __future__ import annotations

import math
from dataclasses import MISSING
from dataclasses import fields as dc_fields
from pathlib import Path

import pytest

from planner.scenario import keys as K
from planner.scenario import model
from planner.scenario.load import scenario_from_dict

ROOT = Path(__file__).resolve().parent.parent

MODELS = {"project": model.Project, "terrain": model.Terrain, "route": model.RouteSpec,
          "source": model.Source, "pipe": model.Pipe, "criteria": model.Criteria,
          "design": model.Design, "drawing": model.Drawing, "uncertainty": model.UncertaintySpec,
          "outlets": model.Outlet, "break_pressure_tanks": model.Tank, "fittings": model.Fitting,
          "survey_points": model.SurveyPoint}


@pytest.mark.parametrize("table", sorted(MODELS))
def test_every_key_lands_on_a_field_with_the_tables_default(table):
    """Each key has a field of its model; where the key has a default, the field's is the
    same in SI (so no default is written twice)."""
    known = {f.name: f for f in dc_fields(MODELS[table])}
    for k in K.SECTIONS.get(table) or K.ARRAYS[table]:
        if k.name in ("demand",):                 # turned into flow_m3s, basis, volume
            continue
        assert k.field in known, f"{table}.{k.name} -> {k.field} is not a field"
        f = known[k.field]
        if k.default is not None and not k.required and f.default is not MISSING:
            want = K.default(table, k.name)
            got = f.default
            assert (tuple(want) if isinstance(want, list) else want) == got, (table, k.name)


def test_unit_factors_are_the_si_definitions():
    """BIPM SI Brochure (2019): litre = 1e-3 m^3, bar = 1e5 Pa, millimetre = 1e-3 m."""
    assert K.keys_of("outlets")["flow_lps"].to_si == pytest.approx(1e-3)
    assert K.keys_of("pipe")["pressure_rating_bar"].to_si == pytest.approx(1e5)
    assert K.keys_of("pipe")["inside_diameter_mm"].to_si == pytest.approx(1e-3)
    assert K.keys_of("design")["min_size_mm"].field == "min_size_m"


def _minimal() -> dict:
    return {"project": {"name": "t"}, "route": {"file": "r.csv"},
            "source": {"top_water_above_ground_m": 1.0, "low_water_above_ground_m": 0.5},
            "pipe": {"material": "PE100", "inside_diameter_mm": 50.0, "roughness_mm": 0.007,
                     "pressure_rating_bar": 10.0},
            "outlets": [{"name": "o", "chainage_m": 10.0, "flow_lps": 1.0}]}


@pytest.mark.parametrize("section,key,value", [
    ("criteria", "cover_m", math.nan), ("criteria", "entrance_k", math.inf),
    ("pipe", "pressure_rating_bar", math.inf), ("terrain", "max_void_m", math.nan),
    ("uncertainty", "sigma_m", math.inf), ("drawing", "km_per_sheet", math.nan),
    ("outlets", "min_pressure_m", -20.0), ("outlets", "flow_lps", math.nan),
    ("uncertainty", "seed", -1),
])
def test_numbers_that_are_not_numbers_are_refused_with_their_key(section, key, value, tmp_path):
    """NaN and infinity pass TOML (``nan``, ``inf``) but are no lengths or pressures."""
    data = _minimal()
    if section == "outlets":
        data["outlets"][0][key] = value
        where = f"outlets[1].{key}"
    else:
        data.setdefault(section, {})[key] = value
        where = f"{section}.{key}"
    if section == "terrain":
        data["terrain"]["dem"] = "d.tif"
    with pytest.raises(Exception) as info:
        scenario_from_dict(data, tmp_path / "s.toml")
    assert where in str(info.value), str(info.value)


def test_split_spacing_zero_is_allowed_as_documented(tmp_path):
    data = _minimal()
    del data["pipe"]
    data["design"] = {"split_spacing_m": 0}
    sc = scenario_from_dict(data, tmp_path / "s.toml")
    assert sc.design.split_spacing_m == 0.0


def test_the_docs_show_the_key_table_as_the_code_has_it():
    """docs/scenario.md's key tables are generated (python -m planner.scenario); every
    section and array of tables has one."""
    text = (ROOT / "docs" / "scenario.md").read_text(encoding="utf-8")
    assert K.with_tables(text) == text, "run: python -m planner.scenario"
    marked = {m.group(2) for m in K.MARK.finditer(text)}
    assert marked == set(K.SECTIONS) | set(K.ARRAYS)


def _keys(obj, out):
    if isinstance(obj, dict):
        for k, v in obj.items():
            out.add(k)
            _keys(v, out)
    elif isinstance(obj, list):
        for v in obj:
            _keys(v, out)
    return out


def test_the_glossarys_plan_json_names_are_in_plan_json(demo_run):
    """docs/glossary.md: every name it gives for plan.json is one the demo's plan.json has."""
    import json
    import re

    out, _ = demo_run("scenario.toml")
    have = _keys(json.loads((out / "plan.json").read_text()), set())
    text = (ROOT / "docs" / "glossary.md").read_text(encoding="utf-8")
    rows = [r.split("|")[1:-1] for r in text.splitlines() if r.startswith("| ") and "`" in r]
    named = {n for r in rows if len(r) == 5 for n in re.findall(r"`([a-z_0-9]+)`", r[3])}
    assert named and not named - have, sorted(named - have)
