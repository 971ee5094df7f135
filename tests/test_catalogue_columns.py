"""The catalogue's ``derating`` and ``jointing`` columns: read, used, defaulted and refused."""

from types import SimpleNamespace

import pytest

from planner.catalogue.materials import columns_from_material
from planner.catalogue.pipes import BUILTIN, PipeOption, load_catalogue
from planner.catalogue.standards import temperature_factor
from planner.errors import InputFileError
from planner.catalogue.materials import supply_length
from planner.report.quantities import bill

HEAD = ("material,label,outside_diameter_mm,inside_diameter_mm,pressure_rating_bar,"
        "roughness_mm,hazen_williams_c,cost_per_m")


def write(tmp_path, rows, extra="", name="mine.csv"):
    path = tmp_path / name
    path.write_text("# my supplier\n" + HEAD + extra + "\n" + "\n".join(rows) + "\n")
    return path


def by_label(path):
    return {o.label: o for o in load_catalogue(path)}


def test_the_columns_are_read_and_decide_derating(tmp_path):
    path = write(tmp_path, ["HDPE,h,110,90,16,0.007,150,4,PE,butt-fusion",
                            "Acme poly,a,110,90,16,0.007,150,4,pe,electrofusion",
                            "PE100,p,110,90,16,0.007,150,4,PVC,solvent"], ",derating,jointing")
    opts = by_label(path)
    assert (opts["h"].derating, opts["h"].jointing) == ("PE", "butt-fusion")
    assert (opts["a"].derating, opts["a"].jointing) == ("PE", "electrofusion")   # any case
    # PE at 40 degC: 0.74 (ISO 4427-1 Annex A, from memory: 1.00 / 0.87 / 0.74 at 20 / 30 / 40)
    assert temperature_factor(opts["h"], 40.0) == pytest.approx(0.74)
    # the family comes from the column, not the name: "Acme poly" alone is not known ...
    with pytest.raises(ValueError, match="derating of material 'Acme poly'"):
        temperature_factor("Acme poly", 40.0)
    assert temperature_factor(opts["a"], 40.0) == pytest.approx(0.74)      # ISO 4427-1, as above
    # ... and a row named PE100 with derating PVC gets PVC's 0.80 at 35 degC (ISO 1452-2
    # Fig. A.1, from memory: 1.00 / 0.80 / 0.63 at 25 / 35 / 45), not PE's 0.805
    assert temperature_factor(opts["p"], 35.0) == pytest.approx(0.80)
    with pytest.raises(ValueError, match="not rated above 45"):
        temperature_factor(opts["p"], 46.0)


def test_without_the_columns_they_follow_the_material_name(tmp_path):
    path = write(tmp_path, ["PE100,pe63,63,51,16,0.007,150,2", "PE100,pe160,160,130,16,0.007,150,9",
                            "PVC-U,pvc,110,100,10,0.007,150,4", "GI,gi,60.3,53.1,20,0.15,120,8",
                            "PP-R,ppr,32,26,20,0.007,150,1"])
    opts = by_label(path)
    assert {k: (o.derating, o.jointing) for k, o in opts.items()} == {
        "pe63": ("PE", "electrofusion"), "pe160": ("PE", "butt-fusion"),
        "pvc": ("PVC", "rubber-ring"), "gi": ("STEEL", "threaded"), "ppr": ("", "other")}
    # as before the columns: PE100 0.87 at 30 degC (ISO 4427-1 Annex A, from memory), steel 1.0
    assert temperature_factor(opts["pe63"], 30.0) == pytest.approx(0.87)
    assert temperature_factor(opts["gi"], 40.0) == 1.0
    # an unknown material is refused above 20 degC (issue 11), factor 1 at 20 degC
    assert temperature_factor(opts["ppr"], 20.0) == 1.0
    for material in ("PP-R", "GRP", "PE-RT"):
        with pytest.raises(ValueError, match="derating of material"):
            temperature_factor(PipeOption(material, material, 0.032, 0.026, 0.003, 2e6, 7e-6,
                                          150, float("nan"), 1.0), 40.0)
    # empty cells of the columns fall back too
    path = write(tmp_path, ["PE80,x,63,51,12.5,0.007,150,2,,"], ",derating,jointing", "blank.csv")
    assert (load_catalogue(path)[0].derating, load_catalogue(path)[0].jointing) == ("PE", "electrofusion")


def test_a_pipe_built_in_code_gets_them_from_its_name():
    # as a scenario's one [pipe] is (outside diameter not known: the inside one decides)
    o = PipeOption("PE100", "given", float("nan"), 0.0614, float("nan"), 16e5, 7e-6, 150,
                   float("nan"), 0.0)
    assert (o.derating, o.jointing) == ("PE", "electrofusion")
    with pytest.raises(ValueError, match="derating"):
        PipeOption("PE100", "bad", 0.11, 0.09, 0.01, 16e5, 7e-6, 150, 1e9, 1.0, derating="PEX")


@pytest.mark.parametrize("column, value, allowed", [
    ("derating", "PEX", "PE, PVC, STEEL"),
    ("jointing", "welded", "electrofusion, butt-fusion, solvent, rubber-ring, threaded, other"),
])
def test_an_unknown_value_is_refused_naming_file_row_and_column(tmp_path, column, value, allowed):
    good = {"derating": "PE", "jointing": "electrofusion"}
    row = dict(good, **{column: value})
    path = write(tmp_path, ["PE100,a,110,90,16,0.007,150,4,PE,electrofusion",
                            f"PE100,b,110,90,16,0.007,150,4,{row['derating']},{row['jointing']}"],
                 ",derating,jointing")
    with pytest.raises(InputFileError) as err:
        load_catalogue(path)
    msg = str(err.value)
    assert str(path) in msg and "row 3" in msg and f"column {column!r}" in msg
    assert repr(value) in msg and allowed in msg


@pytest.mark.parametrize("name", sorted(BUILTIN))
def test_built_in_rows_carry_the_columns_and_behave_as_before(name):
    for o in load_catalogue(name):
        assert (o.derating, o.jointing) == columns_from_material(o.material, o.outside_diameter * 1e3)
        od = o.outside_diameter * 1e3
        # the supply rule before the jointing column: PE up to 110 mm in 100 m coils, larger
        # PE in 12 m lengths, PVC-U and steel in 6 m lengths
        before = ((100.0, "coil of 100 m") if od <= 110 else (12.0, "12 m length")) \
            if o.material.upper().startswith("PE") else (6.0, "6 m length")
        assert supply_length(o.jointing, od) == before


def plan_of(*stretches):
    st = [SimpleNamespace(option=o, length_m=m, start_index=i, end_index=i + 1)
          for i, (o, m) in enumerate(stretches)]
    return SimpleNamespace(stretches=st, features=[], tanks=[], outlets=[])


def test_the_bill_uses_the_jointing_column(tmp_path):
    # by name these would be PE coils with electrofusion couplers and plain 6 m lengths
    path = write(tmp_path, ["PE100,pe,63,51,16,0.007,150,2,PE,butt-fusion",
                            "Acme,acme,60.3,53.1,20,0.15,120,8,STEEL,threaded",
                            "PE100,plain,90,75,16,0.007,150,3,PE,other"], ",derating,jointing")
    opts = by_label(path)
    lines = bill(plan_of((opts["pe"], 100.0), (opts["acme"], 30.0), (opts["plain"], 50.0)))
    pipe = {ln.description.split(":")[0]: ln for ln in lines if ln.item == "pipe"}
    # 100 m + 3 % = 103 m: nine 12 m lengths; 30.9 m: six 6 m lengths; 51.5 m: nine 6 m lengths
    assert "9 x 12 m length" in pipe["pe"].description and pipe["pe"].quantity == 108.0
    assert "6 x 6 m length" in pipe["acme"].description and pipe["acme"].quantity == 36.0
    assert "9 x 6 m length" in pipe["plain"].description
    joints = {ln.item: ln for ln in lines if ln.item not in ("pipe", "reducer")}
    assert set(joints) == {"butt-fusion weld", "threaded socket"}         # "other": none
    assert joints["butt-fusion weld"].quantity == 9 and "63 mm" in joints["butt-fusion weld"].description
    assert joints["threaded socket"].quantity == 6
    assert joints["butt-fusion weld"].unit_cost > 0 and joints["threaded socket"].unit_cost > 0
