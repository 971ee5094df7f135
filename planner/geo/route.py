"""Read a pipeline route: GeoJSON, KML, GPX (tracks and routes) or a CSV survey.

Vector formats are read with pyogrio (GDAL/OGR) and returned as one shapely
LineString in WGS84 longitude/latitude; a CSV survey (chainage and elevation measured
on foot, optionally with x and y) is returned as a :class:`Survey` and needs no DEM.
This module only reads; sampling a DEM along the route is in ``terrain`` and
``profile``.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import shapely
from numpy.typing import NDArray
from pyproj import CRS, Transformer
from pyproj.exceptions import CRSError
from shapely.geometry import LineString, MultiLineString, Point

from ..errors import InputError, InputFileError, TerrainWarning
from ..inputs import regular_file

WGS84 = CRS.from_epsg(4326)
VECTOR_SUFFIXES = {".geojson": "GeoJSON", ".json": "GeoJSON", ".kml": "KML", ".gpx": "GPX"}
SURVEY_SUFFIXES = {".csv": "CSV survey"}

#: Ground levels a survey may give [m]: below the lowest dry land (the Dead Sea shore,
#: about -430 m) and above the highest summit (8,849 m); anything outside is a unit or
#: typing mistake.
ELEVATION_RANGE_M = (-500.0, 9000.0)

#: Accepted CSV column names (lower case) for each survey quantity.
SURVEY_COLUMNS = {
    "chainage_m": ("chainage_m", "chainage", "distance_m", "distance"),
    "elevation_m": ("elevation_m", "elevation", "ground_m", "ground", "z"),
    "x": ("x", "easting", "lon", "longitude"),
    "y": ("y", "northing", "lat", "latitude"),
}


@dataclass(frozen=True)
class Route:
    """A route as drawn or walked: one line in WGS84 lon/lat.

    Attributes
    ----------
    line : shapely.LineString
        Vertices as (longitude, latitude) [degrees].
    source : str
        Where it came from (file name), for messages and reports.
    gps_elevation_m : ndarray or None
        Elevations stored with the vertices (GPX ``ele``) [m], else None.
    """

    line: LineString
    source: str = "<memory>"
    gps_elevation_m: NDArray[np.float64] | None = None


@dataclass(frozen=True)
class Survey:
    """A line surveyed on foot: chainage and ground elevation, no DEM needed.

    Attributes
    ----------
    chainage_m : ndarray
        Horizontal distance from the start [m], increasing.
    elevation_m : ndarray
        Ground elevation [m].
    x, y : ndarray or None
        Coordinates in ``crs`` when the survey has them.
    crs : pyproj.CRS or None
        CRS of x and y.
    source : str
        File name.
    """

    chainage_m: NDArray[np.float64]
    elevation_m: NDArray[np.float64]
    x: NDArray[np.float64] | None
    y: NDArray[np.float64] | None
    crs: CRS | None
    source: str


def route_from_line(line: LineString, source: str = "<memory>", *,
                    gps_elevation_m: NDArray | None = None) -> Route:
    """Check a lon/lat LineString and wrap it as a :class:`Route`.

    Removes repeated consecutive vertices, thins a line of very many
    (:func:`thin_vertices`), and rejects lines with fewer than two distinct points or
    coordinates outside longitude -180..180, latitude -90..90.  ``gps_elevation_m``
    (one per vertex [m]) follows the vertices kept.
    """
    if not isinstance(line, LineString):
        raise InputError(f"{source}: a route must be a LineString, got {line.geom_type}")
    xy = np.asarray(line.coords, dtype=float)[:, :2]
    _check_lonlat(xy, source)
    keep = np.ones(len(xy), dtype=bool)
    keep[1:] = np.any(np.diff(xy, axis=0) != 0, axis=1)
    xy = xy[keep]
    if len(xy) < 2:
        raise InputError(f"{source}: the route has fewer than two distinct points; "
                         "draw or record at least a start and an end")
    index = thin_vertices(xy, source)
    heights = None if gps_elevation_m is None else np.asarray(gps_elevation_m, float)[keep][index]
    return Route(line=LineString(xy[index]), source=source, gps_elevation_m=heights)


#: Most vertices a route line may have [-]: a vertex every metre over 100 km.  Above
#: it the line is thinned (:func:`thin_vertices`); what is still above is refused, so
#: that a plan's memory and time stay bounded (see benchmarks/README.md).
MAX_ROUTE_VERTICES = 100_000

#: Largest distance a thinned line may move from the route as given [m]: far below a
#: DEM cell and a GPS fix's error, so the profile does not change in any way that
#: matters.  A choice of ours.
THIN_TOLERANCE_M = 0.1


#: Vertices simplified at a time [-]: GEOS's Douglas-Peucker recurses once per kept
#: vertex and overflows an 8 MB stack near 100,000 of them (measured here with shapely
#: 2.2 / GEOS 3.14: a segmentation fault), so long lines go in pieces that share ends.
THIN_PIECE = 10_000


def thin_vertices(xy: NDArray, source: str) -> NDArray[np.int64]:
    """Indices of the lon/lat vertices ``xy`` a route keeps (all, up to the limit).

    A line of more than :data:`MAX_ROUTE_VERTICES` is simplified by Douglas-Peucker
    (shapely's ``simplify``; Douglas & Peucker 1973) within
    :data:`THIN_TOLERANCE_M`, in pieces of :data:`THIN_PIECE` vertices, with a warning;
    if it still has too many vertices it is refused at once, naming the limit.  The
    tolerance is turned into degrees with the length of a degree of latitude
    (110.6 km), which is at most that of longitude, so no vertex moves further than the
    tolerance in metres.
    """
    n = len(xy)
    if n <= MAX_ROUTE_VERTICES:
        return np.arange(n)
    tol = THIN_TOLERANCE_M / 110_574.0
    parts = [np.array([0])]
    for a in range(0, n - 1, THIN_PIECE):
        b = min(a + THIN_PIECE, n - 1)
        piece = xy[a:b + 1]
        kept = np.asarray(shapely.simplify(LineString(piece), tol,
                                           preserve_topology=False).coords)[:, :2]
        parts.append(a + _positions(piece, kept)[1:])
    index = np.concatenate(parts)
    if len(index) > MAX_ROUTE_VERTICES:
        raise InputError(
            f"{source}: the route has {n:,} vertices, {len(index):,} after dropping those "
            f"within {THIN_TOLERANCE_M:g} m of the line; at most {MAX_ROUTE_VERTICES:,} are "
            "accepted; simplify it in a GIS (a vertex every few metres is plenty) or split it")
    warnings.warn(f"{source}: the route's {n:,} vertices thinned to {len(index):,} (those within "
                  f"{THIN_TOLERANCE_M:g} m of the line dropped; more than {MAX_ROUTE_VERTICES:,} "
                  "would make the plan slow)", TerrainWarning, stacklevel=3)
    return index


def _positions(xy: NDArray, kept: NDArray) -> NDArray[np.int64]:
    """Where the rows of ``kept``, a subsequence of ``xy``, stand in ``xy``."""
    same = np.flatnonzero(np.isin(xy[:, 0], kept[:, 0]) & np.isin(xy[:, 1], kept[:, 1]))
    index = np.empty(len(kept), dtype=np.int64)
    j = 0
    for k, (lon, lat) in enumerate(kept):      # candidates only: a short walk
        while xy[same[j], 0] != lon or xy[same[j], 1] != lat:
            j += 1
        index[k] = same[j]
        j += 1
    return index


def _check_lonlat(xy: NDArray, source: str) -> None:
    if xy.size == 0 or not np.all(np.isfinite(xy)):
        bad = int(np.argmax(~np.all(np.isfinite(xy), axis=1))) if xy.size else 0
        raise InputError(f"{source}: vertex {bad + 1} has a missing or non-numeric coordinate; "
                         "fix or delete that vertex")
    outside = np.flatnonzero((np.abs(xy[:, 0]) > 180) | (np.abs(xy[:, 1]) > 90))
    if outside.size:
        i = int(outside[0])
        raise InputError(
            f"{source}: vertex {i + 1} ({xy[i, 0]:g}, {xy[i, 1]:g}) is not a longitude/"
            "latitude; the file must be in WGS84 degrees (GeoJSON, KML and GPX always are)")


def read_route(path: str | Path, *, crs: str | None = None) -> Route | Survey:
    """Read a route or survey file.

    Parameters
    ----------
    path : str or Path
        ``.geojson``/``.json``, ``.kml``, ``.gpx`` or ``.csv``.
    crs : str, optional
        CRS of a CSV survey's x/y columns (e.g. ``"EPSG:32737"``).

    Returns
    -------
    Route or Survey
    """
    p = Path(path)
    suffix = p.suffix.lower()
    regular_file(p, "route file")
    if suffix in SURVEY_SUFFIXES:
        return read_survey(p, crs=crs)
    if suffix not in VECTOR_SUFFIXES:
        known = ", ".join(sorted(set(VECTOR_SUFFIXES) | set(SURVEY_SUFFIXES)))
        raise InputFileError(f"{p}: unknown route format {suffix!r}; use one of {known}")
    return _read_vector(p, VECTOR_SUFFIXES[suffix])


def _read_vector(p: Path, kind: str) -> Route:
    """The one route line of a GeoJSON, KML or GPX file (``kind``), in lon/lat."""
    import pyogrio

    try:
        available = [str(name) for name, _ in pyogrio.list_layers(p)]
    except Exception as exc:  # pyogrio raises several GDAL-derived types
        raise InputFileError(f"{p}: cannot read this {kind} file ({exc})") from None
    layers: list[str] = [name for name in ("tracks", "routes") if name in available] \
        if kind == "GPX" else available
    geoms, file_crs, used = _read_layers(p, kind, layers)
    elevations = None
    if kind == "GPX" and geoms:
        elevations = _gpx_elevations(p, used)
    if not geoms:
        raise InputFileError(f"{p}: the {kind} file holds no line geometry; a route is a line "
                             "(a track or route in GPX, a LineString in GeoJSON or KML), not "
                             "only points")
    lines = _line_parts(geoms)
    if not lines:
        kinds = sorted({g.geom_type for g in geoms})
        raise InputFileError(f"{p}: no LineString in the file (found {', '.join(kinds)}); "
                             "a route is a line from the source to the last outlet")
    merged = _join(lines)
    if merged.geom_type != "LineString":
        n = len(merged.geoms)
        ends = "; ".join(f"part {i + 1} starts at ({part.coords[0][0]:.6f}, {part.coords[0][1]:.6f})"
                         for i, part in enumerate(merged.geoms))
        raise InputFileError(
            f"{p}: the file holds {n} lines that do not join end to end into one route "
            f"({ends}); join them, or keep one line per file for a single gravity line")
    if file_crs is not None and not CRS.from_user_input(file_crs).equals(WGS84):
        tr = Transformer.from_crs(file_crs, WGS84, always_xy=True)
        xy = np.asarray(merged.coords)[:, :2]
        lon, lat = tr.transform(xy[:, 0], xy[:, 1])
        merged = LineString(np.column_stack([lon, lat]))
    xy = np.asarray(merged.coords)[:, :2]
    if elevations is not None and len(elevations) != len(xy):
        elevations = None
    return route_from_line(LineString(xy), source=str(p), gps_elevation_m=elevations)


def _read_layers(p: Path, kind: str, layers: list[str]) -> tuple[list, CRS | None, str | None]:
    """The non-empty geometries of the layers, the first such layer's CRS and its name.

    A GPX file gives those of its first layer (tracks, else routes) that has any.
    """
    import pyogrio

    geoms: list = []
    file_crs: CRS | None = None
    used: str | None = None
    for layer in layers:
        try:
            frame = pyogrio.read_dataframe(p, layer=layer)
        except Exception as exc:
            if "point array must contain" in str(exc):
                raise InputFileError(f"{p}: a line has fewer than two distinct points; draw or "
                                     "record at least a start and an end") from None
            raise InputFileError(f"{p}: cannot read layer {layer!r} ({exc})") from None
        parts = [g for g in frame.geometry if g is not None and not g.is_empty]
        if parts:
            geoms.extend(parts)
            file_crs = file_crs or frame.crs
            used = used or layer
            if kind == "GPX":
                break
    return geoms, file_crs, used


def _line_parts(geoms: list) -> list:
    """The LineStrings and MultiLineStrings among ``geoms``, also inside collections."""
    lines = []
    for g in geoms:
        if g.geom_type in ("LineString", "MultiLineString"):
            lines.append(g)
        elif g.geom_type == "GeometryCollection":
            lines.extend(x for x in g.geoms if x.geom_type in ("LineString", "MultiLineString"))
    return lines


def _join(lines: list) -> LineString | MultiLineString:
    """Join line parts end to end into one line, keeping the direction they were drawn in.

    The route runs from the source, so the joined line starts where the first part
    starts; parts drawn against that direction are turned round.
    """
    parts: list[LineString] = []
    for g in lines:
        parts.extend(g.geoms if g.geom_type == "MultiLineString" else [g])
    if len(parts) == 1:
        return parts[0]
    multi = MultiLineString(parts)
    merged = shapely.line_merge(multi, directed=True)
    if merged.geom_type != "LineString":
        merged = shapely.line_merge(multi)
    if merged.geom_type == "LineString":
        start = Point(parts[0].coords[0])
        if Point(merged.coords[-1]).distance(start) < Point(merged.coords[0]).distance(start):
            merged = shapely.reverse(merged)
    return merged


def _gpx_elevations(p: Path, layer: str | None) -> NDArray | None:
    """Elevations of GPX track or route points, where every point has one."""
    import pyogrio

    points_layer = "track_points" if layer == "tracks" else "route_points"
    try:
        frame = pyogrio.read_dataframe(p, layer=points_layer, read_geometry=False, columns=["ele"])
    except Exception:
        return None
    ele = np.asarray(frame["ele"], dtype=float) if "ele" in frame else None
    if ele is None or ele.size == 0 or not np.all(np.isfinite(ele)):
        return None
    return ele


def read_survey(path: str | Path, *, crs: str | None = None) -> Survey:
    """Read a CSV survey: chainage and elevation, optionally x and y.

    Column names are matched case-insensitively against :data:`SURVEY_COLUMNS`
    (``chainage_m``/``chainage``, ``elevation_m``/``elevation``/``ground_m``, ``x``,
    ``y``); other columns are ignored.
    """
    import pandas as pd

    p = Path(path)
    try:
        frame = pd.read_csv(p, comment="#", skipinitialspace=True)
    except Exception as exc:
        raise InputFileError(f"{p}: cannot read this CSV survey ({exc})") from None
    columns = {c.strip().lower(): c for c in frame.columns}
    found = {}
    for key, names in SURVEY_COLUMNS.items():
        for name in names:
            if name in columns:
                found[key] = columns[name]
                break
    missing = [k for k in ("chainage_m", "elevation_m") if k not in found]
    if missing:
        raise InputFileError(
            f"{p}: the survey needs columns {', '.join(missing)} "
            f"(found: {', '.join(map(str, frame.columns)) or 'none'})")

    def column(key: str) -> NDArray:
        values = pd.to_numeric(frame[found[key]], errors="coerce").to_numpy(dtype=float)
        bad = np.flatnonzero(~np.isfinite(values))
        if bad.size:
            raise InputFileError(f"{p}: row {int(bad[0]) + 2}, column {found[key]!r} "
                                 "is empty or not a number")
        return values

    chainage, elevation = column("chainage_m"), column("elevation_m")
    if chainage.size < 2:
        raise InputFileError(f"{p}: a survey needs at least two rows")
    step = np.diff(chainage)
    if np.any(step <= 0):
        i = int(np.flatnonzero(step <= 0)[0])
        raise InputFileError(f"{p}: chainage must increase; row {i + 3} ({chainage[i + 1]:g} m) "
                             f"does not come after row {i + 2} ({chainage[i]:g} m)")
    x = y = None
    survey_crs = None
    if "x" in found and "y" in found:
        x, y = column("x"), column("y")
        if crs is None:
            raise InputError(f"{p}: the survey has x and y columns; say their CRS "
                             "(scenario key route.crs, or --crs on the command line)")
        try:
            survey_crs = CRS.from_user_input(crs)
        except CRSError:
            raise InputError(f"{p}: {crs!r} is not a coordinate reference system pyproj "
                             "knows; give an EPSG code such as \"EPSG:32737\"") from None
    lo, hi = ELEVATION_RANGE_M
    if np.any((elevation < lo) | (elevation > hi)):
        i = int(np.flatnonzero((elevation < lo) | (elevation > hi))[0])
        raise InputFileError(f"{p}: row {i + 2}, elevation {elevation[i]:g} m is outside "
                             f"{lo:g} to {hi:g} m (is it in millimetres or feet?)")
    if chainage[0] < 0:
        raise InputFileError(f"{p}: row 2, chainage {chainage[0]:g} m is negative; chainage "
                             "counts from the start of the line")
    return Survey(chainage_m=chainage, elevation_m=elevation, x=x, y=y, crs=survey_crs,
                  source=str(p))
