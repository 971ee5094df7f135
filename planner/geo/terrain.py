"""Open DEMs and sample them bilinearly along a line, reading only what the line crosses.

The sampler reads the raster block by block: only the internal tiles (or, for a
striped file, 256 x 256 windows) that hold the four neighbours of some sample point
are read, so memory and I/O follow the route's length, not the DEM's area.  Values
are bilinear between pixel centres; any nodata neighbour makes the sample NaN, and a
point off the raster is reported as outside, never as 0 m.

A DEM may be one file (GeoTIFF, VRT or any raster GDAL reads) or several tiles in
the same CRS; between tiles the four neighbours are taken from a small mosaic.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass
from pathlib import Path
from typing import Sequence

import numpy as np
from numpy.typing import NDArray
from pyproj import CRS

from ..errors import InputFileError, TerrainError, TerrainWarning
from ..inputs import regular_file

#: Window edge used when a file is striped rather than tiled [pixels].
VIRTUAL_BLOCK = 256


#: Band unit names that mean feet (GDAL writes what the producer gave).
FEET = {"ft", "foot", "feet", "us-ft", "us_survey_foot", "us survey foot", "ftus", "international foot"}


@dataclass
class _Sampled:
    value: NDArray[np.float64]      # NaN where void or not interior
    interior: NDArray[np.bool_]     # all four neighbours inside this raster
    inside: NDArray[np.bool_]       # point within the raster's extent


class Dem:
    """One or more DEM rasters in a common CRS, open for sampling.

    Use :func:`open_dem`; close with :meth:`close` or a ``with`` block.  Not
    thread-safe (rasterio datasets are not): guard it with a lock when shared.
    """

    def __init__(self, paths: Sequence[str | Path]):
        import rasterio

        self.paths = [Path(p) for p in paths]
        if not self.paths:
            raise InputFileError("no DEM file given")
        self._datasets = []
        try:
            for p in self.paths:
                if not str(p).startswith("/vsi"):        # GDAL's virtual file systems
                    regular_file(p, "DEM file")
                try:
                    self._datasets.append(rasterio.open(p))
                except rasterio.errors.RasterioIOError as exc:
                    raise InputFileError(f"{p}: cannot open as a raster ({exc})") from None
                missing = [f for f in self._datasets[-1].files[1:]
                           if not f.startswith("/vsi") and not Path(f).is_file()]
                if missing:
                    raise InputFileError(
                        f"{p}: {len(missing)} file(s) this DEM refers to are missing "
                        f"({', '.join(missing[:3])}{', ...' if len(missing) > 3 else ''}); "
                        "restore them or rebuild the VRT")
            first = self._datasets[0]
            for p, ds in zip(self.paths, self._datasets):
                if ds.crs is None:
                    raise TerrainError(
                        f"{p}: the DEM has no coordinate reference system; assign the right "
                        "one, e.g. `rio edit-info --crs EPSG:32737 FILE`")
                if ds.crs != first.crs:
                    raise TerrainError(f"{p}: CRS {ds.crs} differs from {self.paths[0]} "
                                       f"({first.crs}); reproject the tiles to one CRS")
                unit = (ds.units[0] if ds.units else "") or ""
                if unit.strip().lower() in FEET:
                    raise TerrainError(
                        f"{p}: the DEM's elevations are in feet (band unit {unit!r}); gravplan "
                        "works in metres: convert it, e.g. `gdal_calc.py -A FILE --calc=A*0.3048 "
                        "--outfile=dem_m.tif` (0.3048 m per international foot; 1200/3937 m "
                        "per US survey foot)")
                if ds.width < 2 or ds.height < 2:
                    raise TerrainError(f"{p}: the DEM must be at least 2 x 2 pixels")
                if ds.transform.b != 0 or ds.transform.d != 0:
                    raise TerrainError(f"{p}: rotated rasters are not supported; warp it "
                                       "north-up first (`rio warp`)")
                bh, bw = ds.block_shapes[0]
                if bh < 16 and ds.height > 64:
                    warnings.warn(
                        f"{p}: the DEM is striped (blocks {bh} x {bw}), so sampling reads "
                        "whole rows; convert it once to a tiled file for speed: `rio convert "
                        "IN OUT --co tiled=true --co blockxsize=256 --co blockysize=256 "
                        "--co compress=deflate`", TerrainWarning, stacklevel=3)
        except Exception:
            self.close()
            raise
        #: The DEM's CRS as a pyproj CRS.
        self.crs = CRS.from_wkt(first.crs.to_wkt())

    # -- description -------------------------------------------------------------
    @property
    def is_geographic(self) -> bool:
        """True when the DEM is in longitude/latitude degrees."""
        return bool(self.crs.is_geographic)

    @property
    def resolution(self) -> tuple[float, float]:
        """Pixel size (x, y) of the first raster, in CRS units."""
        return tuple(abs(v) for v in self._datasets[0].res)

    @property
    def bounds(self) -> tuple[float, float, float, float]:
        """Union of the rasters' extents (left, bottom, right, top), in CRS units."""
        b = np.array([ds.bounds for ds in self._datasets])
        return (b[:, 0].min(), b[:, 1].min(), b[:, 2].max(), b[:, 3].max())

    def describe(self) -> str:
        """Short text for reports: files, CRS and pixel size."""
        names = ", ".join(p.name for p in self.paths)
        rx, ry = self.resolution
        return f"{names} ({self.crs.to_string()}, pixels {rx:g} x {ry:g})"

    def close(self) -> None:
        """Close the open rasters (closing twice is harmless)."""
        for ds in getattr(self, "_datasets", []):
            ds.close()
        self._datasets = []

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()

    # -- sampling ----------------------------------------------------------------
    def sample(self, x: NDArray, y: NDArray) -> tuple[NDArray[np.float64], NDArray[np.bool_]]:
        """Bilinear elevations at points in the DEM's CRS.

        Parameters
        ----------
        x, y : ndarray
            Coordinates in the DEM's CRS (easting/northing, or lon/lat degrees).

        Returns
        -------
        elevation : ndarray
            [m, in the DEM's vertical units]; NaN at voids and off the raster.
        outside : ndarray of bool
            True where a point is off every raster.
        """
        x = np.asarray(x, dtype=float)
        y = np.asarray(y, dtype=float)
        z = np.full(x.shape, np.nan)
        done = np.zeros(x.shape, dtype=bool)
        inside_any = np.zeros(x.shape, dtype=bool)
        for ds in self._datasets:
            todo = ~done
            if not np.any(todo):
                break
            got = _sample_blocks(ds, x[todo], y[todo])
            sel = np.flatnonzero(todo)
            take = sel[got.interior]
            z[take] = got.value[got.interior]
            done[take] = True
            inside_any[sel[got.inside]] = True
        seams = np.flatnonzero(inside_any & ~done)
        if seams.size:
            if len(self._datasets) == 1:
                # within half a pixel of the outer edge: keep the edge value (clamped)
                got = _sample_blocks(self._datasets[0], x[seams], y[seams], clamp=True)
                z[seams] = got.value
            else:
                z[seams] = self._sample_seams(x[seams], y[seams])
        return z, ~inside_any

    def _sample_seams(self, x: NDArray, y: NDArray) -> NDArray:
        """Bilinear values for points between tiles, from a 4 x 4 pixel mosaic each."""
        from rasterio.merge import merge

        rx, ry = self.resolution
        t0 = self._datasets[0].transform      # tiles are assumed to share its pixel grid
        out = np.full(x.shape, np.nan)
        for i, (px, py) in enumerate(zip(x, y)):
            c = np.floor((px - t0.c) / rx)
            r = np.floor((t0.f - py) / ry)
            bounds = (t0.c + (c - 2) * rx, t0.f - (r + 3) * ry,
                      t0.c + (c + 3) * rx, t0.f - (r - 2) * ry)
            mosaic, transform = merge(self._datasets, bounds=bounds, res=(rx, ry),
                                      nodata=np.nan, dtype="float64")
            cols, rows = ~transform @ (np.array([px]), np.array([py]))
            out[i] = _bilinear(mosaic[0], cols - 0.5, rows - 0.5)[0]
        return out


def open_dem(dem: str | Path | Sequence[str | Path] | Dem) -> Dem:
    """Open a DEM from a path, a list of tile paths (or a VRT), or pass a Dem through."""
    if isinstance(dem, Dem):
        return dem
    if isinstance(dem, (str, Path)):
        return Dem([dem])
    return Dem(list(dem))


def _bilinear(grid: NDArray, cf: NDArray, rf: NDArray) -> NDArray:
    """Bilinear interpolation on a small in-memory grid at fractional centres."""
    h, w = grid.shape
    c0 = np.clip(np.floor(cf), 0, w - 2).astype(int)
    r0 = np.clip(np.floor(rf), 0, h - 2).astype(int)
    fx = np.clip(cf - c0, 0.0, 1.0)
    fy = np.clip(rf - r0, 0.0, 1.0)
    return (grid[r0, c0] * (1 - fx) * (1 - fy) + grid[r0, c0 + 1] * fx * (1 - fy)
            + grid[r0 + 1, c0] * (1 - fx) * fy + grid[r0 + 1, c0 + 1] * fx * fy)


#: Blocks read by a second thread, with its own handle, when a route needs at least
#: this many (GDAL decompresses outside Python's lock; a handle is not shared between
#: threads).  A choice of ours: below it the second handle costs more than it saves.
PARALLEL_BLOCKS = 32


def _read_blocks(ds, wins, stack, shape, dtype) -> None:
    """Read the windows ``wins`` of band 1 into ``stack``, partial edge blocks NaN-padded.

    In two threads when there are many and a core to spare.
    """
    import os

    import rasterio

    def read(handle, ks):
        for k in ks:
            win = wins[k]
            try:
                if win.width == shape[1] and win.height == shape[0]:
                    handle.read(1, window=win, out=stack[k])
                else:                           # a partial block at the right or bottom edge
                    stack[k] = np.nan
                    stack[k, : int(win.height), : int(win.width)] = handle.read(
                        1, window=win, out_dtype=dtype)
            except rasterio.errors.RasterioIOError as exc:
                raise InputFileError(
                    f"{ds.name}: cannot read the DEM at pixel row {int(win.row_off):,}, column "
                    f"{int(win.col_off):,} ({exc}); the file or one of its tiles is damaged "
                    "or unreadable") from None

    ks = list(range(len(wins)))
    if len(ks) < PARALLEL_BLOCKS or (os.cpu_count() or 1) < 2 or not Path(ds.name).is_file():
        read(ds, ks)
        return
    from concurrent.futures import ThreadPoolExecutor

    def other():
        with rasterio.open(ds.name) as handle:
            read(handle, ks[1::2])

    with ThreadPoolExecutor(max_workers=1) as pool:
        second = pool.submit(other)
        read(ds, ks[0::2])
        second.result()                         # the second thread's error, raised here


def _sample_blocks(ds, x: NDArray, y: NDArray, *, clamp: bool = False) -> _Sampled:
    """Bilinear sampling of one dataset, reading only the blocks the points need.

    Pixel centres sit at half-integer pixel coordinates, hence the 0.5 shift.
    """
    from rasterio.windows import Window

    h, w = ds.height, ds.width
    cols, rows = ~ds.transform @ (x, y)
    finite = np.isfinite(cols) & np.isfinite(rows)
    inside = finite & (cols >= 0) & (cols <= w) & (rows >= 0) & (rows <= h)
    cf, rf = cols - 0.5, rows - 0.5
    interior = inside & (cf >= 0) & (cf <= w - 1) & (rf >= 0) & (rf <= h - 1)
    use = inside if clamp else interior
    value = np.full(x.shape, np.nan)
    if not np.any(use):
        return _Sampled(value, interior, inside)

    cf, rf = cf[use], rf[use]
    c0 = np.clip(np.floor(cf), 0, w - 2).astype(np.int64)
    r0 = np.clip(np.floor(rf), 0, h - 2).astype(np.int64)
    fx = np.clip(cf - c0, 0.0, 1.0)
    fy = np.clip(rf - r0, 0.0, 1.0)

    bh, bw = ds.block_shapes[0]
    if bh < 16 or bw < 16:          # striped: read square windows instead of strips
        bh = bw = VIRTUAL_BLOCK
    nbj = -(-w // bw)
    needed = np.zeros(-(-h // bh) * nbj, dtype=bool)      # the blocks holding a neighbour
    for dr in (0, 1):
        for dc in (0, 1):
            needed[(r0 + dr) // bh * nbj + (c0 + dc) // bw] = True
    block_ids = np.flatnonzero(needed)
    lut = np.full(needed.size, -1, dtype=np.int64)
    dtype = np.float64 if ds.dtypes[0] == "float64" else np.float32
    stack = np.empty((block_ids.size, bh, bw), dtype=dtype)
    nodata = ds.nodata
    wins = []
    for k, bid in enumerate(block_ids):
        bi, bj = divmod(int(bid), nbj)
        wins.append(Window(bj * bw, bi * bh, min(bw, w - bj * bw), min(bh, h - bi * bh)))
        lut[bid] = k
    _read_blocks(ds, wins, stack, (bh, bw), dtype)
    if nodata is not None and not np.isnan(nodata):
        stack[stack == dtype(nodata)] = np.nan
    scale, offset = ds.scales[0], ds.offsets[0]
    if scale != 1.0 or offset != 0.0:
        stack = stack * scale + offset

    def val(r, c):
        return stack[lut[r // bh * nbj + c // bw], r % bh, c % bw].astype(np.float64)

    value[use] = (val(r0, c0) * (1 - fx) * (1 - fy) + val(r0, c0 + 1) * fx * (1 - fy)
                  + val(r0 + 1, c0) * (1 - fx) * fy + val(r0 + 1, c0 + 1) * fx * fy)
    return _Sampled(value, interior, inside)


def read_overview(dem: Dem, bounds: tuple[float, float, float, float], *,
                  max_pixels: int = 1200) -> tuple[NDArray[np.float64], object]:
    """Read a decimated window of the first raster for display (hillshade, contours).

    Parameters
    ----------
    dem : Dem
        The open DEM.
    bounds : tuple
        (left, bottom, right, top) in the DEM's CRS.
    max_pixels : int
        Longest side of the returned grid [pixels].

    Returns
    -------
    grid : ndarray
        Elevations [m], NaN at voids.
    transform : affine.Affine
        Its geotransform in the DEM's CRS.
    """
    from rasterio.enums import Resampling
    from rasterio.windows import from_bounds

    ds = dem._datasets[0]
    win = from_bounds(*bounds, transform=ds.transform).intersection(
        from_bounds(*ds.bounds, transform=ds.transform)).round_offsets().round_lengths()
    scale = max(1.0, max(win.width, win.height) / max_pixels)
    shape = (max(2, int(win.height / scale)), max(2, int(win.width / scale)))
    data = ds.read(1, window=win, out_shape=shape, masked=True,
                   resampling=Resampling.average).astype(np.float64).filled(np.nan)
    transform = ds.window_transform(win) @ ds.window_transform(win).scale(
        win.width / shape[1], win.height / shape[0])
    return data, transform
