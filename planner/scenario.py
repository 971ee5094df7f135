"""The scenario file (TOML): what the engineer states about one gravity line.

All unit handling of the input happens here: keys carry their unit in their name
(``flow_lps``, ``inside_diameter_mm``, ``rating_bar``) and are converted to SI on
loading.  Validation collects every problem it finds and reports them together,
each with its key and what is expected.  Every key is documented in
docs/scenario.md.
"""

from __future__ import annotations

import difflib
import tomllib
import warnings
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .errors import InputError, InputFileError, UnitWarning
from .geo.profile import DEFAULT_COVER_M, DEFAULT_MAX_VOID_M
from .hydraulics.friction import FRICTION_METHODS
from .units import BAR, LPS, MM


@dataclass(frozen=True)
class Project:
    """The project's name, reference, engineer and notes, as printed on the deliverables."""

    name: str
    reference: str = ""
    engineer: str = ""
    notes: str = ""


@dataclass(frozen=True)
class Terrain:
    """The DEM file(s), their vertical datum and the longest void bridged along the line [m]."""

    dem: tuple[Path, ...]
    vertical_datum: str = "as the DEM (not stated)"
    max_void_m: float = DEFAULT_MAX_VOID_M


@dataclass(frozen=True)
class RouteSpec:
    """The route file, its largest point spacing [m], CRS, and for a network the join tolerance [m]."""

    file: Path
    spacing_m: float | None = None
    crs: str | None = None
    network: bool = False
    join_tolerance_m: float = 5.0


@dataclass(frozen=True)
class Source:
    """The source's free surface; levels absolute [m] or above the ground at the start."""

    name: str
    top_level_m: float | None
    low_level_m: float | None
    top_above_ground_m: float | None
    low_above_ground_m: float | None
    yield_m3s: float | None
    location: tuple[float, float] | None = None


@dataclass(frozen=True)
class Pipe:
    """One given pipe ([pipe]): diameters and roughness [m], rating and elastic modulus [Pa]."""

    material: str
    label: str
    inside_diameter_m: float
    rating_pa: float
    roughness_m: float | None = None
    c_factor: float | None = None
    outside_diameter_m: float | None = None
    elastic_modulus_pa: float | None = None


@dataclass(frozen=True)
class Outlet:
    """A draw-off point: its design (peak) flow and, when derived, how it was derived."""

    name: str
    flow_m3s: float
    min_pressure_m: float
    chainage_m: float | None = None
    location: tuple[float, float] | None = None
    kind: str = "outlet"
    basis: str = "flow given"
    daily_volume_m3: float | None = None
    link: str | None = None
    max_pressure_m: float | None = None


@dataclass(frozen=True)
class Tank:
    """A given break-pressure tank: its chainage [m] and water level above the ground [m]."""

    name: str
    chainage_m: float
    water_above_ground_m: float = 1.0
    link: str | None = None


@dataclass(frozen=True)
class Fitting:
    """A fitting: its chainage [m] and local loss coefficient k [-] (times the velocity head)."""

    name: str
    chainage_m: float
    k: float
    link: str | None = None


@dataclass(frozen=True)
class Criteria:
    """Design criteria; each default's source is given in docs/scenario.md."""

    friction: str = "colebrook"
    temperature_c: float = 20.0
    pipe_temperature_c: float | None = None
    cover_m: float = DEFAULT_COVER_M
    entrance_k: float = 0.5
    velocity_min_mps: float = 0.3
    velocity_max_mps: float = 3.0
    min_line_pressure_m: float = 2.0
    snap_tolerance_m: float = 50.0
    tank_inlet_head_m: float = 1.0
    allow_siphon: bool = False
    siphon_margin_m: float = 2.5
    valve_closure_s: float = 30.0
    surge_rating_factor: float = 1.0
    feature_prominence_m: float = 2.0
    grade_break: float = 0.05
    grade_window_m: float = 100.0
    air_valve_spacing_m: float = 800.0
    long_ascent_m: float = 500.0
    max_outlet_pressure_m: float = 60.0

    @property
    def wall_temperature_c(self) -> float:
        """Temperature for derating plastic pipe [degC] (defaults to the water's)."""
        return self.temperature_c if self.pipe_temperature_c is None else self.pipe_temperature_c


@dataclass(frozen=True)
class Design:
    """What the designer may choose from, and the rules for tanks and sizes."""

    catalogues: tuple[str, ...] = ("pe100",)
    materials: tuple[str, ...] | None = None
    min_size_mm: float | None = None
    max_size_mm: float | None = None
    one_size_per_reach: bool = False
    auto_tanks: bool = True
    max_static_pressure_m: float | None = None
    tank_water_depth_m: float = 1.0
    no_tank_zones: tuple[tuple[float, float], ...] = ()
    split_spacing_m: float | None = 50.0
    whole_pieces: bool = True


@dataclass(frozen=True)
class Drawing:
    """How the profile is drawn on sheets for a permit file."""

    sheet: str = "A3"
    km_per_sheet: float = 2.0
    revision: str = "A"
    date: str | None = None


@dataclass(frozen=True)
class UncertaintySpec:
    """The DEM error model and the Monte Carlo's size ([uncertainty])."""

    enabled: bool = True
    product: str | None = None          # a key of planner.design.uncertainty.PRODUCTS
    sigma_m: float | None = None        # overrides the product's value
    correlation_m: float | None = None
    realisations: int = 1000
    seed: int = 0


@dataclass(frozen=True)
class SurveyPoint:
    """A surveyed ground level the profile is pinned to ([[survey_points]])."""

    name: str
    elevation_m: float
    chainage_m: float | None = None
    location: tuple[float, float] | None = None
    link: str | None = None


@dataclass(frozen=True)
class Scenario:
    """Everything the scenario file states about one gravity line, checked and in SI units."""

    path: Path
    project: Project
    terrain: Terrain | None
    route: RouteSpec
    source: Source
    pipe: Pipe | None
    outlets: tuple[Outlet, ...]
    tanks: tuple[Tank, ...] = field(default=())
    fittings: tuple[Fitting, ...] = field(default=())
    criteria: Criteria = field(default_factory=Criteria)
    design: Design | None = None
    drawing: Drawing = field(default_factory=Drawing)
    uncertainty: UncertaintySpec = field(default_factory=UncertaintySpec)
    survey_points: tuple[SurveyPoint, ...] = field(default=())


# ---------------------------------------------------------------------------
# schema: section -> key -> (type, required, default); checked generically

_NUM = (int, float)
SCHEMA: dict[str, dict[str, tuple[type | tuple, bool]]] = {
    "project": {"name": (str, True), "reference": (str, False), "engineer": (str, False),
                "notes": (str, False)},
    "terrain": {"dem": ((str, list), True), "vertical_datum": (str, False),
                "max_void_m": (_NUM, False)},
    "route": {"file": (str, True), "spacing_m": (_NUM, False), "crs": (str, False),
              "network": (bool, False), "join_tolerance_m": (_NUM, False)},
    "source": {"name": (str, False), "top_water_level_m": (_NUM, False),
               "low_water_level_m": (_NUM, False), "top_water_above_ground_m": (_NUM, False),
               "low_water_above_ground_m": (_NUM, False), "yield_lps": (_NUM, False),
               "location": (list, False)},
    "pipe": {"material": (str, True), "label": (str, False), "inside_diameter_mm": (_NUM, True),
             "roughness_mm": (_NUM, False), "hazen_williams_c": (_NUM, False),
             "rating_bar": (_NUM, True), "outside_diameter_mm": (_NUM, False),
             "elastic_modulus_gpa": (_NUM, False)},
    "criteria": {"friction": (str, False), "temperature_c": (_NUM, False),
                 "pipe_temperature_c": (_NUM, False),
                 "cover_m": (_NUM, False), "entrance_k": (_NUM, False),
                 "velocity_min_mps": (_NUM, False), "velocity_max_mps": (_NUM, False),
                 "min_line_pressure_m": (_NUM, False), "snap_tolerance_m": (_NUM, False),
                 "tank_inlet_head_m": (_NUM, False), "allow_siphon": (bool, False),
                 "siphon_margin_m": (_NUM, False), "valve_closure_s": (_NUM, False),
                 "surge_rating_factor": (_NUM, False), "feature_prominence_m": (_NUM, False),
                 "grade_break": (_NUM, False), "grade_window_m": (_NUM, False),
                 "air_valve_spacing_m": (_NUM, False), "long_ascent_m": (_NUM, False),
                 "max_outlet_pressure_m": (_NUM, False)},
    "uncertainty": {"enabled": (bool, False), "product": (str, False), "sigma_m": (_NUM, False),
                    "correlation_m": (_NUM, False), "realisations": (int, False),
                    "seed": (int, False)},
    "drawing": {"sheet": (str, False), "km_per_sheet": (_NUM, False), "revision": (str, False),
                "date": (str, False)},
    "design": {"catalogues": (list, False), "materials": (list, False),
               "min_size_mm": (_NUM, False), "max_size_mm": (_NUM, False),
               "one_size_per_reach": (bool, False), "auto_tanks": (bool, False),
               "max_static_pressure_m": (_NUM, False), "tank_water_depth_m": (_NUM, False),
               "no_tank_zones": (list, False), "split_spacing_m": (_NUM, False),
               "whole_pieces": (bool, False)},
}
TABLE_ARRAYS: dict[str, dict[str, tuple[type | tuple, bool]]] = {
    "outlets": {"name": (str, True), "flow_lps": (_NUM, False), "demand": (dict, False),
                "link": (str, False), "max_pressure_m": (_NUM, False),
                "min_pressure_m": (_NUM, False),
                "chainage_m": (_NUM, False), "location": (list, False), "kind": (str, False)},
    "break_pressure_tanks": {"name": (str, False), "chainage_m": (_NUM, True),
                             "water_above_ground_m": (_NUM, False), "link": (str, False)},
    "survey_points": {"name": (str, False), "elevation_m": (_NUM, True),
                      "chainage_m": (_NUM, False), "location": (list, False),
                      "link": (str, False)},
    "fittings": {"name": (str, False), "chainage_m": (_NUM, True), "k": (_NUM, True),
                 "link": (str, False)},
}
REQUIRED_SECTIONS = ("project", "route", "source")
#: Default minimum residual pressure at an outlet [m]: Akvopedia "Public standpost"
#: (after WHO/IRC) gives 10-30 m at standposts.
DEFAULT_OUTLET_MIN_PRESSURE_M = 10.0


#: Outlet flows above this are warned about as likely unit mistakes [L/s] (common
#: practice: rural gravity supply and irrigation mains carry 0.1 to some tens of L/s).
LARGE_FLOW_LPS = 200.0
#: Pipe diameters below this are warned about as likely metres [mm] (common practice:
#: no water-supply pipe is that small; ISO 4427-2 starts at 16 mm OD, from memory).
SMALL_DIAMETER_MM = 10.0


def _large_flow(key: str, value, stacklevel: int = 3) -> None:
    if isinstance(value, _NUM) and not isinstance(value, bool) and value > LARGE_FLOW_LPS:
        warnings.warn(f"{key} = {value:,.0f} L/s is very large for a gravity line (more than "
                      f"{LARGE_FLOW_LPS:g} L/s); check the units: flow_lps is in litres per "
                      f"second (1 m3/h = 0.278 L/s, 1 m3/s = 1,000 L/s)", UnitWarning,
                      stacklevel=stacklevel)


def _looks_like_metres(key: str, value, stacklevel: int = 3) -> None:
    if isinstance(value, _NUM) and not isinstance(value, bool) and 0 < value < SMALL_DIAMETER_MM:
        warnings.warn(f"{key} = {value:g} mm is smaller than any catalogue pipe; was it given in "
                      f"metres? ({value:g} m = {value * 1000:g} mm)", UnitWarning,
                      stacklevel=stacklevel)


class _Problems(list):
    def add(self, key: str, message: str) -> None:
        self.append(f"{key}: {message}")


def _type_name(t) -> str:
    if t == _NUM:
        return "a number"
    if isinstance(t, tuple):
        return " or ".join(_type_name(x) for x in t)
    return {str: "a text string", list: "a list", bool: "true or false"}.get(t, t.__name__)


def _check_table(table: dict, schema: dict, prefix: str, problems: _Problems) -> dict:
    out = {}
    for key, value in table.items():
        if key not in schema:
            close = difflib.get_close_matches(key, schema, n=1)
            hint = f"; did you mean {close[0]!r}?" if close else \
                f"; known keys: {', '.join(sorted(schema))}"
            problems.add(f"{prefix}.{key}", f"unknown key{hint}")
            continue
        typ = schema[key][0]
        if (isinstance(value, bool) and typ is not bool) or not isinstance(value, typ):
            problems.add(f"{prefix}.{key}", f"expected {_type_name(typ)}, got {value!r}")
            continue
        out[key] = value
    for key, (_, required) in schema.items():
        if required and key not in table:
            problems.add(f"{prefix}.{key}", "missing (required)")
    return out


def _positive(problems, key, value, *, allow_zero=False):
    if value is None:
        return
    if value < 0 or (value == 0 and not allow_zero):
        problems.add(key, f"must be {'>= 0' if allow_zero else '> 0'}, got {value!r}")


def load_scenario(path: str | Path) -> Scenario:
    """Read and validate a scenario TOML file.

    Parameters
    ----------
    path : str or Path
        The scenario file; relative paths inside it are relative to its folder.

    Returns
    -------
    Scenario
        With every quantity in SI units.

    Raises
    ------
    InputFileError
        If the file is missing or not valid TOML.
    InputError
        Listing every problem found, each with its key.
    """
    p = Path(path)
    if not p.is_file():
        raise InputFileError(f"{p}: scenario file not found")
    try:
        data = tomllib.loads(p.read_text(encoding="utf-8"))
    except tomllib.TOMLDecodeError as exc:
        raise InputFileError(f"{p}: not valid TOML ({exc})") from None
    except UnicodeDecodeError as exc:
        raise InputFileError(f"{p}: not a UTF-8 text file ({exc})") from None
    return scenario_from_dict(data, p)


def scenario_from_dict(data: dict[str, Any], path: Path) -> Scenario:
    """Validate parsed TOML data and build a :class:`Scenario` (see :func:`load_scenario`)."""
    problems = _Problems()
    base = path.parent
    sec, arrays = _sections(data, problems)
    terrain = _terrain(sec["terrain"], base, problems)
    route = _route(sec["route"], base, terrain, problems)
    source = _source(sec["source"], "source" in data, problems)
    criteria = _criteria(sec["criteria"], problems)
    pipe = _pipe(sec["pipe"], "pipe" in data, criteria, problems)
    design = _design(sec["design"], problems) if "design" in data else None
    _pipe_or_design("pipe" in data, "design" in data, problems)
    outlets = _outlets(arrays["outlets"], "outlets" in data, problems)
    tanks = _tanks(arrays["break_pressure_tanks"], route.network, problems)
    fittings = _fittings(arrays["fittings"], problems)
    if route.network:
        _network_links(arrays, problems)
    drawing = _drawing(sec["drawing"], problems)
    uncertainty = _uncertainty(sec["uncertainty"], problems)
    survey_points = _survey_points(arrays["survey_points"], problems)
    if problems:
        listing = "\n  - ".join(problems)
        raise InputError(f"{path}: {len(problems)} problem(s) in the scenario:\n  - {listing}")
    p = sec["project"]
    return Scenario(
        path=path, project=Project(name=p["name"], reference=p.get("reference", ""),
                                   engineer=p.get("engineer", ""), notes=p.get("notes", "")),
        terrain=terrain, route=route, source=source, pipe=pipe, outlets=tuple(outlets),
        tanks=tuple(tanks), fittings=tuple(fittings), criteria=criteria, design=design,
        drawing=drawing, uncertainty=uncertainty, survey_points=tuple(survey_points))


def _sections(data: dict[str, Any], problems: _Problems
              ) -> tuple[dict[str, dict[str, Any]], dict[str, list[dict[str, Any]]]]:
    """The checked tables of every section and array of tables (empty where not given)."""
    known = set(SCHEMA) | set(TABLE_ARRAYS)
    for key in data:
        if key not in known:
            close = difflib.get_close_matches(key, known, n=1)
            hint = f"; did you mean [{close[0]}]?" if close else ""
            problems.add(key, f"unknown section{hint}")
    for name in REQUIRED_SECTIONS:
        if name not in data:
            problems.add(name, "missing section (required)")
    sec = {}
    for name, schema in SCHEMA.items():
        table = data.get(name, {})
        if not isinstance(table, dict):
            problems.add(name, "must be a table ([" + name + "])")
            table = {}
        sec[name] = _check_table(table, schema, name, problems) if name in data else {}
    arrays = {}
    for name, schema in TABLE_ARRAYS.items():
        items = data.get(name, [])
        if not isinstance(items, list) or not all(isinstance(i, dict) for i in items):
            problems.add(name, f"must be an array of tables ([[{name}]])")
            items = []
        arrays[name] = [_check_table(item, schema, f"{name}[{i + 1}]", problems)
                        for i, item in enumerate(items)]
    return sec, arrays


def _terrain(t: dict[str, Any], base: Path, problems: _Problems) -> Terrain | None:
    """The [terrain] section, DEM paths relative to ``base``; None without a DEM."""
    if "dem" not in t:
        return None
    dems = t["dem"] if isinstance(t["dem"], list) else [t["dem"]]
    if not dems or not all(isinstance(d, str) for d in dems):
        problems.add("terrain.dem", "expected a file name or a list of file names")
        dems = []
    terrain = Terrain(dem=tuple(base / d for d in dems),
                      vertical_datum=t.get("vertical_datum", "as the DEM (not stated)"),
                      max_void_m=float(t.get("max_void_m", DEFAULT_MAX_VOID_M)))
    _positive(problems, "terrain.max_void_m", t.get("max_void_m"), allow_zero=True)
    return terrain


def _route(r: dict[str, Any], base: Path, terrain: Terrain | None,
           problems: _Problems) -> RouteSpec:
    """The [route] section, its file relative to ``base``; a non-CSV route needs a DEM."""
    route = RouteSpec(file=base / r.get("file", ""), spacing_m=r.get("spacing_m"), crs=r.get("crs"),
                      network=bool(r.get("network", False)),
                      join_tolerance_m=float(r.get("join_tolerance_m", 5.0)))
    _positive(problems, "route.join_tolerance_m", r.get("join_tolerance_m"))
    _positive(problems, "route.spacing_m", r.get("spacing_m"))
    if "file" in r and not route.file.suffix.lower() == ".csv" and terrain is None:
        problems.add("terrain.dem", f"needed for the route {r['file']!r}: only a CSV survey "
                     "carries its own elevations")
    return route


def _source(s: dict[str, Any], given: bool, problems: _Problems) -> Source:
    """The [source] section (``given``: whether the file has one); yield in m3/s."""
    for level in ("top", "low"):
        absolute, relative = f"{level}_water_level_m", f"{level}_water_above_ground_m"
        if (absolute in s) == (relative in s) and given:
            problems.add(f"source.{absolute}", f"give exactly one of {absolute} (elevation) "
                         f"or {relative} (height above the ground at the route start)")
    if "top_water_level_m" in s and "low_water_level_m" in s and \
            s["low_water_level_m"] > s["top_water_level_m"]:
        problems.add("source.low_water_level_m", "must not be above top_water_level_m")
    if "top_water_above_ground_m" in s and "low_water_above_ground_m" in s and \
            s["low_water_above_ground_m"] > s["top_water_above_ground_m"]:
        problems.add("source.low_water_above_ground_m", "must not be above top_water_above_ground_m")
    _positive(problems, "source.yield_lps", s.get("yield_lps"))
    source = Source(
        name=s.get("name", "source"), top_level_m=s.get("top_water_level_m"),
        low_level_m=s.get("low_water_level_m"), top_above_ground_m=s.get("top_water_above_ground_m"),
        low_above_ground_m=s.get("low_water_above_ground_m"),
        yield_m3s=s["yield_lps"] * LPS if "yield_lps" in s else None,
        location=tuple(s["location"]) if "location" in s and len(s["location"]) == 2 else None)
    if "location" in s and (len(s["location"]) != 2 or not all(
            isinstance(v, _NUM) and not isinstance(v, bool) for v in s["location"])):
        problems.add("source.location", f"expected [longitude, latitude], got {s['location']!r}")
    return source


def _criteria(c: dict[str, Any], problems: _Problems) -> Criteria:
    """The [criteria] section, numbers as floats, each checked against its range."""
    values: dict[str, Any] = {k: (float(v) if isinstance(v, (int, float)) and not isinstance(v, bool)
                                  else v) for k, v in c.items()}
    criteria = Criteria(**values)
    if criteria.friction not in FRICTION_METHODS:
        problems.add("criteria.friction", f"unknown method {criteria.friction!r}; choose one of "
                     f"{', '.join(FRICTION_METHODS)}")
    if not 0 <= criteria.temperature_c <= 45:
        problems.add("criteria.temperature_c", f"expected 0 to 45 degC for a water supply, "
                     f"got {criteria.temperature_c:g}")
    for key in ("cover_m", "entrance_k", "velocity_min_mps", "snap_tolerance_m",
                "tank_inlet_head_m", "siphon_margin_m", "feature_prominence_m", "grade_break"):
        _positive(problems, f"criteria.{key}", getattr(criteria, key), allow_zero=True)
    for key in ("velocity_max_mps", "valve_closure_s", "surge_rating_factor", "grade_window_m",
                "air_valve_spacing_m", "long_ascent_m"):
        _positive(problems, f"criteria.{key}", getattr(criteria, key))
    if criteria.pipe_temperature_c is not None and not 0 <= criteria.pipe_temperature_c <= 60:
        problems.add("criteria.pipe_temperature_c", "expected 0 to 60 degC, got "
                     f"{criteria.pipe_temperature_c:g}")
    if criteria.velocity_min_mps >= criteria.velocity_max_mps:
        problems.add("criteria.velocity_min_mps", "must be below velocity_max_mps")
    return criteria


def _pipe(pp: dict[str, Any], given: bool, criteria: Criteria, problems: _Problems) -> Pipe | None:
    """The [pipe] section in SI units (``given``: whether the file has one), else None."""
    _positive(problems, "pipe.inside_diameter_mm", pp.get("inside_diameter_mm"))
    _positive(problems, "pipe.rating_bar", pp.get("rating_bar"))
    _positive(problems, "pipe.roughness_mm", pp.get("roughness_mm"), allow_zero=True)
    _positive(problems, "pipe.hazen_williams_c", pp.get("hazen_williams_c"))
    _positive(problems, "pipe.outside_diameter_mm", pp.get("outside_diameter_mm"))
    _positive(problems, "pipe.elastic_modulus_gpa", pp.get("elastic_modulus_gpa"))
    if "outside_diameter_mm" in pp and "inside_diameter_mm" in pp and \
            pp["outside_diameter_mm"] <= pp["inside_diameter_mm"]:
        problems.add("pipe.outside_diameter_mm", "must be larger than inside_diameter_mm")
    if given:
        if criteria.friction == "colebrook" and "roughness_mm" not in pp:
            problems.add("pipe.roughness_mm", "needed for criteria.friction = 'colebrook' "
                         "(e.g. 0.007 for PE or PVC, 0.15 for galvanised steel)")
        if criteria.friction == "hazen-williams" and "hazen_williams_c" not in pp:
            problems.add("pipe.hazen_williams_c", "needed for criteria.friction = "
                         "'hazen-williams' (e.g. 150 for PE or PVC)")
    for k in ("inside_diameter_mm", "outside_diameter_mm"):
        _looks_like_metres(f"pipe.{k}", pp.get(k), stacklevel=4)
    if not given:
        return None
    return Pipe(material=pp.get("material", ""), label=pp.get("label", ""),
                inside_diameter_m=pp.get("inside_diameter_mm", 0.0) * MM,
                rating_pa=pp.get("rating_bar", 0.0) * BAR,
                roughness_m=pp["roughness_mm"] * MM if "roughness_mm" in pp else None,
                c_factor=pp.get("hazen_williams_c"),
                outside_diameter_m=pp["outside_diameter_mm"] * MM
                if "outside_diameter_mm" in pp else None,
                elastic_modulus_pa=pp["elastic_modulus_gpa"] * 1e9
                if "elastic_modulus_gpa" in pp else None)


def _pipe_or_design(pipe: bool, design: bool, problems: _Problems) -> None:
    """Check that the file has exactly one of [pipe] and [design]."""
    if pipe and design:
        problems.add("design", "give either [pipe] (check one given pipe) or [design] (let the "
                     "tool choose sizes and classes), not both")
    if not pipe and not design:
        problems.add("design", "missing: add [design] (catalogues to choose from) or [pipe] "
                     "(one given pipe)")


def _outlets(items: list[dict[str, Any]], given: bool, problems: _Problems) -> list[Outlet]:
    """The [[outlets]] tables (``given``: whether the file has any), flows in m3/s."""
    outlets = []
    for i, o in enumerate(items, start=1):
        key = f"outlets[{i}]"
        if ("chainage_m" in o) == ("location" in o):
            problems.add(key, "give exactly one of chainage_m or location = [lon, lat]")
        loc = o.get("location")
        if loc is not None and (len(loc) != 2 or not all(isinstance(v, _NUM) and not
                                                         isinstance(v, bool) for v in loc)):
            problems.add(f"{key}.location", f"expected [longitude, latitude], got {loc!r}")
            loc = None
        _positive(problems, f"{key}.flow_lps", o.get("flow_lps"))
        _large_flow(f"{key}.flow_lps", o.get("flow_lps"), stacklevel=4)
        _positive(problems, f"{key}.chainage_m", o.get("chainage_m"), allow_zero=True)
        flow, basis, volume = o.get("flow_lps", 0.0) * LPS, "flow given", None
        if ("flow_lps" in o) == ("demand" in o):
            problems.add(key, "give exactly one of flow_lps or demand = {...}")
        elif "demand" in o:
            flow, basis, volume = _demand(o["demand"], f"{key}.demand", problems)
        outlets.append(Outlet(
            name=o.get("name", f"outlet {i}"), flow_m3s=flow,
            min_pressure_m=float(o.get("min_pressure_m", DEFAULT_OUTLET_MIN_PRESSURE_M)),
            chainage_m=o.get("chainage_m"), location=tuple(loc) if loc else None,
            kind=o.get("kind", "outlet"), basis=basis, daily_volume_m3=volume,
            link=o.get("link"), max_pressure_m=o.get("max_pressure_m")))
        if "max_pressure_m" in o and o["max_pressure_m"] <= float(o.get(
                "min_pressure_m", DEFAULT_OUTLET_MIN_PRESSURE_M)):
            problems.add(f"{key}.max_pressure_m", "must be above min_pressure_m")
    if given and not outlets:
        problems.add("outlets", "at least one outlet is needed")
    if not given:
        problems.add("outlets", "missing: add at least one [[outlets]] table")
    return outlets


def _tanks(items: list[dict[str, Any]], network: bool, problems: _Problems) -> list[Tank]:
    """The [[break_pressure_tanks]] tables; on a single line, in increasing chainage."""
    tanks = []
    for i, tk in enumerate(items, start=1):
        _positive(problems, f"break_pressure_tanks[{i}].chainage_m", tk.get("chainage_m"))
        _positive(problems, f"break_pressure_tanks[{i}].water_above_ground_m",
                  tk.get("water_above_ground_m"), allow_zero=True)
        tanks.append(Tank(name=tk.get("name", f"break-pressure tank {i}"),
                          chainage_m=float(tk.get("chainage_m", 0.0)),
                          water_above_ground_m=float(tk.get("water_above_ground_m", 1.0)),
                          link=tk.get("link")))
    chain = [tk.chainage_m for tk in tanks]
    if not network and (chain != sorted(chain) or len(set(chain)) != len(chain)):
        problems.add("break_pressure_tanks", "list the tanks in increasing chainage, one per place")
    return tanks


def _fittings(items: list[dict[str, Any]], problems: _Problems) -> list[Fitting]:
    """The [[fittings]] tables: loss coefficients k [-] at chainages [m]."""
    fittings = []
    for i, f in enumerate(items, start=1):
        _positive(problems, f"fittings[{i}].k", f.get("k"), allow_zero=True)
        _positive(problems, f"fittings[{i}].chainage_m", f.get("chainage_m"), allow_zero=True)
        fittings.append(Fitting(name=f.get("name", f"fitting {i}"),
                                chainage_m=float(f.get("chainage_m", 0.0)), k=float(f.get("k", 0.0)),
                                link=f.get("link")))
    return fittings


def _network_links(arrays: dict[str, list[dict[str, Any]]], problems: _Problems) -> None:
    """Check that on a network every item placed by chainage names its link."""
    for what, items in (("break_pressure_tanks", arrays["break_pressure_tanks"]),
                        ("fittings", arrays["fittings"]), ("outlets", arrays["outlets"]),
                        ("survey_points", arrays["survey_points"])):
        for i, item in enumerate(items, start=1):
            if "chainage_m" in item and "link" not in item:
                problems.add(f"{what}[{i}]", "on a network, a chainage needs the link "
                             "(the name of the drawn line) it is along")


def _drawing(dr: dict[str, Any], problems: _Problems) -> Drawing:
    """The [drawing] section: sheet size and kilometres of line per sheet."""
    from .report.sheets import SHEETS
    if dr.get("sheet", "A3") not in SHEETS:
        problems.add("drawing.sheet", f"expected one of {', '.join(SHEETS)}, got {dr['sheet']!r}")
    _positive(problems, "drawing.km_per_sheet", dr.get("km_per_sheet"))
    return Drawing(sheet=dr.get("sheet", "A3"), km_per_sheet=float(dr.get("km_per_sheet", 2.0)),
                   revision=dr.get("revision", "A"), date=dr.get("date"))


def _uncertainty(u: dict[str, Any], problems: _Problems) -> UncertaintySpec:
    """The [uncertainty] section: DEM product or error [m], correlation length [m], size."""
    from .design.uncertainty import PRODUCTS
    if "product" in u and u["product"] not in PRODUCTS and "sigma_m" not in u:
        close = difflib.get_close_matches(u["product"], PRODUCTS, n=1)
        problems.add("uncertainty.product", f"unknown DEM product {u['product']!r}"
                     + (f"; did you mean {close[0]!r}?" if close else "")
                     + f" (known: {', '.join(PRODUCTS)}; or give sigma_m)")
    _positive(problems, "uncertainty.sigma_m", u.get("sigma_m"), allow_zero=True)
    _positive(problems, "uncertainty.correlation_m", u.get("correlation_m"))
    if not 10 <= u.get("realisations", 1000) <= 100_000:
        problems.add("uncertainty.realisations", f"must be 10 to 100,000, got {u['realisations']}")
    return UncertaintySpec(enabled=u.get("enabled", True), product=u.get("product"),
                           sigma_m=u.get("sigma_m"), correlation_m=u.get("correlation_m"),
                           realisations=int(u.get("realisations", 1000)),
                           seed=int(u.get("seed", 0)))


def _survey_points(items: list[dict[str, Any]], problems: _Problems) -> list[SurveyPoint]:
    """The [[survey_points]] tables: surveyed ground levels [m] by chainage or location."""
    survey_points = []
    for i, sp in enumerate(items, start=1):
        key = f"survey_points[{i}]"
        if ("chainage_m" in sp) == ("location" in sp):
            problems.add(key, "give exactly one of chainage_m or location = [lon, lat]")
        loc = sp.get("location")
        if loc is not None and (len(loc) != 2 or not all(isinstance(v, _NUM) for v in loc)):
            problems.add(f"{key}.location", f"expected [longitude, latitude], got {loc!r}")
            loc = None
        survey_points.append(SurveyPoint(name=sp.get("name", f"survey point {i}"),
                                         elevation_m=float(sp.get("elevation_m", 0.0)),
                                         chainage_m=sp.get("chainage_m"),
                                         location=tuple(loc) if loc else None,
                                         link=sp.get("link")))
    return survey_points


#: Keys of each demand kind: key -> (required, default).
DEMAND_KEYS: dict[str, dict[str, tuple[bool, float | None]]] = {
    "domestic": {"population": (True, None), "per_capita_lpd": (True, None),
                 "peak_factor": (False, 3.0), "growth_rate": (False, 0.0),
                 "horizon_years": (False, 0.0)},
    "taps": {"taps": (True, None), "tap_flow_lpm": (False, 7.5), "use_factor": (False, 1.0)},
    "school": {"pupils": (True, None), "litres_per_day": (False, 5.0), "hours": (False, 8.0)},
    "clinic": {"beds": (True, None), "litres_per_day": (False, 50.0), "hours": (False, 12.0)},
    "irrigation": {"area_ha": (True, None), "crop_water_mm_per_day": (True, None),
                   "efficiency": (True, None), "hours_per_day": (True, None)},
}


def _demand(d: dict, key: str, problems: _Problems):
    """Design flow [m3/s], its basis in words and the daily volume [m3] of a demand table."""
    from .design import demand as dm

    kind = d.get("kind")
    if kind not in DEMAND_KEYS:
        problems.add(f"{key}.kind", f"expected one of {', '.join(DEMAND_KEYS)}, got {kind!r}")
        return 0.0, "", None
    spec = DEMAND_KEYS[kind]
    vals = {}
    for k, v in d.items():
        if k == "kind":
            continue
        if k not in spec:
            problems.add(f"{key}.{k}", f"unknown key for kind {kind!r}; known: {', '.join(spec)}")
        elif isinstance(v, bool) or not isinstance(v, _NUM):
            problems.add(f"{key}.{k}", f"expected a number, got {v!r}")
        else:
            vals[k] = float(v)
    for k, (required, default) in spec.items():
        if k not in vals:
            if required:
                problems.add(f"{key}.{k}", "missing (required)")
                return 0.0, "", None
            assert default is not None, k        # DEMAND_KEYS: every optional key has one
            vals[k] = default
    try:
        if kind == "domestic":
            q = dm.domestic_flow(vals["population"], vals["per_capita_lpd"],
                                 peak_factor=vals["peak_factor"], growth_rate=vals["growth_rate"],
                                 horizon_years=vals["horizon_years"])
            people = dm.future_population(vals["population"], vals["growth_rate"],
                                          vals["horizon_years"])
            volume = people * vals["per_capita_lpd"] * 1e-3
            basis = (f"{people:,.0f} people in {vals['horizon_years']:g} years x "
                     f"{vals['per_capita_lpd']:g} L/day x peak factor {vals['peak_factor']:g}")
        elif kind == "taps":
            q = dm.tap_stand_flow(int(vals["taps"]), tap_flow=vals["tap_flow_lpm"] * 1e-3 / 60,
                                  use_factor=vals["use_factor"])
            volume = None
            basis = (f"{vals['taps']:g} taps x {vals['tap_flow_lpm']:g} L/min x use factor "
                     f"{vals['use_factor']:g}")
        elif kind in ("school", "clinic"):
            count = vals["pupils" if kind == "school" else "beds"]
            q = dm.institution_flow(count, vals["litres_per_day"], hours=vals["hours"])
            volume = count * vals["litres_per_day"] * 1e-3
            basis = (f"{count:g} {'pupils' if kind == 'school' else 'beds'} x "
                     f"{vals['litres_per_day']:g} L/day over {vals['hours']:g} h")
        else:
            q = dm.irrigation_flow(vals["area_ha"], vals["crop_water_mm_per_day"],
                                   efficiency=vals["efficiency"], hours_per_day=vals["hours_per_day"])
            volume = q * vals["hours_per_day"] * 3600.0
            basis = (f"{vals['area_ha']:g} ha x {vals['crop_water_mm_per_day']:g} mm/day / "
                     f"efficiency {vals['efficiency']:g} over {vals['hours_per_day']:g} h/day")
    except InputError as exc:
        problems.add(key, str(exc))
        return 0.0, "", None
    if not q > 0:
        problems.add(key, "gives no flow")
    return q, basis, volume


def _design(d: dict, problems: _Problems) -> Design:
    cats = d.get("catalogues", ["pe100"])
    if not cats or not all(isinstance(c, str) for c in cats):
        problems.add("design.catalogues", "expected a list of catalogue names or CSV paths, "
                     "e.g. [\"pe100\", \"pvc-u\"]")
        cats = ["pe100"]
    mats = d.get("materials")
    if mats is not None and not all(isinstance(m, str) for m in mats):
        problems.add("design.materials", "expected a list of material names, e.g. [\"PE100\"]")
        mats = None
    zones = []
    for i, z in enumerate(d.get("no_tank_zones", []), start=1):
        if (not isinstance(z, list) or len(z) != 2 or not all(isinstance(v, _NUM) and not
                                                             isinstance(v, bool) for v in z)
                or z[0] >= z[1]):
            problems.add(f"design.no_tank_zones[{i}]", f"expected [from_chainage_m, "
                         f"to_chainage_m] with from < to, got {z!r}")
            continue
        zones.append((float(z[0]), float(z[1])))
    for key in ("min_size_mm", "max_size_mm"):
        _looks_like_metres(f"design.{key}", d.get(key))
    for key in ("min_size_mm", "max_size_mm", "max_static_pressure_m", "split_spacing_m"):
        _positive(problems, f"design.{key}", d.get(key))
    _positive(problems, "design.tank_water_depth_m", d.get("tank_water_depth_m"), allow_zero=True)
    if d.get("min_size_mm") and d.get("max_size_mm") and d["min_size_mm"] > d["max_size_mm"]:
        problems.add("design.min_size_mm", "must not be above max_size_mm")
    return Design(catalogues=tuple(cats), materials=tuple(mats) if mats else None,
                  min_size_mm=d.get("min_size_mm"), max_size_mm=d.get("max_size_mm"),
                  one_size_per_reach=bool(d.get("one_size_per_reach", False)),
                  auto_tanks=bool(d.get("auto_tanks", True)),
                  max_static_pressure_m=d.get("max_static_pressure_m"),
                  tank_water_depth_m=float(d.get("tank_water_depth_m", 1.0)),
                  no_tank_zones=tuple(zones),
                  split_spacing_m=d.get("split_spacing_m", 50.0),
                  whole_pieces=bool(d.get("whole_pieces", True)))
