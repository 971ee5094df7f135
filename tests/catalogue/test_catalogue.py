"""Built-in catalogues against the standards; loading and validating user catalogues."""

import pytest

from planner.catalogue.pipes import load_catalogue, load_options
from planner.catalogue.standards import nominal_pressure, temperature_factor, wall_from_sdr
from planner.errors import InputError, InputFileError


def by_label(name):
    return {o.label: o for o in load_catalogue(name)}


def test_pe100_sdr11_is_pn16():
    # ISO 4427-1: PN = 20 MRS / (C (SDR - 1)) = 20 x 10 / (1.25 x 10) = 16 bar (PE100+ Association)
    assert nominal_pressure(11, 10.0, 1.25) == 16.0
    assert by_label("pe100")["PE100 110 SDR11 PN16"].rating == pytest.approx(16e5)


@pytest.mark.parametrize("material, mrs, row", [
    # ISO 4427-2:2007 table header (PN from MRS, C and SDR)
    ("PE80", 8.0, {26: 5, 21: 6, 17: 8, 13.6: 10, 11: 12.5, 9: 16}),
    ("PE100", 10.0, {26: 6, 21: 8, 17: 10, 13.6: 12.5, 11: 16, 9: 20}),
])
def test_pn_series_matches_iso_4427(material, mrs, row):
    for sdr, pn in row.items():
        assert nominal_pressure(sdr, mrs, 1.25) == pn
    opts = load_catalogue(material.lower())
    for o in opts:
        assert o.rating / 1e5 == row[o.sdr]


@pytest.mark.parametrize("label, wall", [
    # ISO 4427-2 e_min, cross-checked against DIN 8074 and MS 1058-2:2005 Table 1
    ("PE100 110 SDR11 PN16", 10.0), ("PE100 110 SDR17 PN10", 6.6), ("PE100 110 SDR21 PN8", 5.3),
    ("PE100 110 SDR26 PN6", 4.2), ("PE100 160 SDR26 PN6", 6.2), ("PE100 160 SDR21 PN8", 7.7),
    ("PE100 63 SDR11 PN16", 5.8), ("PE100 32 SDR17 PN10", 2.0),
])
def test_pe_walls_match_the_standard_table(label, wall):
    o = by_label("pe100")[label]
    assert o.wall * 1e3 == pytest.approx(wall)
    assert o.outside_diameter - 2 * o.wall > o.inside_diameter > 0    # conservative bore


def test_wall_rule():
    # ISO 4065 (universal wall thickness table): e = OD / SDR rounded up to 0.1 mm;
    # 110/11 = 10.0; the 2.0 mm floor is the smallest wall in ISO 4427-2
    assert wall_from_sdr(110, 11) == 10.0
    assert wall_from_sdr(160, 26) == 6.2
    assert wall_from_sdr(20, 26) == 2.0          # floor of 2.0 mm


def test_pvc_and_gi():
    pvc = by_label("pvc-u")
    # ISO 1452-2 series, from memory: 110 PN10 -> SDR26 e 4.2; 63 PN16 -> SDR13.6 e 4.7
    assert pvc["PVC-U 110 PN10 SDR26"].wall * 1e3 == pytest.approx(4.2)
    assert pvc["PVC-U 63 PN16 SDR13.6"].wall * 1e3 == pytest.approx(4.7)
    gi = by_label("gi-medium")
    # EN 10255 medium: 2 in is 60.3 x 3.6 mm, ID 53.1 mm (EN 10255:2004 medium series)
    o = gi["GI medium DN50 (2 in)"]
    assert o.outside_diameter * 1e3 == pytest.approx(60.3)
    assert o.inside_diameter * 1e3 == pytest.approx(53.1)
    assert o.roughness == pytest.approx(0.15e-3)


def test_temperature_derating():
    # PE: ISO 4427-1 Annex A factors from memory, 1.00 / 0.87 / 0.74 at 20 / 30 / 40 degC
    assert temperature_factor("PE100", 20) == 1.0
    assert temperature_factor("PE100", 25) == pytest.approx(0.935)
    assert temperature_factor("PE100", 40) == pytest.approx(0.74)
    assert temperature_factor("GI", 40) == 1.0
    with pytest.raises(ValueError, match="not rated above 45"):
        temperature_factor("PVC-U", 50)


def test_filters_and_errors(tmp_path):
    opts = load_options(["pe100", "pvc-u"], materials=["pe100"], min_od_mm=50, max_od_mm=63,
                        min_rating_bar=10)
    assert {o.material for o in opts} == {"PE100"}
    assert all(0.050 <= o.outside_diameter <= 0.063 and o.rating >= 10e5 for o in opts)
    with pytest.raises(InputError, match="no pipe"):
        load_options(["pe100"], min_od_mm=400)
    with pytest.raises(InputFileError, match="not found"):
        load_catalogue("nosuch")
    bad = tmp_path / "mine.csv"
    bad.write_text("# my supplier\nmaterial,label,outside_diameter_mm,inside_diameter_mm,"
                   "pressure_rating_bar,roughness_mm,hazen_williams_c,cost_per_m\n"
                   "PE100,a,110,90,16,0.007,150,4.1\nPE100,b,110,112,16,0.007,150,4.1\n")
    with pytest.raises(InputFileError, match=r"row 3: inside diameter 112 mm is not below"):
        load_catalogue(bad)
    bad.write_text("material,label,outside_diameter_mm\nPE,a,110\n")
    with pytest.raises(InputFileError, match="missing column"):
        load_catalogue(bad)
    good = tmp_path / "good.csv"
    good.write_text("material,label,outside_diameter_mm,inside_diameter_mm,pressure_rating_bar,"
                    "roughness_mm,hazen_williams_c,cost_per_m\nPE100,x,0.11,0.09,16,0.007,150,4\n")
    assert load_catalogue(good)[0].inside_diameter == pytest.approx(0.09e-3)


def test_unknown_material_is_not_derated_as_steel():
    """Issue 11: PP-R or GRP were given steel's factor 1.0 at 40 degC; now refused above
    20 degC (where a rating is stated, any material's factor is 1)."""
    import pytest

    from planner.catalogue.standards import temperature_factor

    assert temperature_factor("HDPE", 40.0) == pytest.approx(0.74)    # PE, ISO 4427-1
    assert temperature_factor("PP-R", 20.0) == 1.0
    for material in ("PP-R", "GRP"):
        with pytest.raises(ValueError, match="derating of material"):
            temperature_factor(material, 40.0)


@pytest.mark.parametrize("cost,words", [("-5", "must not be negative"), ("nan", "finite number"),
                                        ("inf", "finite number")])
def test_a_catalogue_price_that_is_no_price_is_refused(tmp_path, cost, words):
    """A row priced -5 was chosen (pipe cost -10,746.6), and nan was taken: both refused,
    naming the file, the row and the column."""
    bad = tmp_path / "mine.csv"
    bad.write_text("material,label,outside_diameter_mm,inside_diameter_mm,pressure_rating_bar,"
                   f"roughness_mm,hazen_williams_c,cost_per_m\nPE100,a,110,90,16,0.007,150,{cost}\n")
    with pytest.raises(InputFileError, match=rf"mine.csv.*row 2.*cost_per_m.*{words}"):
        load_catalogue(bad)
