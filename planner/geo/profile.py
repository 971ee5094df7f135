"""The profile of a route: chainage, coordinates, ground and pipe elevations.

:func:`sample_profile` densifies a route at a spacing (keeping its vertices), samples
the DEM bilinearly in the DEM's own CRS (the route is reprojected, never the DEM),
fills short voids along the line and refuses long ones.  Chainage is geodesic on a
geographic DEM (pyproj.Geod, WGS84 ellipsoid) and planar in a projected DEM's own
metric otherwise, with a warning where that metric is distorted by more than 0.1 %.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
from numpy.typing import NDArray
from pyproj import CRS, Geod, Proj, Transformer
from shapely.geometry import LineString

from ..errors import InputError, NoDataWarning, TerrainError, TerrainWarning
from .geodesy import densify_geodesic, utm_crs_for
from .gps_comparison import gps_comparison_note
from .route import WGS84, Route, Survey, read_route, route_from_line
from .terrain import Dem, open_dem

#: Longest DEM void that is bridged by linear interpolation along the line [m]
#: (common practice: about two crests' spacing on a 30 m DEM).
DEFAULT_MAX_VOID_M = 150.0
#: Cover from ground to pipe [m]: rural mains in fields (common practice).
DEFAULT_COVER_M = 0.8
#: Scale distortion of a projected CRS above which the user is told [-].
DISTORTION_LIMIT = 1e-3


@dataclass(frozen=True)
class Profile:
    """Elevation profile of one link, SI units, one entry per profile point.

    Attributes
    ----------
    chainage_m : ndarray
        Horizontal distance from the link start [m].
    slope_length_m : ndarray
        Cumulative 3-D length along the pipe [m].
    x, y : ndarray
        Coordinates in ``crs`` (a metric CRS) [m]; NaN for a survey without them.
    lon, lat : ndarray
        WGS84 longitude and latitude [degrees]; NaN when unknown.
    ground_m : ndarray
        Ground elevation [m, on ``vertical_datum``].
    pipe_m : ndarray
        Pipe elevation, ground minus cover [m].
    filled : ndarray of bool
        True where the ground was bridged across a DEM void.
    vertex_index : ndarray of int
        Indices of the route's own vertices among the points.
    crs : str
        The working metric CRS of x and y.
    spacing_m : float
        Requested spacing between points [m].
    cover_m : float
        Cover from ground to pipe [m].
    elevation_source : str
        Where the ground elevations come from.
    vertical_datum : str
        The vertical datum of the elevations, as stated by the user or the DEM.
    notes : tuple of str
        What the user should know about this profile (voids filled, distortion).
    """

    chainage_m: NDArray[np.float64]
    slope_length_m: NDArray[np.float64]
    x: NDArray[np.float64]
    y: NDArray[np.float64]
    lon: NDArray[np.float64]
    lat: NDArray[np.float64]
    ground_m: NDArray[np.float64]
    pipe_m: NDArray[np.float64]
    filled: NDArray[np.bool_]
    vertex_index: NDArray[np.int64]
    crs: str
    spacing_m: float
    cover_m: float
    elevation_source: str
    vertical_datum: str = "as the DEM (not stated)"
    notes: tuple[str, ...] = field(default=())
    #: True at points inserted where the pipe changes size (ground linear between
    #: the neighbouring profile points); None when there are none.
    inserted: NDArray[np.bool_] | None = None
    #: Surveyed points the ground was pinned to: (name, chainage [m], DEM offset [m]).
    pins: tuple[tuple[str, float, float], ...] = ()
    #: GPS elevation minus DEM ground at the route's vertices [m], and their chainages
    #: [m], when the route file carries elevations (GPX); None otherwise.
    gps_offset_m: NDArray[np.float64] | None = None
    gps_chainage_m: NDArray[np.float64] | None = None

    @property
    def length_m(self) -> float:
        """Horizontal length of the line [m]."""
        return float(self.chainage_m[-1])

    @property
    def n(self) -> int:
        """Number of profile points."""
        return int(self.chainage_m.size)

    def index_at(self, chainage: float) -> int:
        """Index of the profile point nearest to a chainage [m]."""
        return int(np.argmin(np.abs(self.chainage_m - chainage)))


def _densify_planar(xv: NDArray, yv: NDArray, spacing: float):
    """Points at most ``spacing`` apart along a polyline, vertices kept."""
    seg = np.hypot(np.diff(xv), np.diff(yv))
    nseg = np.maximum(1, np.ceil(seg / spacing - 1e-9)).astype(np.int64)
    k = np.repeat(np.arange(seg.size), nseg)
    first = np.repeat(np.cumsum(nseg) - nseg, nseg)
    t = (np.arange(nseg.sum()) - first) / nseg[k]
    x = np.append(xv[k] + t * np.diff(xv)[k], xv[-1])
    y = np.append(yv[k] + t * np.diff(yv)[k], yv[-1])
    chain = np.append(np.concatenate([[0.0], np.cumsum(seg)])[k] + t * seg[k], seg.sum())
    vertex_index = np.concatenate([[0], np.cumsum(nseg)])
    return x, y, chain, vertex_index


def _fill_voids(chain: NDArray, z: NDArray, max_void_m: float, source: str):
    """Bridge NaN runs along the line by linear interpolation; refuse long ones."""
    void = ~np.isfinite(z)
    if not np.any(void):
        return z, void, []
    if np.all(void):
        raise TerrainError(f"{source}: the DEM has no data anywhere along the route "
                           f"(0 to {chain[-1]:,.0f} m); check the DEM covers the route")
    edges = np.flatnonzero(np.diff(np.concatenate([[0], void.astype(np.int8), [0]])))
    starts, stops = edges[::2], edges[1::2]        # void runs [start, stop)
    notes = []
    for a, b in zip(starts, stops):
        lo = chain[a - 1] if a > 0 else None
        hi = chain[b] if b < chain.size else None
        if lo is None or hi is None:
            end = "start" if lo is None else "end"
            raise TerrainError(
                f"{source}: the DEM has a void at the {end} of the route, chainage "
                f"{chain[a]:,.0f} to {chain[b - 1]:,.0f} m, that cannot be bridged; "
                "fill the DEM or survey that stretch")
        if hi - lo > max_void_m:
            raise TerrainError(
                f"{source}: the route crosses a DEM void from chainage {lo:,.0f} to "
                f"{hi:,.0f} m ({hi - lo:,.0f} m, more than the {max_void_m:g} m that may be "
                "bridged); fill the DEM from another source, survey the stretch, or raise "
                "terrain.max_void_m knowingly")
        notes.append(f"DEM void bridged linearly from chainage {lo:,.0f} to {hi:,.0f} m "
                     f"({hi - lo:,.0f} m)")
    good = ~void
    filled = z.copy()
    filled[void] = np.interp(chain[void], chain[good], z[good])
    for note in notes:
        warnings.warn(f"{source}: {note}", NoDataWarning, stacklevel=3)
    return filled, void, notes


def _slope_length(chain: NDArray, z: NDArray) -> NDArray:
    return np.concatenate([[0.0], np.cumsum(np.hypot(np.diff(chain), np.diff(z)))])


def _as_route(route) -> Route:
    if isinstance(route, Route):
        return route
    if isinstance(route, LineString):
        return route_from_line(route)
    if isinstance(route, (str, Path)):
        got = read_route(route)
        if isinstance(got, Survey):
            raise InputError(f"{route}: a CSV survey carries its own elevations; use "
                             "profile_from_survey() (or give it as the scenario's route)")
        return got
    raise InputError(f"route must be a path, a shapely LineString or a Route, got {type(route)}")


def sample_profile(route, dem, spacing_m: float | None = None, cover_m: float = DEFAULT_COVER_M, *,
                   max_void_m: float = DEFAULT_MAX_VOID_M,
                   vertical_datum: str | None = None) -> Profile:
    """Sample a DEM along a route.

    Parameters
    ----------
    route : str, Path, shapely.LineString or Route
        A route file, or a line in WGS84 (longitude, latitude) [degrees].
    dem : str, Path, list of paths, or Dem
        One raster, a list of tiles in one CRS, or a VRT.
    spacing_m : float, optional
        Largest distance between profile points [m]; default the DEM's cell size.
    cover_m : float
        Cover from ground to the pipe [m] (0.8 m: rural mains in fields, common
        practice; see docs/scenario.md).
    max_void_m : float
        Longest DEM void bridged along the line [m]; longer voids are an error.
    vertical_datum : str, optional
        Name of the elevations' vertical datum, for reports.

    Returns
    -------
    Profile

    Raises
    ------
    TerrainError
        If the route leaves the DEM or crosses a void longer than ``max_void_m``.
    """
    r = _as_route(route)
    if cover_m < 0:
        raise InputError(f"cover must be >= 0 m, got {cover_m!r}")
    owned = not isinstance(dem, Dem)
    grid = open_dem(dem)
    try:
        return _sample(r, grid, spacing_m, cover_m, max_void_m, vertical_datum)
    finally:
        if owned:
            grid.close()


def _dem_name(grid: Dem) -> str:
    return grid.paths[0].name if len(grid.paths) == 1 else f"tiles ({grid.paths[0].name}, ...)"


def _check_overlap(r: Route, grid: Dem, lonv: NDArray, latv: NDArray) -> None:
    """Refuse a route with no vertex on the DEM, saying if swapping lon and lat would fit."""
    left, bottom, right, top = grid.bounds
    to_dem = Transformer.from_crs(WGS84, grid.crs, always_xy=True)

    def inside(lon, lat):
        with np.errstate(all="ignore"):
            x, y = to_dem.transform(lon, lat)
        x, y = np.asarray(x), np.asarray(y)
        return (x >= left) & (x <= right) & (y >= bottom) & (y <= top)

    if np.any(inside(lonv, latv)):
        return
    back = Transformer.from_crs(grid.crs, WGS84, always_xy=True)
    lo, la = back.transform([left, right, right, left], [bottom, bottom, top, top])
    where = (f"the DEM {_dem_name(grid)} covers lon {min(lo):.4f} to {max(lo):.4f}, "
             f"lat {min(la):.4f} to {max(la):.4f}")
    if np.all(np.abs(lonv) <= 90) and np.any(inside(latv, lonv)):
        raise TerrainError(
            f"{r.source}: the route lies outside the DEM, but would lie on it with latitude and "
            f"longitude swapped ({where}); write coordinates as [longitude, latitude]")
    raise TerrainError(
        f"{r.source}: the route lies wholly outside the DEM (it starts at lon {lonv[0]:.6f}, "
        f"lat {latv[0]:.6f}; {where}); check that the route and the DEM are of the same place")


#: Most profile points one route may have: 2 million (a 200 km line at 0.1 m) keeps a
#: profile within a few hundred MB (a choice of ours, stated in docs/scenario.md).
MAX_PROFILE_POINTS = 2_000_000


def _check_size(r: Route, lonv: NDArray, latv: NDArray, spacing: float) -> None:
    """Refuse, before any array is made, a profile of more than MAX_PROFILE_POINTS."""
    _, _, seg = Geod(ellps="WGS84").inv(lonv[:-1], latv[:-1], lonv[1:], latv[1:])
    points = float(np.sum(np.ceil(np.asarray(seg) / spacing))) + 1
    if points > MAX_PROFILE_POINTS:
        raise InputError(f"{r.source}: {float(np.sum(seg)):,.0f} m at a spacing of {spacing:g} m "
                         f"would give {points:,.0f} profile points, more than "
                         f"{MAX_PROFILE_POINTS:,}; raise route.spacing_m (or the --spacing "
                         "option) or split the line")


def _distortion_notes(grid: Dem, lonv: NDArray, latv: NDArray) -> list[str]:
    """A note and a warning when the DEM's CRS distorts lengths along the route.

    Given when the scale error at a vertex exceeds :data:`DISTORTION_LIMIT`.
    """
    factors = Proj(grid.crs).get_factors(lonv, latv)
    distortion = float(np.max(np.abs(np.concatenate(
        [np.asarray(factors.meridional_scale), np.asarray(factors.parallel_scale)]) - 1.0)))
    if distortion <= DISTORTION_LIMIT:
        return []
    note = (f"the DEM's CRS {grid.crs.to_string()} distorts lengths by up to "
            f"{distortion * 100:.2f} % along this route; chainage is in that CRS's metric")
    warnings.warn(note, TerrainWarning, stacklevel=4)
    return [note]


def _sample(r: Route, grid: Dem, spacing_m, cover_m, max_void_m, vertical_datum) -> Profile:
    lonv, latv = (np.asarray(c, dtype=float) for c in r.line.xy)
    _check_overlap(r, grid, lonv, latv)
    notes: list[str] = []
    kept = None
    rx, ry = grid.resolution
    if grid.is_geographic:
        cell_m = min(rx * 111_320.0 * np.cos(np.radians(np.mean(latv))), ry * 110_574.0)
        spacing = float(spacing_m or cell_m)
        if not spacing > 0:
            raise InputError(f"spacing must be positive, got {spacing_m!r} m")
        _check_size(r, lonv, latv, spacing)
        lon, lat, chain, vidx = densify_geodesic(lonv, latv, spacing)
        if CRS.from_user_input(grid.crs).equals(WGS84, ignore_axis_order=True):
            dx, dy = lon, lat                        # the DEM is in lon/lat on WGS84 already
        else:
            dx, dy = Transformer.from_crs(WGS84, grid.crs, always_xy=True).transform(lon, lat)
        work = utm_crs_for(float(np.mean(lonv)), float(np.mean(latv)))
        x, y = Transformer.from_crs(WGS84, work, always_xy=True).transform(lon, lat)
        notes.append(f"chainage is geodesic on the WGS84 ellipsoid; x, y in {work.to_string()}")
    else:
        unit = grid.crs.axis_info[0].unit_conversion_factor or 1.0
        spacing = float(spacing_m or min(rx, ry) * unit)
        if not spacing > 0:
            raise InputError(f"spacing must be positive, got {spacing_m!r} m")
        _check_size(r, lonv, latv, spacing)
        to_dem = Transformer.from_crs(WGS84, grid.crs, always_xy=True)
        xv, yv = to_dem.transform(lonv, latv)
        keep = np.ones(xv.size, dtype=bool)
        keep[1:] = np.hypot(np.diff(xv), np.diff(yv)) > 0
        xv, yv = np.asarray(xv)[keep], np.asarray(yv)[keep]
        kept = keep
        dx, dy, chain, vidx = _densify_planar(xv, yv, spacing / unit)
        chain = chain * unit
        lon, lat = Transformer.from_crs(grid.crs, WGS84, always_xy=True).transform(dx, dy)
        x, y, work = dx * unit, dy * unit, grid.crs
        notes += _distortion_notes(grid, lonv, latv)

    ground, outside = grid.sample(dx, dy)
    if np.any(outside):
        out = np.flatnonzero(outside)
        first, last = int(out[0]), int(out[-1])
        raise TerrainError(
            f"{r.source}: the route leaves the DEM {_dem_name(grid)}"
            f" between chainage {chain[first]:,.0f} and {chain[last]:,.0f} m (first point off "
            f"the DEM at lon {lon[first]:.6f}, lat {lat[first]:.6f}); extend the DEM or "
            "re-route")
    if not np.any(np.isfinite(ground)):
        raise TerrainError(
            f"{', '.join(str(p) for p in grid.paths)}: the DEM holds only nodata along the route "
            f"{r.source} (0 to {chain[-1]:,.0f} m); check the DEM's nodata value, or use a DEM "
            "with elevations there")
    ground, filled, void_notes = _fill_voids(chain, ground, max_void_m, r.source)
    notes.extend(void_notes)
    gps_off = gps_ch = None
    if r.gps_elevation_m is not None:
        gps = np.asarray(r.gps_elevation_m, dtype=float)
        if kept is not None:
            gps = gps[kept]
        if gps.size == vidx.size:
            ok = np.isfinite(gps)
            gps_off = (gps - ground[vidx])[ok]
            gps_ch = chain[vidx][ok]
            notes.append(gps_comparison_note(gps_off))
    pipe = ground - cover_m
    return Profile(
        chainage_m=chain, slope_length_m=_slope_length(chain, pipe), x=np.asarray(x, float),
        y=np.asarray(y, float), lon=np.asarray(lon, float), lat=np.asarray(lat, float),
        ground_m=ground, pipe_m=pipe, filled=filled, vertex_index=vidx.astype(np.int64),
        crs=work.to_string(), spacing_m=spacing, cover_m=cover_m,
        elevation_source=f"DEM {grid.describe()}, bilinear",
        vertical_datum=vertical_datum or "as the DEM (not stated)", notes=tuple(notes),
        gps_offset_m=gps_off, gps_chainage_m=gps_ch,
    )


def profile_from_survey(survey: Survey, cover_m: float = DEFAULT_COVER_M, *,
                        vertical_datum: str | None = None) -> Profile:
    """A profile from a surveyed line (chainage and ground elevation).

    Coordinates come from the survey's x and y where it has them (and their CRS),
    otherwise they are NaN and the line cannot be mapped.
    """
    chain = survey.chainage_m - survey.chainage_m[0]
    n = chain.size
    lon = lat = x = y = np.full(n, np.nan)
    crs = "none (survey without coordinates)"
    if survey.x is not None and survey.crs is not None:
        lon, lat = Transformer.from_crs(survey.crs, WGS84, always_xy=True).transform(
            survey.x, survey.y)
        work = survey.crs if survey.crs.is_projected else utm_crs_for(float(np.mean(lon)),
                                                                    float(np.mean(lat)))
        x, y = Transformer.from_crs(WGS84, work, always_xy=True).transform(lon, lat)
        crs = work.to_string()
    pipe = survey.elevation_m - cover_m
    spacing = float(np.max(np.diff(chain)))
    return Profile(
        chainage_m=chain, slope_length_m=_slope_length(chain, pipe), x=np.asarray(x, float),
        y=np.asarray(y, float), lon=np.asarray(lon, float), lat=np.asarray(lat, float),
        ground_m=survey.elevation_m.copy(), pipe_m=pipe, filled=np.zeros(n, dtype=bool),
        vertex_index=np.arange(n), crs=crs, spacing_m=spacing, cover_m=cover_m,
        elevation_source=f"survey {Path(survey.source).name}",
        vertical_datum=vertical_datum or "as surveyed (not stated)",
    )


def split_profile(profile: Profile, chainages) -> tuple[Profile, NDArray[np.int64]]:
    """Insert points at chainages (linear between neighbours); return the new profile.

    Used to start a new pipe size exactly where a sizing result changes size.  Also
    returns, for each new point, the index of the original segment it lies on (or the
    original point's index).
    """
    ch = profile.chainage_m
    new = np.setdiff1d(np.round(np.asarray(chainages, dtype=float), 6), np.round(ch, 6))
    new = new[(new > ch[0]) & (new < ch[-1])]
    if new.size == 0:
        return profile, np.arange(profile.n)
    merged = np.sort(np.concatenate([ch, new]))
    origin = np.searchsorted(ch, merged, side="right") - 1

    def interp(a):
        return np.interp(merged, ch, a)

    pipe = interp(profile.pipe_m)
    filled = profile.filled[np.clip(origin, 0, profile.n - 1)]
    vertex_index = np.searchsorted(merged, ch[profile.vertex_index])
    return Profile(
        chainage_m=merged, slope_length_m=_slope_length(merged, pipe), x=interp(profile.x),
        y=interp(profile.y), lon=interp(profile.lon), lat=interp(profile.lat),
        ground_m=interp(profile.ground_m), pipe_m=pipe, filled=filled,
        vertex_index=vertex_index.astype(np.int64), crs=profile.crs,
        spacing_m=profile.spacing_m, cover_m=profile.cover_m,
        elevation_source=profile.elevation_source, vertical_datum=profile.vertical_datum,
        notes=profile.notes, inserted=~np.isin(merged, ch)), origin


def pin_profile(profile: Profile, pins: list[tuple[str, float, float]]) -> Profile:
    """Shift the ground to surveyed levels: exact at each pin, linear between, flat beyond.

    Parameters
    ----------
    profile : Profile
    pins : list of (name, chainage [m], surveyed ground elevation [m])

    Returns
    -------
    Profile
        Ground and pipe moved by the interpolated offset (survey minus DEM); the
        elevation source says so, and ``pins`` lists (name, chainage, offset).
    """
    if not pins:
        return profile
    from dataclasses import replace

    pins = sorted(pins, key=lambda p: p[1])
    ch = profile.chainage_m
    at = np.array([p[1] for p in pins], dtype=float)
    if np.any(np.diff(at) <= 0):
        raise InputError("survey_points: two points at the same chainage; keep one")
    offs = np.array([p[2] for p in pins]) - np.interp(at, ch, profile.ground_m)
    shift = np.interp(ch, at, offs)
    ground = profile.ground_m + shift
    pipe = ground - profile.cover_m
    names = ", ".join(f"{n} ({o:+.2f} m at {c:,.0f} m)" for (n, c, _), o in zip(pins, offs))
    return replace(profile, ground_m=ground, pipe_m=pipe,
                   slope_length_m=_slope_length(ch, pipe),
                   elevation_source=f"{profile.elevation_source}, pinned to surveyed levels: {names}",
                   pins=tuple((n, float(c), float(o)) for (n, c, _), o in zip(pins, offs)),
                   notes=profile.notes + (f"ground shifted to {len(pins)} surveyed level(s) "
                                          f"(linear between them, flat beyond): {names}",))


def elevation_source_between(profile: Profile, a: float, b: float) -> str:
    """Which elevations a stretch from chainage ``a`` to ``b`` [m] uses, in words."""
    base = "DEM" if profile.elevation_source.startswith("DEM") else profile.elevation_source
    if not profile.pins:
        return base
    pins = profile.pins
    inside = [p for p in pins if a - 1e-6 <= p[1] <= b + 1e-6]
    before = [p for p in pins if p[1] < a]
    after = [p for p in pins if p[1] > b]
    if before and after:
        lo, hi = before[-1], after[0]
        text = f"DEM corrected between surveyed {lo[0]!r} and {hi[0]!r}"
    elif before:
        text = f"DEM shifted by surveyed {before[-1][0]!r} ({before[-1][2]:+.2f} m)"
    elif after:
        text = f"DEM shifted by surveyed {after[0][0]!r} ({after[0][2]:+.2f} m)"
    else:
        text = "DEM corrected by surveyed levels"
    if inside:
        text += "; surveyed at " + ", ".join(repr(p[0]) for p in inside)
    return text
