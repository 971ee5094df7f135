"""Air valves and washouts along a line, each placed by a named rule.

Rules, in the order they are applied to every reach (free surface to free surface):

1. Air valve at every crest of the pipe profile whose prominence exceeds the DEM-noise
   tolerance (AWWA Manual M51, ch. 3 "Locating air valves", from memory; Vinidex "Air
   valves and scour valves": at all high points).
2. Air valve at each break of grade where air collects: an ascending line getting
   flatter or a descending line getting steeper in the flow direction (M51 ch. 3,
   "decreases in upslope, increases in downslope", from memory).
3. Air valves at intervals along long runs without one, at most ``spacing`` apart
   (Vinidex: every 500-1000 m on long rising grades and flat runs; M51: 0.4-0.8 km).
4. Washout at every low point of the pipe profile with the same prominence
   (Vinidex: at low points), and at the foot of every long uphill run (common
   practice).

Sizes follow Vinidex's table by main size: air valves 25 mm single orifice up to
DN100, 50 mm double orifice to DN200, 80 mm double orifice to DN450; washouts 80,
100 and 150 mm (never larger than the main).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray
from scipy.signal import find_peaks

from .._arrays import true_runs

M51 = "AWWA Manual M51, ch. 3 (from memory)"
VINIDEX = "Vinidex, Air valves and scour valves"


@dataclass(frozen=True)
class Feature:
    """A valve, tank or other point feature on a line.

    Attributes
    ----------
    kind : str
        ``"air_valve"``, ``"washout"`` or ``"break_pressure_tank"``.
    index : int
        Profile point.
    chainage_m : float
        [m].
    elevation_m : float
        Pipe elevation there [m].
    rule : str
        The rule that placed it, in words.
    source : str
        Where the rule comes from.
    size_mm : float or None
        Valve size [mm].
    detail : str
        Numbers that make the case (prominence, HGL clearance).
    """

    kind: str
    index: int
    chainage_m: float
    elevation_m: float
    rule: str
    source: str
    size_mm: float | None = None
    detail: str = ""


def air_valve_size(main_od_mm: float) -> tuple[float, str]:
    """Air valve size and type for a main (Vinidex table) [mm]."""
    if main_od_mm <= 110:
        return 25.0, "single orifice"
    if main_od_mm <= 225:
        return 50.0, "double orifice"
    return 80.0, "double orifice"


def washout_size(main_od_mm: float) -> float:
    """Washout size for a main (Vinidex table, capped at the main's size) [mm]."""
    table = 80.0 if main_od_mm <= 110 else 100.0 if main_od_mm <= 225 else 150.0
    return float(min(table, main_od_mm))


def _slopes(ch: NDArray, z: NDArray, window: float):
    """Mean slope over ``window`` metres behind and ahead of each point [-]."""
    behind = np.interp(ch - window, ch, z)
    ahead = np.interp(ch + window, ch, z)
    w_b = np.maximum(ch - np.maximum(ch - window, ch[0]), 1e-9)
    w_a = np.maximum(np.minimum(ch + window, ch[-1]) - ch, 1e-9)
    return (z - behind) / w_b, (ahead - z) / w_a


class _Placed:
    """The features placed so far along a line, at most one of each kind per profile point.

    Parameters
    ----------
    chainage, pipe : ndarray
        Profile chainage and pipe elevation [m].
    main_od_mm : ndarray
        Outside diameter of the pipe at each point [mm] (for valve sizes).
    """

    def __init__(self, chainage: NDArray, pipe: NDArray, main_od_mm: NDArray):
        self.chainage, self.pipe, self.main_od_mm = chainage, pipe, main_od_mm
        self.out: list[Feature] = []
        self.taken: set = set()

    def add(self, kind: str, i, rule: str, source: str, detail: str = "") -> None:
        """Place a feature of ``kind`` at point ``i``, sized for the main there, if none is yet."""
        if (kind, i) in self.taken:
            return
        self.taken.add((kind, i))
        od = float(self.main_od_mm[min(i, self.main_od_mm.size - 1)])
        size = air_valve_size(od)[0] if kind == "air_valve" else washout_size(od)
        kind_text = f" ({air_valve_size(od)[1]})" if kind == "air_valve" else ""
        self.out.append(Feature(kind, int(i), float(self.chainage[i]), float(self.pipe[i]),
                                rule + kind_text, source, size, detail))


def place_features(chainage: NDArray, pipe: NDArray, hgl: NDArray, main_od_mm: NDArray,
                   reaches: list[tuple[int, int]], *, prominence_m: float = 2.0,
                   grade_change: float = 0.05, grade_window_m: float = 100.0,
                   spacing_m: float = 800.0, long_ascent_m: float = 500.0) -> list[Feature]:
    """Air valves and washouts for a line.

    Parameters
    ----------
    chainage, pipe, hgl : ndarray
        Profile chainage, pipe elevation and hydraulic grade line at design flow [m].
    main_od_mm : ndarray
        Outside diameter of the pipe at each point [mm] (for valve sizes).
    reaches : list of (int, int)
        First and last point of each reach; the free surfaces at their starts vent air.
    prominence_m : float
        Smallest height of a crest or low point above its surroundings that counts [m];
        keep it above the DEM's noise (about 2 sigma).
    grade_change : float
        Smallest change of slope that counts as a break of grade [-].
    grade_window_m : float
        Length over which slopes are averaged for grade breaks [m].
    spacing_m : float
        Largest distance between air valves (or a free surface) along a run [m].
    long_ascent_m : float
        Uphill runs longer than this get a washout at their foot [m].

    Returns
    -------
    list of Feature, in order of chainage.
    """
    placed = _Placed(chainage, pipe, main_od_mm)
    for a, b in reaches:
        ch, z = chainage[a:b + 1], pipe[a:b + 1]
        if ch.size < 3:
            continue
        peaks = _crest_valves(placed, a, z, hgl, prominence_m)
        _grade_break_valves(placed, a, ch, z, peaks, grade_change, grade_window_m)
        _low_point_washouts(placed, a, z, prominence_m)
        _ascent_washouts(placed, a, ch, z, long_ascent_m, grade_window_m)
        _interval_valves(placed, a, b, spacing_m)
    out = placed.out
    out.sort(key=lambda f: (f.chainage_m, f.kind))
    return out


def _crest_valves(placed: _Placed, a: int, z: NDArray, hgl: NDArray,
                  prominence_m: float) -> NDArray:
    """Rule 1: an air valve at each crest of a reach's pipe profile; the crests' indices.

    Parameters
    ----------
    placed : _Placed
        Features so far; the valves are added to it.
    a : int
        First point of the reach.
    z : ndarray
        Pipe elevation along the reach [m].
    hgl : ndarray
        Hydraulic grade line along the whole line [m].
    prominence_m : float
        Smallest prominence of a crest that counts [m].

    Returns
    -------
    ndarray of int
        The crests, as indices within the reach.
    """
    # 1. crests
    peaks, props = find_peaks(z, prominence=prominence_m)
    for p, prom in zip(peaks, props["prominences"]):
        clear = hgl[a + p] - z[p]
        placed.add("air_valve", a + p, "crest of the pipe profile", f"{M51}; {VINIDEX}",
                   f"prominence {prom:.1f} m; HGL {clear:.1f} m above the pipe")
    return peaks


def _grade_break_valves(placed: _Placed, a: int, ch: NDArray, z: NDArray, peaks: NDArray,
                        grade_change: float, grade_window_m: float) -> None:
    """Rule 2: an air valve at each break of grade of a reach where air collects.

    Parameters
    ----------
    placed : _Placed
        Features so far; the valves are added to it.
    a : int
        First point of the reach.
    ch, z : ndarray
        Chainage and pipe elevation along the reach [m].
    peaks : ndarray of int
        The reach's crests (indices within it); breaks nearer than ``grade_window_m``
        to one are left to the crest's valve.
    grade_change : float
        Smallest change of slope that counts [-].
    grade_window_m : float
        Length over which slopes are averaged [m].
    """
    # 2. grade breaks where air collects (slope decreasing in the flow direction)
    before, after = _slopes(ch, z, grade_window_m)
    change = after - before
    cand, _ = find_peaks(-change, height=grade_change, distance=max(
        1, int(grade_window_m / max(np.median(np.diff(ch)), 1e-9))))
    crest_ch = ch[peaks] if peaks.size else np.array([])
    for c in cand:
        if c == 0 or c == ch.size - 1:
            continue
        if crest_ch.size and np.min(np.abs(crest_ch - ch[c])) < grade_window_m:
            continue
        what = "an ascending line gets flatter" if before[c] > 0 else \
            "a descending line gets steeper"
        placed.add("air_valve", a + c, f"break of grade: {what}", M51,
                   f"slope {before[c] * 100:+.1f} % to {after[c] * 100:+.1f} %")


def _low_point_washouts(placed: _Placed, a: int, z: NDArray, prominence_m: float) -> None:
    """Rule 4: a washout at each low point of a reach's pipe profile.

    Parameters
    ----------
    placed : _Placed
        Features so far; the washouts are added to it.
    a : int
        First point of the reach.
    z : ndarray
        Pipe elevation along the reach [m].
    prominence_m : float
        Smallest depth of a low point below its surroundings that counts [m].
    """
    # 4. washouts at low points
    lows, lprops = find_peaks(-z, prominence=prominence_m)
    for p, prom in zip(lows, lprops["prominences"]):
        placed.add("washout", a + p, "low point of the pipe profile", VINIDEX,
                   f"prominence {prom:.1f} m")


def _ascent_washouts(placed: _Placed, a: int, ch: NDArray, z: NDArray, long_ascent_m: float,
                     grade_window_m: float) -> None:
    """Rule 4, continued: a washout at the foot of each long uphill run of a reach.

    Parameters
    ----------
    placed : _Placed
        Features so far; the washouts are added to it.
    a : int
        First point of the reach.
    ch, z : ndarray
        Chainage and pipe elevation along the reach [m].
    long_ascent_m : float
        Uphill runs at least this long get a washout at their foot [m].
    grade_window_m : float
        No washout is added within this distance of one already placed [m].
    """
    # washout at the foot of long uphill runs
    chainage, taken = placed.chainage, placed.taken
    for s0, last in true_runs(np.diff(z) > 0):           # segments s0..last rise
        s1 = last + 1
        if ch[s1] - ch[s0] >= long_ascent_m and s0 > 0 and \
                not any(k == "washout" and abs(chainage[i] - ch[s0]) < grade_window_m
                        for k, i in taken):
            placed.add("washout", a + s0, "foot of a long uphill run", "common practice",
                       f"rises {z[s1] - z[s0]:.1f} m over {ch[s1] - ch[s0]:,.0f} m")


def _interval_valves(placed: _Placed, a: int, b: int, spacing_m: float) -> None:
    """Rule 3: air valves at even intervals where vents along a reach are over ``spacing_m`` apart [m].

    Parameters
    ----------
    placed : _Placed
        Features so far; the valves are added to it.
    a, b : int
        First and last point of the reach; the free surface at ``a`` vents air.
    spacing_m : float
        Largest distance between air valves (or a free surface) along a run [m].
    """
    # 3. intervals: the reach's free surface vents air at its start
    chainage, taken = placed.chainage, placed.taken
    vents = sorted({a} | {i for k, i in taken if k == "air_valve" and a <= i <= b} | {b})
    for v0, v1 in zip(vents[:-1], vents[1:]):
        gap = chainage[v1] - chainage[v0]
        n_more = int(np.ceil(gap / spacing_m - 1e-9)) - 1
        for k in range(1, n_more + 1):
            target = chainage[v0] + gap * k / (n_more + 1)
            i = int(np.argmin(np.abs(chainage - target)))
            placed.add("air_valve", i, f"long run: at most {spacing_m:,.0f} m between air valves",
                       f"{VINIDEX} (500-1000 m); {M51} (0.4-0.8 km)",
                       f"{gap:,.0f} m between chainage {chainage[v0]:,.0f} and {chainage[v1]:,.0f} m")
