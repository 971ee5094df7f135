"""Write the built-in catalogue CSVs from the standards' tables and relations.

Run ``python -m planner.catalogue.build_data`` after changing a table here; the CSV
files it writes are committed.  Dimensions come from the standards' tables (rows
marked "memory" are recalled, not seen in a published copy: check them); pressure
ratings follow the standards' relation of MRS, design coefficient and SDR
(:func:`planner.catalogue.standards.nominal_pressure`).  PRICES ARE INVENTED demo
values, a smooth function of pipe mass: replace them with your supplier's.
"""

from __future__ import annotations

import csv
import math
from pathlib import Path

from .materials import PE_COIL_MAX_MM, PVC_SOLVENT_MAX_MM, columns_from_material
from .standards import (DESIGN_COEFFICIENT, MRS_MPA, nominal_pressure, pvc_design_coefficient,
                        wall_from_sdr)

DATA = Path(__file__).resolve().parent / "data"
SDRS = (26, 21, 17, 13.6, 11, 9)
# ISO 4427-2 / EN 12201-2 minimum wall e_min [mm] by outside diameter, for the SDRs above.
# Rows marked "table": the ISO 4427-2:2007 wall table, cross-checked against DIN 8074, MS
# 1058-2:2005 Table 1 and two makers' tables.  Rows marked "memory": from memory.
PE_WALLS = {
    20: ("table", (None, None, None, None, 2.0, 2.3)),
    25: ("table", (None, None, None, 2.0, 2.3, 3.0)),
    32: ("table", (None, None, 2.0, 2.4, 3.0, 3.6)),
    40: ("table", (None, 2.0, 2.4, 3.0, 3.7, 4.5)),
    50: ("table", (2.0, 2.4, 3.0, 3.7, 4.6, 5.6)),
    63: ("table", (2.5, 3.0, 3.8, 4.7, 5.8, 7.1)),
    75: ("table", (2.9, 3.6, 4.5, 5.6, 6.8, 8.4)),
    90: ("table", (3.5, 4.3, 5.4, 6.7, 8.2, 10.1)),
    110: ("table", (4.2, 5.3, 6.6, 8.1, 10.0, 12.3)),
    125: ("table", (4.8, 6.0, 7.4, 9.2, 11.4, 14.0)),
    140: ("memory", (5.4, 6.7, 8.3, 10.3, 12.7, 15.7)),
    160: ("table", (6.2, 7.7, 9.5, 11.8, 14.6, 17.9)),
    180: ("memory", (6.9, 8.6, 10.7, 13.3, 16.4, 20.1)),
    200: ("table", (7.7, 9.6, 11.9, 14.7, 18.2, 22.4)),
    225: ("memory", (8.6, 10.8, 13.4, 16.6, 20.5, 25.2)),
    250: ("memory", (9.6, 11.9, 14.8, 18.4, 22.7, 27.9)),
    280: ("memory", (10.7, 13.4, 16.6, 20.6, 25.4, 31.3)),
    315: ("memory", (12.1, 15.0, 18.7, 23.2, 28.6, 35.2)),
}
# ISO 1452-2 PVC-U: SDR for each PN by size class (design coefficient 2.5 up to 90 mm,
# 2.0 from 110 mm; from memory)
PVC_SDR: dict[str, dict[int, float]] = {"small": {6: 33, 10: 21, 16: 13.6}, "large": {6: 41, 10: 26, 16: 17}}
PVC_SIZES = (40, 50, 63, 75, 90, 110, 125, 140, 160, 200, 250, 315)
# ISO 65 / EN 10255 medium series: (label, DN, OD mm, wall mm); EN 10255:2004 medium
# series table (the 2 1/2 and 3 in walls from memory)
GI_MEDIUM = (("1/2 in", 15, 21.3, 2.6), ("3/4 in", 20, 26.9, 2.6), ("1 in", 25, 33.7, 3.2),
             ("1 1/4 in", 32, 42.4, 3.2), ("1 1/2 in", 40, 48.3, 3.2), ("2 in", 50, 60.3, 3.6),
             ("2 1/2 in", 65, 76.1, 3.6), ("3 in", 80, 88.9, 4.0), ("4 in", 100, 114.3, 4.5))
#: Working pressure of screwed medium-series tube for water [bar] (from memory; the
#: joints govern it, not the tube).
GI_RATING_BAR = 20.0

COLUMNS = ("material", "label", "nominal_size", "outside_diameter_mm", "wall_mm",
           "inside_diameter_mm", "sdr", "pressure_rating_bar", "roughness_mm",
           "hazen_williams_c", "elastic_modulus_gpa", "cost_per_m", "dimension_source",
           "derating", "jointing")


def _hydraulic_id(od: float, e: float) -> float:
    """Inside diameter from the mean wall: e_mean = 1.05 e_min + 0.1 mm (conservative).

    ISO 4427-2 allows walls up to about 1.1 e_min + 0.2 mm; pipes are made towards the
    upper half, so OD - 2 e_min overstates the bore (common practice; e_max from MS 1058-2:2005).
    """
    return round(od - 2.0 * (1.05 * e + 0.1), 2)


def _price(od: float, idia: float, density: float, per_kg: float, fixed: float) -> float:
    """INVENTED demo price per metre: material mass times a price per kg, plus a fixed part."""
    mass = math.pi / 4 * ((od / 1e3) ** 2 - (idia / 1e3) ** 2) * density
    return round(fixed + per_kg * mass, 2)


def _write(name: str, header: list[str], rows: list[dict]) -> Path:
    path = DATA / name
    DATA.mkdir(exist_ok=True)
    with path.open("w", newline="", encoding="utf-8") as fh:
        for line in header:
            fh.write(f"# {line}\n")
        w = csv.DictWriter(fh, fieldnames=COLUMNS, lineterminator="\n")
        w.writeheader()
        w.writerows(rows)
    return path


def _columns(material: str, od: float) -> dict[str, str]:
    """The row's ``derating`` and ``jointing``: the house rule for the material name."""
    derating, jointing = columns_from_material(material, od)
    return dict(derating=derating, jointing=jointing)


DERATING_NOTE = ("derating: the temperature derating family whose table applies "
                 "(planner/catalogue/standards.py, with its sources); jointing: how the bill of "
                 "quantities counts joints (planner/report/quantities.py).")
PRICE_NOTE = ("cost_per_m: INVENTED DEMO PRICES (a smooth function of pipe mass), not market "
              "prices; replace this column with your supplier's prices")


def build_pe(material: str) -> Path:
    """Write the catalogue CSV of one PE material (``"PE100"`` or ``"PE80"``); its path."""
    mrs, c = MRS_MPA[material], DESIGN_COEFFICIENT[material]
    modulus = {"PE100": 1.0, "PE80": 0.8}[material]
    rows = []
    for od, (source, walls) in PE_WALLS.items():
        for sdr, e in zip(SDRS, walls):
            if e is None:
                continue
            pn = nominal_pressure(sdr, mrs, c)
            idia = _hydraulic_id(od, e)
            rows.append(dict(material=material, label=f"{material} {od} SDR{sdr:g} PN{pn:g}",
                             nominal_size=od, outside_diameter_mm=od, wall_mm=e,
                             inside_diameter_mm=idia, sdr=sdr, pressure_rating_bar=pn,
                             roughness_mm=0.007, hazen_williams_c=150,
                             elastic_modulus_gpa=modulus,
                             cost_per_m=_price(od, idia, 955.0, 2.1, 0.3),
                             dimension_source=source, **_columns(material, od)))
    header = [
        f"{material} pressure pipe for water, ISO 4427-2:2019 / EN 12201-2 dimensions.",
        "wall_mm: minimum wall e_min of the standard's table; dimension_source 'memory' rows "
        "are recalled, not checked against a published copy.",
        f"pressure_rating_bar: PN at 20 degC = 20 MRS / (C (SDR - 1)) rounded down to R10, "
        f"MRS = {mrs:g} MPa, C = {c:g} (ISO 4427-1).",
        "inside_diameter_mm: OD - 2 (1.05 e_min + 0.1), a conservative mean bore (common practice).",
        "roughness_mm 0.007 (common practice, allows for joints and biofilm); Hazen-Williams C 150.",
        f"elastic_modulus_gpa: short-term E for surge, {modulus:g} GPa "
        + ("(PE100 0.75-1.25 GPa, VESBO brochure)" if material == "PE100" else "(from memory)"),
        DERATING_NOTE + f" PE: ISO 4427-1 Annex A; electrofusion up to {PE_COIL_MAX_MM:g} mm "
        "(100 m coils), butt-fusion above (12 m lengths), common practice.",
        PRICE_NOTE,
    ]
    return _write(f"{material.lower()}.csv", header, rows)


def build_pvc() -> Path:
    """Write the PVC-U catalogue CSV (ISO 1452-2 series); its path."""
    rows = []
    for od in PVC_SIZES:
        cls = "small" if od <= 90 else "large"
        for pn, sdr in PVC_SDR[cls].items():
            walls = dict(zip(SDRS, PE_WALLS[od][1])) if od in PE_WALLS else {}
            e = walls.get(sdr) or wall_from_sdr(od, sdr, minimum_mm=1.5)
            source = "table" if walls.get(sdr) and PE_WALLS[od][0] == "table" else "memory"
            hoop = nominal_pressure(sdr, MRS_MPA["PVC-U"], pvc_design_coefficient(od))
            assert hoop >= 0.75 * pn, (od, pn, sdr)     # the series and the relation agree
            idia = _hydraulic_id(od, e)
            rows.append(dict(material="PVC-U", label=f"PVC-U {od} PN{pn:g} SDR{sdr:g}",
                             nominal_size=od, outside_diameter_mm=od, wall_mm=e,
                             inside_diameter_mm=idia, sdr=sdr,
                             pressure_rating_bar=float(pn), roughness_mm=0.007,
                             hazen_williams_c=150, elastic_modulus_gpa=3.0,
                             cost_per_m=_price(od, idia, 1400.0, 1.6, 0.4),
                             dimension_source=source, **_columns("PVC-U", od)))
    header = [
        "PVC-U pressure pipe for water, ISO 1452-2:2009 series (SDR per PN and size from memory).",
        "pressure_rating_bar: the series PN at up to 25 degC, PN = 10 sigma_s / S with "
        "sigma_s = MRS / C, MRS = 25 MPa, C = 2.5 (dn <= 90) or 2.0 (dn >= 110), S = (SDR - 1)/2.",
        "wall_mm: the ISO 4065 dimension table shared with PE where known, else OD/SDR rounded up.",
        "inside_diameter_mm: OD - 2 (1.05 e_min + 0.1) (common practice).",
        "roughness_mm 0.007, Hazen-Williams C 150 (common practice); E = 3.0 GPa for surge.",
        DERATING_NOTE + f" PVC: ISO 1452-2 Fig. A.1; solvent-cement sockets up to "
        f"{PVC_SOLVENT_MAX_MM:g} mm, rubber-ring sockets above (6 m lengths), common practice.",
        PRICE_NOTE,
    ]
    return _write("pvc-u.csv", header, rows)


def build_gi() -> Path:
    """Write the galvanised steel tube catalogue CSV (medium series); its path."""
    rows = []
    for label, dn, od, e in GI_MEDIUM:
        idia = round(od - 2 * e, 2)
        rows.append(dict(material="GI", label=f"GI medium DN{dn} ({label})", nominal_size=dn,
                         outside_diameter_mm=od, wall_mm=e, inside_diameter_mm=idia, sdr="",
                         pressure_rating_bar=GI_RATING_BAR, roughness_mm=0.15,
                         hazen_williams_c=120, elastic_modulus_gpa=207.0,
                         cost_per_m=_price(od, idia, 7850.0, 1.4, 1.0),
                         dimension_source="table" if dn not in (65, 80) else "memory",
                         **_columns("GI", od)))
    header = [
        "Galvanised steel tube, medium series, ISO 65 / EN 10255 M (formerly BS 1387 medium).",
        "Walls for 1/2 to 2 in and 4 in from the EN 10255 table; 2 1/2 and 3 in from memory.",
        f"pressure_rating_bar: {GI_RATING_BAR:g} bar for screwed joints in water service, "
        "from memory: the fittings govern; check the maker's rating.",
        "roughness_mm 0.15 (galvanised, Binder 1973 via efunda); Hazen-Williams C 120; E 207 GPa.",
        DERATING_NOTE + " STEEL: no derating at water-supply temperatures; threaded (screwed "
        "sockets, 6 m lengths).",
        PRICE_NOTE,
    ]
    return _write("gi-medium.csv", header, rows)


def main() -> None:
    """Write every built-in catalogue CSV and print where."""
    for path in (build_pe("PE100"), build_pe("PE80"), build_pvc(), build_gi()):
        print(f"wrote {path}")


if __name__ == "__main__":
    main()
