"""Reading the scenario file: every problem found at once, each with its key.

Types, finite numbers, ranges, unknown and missing keys, and the conversion to SI come
from the key table (:mod:`planner.scenario.keys`); the rules that tie several keys
together (exactly one of two keys, one limit below another, a DEM for a route without
levels) are here, one function per section.
"""

from __future__ import annotations

import difflib
import tomllib
import warnings
from pathlib import Path
from typing import Any

from ..catalogue.pipes import BUILTIN
from ..design import demand as dm
from ..design.uncertainty import PRODUCTS
from ..errors import InputError, InputFileError, UnitWarning
from ..inputs import read_text
from .keys import ARRAYS, DEMAND_KEYS, DEMAND_RANGES, NUM, REQUIRED_SECTIONS, SECTIONS, Key, fields
from .model import (Criteria, Design, Drawing, Fitting, Outlet, Pipe, Project, RouteSpec,
                    Scenario, Source, SurveyPoint, Tank, Terrain, UncertaintySpec)

#: Outlet flows above this are warned about as likely unit mistakes [L/s] (common
#: practice: rural gravity supply and irrigation mains carry 0.1 to some tens of L/s).
LARGE_FLOW_LPS = 200.0
#: Pipe diameters below this are warned about as likely metres [mm] (common practice:
#: no water-supply pipe is that small; ISO 4427-2 starts at 16 mm OD, from memory).
SMALL_DIAMETER_MM = 10.0


def _large_flow(key: str, value, stacklevel: int = 3) -> None:
    """Warn about an outlet flow [L/s] that looks like another unit."""
    if isinstance(value, NUM) and not isinstance(value, bool) and value > LARGE_FLOW_LPS:
        warnings.warn(f"{key} = {value:,.0f} L/s is very large for a gravity line (more than "
                      f"{LARGE_FLOW_LPS:g} L/s); check the units: flow_lps is in litres per "
                      f"second (1 m3/h = 0.278 L/s, 1 m3/s = 1,000 L/s)", UnitWarning,
                      stacklevel=stacklevel)


def _looks_like_metres(key: str, value, stacklevel: int = 3) -> None:
    """Warn about a diameter [mm] so small it was probably given in metres."""
    if isinstance(value, NUM) and not isinstance(value, bool) and 0 < value < SMALL_DIAMETER_MM:
        warnings.warn(f"{key} = {value:g} mm is smaller than any catalogue pipe; was it given in "
                      f"metres? ({value:g} m = {value * 1000:g} mm)", UnitWarning,
                      stacklevel=stacklevel)


class _Problems(list):
    """The problems found, each as "key: what is wrong"."""

    def add(self, key: str, message: str) -> None:
        """Record a problem with a key."""
        self.append(f"{key}: {message}")


def _type_name(t) -> str:
    if t == NUM:
        return "a number"
    if isinstance(t, tuple):
        return " or ".join(_type_name(x) for x in t)
    return {str: "a text string", list: "a list", bool: "true or false", int: "an integer",
            dict: "a table"}.get(t, t.__name__)


def _check_table(table: dict, keys: tuple[Key, ...], prefix: str, problems: _Problems) -> dict:
    """The keys of one table that are known, of the right type and in range."""
    schema = {k.name: k for k in keys}
    out = {}
    for name, value in table.items():
        if name not in schema:
            close = difflib.get_close_matches(name, schema, n=1)
            hint = f"; did you mean {close[0]!r}?" if close else \
                f"; known keys: {', '.join(sorted(schema))}"
            problems.add(f"{prefix}.{name}", f"unknown key{hint}")
            continue
        k = schema[name]
        typ = k.kind
        ok = isinstance(value, typ) and not (isinstance(value, bool) and typ is not bool)
        if typ is int and isinstance(value, float) and value.is_integer():
            ok, value = True, int(value)
        if not ok:
            problems.add(f"{prefix}.{name}", f"expected {_type_name(typ)}, got {value!r}")
            continue
        wrong = k.check(value)
        if wrong:                    # reported; kept, so that no second message follows
            problems.add(f"{prefix}.{name}", wrong)
        out[name] = value
    for k in keys:
        if k.required and k.name not in table:
            problems.add(f"{prefix}.{k.name}", "missing (required)")
    return out


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
    text = read_text(p, "scenario file")
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputFileError(f"{p}: not valid TOML ({exc})") from None
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
    design = _design(sec["design"], base, problems) if "design" in data else None
    _pipe_or_design("pipe" in data, "design" in data, problems)
    outlets = _outlets(arrays["outlets"], "outlets" in data, problems)
    tanks = _tanks(arrays["break_pressure_tanks"], route.network, problems)
    fittings = [Fitting(**{"name": f"fitting {i}", **fields("fittings", f)})
                for i, f in enumerate(arrays["fittings"], start=1)]
    if route.network:
        _network_links(arrays, problems)
    drawing = Drawing(**fields("drawing", sec["drawing"]))
    uncertainty = _uncertainty(sec["uncertainty"], problems)
    survey_points = _survey_points(arrays["survey_points"], problems)
    if problems:
        listing = "\n  - ".join(problems)
        raise InputError(f"{path}: {len(problems)} problem(s) in the scenario:\n  - {listing}")
    return Scenario(
        path=path, project=Project(**fields("project", sec["project"])),
        terrain=terrain, route=route, source=source, pipe=pipe, outlets=tuple(outlets),
        tanks=tuple(tanks), fittings=tuple(fittings), criteria=criteria, design=design,
        drawing=drawing, uncertainty=uncertainty, survey_points=tuple(survey_points))


def _sections(data: dict[str, Any], problems: _Problems
              ) -> tuple[dict[str, dict[str, Any]], dict[str, list[dict[str, Any]]]]:
    """The checked tables of every section and array of tables (empty where not given)."""
    known = set(SECTIONS) | set(ARRAYS)
    for key in data:
        if key not in known:
            close = difflib.get_close_matches(key, known, n=1)
            hint = f"; did you mean [{close[0]}]?" if close else ""
            problems.add(key, f"unknown section{hint}")
    for name in REQUIRED_SECTIONS:
        if name not in data:
            problems.add(name, "missing section (required)")
    sec = {}
    for name, keys in SECTIONS.items():
        table = data.get(name, {})
        if not isinstance(table, dict):
            problems.add(name, "must be a table ([" + name + "])")
            table = {}
        sec[name] = _check_table(table, keys, name, problems) if name in data else {}
    arrays = {}
    for name, keys in ARRAYS.items():
        items = data.get(name, [])
        if not isinstance(items, list) or not all(isinstance(i, dict) for i in items):
            problems.add(name, f"must be an array of tables ([[{name}]])")
            items = []
        arrays[name] = [_check_table(item, keys, f"{name}[{i + 1}]", problems)
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
    return Terrain(**{**fields("terrain", t), "dem": tuple(base / d for d in dems)})


def _route(r: dict[str, Any], base: Path, terrain: Terrain | None,
           problems: _Problems) -> RouteSpec:
    """The [route] section, its file relative to ``base``; a non-CSV route needs a DEM."""
    route = RouteSpec(**{**fields("route", r), "file": base / r.get("file", "")})
    if "file" in r and not route.file.suffix.lower() == ".csv" and terrain is None:
        problems.add("terrain.dem", f"needed for the route {r['file']!r}: only a CSV survey "
                     "carries its own elevations")
    if route.crs:
        from pyproj import CRS
        from pyproj.exceptions import CRSError
        try:
            CRS.from_user_input(route.crs)
        except CRSError:
            problems.add("route.crs", f"{route.crs!r} is not a coordinate reference system "
                         "pyproj knows; give an EPSG code such as \"EPSG:32737\"")
    return route


def _location(value, key: str, problems: _Problems) -> tuple[float, float] | None:
    """A [lon, lat] pair, or None with a problem recorded."""
    if value is None:
        return None
    ok = len(value) == 2 and all(isinstance(v, NUM) and not isinstance(v, bool) for v in value)
    if ok and -180 <= value[0] <= 180 and -90 <= value[1] <= 90:
        return (float(value[0]), float(value[1]))
    problems.add(f"{key}.location", f"expected [longitude, latitude], got {value!r}")
    return None


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
    values = fields("source", s)
    values["location"] = _location(s.get("location"), "source", problems)
    return Source(**values)


def _criteria(c: dict[str, Any], problems: _Problems) -> Criteria:
    """The [criteria] section; each number checked against its range by the key table."""
    criteria = Criteria(**fields("criteria", c))
    if criteria.velocity_min_mps >= criteria.velocity_max_mps:
        problems.add("criteria.velocity_min_mps", "must be below velocity_max_mps")
    return criteria


def _pipe(pp: dict[str, Any], given: bool, criteria: Criteria, problems: _Problems) -> Pipe | None:
    """The [pipe] section in SI units (``given``: whether the file has one), else None."""
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
    if not given or "inside_diameter_mm" not in pp or "pressure_rating_bar" not in pp:
        return None
    return Pipe(**{"material": "", **fields("pipe", pp)})


def _pipe_or_design(pipe: bool, design: bool, problems: _Problems) -> None:
    """Check that the file has exactly one of [pipe] and [design]."""
    if pipe and design:
        problems.add("design", "give either [pipe] (check one given pipe) or [design] (let the "
                     "tool choose sizes and classes), not both")
    if not pipe and not design:
        problems.add("design", "missing: add [design] (catalogues to choose from) or [pipe] "
                     "(one given pipe)")


def _place(item: dict[str, Any], key: str, problems: _Problems) -> tuple[float, float] | None:
    """Check an item given by exactly one of chainage and location; its location."""
    if ("chainage_m" in item) == ("location" in item):
        problems.add(key, "give exactly one of chainage_m or location = [lon, lat]")
    return _location(item.get("location"), key, problems)


def _outlets(items: list[dict[str, Any]], given: bool, problems: _Problems) -> list[Outlet]:
    """The [[outlets]] tables (``given``: whether the file has any), flows in m3/s."""
    outlets = []
    for i, o in enumerate(items, start=1):
        key = f"outlets[{i}]"
        loc = _place(o, key, problems)
        _large_flow(f"{key}.flow_lps", o.get("flow_lps"), stacklevel=4)
        values = {"name": f"outlet {i}", "flow_m3s": 0.0, **fields("outlets", o),
                  "location": loc}
        values.pop("demand", None)
        if ("flow_lps" in o) == ("demand" in o):
            problems.add(key, "give exactly one of flow_lps or demand = {...}")
        elif "demand" in o:
            values["flow_m3s"], values["basis"], values["daily_volume_m3"] = _demand(
                o["demand"], f"{key}.demand", problems)
        outlet = Outlet(**values)
        if outlet.max_pressure_m is not None and outlet.max_pressure_m <= outlet.min_pressure_m:
            problems.add(f"{key}.max_pressure_m", "must be above min_pressure_m")
        outlets.append(outlet)
    if given and not outlets:
        problems.add("outlets", "at least one outlet is needed")
    if not given:
        problems.add("outlets", "missing: add at least one [[outlets]] table")
    return outlets


def _tanks(items: list[dict[str, Any]], network: bool, problems: _Problems) -> list[Tank]:
    """The [[break_pressure_tanks]] tables; on a single line, in increasing chainage."""
    tanks = [Tank(**{"name": f"break-pressure tank {i}", "chainage_m": 0.0,
                     **fields("break_pressure_tanks", tk)})
             for i, tk in enumerate(items, start=1)]
    chain = [tk.chainage_m for tk in tanks]
    if not network and (chain != sorted(chain) or len(set(chain)) != len(chain)):
        problems.add("break_pressure_tanks", "list the tanks in increasing chainage, one per place")
    return tanks


def _network_links(arrays: dict[str, list[dict[str, Any]]], problems: _Problems) -> None:
    """Check that on a network every item placed by chainage names its link."""
    for what, items in (("break_pressure_tanks", arrays["break_pressure_tanks"]),
                        ("fittings", arrays["fittings"]), ("outlets", arrays["outlets"]),
                        ("survey_points", arrays["survey_points"])):
        for i, item in enumerate(items, start=1):
            if "chainage_m" in item and "link" not in item:
                problems.add(f"{what}[{i}]", "on a network, a chainage needs the link "
                             "(the name of the drawn line) it is along")


def _uncertainty(u: dict[str, Any], problems: _Problems) -> UncertaintySpec:
    """The [uncertainty] section: DEM product or error [m], correlation length [m], size."""
    if "product" in u and u["product"] not in PRODUCTS and "sigma_m" not in u:
        close = difflib.get_close_matches(u["product"], PRODUCTS, n=1)
        problems.add("uncertainty.product", f"unknown DEM product {u['product']!r}"
                     + (f"; did you mean {close[0]!r}?" if close else "")
                     + f" (known: {', '.join(PRODUCTS)}; or give sigma_m)")
    return UncertaintySpec(**fields("uncertainty", u))


def _survey_points(items: list[dict[str, Any]], problems: _Problems) -> list[SurveyPoint]:
    """The [[survey_points]] tables: surveyed ground levels [m] by chainage or location."""
    out = []
    for i, sp in enumerate(items, start=1):
        key = f"survey_points[{i}]"
        loc = _place(sp, key, problems)
        out.append(SurveyPoint(**{"name": f"survey point {i}", "elevation_m": 0.0,
                                  **fields("survey_points", sp), "location": loc}))
    return out


def _demand_values(d: dict, key: str, problems: _Problems) -> tuple[str, dict] | None:
    """The kind and the numbers of a demand table, defaults filled; None if unusable."""
    kind = d.get("kind")
    if kind not in DEMAND_KEYS:
        problems.add(f"{key}.kind", f"expected one of {', '.join(DEMAND_KEYS)}, got {kind!r}")
        return None
    spec = DEMAND_KEYS[kind]
    vals = {}
    for k, v in d.items():
        if k == "kind":
            continue
        if k not in spec:
            problems.add(f"{key}.{k}", f"unknown key for kind {kind!r}; known: {', '.join(spec)}")
        elif isinstance(v, bool) or not isinstance(v, NUM) or not v == v or abs(v) == float("inf"):
            problems.add(f"{key}.{k}", f"expected a finite number, got {v!r}")
        elif k in DEMAND_RANGES and not DEMAND_RANGES[k][0] <= v <= DEMAND_RANGES[k][1]:
            lo, hi = DEMAND_RANGES[k]
            problems.add(f"{key}.{k}", f"expected {lo:g} to {hi:g}, got {v!r}")
        else:
            vals[k] = float(v)
    for k, (required, dflt) in spec.items():
        if k not in vals:
            if required:
                problems.add(f"{key}.{k}", "missing (required)")
                return None
            assert dflt is not None, k        # DEMAND_KEYS: every optional key has one
            vals[k] = dflt
    return kind, vals


def _demand(d: dict, key: str, problems: _Problems):
    """Design flow [m3/s], its basis in words and the daily volume [m3] of a demand table."""
    got = _demand_values(d, key, problems)
    if got is None:
        return 0.0, "", None
    kind, vals = got
    try:
        q, basis, volume = dm.from_table(kind, vals)
    except InputError as exc:
        problems.add(key, str(exc))
        return 0.0, "", None
    if not q > 0:
        problems.add(key, "gives no flow")
    return q, basis, volume


def _is_path(name: str) -> bool:
    """Whether a catalogue entry names a file (a .csv, or a path) rather than a built-in."""
    return name.lower().endswith(".csv") or "/" in name or "\\" in name


def _design(d: dict, base: Path, problems: _Problems) -> Design:
    """The [design] section: catalogues, size range [m], tank and sizing rules.

    A catalogue given as a file (a .csv, or a path) is read relative to ``base`` (the
    scenario's folder), as every other path in the file; other names are built-in
    catalogues (an unknown one gets a suggestion when it is loaded).
    """
    values = fields("design", d)
    cats = values["catalogues"]
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
        if (not isinstance(z, list) or len(z) != 2 or not all(isinstance(v, NUM) and not
                                                             isinstance(v, bool) for v in z)
                or not z[0] < z[1]):
            problems.add(f"design.no_tank_zones[{i}]", f"expected [from_chainage_m, "
                         f"to_chainage_m] with from < to, got {z!r}")
            continue
        zones.append((float(z[0]), float(z[1])))
    for key in ("min_size_mm", "max_size_mm"):
        _looks_like_metres(f"design.{key}", d.get(key))
    if d.get("min_size_mm") and d.get("max_size_mm") and d["min_size_mm"] > d["max_size_mm"]:
        problems.add("design.min_size_mm", "must not be above max_size_mm")
    cats = [str(base / c) if c.lower() not in BUILTIN and _is_path(c) else c for c in cats]
    values.update(catalogues=tuple(cats), materials=tuple(mats) if mats else None,
                  no_tank_zones=tuple(zones))
    return Design(**values)
