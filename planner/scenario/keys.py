"""Every key of the scenario file, once: type, default, unit, range, meaning and source.

This table drives the scenario's validation (types, finite numbers, ranges, unknown and
missing keys), the conversion to SI on loading, the model's defaults
(:mod:`planner.scenario.model`), the CLI's defaults, and the key tables of
docs/scenario.md (``python -m planner.scenario`` rewrites them; a test checks that
they agree).  Rules that tie several keys together stay in :mod:`planner.scenario.load`.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from typing import Any

from ..design import demand as dm
from ..design.uncertainty import DEFAULT_CORRELATION_M, DEFAULT_PRODUCT, PRODUCTS
from ..geo.profile import DEFAULT_COVER_M, DEFAULT_MAX_VOID_M
from ..hydraulics.friction import FRICTION_METHODS
from ..report.paper import SHEETS
from ..units import BAR, LPS, MM

NUM = (int, float)


@dataclass(frozen=True)
class Key:
    """One key of a scenario section: what it holds and how it is checked and converted."""

    name: str                        # as written in the file
    kind: type | tuple = NUM         # TOML type(s) accepted
    default: Any = None              # in the file's unit; None: none (absent means unset)
    unit: str = ""                   # unit of the value in the file
    low: float | None = None         # smallest value allowed (inclusive unless ``above``)
    high: float | None = None        # largest value allowed (inclusive)
    above: bool = False              # the value must be strictly above ``low``
    required: bool = False
    to_si: float = 1.0               # file value x to_si = SI value
    attr: str | None = None          # the model's field, when it is not the key's name
    choices: tuple[str, ...] = ()    # the allowed texts, for a text key
    doc: str = ""
    source: str = ""                 # where the default or the range comes from

    @property
    def field(self) -> str:
        """The model's field name."""
        return self.attr or self.name

    def si(self, value: Any) -> Any:
        """The file's value in SI units (numbers only are converted)."""
        if isinstance(value, NUM) and not isinstance(value, bool):
            return float(value) * self.to_si if self.kind is not int else int(value)
        return value

    def check(self, value: Any) -> str | None:
        """What is wrong with a value of the right type, in words; None when it is fine."""
        if isinstance(value, NUM) and not isinstance(value, bool):
            if not math.isfinite(value):
                return f"must be a finite number, got {value!r}"
            if self.low is not None and (value < self.low or (self.above and value == self.low)):
                return f"must be {'>' if self.above else '>='} {self.low:g}{self._unit}, got {value!r}"
            if self.high is not None and value > self.high:
                return f"must be <= {self.high:g}{self._unit}, got {value!r}"
        if self.choices and isinstance(value, str) and value not in self.choices:
            return f"expected one of {', '.join(self.choices)}, got {value!r}"
        return None

    @property
    def _unit(self) -> str:
        return f" {self.unit}" if self.unit and self.unit != "-" else ""


def _text(name, default=None, doc="", **kw) -> Key:
    return Key(name, str, default, doc=doc, **kw)


def _flag(name, default, doc="", **kw) -> Key:
    return Key(name, bool, default, doc=doc, **kw)


_LIST = list

#: section -> its keys.  A default of None means the key has none (absent = unset).
SECTIONS: dict[str, tuple[Key, ...]] = {
    "project": (
        _text("name", required=True, doc="shown on every output"),
        _text("reference", "", doc="shown in plan.json and on the drawings"),
        _text("engineer", "", doc="shown in plan.json and on the drawings"),
        _text("notes", "", doc="shown in plan.json"),
    ),
    "terrain": (
        Key("dem", (str, list), required=True,
            doc="DEM raster(s) in one CRS; any format GDAL reads (GeoTIFF, VRT); a file or a "
                "list of files"),
        _text("vertical_datum", "as the DEM (not stated)",
              doc="the elevations' datum, for reports (e.g. \"EGM96 geoid\")"),
        Key("max_void_m", default=DEFAULT_MAX_VOID_M, unit="m", low=0,
            doc="longest DEM void bridged along the line; longer gaps are an error naming "
                "their chainages, to be surveyed", source="common practice"),
    ),
    "route": (
        _text("file", required=True,
              doc="the route, from the source (chainage 0) to the last outlet: .geojson .json "
                  ".kml .gpx, or a .csv survey"),
        Key("spacing_m", unit="m", low=0, above=True,
            doc="largest distance between profile points; default the DEM cell size"),
        _text("crs", doc="CRS of a CSV survey's x, y columns, e.g. \"EPSG:32737\""),
        _flag("network", False, doc="the file holds several lines that form a tree (a "
              "branched system): see \"Branched systems\""),
        Key("join_tolerance_m", default=5.0, unit="m", low=0, above=True,
            doc="line ends closer than this are one node; an end this close to another line "
                "joins it there (a tee)", source="a choice of ours"),
    ),
    "source": (
        _text("name", "source", doc="the source's name, on every output"),
        Key("top_water_level_m", unit="m", attr="top_level_m",
            doc="highest water level that can stand (overflow): drives the static head line"),
        Key("top_water_above_ground_m", unit="m", attr="top_above_ground_m",
            doc="or: the same as a height above the ground at the route's start"),
        Key("low_water_level_m", unit="m", attr="low_level_m",
            doc="lowest operating level: drives the HGL at design flow"),
        Key("low_water_above_ground_m", unit="m", attr="low_above_ground_m",
            doc="or: the same as a height above the ground at the route's start"),
        Key("yield_lps", unit="L/s", low=0, above=True, to_si=LPS, attr="yield_m3s",
            doc="safe (dry-season) yield; design flow above it is an error (or a balancing "
                "tank, see demand)"),
        Key("location", _LIST, doc="[lon, lat] of the source, for a network (default: the "
            "first line's start)"),
    ),
    "pipe": (
        _text("material", required=True, doc="for reports and derating"),
        _text("label", "", doc="for reports"),
        Key("inside_diameter_mm", required=True, unit="mm", low=0, above=True, to_si=MM,
            attr="inside_diameter_m", doc="hydraulic inside diameter (e.g. OD - 2 x wall of "
            "ISO 4427-2)"),
        Key("roughness_mm", unit="mm", low=0, to_si=MM, attr="roughness_m",
            doc="absolute roughness, needed with friction = \"colebrook\"; 0.007 for PE/PVC "
                "(conservative, common practice), 0.15 for galvanised steel (Binder 1973)"),
        Key("hazen_williams_c", unit="-", low=0, above=True, attr="c_factor",
            doc="C, needed with friction = \"hazen-williams\"; 150 for PE/PVC, 120 for "
                "galvanised iron (common practice)"),
        Key("pressure_rating_bar", required=True, unit="bar", low=0, above=True, high=250, to_si=BAR,
            attr="rating_pa", doc="the pipe's pressure rating; static pressure above it is "
            "an error"),
        Key("outside_diameter_mm", unit="mm", low=0, above=True, to_si=MM,
            attr="outside_diameter_m", doc="with elastic_modulus_gpa, surge is checked "
            "(Korteweg wave speed, Joukowsky/Michaud rise)"),
        Key("elastic_modulus_gpa", unit="GPa", low=0, above=True, to_si=1e9,
            attr="elastic_modulus_pa", doc="the wall's elastic modulus, for surge"),
    ),
    "criteria": (
        _text("friction", "colebrook", choices=tuple(FRICTION_METHODS),
              doc="Darcy-Weisbach with Colebrook-White (1939) is the reference method; "
                  "\"hazen-williams\" is the empirical alternative"),
        Key("temperature_c", default=20.0, unit="degC", low=0, high=45,
            doc="water temperature for density and viscosity", source="a water supply's range"),
        Key("pipe_temperature_c", unit="degC", low=0, high=60,
            doc="wall temperature for derating plastics (default temperature_c); take it higher "
                "for pipe in the sun"),
        Key("cover_m", default=DEFAULT_COVER_M, unit="m", low=0,
            doc="cover over the pipe; 0.6-0.8 m in rural fields (deeper under tracks, below "
                "frost depth)", source="common practice"),
        Key("entrance_k", default=0.5, unit="-", low=0,
            doc="sharp-edged entrance at the source and each tank",
            source="Crane TP-410; Idelchik"),
        Key("velocity_min_mps", default=0.3, unit="m/s", low=0,
            doc="warning below: sediment and air are not carried (0.3-0.6 m/s in the "
                "literature)", source="common practice"),
        Key("velocity_max_mps", default=3.0, unit="m/s", low=0, above=True,
            doc="warning above, and the designer's limit: surge and erosion risk (2-3 m/s for "
                "plastics)", source="common practice"),
        Key("min_line_pressure_m", default=2.0, unit="m",
            doc="warning where the flowing pressure head is lower (margin for DEM error)",
            source="common practice"),
        Key("snap_tolerance_m", default=50.0, unit="m", low=0,
            doc="farthest a location may be from the line", source="a choice of ours"),
        Key("tank_inlet_head_m", default=1.0, unit="m", low=0,
            doc="head the HGL must keep above a tank's water level for its inlet valve to "
                "pass the design flow", source="common practice"),
        _flag("allow_siphon", False, doc="accept sub-atmospheric stretches as a warning (never "
              "in a drinking-water line) up to the vapour limit less siphon_margin_m"),
        Key("siphon_margin_m", default=2.5, unit="m", low=0,
            doc="margin below the vapour limit (2-3 m)", source="common practice"),
        Key("valve_closure_s", default=30.0, unit="s", low=0, above=True,
            doc="effective closure time of the valves for the surge check",
            source="common practice for hand-operated gate valves"),
        Key("surge_rating_factor", default=1.0, unit="-", low=0, above=True, high=2,
            doc="static + surge may reach this times the derated rating; 1.0 is strict (PE is "
                "often allowed occasional surge to 1.5 x PN, from memory: set it only where "
                "your code says so)"),
        Key("feature_prominence_m", default=2.0, unit="m", low=0,
            doc="a crest or low point counts when it stands this far above or below its "
                "surroundings: keep above DEM noise (about 2 sigma)"),
        Key("grade_break", default=0.05, unit="-", low=0,
            doc="slope change that counts as a break of grade"),
        Key("grade_window_m", default=100.0, unit="m", low=0, above=True,
            doc="length over which slopes are averaged for grade breaks"),
        Key("air_valve_spacing_m", default=800.0, unit="m", low=100,
            doc="most distance between air valves on a long run (at least 100 m: closer is "
                "no one's practice and only multiplies valves; a floor of ours)",
            source="Vinidex 500-1000 m; AWWA M51 0.4-0.8 km, from memory"),
        Key("long_ascent_m", default=500.0, unit="m", low=50,
            doc="uphill runs longer than this get a washout at their foot",
            source="common practice"),
        Key("max_outlet_pressure_m", default=60.0, unit="m", low=0, above=True,
            doc="warn where an outlet gets more pressure head at design flow (wasted water, "
                "broken taps)", source="Malaysian distribution criteria, from memory; "
                "South Africa's DWAF caps static at 90 m"),
    ),
    "design": (
        Key("catalogues", _LIST, default=["pe100"],
            doc="built-in catalogues (pe100, pe80, pvc-u, gi-medium; see gravplan catalogue) "
                "or CSV paths of your own, in the same columns"),
        Key("materials", _LIST, doc="keep only these materials, e.g. [\"PE100\"] (default all)"),
        Key("min_size_mm", unit="mm", low=0, above=True, to_si=MM, attr="min_size_m",
            doc="smallest outside diameter allowed (default all)"),
        Key("max_size_mm", unit="mm", low=0, above=True, to_si=MM, attr="max_size_m",
            doc="largest outside diameter allowed (default all)"),
        _flag("auto_tanks", True, doc="place break-pressure tanks where static head would "
              "exceed the limit (the engineer's [[break_pressure_tanks]] are kept)"),
        Key("max_static_pressure_m", unit="m", low=0, above=True,
            doc="the static head limit for placing tanks (default the highest class); e.g. "
                "100 m keeps a line within PN10"),
        Key("tank_water_depth_m", default=1.0, unit="m", low=0,
            doc="water level of a placed tank above the ground", source="common practice"),
        Key("no_tank_zones", _LIST, default=[],
            doc="[[from_m, to_m], ...] chainage stretches where no tank may be placed (single "
                "lines only for now)"),
        Key("split_spacing_m", default=50.0, unit="m", low=0,
            doc="candidate split points about this far apart, besides tanks, outlets and "
                "fittings; 0 makes every profile point one (exact, but many short pieces)",
            source="a choice of ours"),
        _flag("whole_pieces", True, doc="make each sub-stretch one pipe (MILPs); the result is "
              "the proven optimum within 0.1 %, its cost above the split-pipe optimum reported"),
        Key("confidence", default=0.95, unit="-", low=0.5, high=0.999,
            doc="the design holds each outlet's minimum pressure, the grade line above the "
                "pipe (crests) and each pipe's class with this probability under the DEM error of "
                "[uncertainty] (margins of z times the error's standard deviation); per point, "
                "not for all together: n outlets all hold with at least 1 - n (1 - c) "
                "(Bonferroni); 0.5 designs on the DEM as it is",
            source="95 %: a usual engineering confidence (common practice)"),
        _flag("one_size_per_reach", False, doc="one diameter per reach between free surfaces "
              "(MILP); classes still follow the static head"),
    ),
    "drawing": (
        _text("sheet", "A3", choices=tuple(SHEETS), doc="sheet size of the permit drawings "
              "(ISO 216, landscape)"),
        Key("km_per_sheet", default=2.0, unit="km", low=0.05, high=100,
            doc="chainage per sheet; consecutive sheets meet at the same chainage"),
        _text("revision", "A", doc="revision letter in the title block"),
        _text("date", doc="date in the title block (default today)"),
    ),
    "uncertainty": (
        _flag("enabled", True, doc="run the DEM-error Monte Carlo (off for a CSV survey unless "
              "sigma_m is given)"),
        _text("product",
              doc="which DEM: sets sigma from its published accuracy (table below: "
                  + ", ".join(PRODUCTS) + "); another name needs sigma_m.  Not given: "
                  + DEFAULT_PRODUCT + " is assumed for the chances reported, and the design "
                  "is not held to design.confidence (name the DEM, or give sigma_m)"),
        Key("sigma_m", unit="m", low=0, high=100,
            doc="standard deviation of the DEM's vertical error (default the product's); raise "
                "it under forest (5-10 m, common practice)"),
        Key("correlation_m", default=DEFAULT_CORRELATION_M, unit="m", low=0, above=True,
            doc="correlation length of the error along the line (exponential)",
            source="from memory, not a published value"),
        Key("realisations", int, default=1000, low=10, high=100_000, doc="Monte Carlo size"),
        Key("seed", int, default=0, low=0, high=2**32 - 1,
            doc="random seed; the same seed gives the same numbers"),
    ),
}

_WHERE = (Key("chainage_m", unit="m", low=0, doc="where along the line"),
          Key("location", _LIST, doc="or where: [lon, lat], snapped to the line within "
              "criteria.snap_tolerance_m"),
          _text("link", doc="on a network: the name of the drawn line it is on; chainage_m "
                "is then along that line as drawn"))

#: Default minimum residual pressure at an outlet [m]: Akvopedia "Public standpost"
#: (after WHO/IRC) gives 10-30 m at standposts.
DEFAULT_OUTLET_MIN_PRESSURE_M = 10.0

#: array of tables -> the keys of each table.
ARRAYS: dict[str, tuple[Key, ...]] = {
    "outlets": (
        _text("name", required=True, doc="the outlet's name, on every output"),
        Key("flow_lps", unit="L/s", low=0, above=True, to_si=LPS, attr="flow_m3s",
            doc="design (peak) flow drawn there; or instead demand"),
        Key("demand", dict, doc="{ kind = ..., ... }: the flow derived from what is needed "
            "(see Demand kinds)"),
        *_WHERE,
        Key("min_pressure_m", default=DEFAULT_OUTLET_MIN_PRESSURE_M, unit="m", low=0,
            doc="minimum residual pressure head",
            source="the lower end of the 10-30 m Akvopedia gives for public standposts (after "
                   "WHO/IRC)"),
        Key("max_pressure_m", unit="m", low=0, above=True,
            doc="highest pressure head wanted at design flow; the design then burns the "
                "surplus head in the pipe"),
        _text("kind", "outlet", doc="e.g. \"tap stand\", \"hydrant\""),
    ),
    "break_pressure_tanks": (
        Key("chainage_m", required=True, unit="m", low=0, above=True,
            doc="where; on a single line in increasing chainage"),
        _WHERE[2],
        Key("water_above_ground_m", default=1.0, unit="m", low=0,
            doc="the tank's water level above the ground there", source="common practice"),
        _text("name", doc="default \"break-pressure tank N\""),
    ),
    "fittings": (
        Key("chainage_m", required=True, unit="m", low=0, doc="where"),
        Key("k", required=True, unit="-", low=0, doc="local loss K V^2/2g there (valves, bends)"),
        _WHERE[2],
        _text("name", doc="default \"fitting N\""),
    ),
    "survey_points": (
        Key("elevation_m", required=True, unit="m",
            doc="the surveyed ground level, on the DEM's vertical datum"),
        *_WHERE,
        _text("name", doc="e.g. \"tank site peg\", \"BM3\""),
    ),
}

#: Keys of each demand kind: key -> (required, default); each default and its source
#: is in planner/design/demand.py.
DEMAND_KEYS: dict[str, dict[str, tuple[bool, float | None]]] = {
    "domestic": {"population": (True, None), "per_capita_lpd": (True, None),
                 "peak_factor": (False, dm.PEAK_FACTOR_WITH_STORAGE), "growth_rate": (False, 0.0),
                 "horizon_years": (False, 0.0)},
    "taps": {"taps": (True, None), "tap_flow_lpm": (False, dm.TAP_FLOW * 60e3),
             "use_factor": (False, 1.0)},
    "school": {"pupils": (True, None), "litres_per_day": (False, dm.SCHOOL_LPD),
               "hours": (False, dm.SCHOOL_HOURS)},
    "clinic": {"beds": (True, None), "litres_per_day": (False, dm.CLINIC_LPD),
               "hours": (False, dm.CLINIC_HOURS)},
    "irrigation": {"area_ha": (True, None), "crop_water_mm_per_day": (True, None),
                   "efficiency": (True, None), "hours_per_day": (True, None)},
}

#: Ranges of demand keys that would otherwise overflow or mean nothing: (low, high), a
#: choice of ours (design horizons are some decades, growth some % a year).
DEMAND_RANGES: dict[str, tuple[float, float]] = {"growth_rate": (-0.2, 0.2),
                                                 "horizon_years": (0.0, 100.0)}

REQUIRED_SECTIONS = ("project", "route", "source")


def keys_of(table: str) -> dict[str, Key]:
    """The keys of a section or an array of tables, by name."""
    return {k.name: k for k in (SECTIONS.get(table) or ARRAYS[table])}


def default(table: str, name: str) -> Any:
    """The default of a key, in SI units (None where it has none)."""
    k = keys_of(table)[name]
    return None if k.default is None else k.si(k.default)


def fields(table: str, given: dict[str, Any]) -> dict[str, Any]:
    """The model's fields of a checked table: values in SI, defaults for absent keys.

    Keys with no default that are absent are left out (the model's own None applies).
    """
    out = {}
    for k in SECTIONS.get(table) or ARRAYS[table]:
        if k.name in given:
            out[k.field] = k.si(given[k.name])
        elif k.default is not None:
            out[k.field] = k.si(k.default)
    return out


def _type_words(kind) -> str:
    if kind == NUM:
        return "number"
    if isinstance(kind, tuple):
        return " or ".join(_type_words(x) for x in kind)
    return {str: "text", list: "list", bool: "true/false", int: "integer", dict: "table"}[kind]


def _range_words(k: Key) -> str:
    if k.choices:
        return ", ".join(f"`{c}`" for c in k.choices)
    lo = "" if k.low is None else f"{'>' if k.above else '≥'} {k.low:g}"
    hi = "" if k.high is None else f"≤ {k.high:g}"
    return ", ".join(x for x in (lo, hi) if x)


def _default_words(k: Key) -> str:
    if k.required:
        return "required"
    if k.default is None:
        return ""
    if isinstance(k.default, bool):
        return "true" if k.default else "false"
    if isinstance(k.default, str):
        return f"`\"{k.default}\"`" if k.default else "`\"\"`"
    if isinstance(k.default, list):
        return "`[" + ", ".join(f"\"{x}\"" for x in k.default) + "]`"
    return f"{k.default:g}"


def markdown(table: str) -> str:
    """The key table of a section or array of tables for docs/scenario.md."""
    rows = ["| key | type | default | unit | range | meaning |", "|---|---|---|---|---|---|"]
    for k in SECTIONS.get(table) or ARRAYS[table]:
        meaning = k.doc + (f" ({k.source})" if k.source else "")
        rows.append(f"| `{k.name}` | {_type_words(k.kind)} | {_default_words(k)} | "
                    f"{'' if k.unit in ('', '-') else k.unit} | {_range_words(k)} | {meaning} |")
    return "\n".join(rows)


#: How a generated table is marked in docs/scenario.md.
MARK = re.compile(r"(<!-- keys: (\w+) -->\n)(.*?)(\n<!-- /keys -->)", re.S)


def with_tables(text: str) -> str:
    """docs/scenario.md with every marked key table regenerated from this module."""
    return MARK.sub(lambda m: m.group(1) + markdown(m.group(2)) + m.group(4), text)
