"""Geodesy for routes in lon/lat: points along geodesics, and the UTM zone of a place.

Distances and azimuths on the WGS84 ellipsoid come from pyproj's Geod (Karney,
"Algorithms for geodesics", J. Geodesy 87, 2013).
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np
from numpy.typing import NDArray
from pyproj import CRS, Geod
from pyproj.aoi import AreaOfInterest
from pyproj.database import query_utm_crs_info

_GEOD = Geod(ellps="WGS84")


#: Geodesic stations are computed at most this far apart [m]; points between them are
#: interpolated linearly in lon/lat.  Over 100 m a geodesic departs from that chord by
#: about L^2 / (8 R) = 0.2 mm (R the Earth's radius), far below any DEM's precision.
GEODESIC_STATION_M = 100.0


def densify_geodesic(lon: NDArray, lat: NDArray, spacing: float):
    """Points along geodesics at most ``spacing`` metres apart, vertices kept.

    Chainage is exact (geodesic distance on the WGS84 ellipsoid, pyproj's Geod); the
    positions come from geodesic stations every :data:`GEODESIC_STATION_M` at most.
    """
    az, _, seg = _GEOD.inv(lon[:-1], lat[:-1], lon[1:], lat[1:])
    seg, az = np.asarray(seg), np.asarray(az)
    nseg = np.maximum(1, np.ceil(seg / spacing - 1e-9)).astype(np.int64)
    k = np.repeat(np.arange(seg.size), nseg)
    first = np.repeat(np.cumsum(nseg) - nseg, nseg)
    t = (np.arange(nseg.sum()) - first) / nseg[k]
    # geodesic stations on each segment (both ends included), then linear between them
    nst = np.maximum(1, np.ceil(seg / GEODESIC_STATION_M)).astype(np.int64)
    ks = np.repeat(np.arange(seg.size), nst + 1)
    ts = (np.arange(ks.size) - np.repeat(np.cumsum(nst + 1) - (nst + 1), nst + 1)) / nst[ks]
    slon, slat, _ = _GEOD.fwd(lon[ks], lat[ks], az[ks], ts * seg[ks])
    slon, slat = np.asarray(slon), np.asarray(slat)
    base = np.cumsum(nst + 1) - (nst + 1)                 # first station of each segment
    pos = t * nst[k]                                       # station coordinate of each point
    i = np.minimum(np.floor(pos).astype(np.int64), nst[k] - 1)
    f = pos - i
    a, b = base[k] + i, base[k] + i + 1
    plon = slon[a] + f * (slon[b] - slon[a])
    plat = slat[a] + f * (slat[b] - slat[a])
    x = np.append(plon, lon[-1])
    y = np.append(plat, lat[-1])
    chain = np.append(np.concatenate([[0.0], np.cumsum(seg)])[k] + t * seg[k], seg.sum())
    return x, y, chain, np.concatenate([[0], np.cumsum(nseg)])


def utm_crs_for(lon: float, lat: float) -> CRS:
    """The WGS84 UTM zone CRS holding a point.

    Zones are 6 degrees of longitude from 180 W, EPSG 326zz north and 327zz south of the
    equator (NGA, "The Universal Grids", DMA TM 8358.2, 1989); where the standard widens
    zones (southern Norway, Svalbard: 56-64 N and 72-84 N) pyproj's CRS database is asked.
    """
    if 56.0 <= lat < 64.0 or 72.0 <= lat < 84.0:
        info = query_utm_crs_info(datum_name="WGS 84",
                                  area_of_interest=AreaOfInterest(lon, lat, lon, lat))
        return _crs(int(info[0].code))
    zone = int((lon + 180.0) // 6.0) % 60 + 1
    return _crs((32600 if lat >= 0 else 32700) + zone)


@lru_cache(maxsize=64)
def _crs(epsg: int) -> CRS:
    return CRS.from_epsg(epsg)
