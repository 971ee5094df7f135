"""A branched route: several polylines joined into a tree rooted at the source.

Lines are joined where their ends lie within a snapping tolerance of each other, or
where an end lies on another line (a tee part-way along a main, which is then split
there).  The tree is rooted at the end nearest the source; lines drawn against the flow
are turned round (and reported).  Loops, disconnected pieces and duplicate lines are
errors naming where they are: a looped network needs a network solver, which this tool
does not pretend to be.  Lengths for snapping are measured in the UTM zone of the
network (pyproj).
"""

from __future__ import annotations

from collections import deque
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import shapely
from pyproj import Transformer
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components
from scipy.spatial import cKDTree
from shapely.geometry import LineString
from shapely.ops import substring

from ..errors import InputError, InputFileError
from ..inputs import regular_file
from .geodesy import utm_crs_for
from .route import WGS84, VECTOR_SUFFIXES, _check_lonlat, thin_vertices


@dataclass(frozen=True)
class NetworkLink:
    """One pipe of the tree, oriented with the flow (from its upstream node)."""

    id: int
    line: LineString                 # lon/lat, upstream to downstream
    upstream: int
    downstream: int
    name: str = ""
    turned: bool = False             # drawn against the flow and turned round
    offset_m: float = 0.0            # where it starts along the line it was drawn as [m]
    #: GPS heights at the link's vertices [m] (NaN where a tee split the line), when the
    #: file carried them (GPX); None otherwise
    gps_elevation_m: np.ndarray | None = None


@dataclass(frozen=True)
class RouteNetwork:
    """Nodes (lon, lat) and links of a tree; ``root`` is the source node."""

    nodes: np.ndarray                # (N, 2) lon, lat
    links: tuple[NetworkLink, ...]
    root: int
    notes: tuple[str, ...] = field(default=())

    @property
    def leaves(self) -> list[int]:
        """The branch ends: nodes no link leaves, in increasing order."""
        ups = {k.upstream for k in self.links}
        return sorted({k.downstream for k in self.links} - ups)

    def path_to(self, node: int) -> list[NetworkLink]:
        """Links from the root down to ``node``, in flow order."""
        into = {k.downstream: k for k in self.links}
        path = []
        while node != self.root:
            link = into[node]
            path.append(link)
            node = link.upstream
        return path[::-1]


def read_lines(path: str | Path) -> list[tuple[LineString, str]]:
    """Every line of a GeoJSON, KML or GPX file, in lon/lat, with its name if any.

    A GPX track or route whose every point has an elevation comes back as a 3-D line
    (lon, lat, GPS height [m]), so that its heights can be compared with the DEM.
    """
    import pyogrio

    p = Path(path)
    regular_file(p, "network file")
    if p.suffix.lower() not in VECTOR_SUFFIXES:
        raise InputFileError(f"{p}: a network must be GeoJSON, KML or GPX")
    out = []
    try:
        layers = [str(name) for name, _ in pyogrio.list_layers(p)]
        for layer in layers:
            frame = pyogrio.read_dataframe(p, layer=layer, fid_as_index=True)
            if frame.crs is not None and not frame.crs.equals(WGS84):
                frame = frame.to_crs(WGS84)
            names = frame["name"] if "name" in frame else [""] * len(frame)
            heights = _gpx_heights(p, layer) if p.suffix.lower() == ".gpx" else {}
            for fid, geom, name in zip(frame.index, frame.geometry, names):
                if geom is None or geom.is_empty:
                    continue
                parts = geom.geoms if geom.geom_type == "MultiLineString" else [geom]
                for seg, part in enumerate(parts):
                    if part.geom_type != "LineString":
                        continue
                    xy = np.asarray(part.coords)[:, :2]
                    z = heights.get((int(fid), seg))
                    if z is not None and z.size == xy.shape[0]:
                        xy = np.column_stack([xy, z])
                    xy = xy[thin_vertices(xy[:, :2], f"{p.name} ({name or f'line {fid}'})")]
                    out.append((LineString(xy), str(name) if name is not None else ""))
    except InputFileError:
        raise
    except Exception as exc:
        raise InputFileError(f"{p}: cannot read this file ({exc})") from None
    if not out:
        raise InputFileError(f"{p}: no lines in the file")
    return out


def _split(g: LineString, at: float) -> tuple[LineString, LineString]:
    """A metric line cut in two ``at`` metres along it.

    A 3-D line keeps the heights of its own vertices; the cut vertex gets none (NaN):
    no GPS height was taken there.
    """
    flat = LineString(np.asarray(g.coords)[:, :2]) if g.has_z else g
    a, b = substring(flat, 0, at), substring(flat, at, flat.length)
    if not g.has_z:
        return a, b
    c = np.asarray(g.coords)
    along = np.concatenate([[0.0], np.cumsum(np.hypot(*np.diff(c[:, :2], axis=0).T))])

    def with_z(part, start, cut):
        xy = np.asarray(part.coords)
        pos = start + np.concatenate([[0.0], np.cumsum(np.hypot(*np.diff(xy, axis=0).T))])
        z = np.interp(pos, along, c[:, 2])
        z[cut] = np.nan
        return LineString(np.column_stack([xy, z]))

    return with_z(a, 0.0, -1), with_z(b, at, 0)


def _gpx_heights(p: Path, layer: str) -> dict[tuple[int, int], np.ndarray]:
    """GPS heights of a GPX layer's lines: (track or route, segment) -> heights [m].

    Only the lines whose every point has a height are given.
    """
    import pyogrio

    if layer not in ("tracks", "routes"):
        return {}
    points, fid = ("track_points", "track_fid") if layer == "tracks" else ("route_points", "route_fid")
    try:
        pts = pyogrio.read_dataframe(p, layer=points, read_geometry=False)
    except Exception:                      # no point layer: no heights, the lines still count
        return {}
    if "ele" not in pts or fid not in pts:
        return {}
    seg = pts["track_seg_id"] if "track_seg_id" in pts else np.zeros(len(pts), dtype=int)
    out = {}
    for key, ele in pts.groupby([pts[fid].astype(int), np.asarray(seg, dtype=int)])["ele"]:
        z = np.asarray(ele, dtype=float)
        if np.all(np.isfinite(z)):
            out[(int(key[0]), int(key[1]))] = z
    return out


def build_tree(lines: list[tuple[LineString, str]] | list[LineString], *,
               source: tuple[float, float] | None = None,
               snap_tolerance_m: float = 5.0) -> RouteNetwork:
    """Join lines into a tree rooted at the source.

    Parameters
    ----------
    lines : list
        LineStrings in lon/lat, or (LineString, name) pairs.
    source : (lon, lat), optional
        Where the water comes from; default the start of the first line.
    snap_tolerance_m : float
        Line ends closer than this are the same node; an end closer than this to another
        line joins it there [m].

    Raises
    ------
    InputError
        For loops, disconnected pieces, duplicate lines or a source off the network,
        naming the place.
    """
    pairs = [(g, "") if isinstance(g, LineString) else g for g in lines]
    if not pairs:
        raise InputError("a network needs at least one line")
    for k, (g, _) in enumerate(pairs):
        _check_lonlat(np.asarray(g.coords)[:, :2], f"line {k + 1}")
        if len(g.coords) < 2 or g.length == 0:
            raise InputError(f"line {k + 1} has fewer than two distinct points")
    allxy = np.vstack([np.asarray(g.coords)[:, :2] for g, _ in pairs])
    work = utm_crs_for(float(allxy[:, 0].mean()), float(allxy[:, 1].mean()))
    fwd = Transformer.from_crs(WGS84, work, always_xy=True)
    back = Transformer.from_crs(work, WGS84, always_xy=True)

    def to_m(g):
        c = np.asarray(g.coords)
        xy = np.column_stack(fwd.transform(c[:, 0], c[:, 1]))
        return LineString(np.column_stack([xy, c[:, 2]]) if g.has_z else xy)

    metric = [(to_m(g), name, 0.0) for g, name in pairs]
    notes: list[str] = []
    _split_at_tees(metric, snap_tolerance_m, notes)
    node_xy, edges = _snap_ends(metric, snap_tolerance_m)
    _check_no_loops(edges, node_xy, back)
    root = _root(node_xy, edges, source, fwd, snap_tolerance_m)
    _check_connected(node_xy, edges, root, back, snap_tolerance_m)
    links = _orient(metric, edges, node_xy.shape[0], root, back, notes)
    lon, lat = back.transform(node_xy[:, 0], node_xy[:, 1])
    return RouteNetwork(nodes=np.column_stack([lon, lat]), links=tuple(links), root=root,
                        notes=tuple(notes))


def _split_at_tees(metric: list[tuple[LineString, str, float]], snap_tolerance_m: float,
                   notes: list[str]) -> None:
    """Split, in place, each metric line where another line's end touches it part-way along.

    ``metric`` holds (line [m], name, offset along the drawn line [m]); each split is
    noted in ``notes``.  A line is cut at every end that lies within the tolerance of it,
    more than the tolerance from its ends and from the previous cut (vectorised with
    shapely over all ends at once).
    """
    tol = snap_tolerance_m
    ends = shapely.points(np.array([g.coords[i][:2] for g, _, _ in metric for i in (0, -1)]))
    out: list[tuple[LineString, str, float]] = []
    for k, (g, name, off) in enumerate(metric):
        flat = LineString(np.asarray(g.coords)[:, :2]) if g.has_z else g
        along = shapely.line_locate_point(flat, ends)
        hit = (shapely.distance(flat, ends) <= tol) & (along > tol) & (along < g.length - tol)
        cuts: list[float] = []
        for d in np.sort(along[hit]):
            if not cuts or d - cuts[-1] > tol:
                cuts.append(float(d))
        rest, done = g, 0.0
        for d in cuts:
            a, rest = _split(rest, d - done)
            out.append((a, name, off + done))
            notes.append(f"line {name or k + 1!s} split where a branch joins it")
            done = d
        out.append((rest, name, off + done))
    metric[:] = out


def _snap_ends(metric: list[tuple[LineString, str, float]], snap_tolerance_m: float
               ) -> tuple[np.ndarray, list[tuple[int, int]]]:
    """The nodes (x, y [m]) that line ends snap to, and each line's (start, end) node.

    Ends within ``snap_tolerance_m`` [m] of one another, directly or through a chain of
    ends, become one node at their mean position.
    """
    ends = np.array([g.coords[i][:2] for g, _, _ in metric for i in (0, -1)])
    tree = cKDTree(ends)
    pairs_close = np.array(sorted(tree.query_pairs(snap_tolerance_m)), dtype=np.int64).reshape(-1, 2)
    m = ends.shape[0]
    graph = coo_matrix((np.ones(len(pairs_close)), (pairs_close[:, 0], pairs_close[:, 1])),
                       shape=(m, m))
    _, label = connected_components(graph, directed=False)
    node_xy = np.array([ends[label == c].mean(axis=0) for c in range(label.max() + 1)])
    edges = [(int(label[2 * k]), int(label[2 * k + 1])) for k in range(len(metric))]
    return node_xy, edges


def _check_no_loops(edges: list[tuple[int, int]], node_xy: np.ndarray, back: Transformer) -> None:
    """Raise for a line that closes on itself or two lines joining the same two nodes."""
    seen: dict[tuple[int, ...], int] = {}
    for k, (a, b) in enumerate(edges):
        if a == b:
            raise InputError(f"line {k + 1} starts and ends at the same place (a loop)")
        key = tuple(sorted((a, b)))
        if key in seen:
            lon, lat = back.transform(*node_xy[a])
            raise InputError(f"lines {seen[key] + 1} and {k + 1} both join the same two points "
                             f"(one near lon {lon:.6f}, lat {lat:.6f}): a loop or a duplicate; "
                             "keep one line, or solve the looped network elsewhere")
        seen[key] = k


def _root(node_xy: np.ndarray, edges: list[tuple[int, int]], source: tuple[float, float] | None,
          fwd: Transformer, snap_tolerance_m: float) -> int:
    """The node nearest the source (lon, lat), or the first line's start without one."""
    if source is None:
        return edges[0][0]
    sx, sy = fwd.transform(*source)
    d = np.hypot(node_xy[:, 0] - sx, node_xy[:, 1] - sy)
    root = int(np.argmin(d))
    if d[root] > max(snap_tolerance_m, 50.0):
        raise InputError(f"the source {list(source)} is {d[root]:,.0f} m from the nearest line "
                         "end; start a line at the source")
    return root


def _check_connected(node_xy: np.ndarray, edges: list[tuple[int, int]], root: int,
                     back: Transformer, snap_tolerance_m: float) -> None:
    """Raise for pieces not connected to the root, and for loops (more lines than a tree)."""
    n = node_xy.shape[0]
    adj = coo_matrix((np.ones(len(edges)), ([a for a, _ in edges], [b for _, b in edges])),
                     shape=(n, n))
    ncomp, comp = connected_components(adj, directed=False)
    if ncomp > 1:
        apart = [c for c in range(ncomp) if c != comp[root]]
        where = []
        for c in apart:
            lon, lat = back.transform(*node_xy[np.flatnonzero(comp == c)[0]])
            where.append(f"near lon {lon:.6f}, lat {lat:.6f}")
        raise InputError(f"{len(apart)} piece(s) of the network do not connect to the source "
                         f"({'; '.join(where)}): join them within {snap_tolerance_m:g} m or "
                         "raise the snapping tolerance")
    if len(edges) != n - 1:
        raise InputError(f"the network has {len(edges) - (n - 1)} loop(s): {len(edges)} lines "
                         f"join {n} points; a tree has one line fewer than points")


def _orient(metric: list[tuple[LineString, str, float]], edges: list[tuple[int, int]], n: int,
            root: int, back: Transformer, notes: list[str]) -> list[NetworkLink]:
    """The links in lon/lat, each turned to run away from the root (breadth first).

    A line turned round is noted in ``notes``.
    """
    incident: dict[int, list[int]] = {i: [] for i in range(n)}
    for k, (a, b) in enumerate(edges):
        incident[a].append(k)
        incident[b].append(k)
    links: list[NetworkLink] = []
    queue, visited = deque([root]), {root}
    while queue:
        u = queue.popleft()
        for k in incident[u]:
            a, b = edges[k]
            v = b if a == u else a
            if v in visited:
                continue
            visited.add(v)
            queue.append(v)
            g, name, off = metric[k]
            turned = a != u
            if turned:
                g = shapely.reverse(g)
                notes.append(f"line {name or k + 1!s} was drawn against the flow and is turned round")
            xy = np.asarray(g.coords)
            lon, lat = back.transform(xy[:, 0], xy[:, 1])
            links.append(NetworkLink(id=len(links), line=LineString(np.column_stack([lon, lat])),
                                     upstream=u, downstream=v, name=name, turned=turned,
                                     offset_m=off,
                                     gps_elevation_m=xy[:, 2].copy() if g.has_z else None))
    return links

