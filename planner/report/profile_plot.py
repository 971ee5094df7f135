"""The longitudinal profile drawing (matplotlib): ground, pipe, static head, HGL, pressures.

Upper panel: elevations along the chainage, with the static head line (a free
surface's level, stepping down at each break-pressure tank), the hydraulic grade
line at design flow, outlets and tanks.  Lower panel: pressure head at design flow
and with outlets closed, against the pipe rating.  The vertical exaggeration is
computed from the final axes and printed on the sheet.  Styled to stay legible in
black and white: line styles, not only colours, tell the lines apart.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ..cautions import SHORT_CAUTION
from .._arrays import true_runs
from ..design.results import Plan
from .mpl import pyplot
from .files import atomic_path


def _hgl_segments(plan: Plan):
    """HGL per reach, ending with the head that arrives at each tank."""
    e, ch = plan.energy, plan.profile.chainage_m
    for r in e.reaches:
        a, b = r.start_index, r.end_index
        y = e.hgl[a:b + 1].copy()
        if np.isfinite(e.arrival_hgl[b]):
            y[-1] = e.arrival_hgl[b]
        yield ch[a:b + 1], y, e.static_head[a]


#: Hatches that tell pipe options apart in the band, also in black and white print.
HATCHES = ("", "////", "....", "xxxx", "\\\\\\\\", "oo", "----", "++")


def _class_band(ax, plan: Plan, km, base, top):
    """A band along the bottom of the elevation panel: one shade per pipe option."""
    if not plan.stretches:
        return
    from matplotlib.patches import Rectangle

    labels = sorted({s.option.label for s in plan.stretches},
                    key=lambda lb: next(s.option.inside_diameter for s in plan.stretches
                                        if s.option.label == lb))
    greys = np.linspace(0.95, 0.35, max(len(labels), 2))
    height = 0.06 * (top - base)
    for s in plan.stretches:
        k = labels.index(s.option.label)
        ax.add_patch(Rectangle((s.chainage_m / 1000.0, base), (s.chainage_end_m - s.chainage_m) / 1000.0,
                               height, facecolor=str(greys[k]), edgecolor="black", lw=0.3,
                               hatch=HATCHES[k % len(HATCHES)], zorder=3))
    handles = [Rectangle((0, 0), 1, 1, facecolor=str(greys[k]), edgecolor="black", lw=0.3,
                         hatch=HATCHES[k % len(HATCHES)]) for k in range(len(labels))]
    leg = ax.legend(handles, labels, loc="upper right", fontsize=7, title="pipe (band at bottom)",
                    title_fontsize=7, framealpha=0.9, ncol=2 if len(labels) > 6 else 1)
    ax.add_artist(leg)


def draw_profile(plan: Plan, *, ax=None, figsize=(14.0, 8.0)):
    """Draw the whole line's profile on one figure; return the matplotlib Figure."""
    plt = pyplot()
    from matplotlib.layout_engine import ConstrainedLayoutEngine

    if ax is None:
        layout = ConstrainedLayoutEngine(rect=(0.0, 0.03, 1.0, 0.97))
        fig, (ax, axp) = plt.subplots(2, 1, figsize=figsize, sharex=True, layout=layout,
                                      gridspec_kw={"height_ratios": [3, 1.4]})
    else:
        fig, axp = ax.figure, None
    ve = draw_panels(ax, axp, plan)
    prof = plan.profile
    fig.text(0.01, 0.005,
             f"Vertical exaggeration about {ve:,.0f}:1.  Elevations: {prof.elevation_source}; "
             f"datum {prof.vertical_datum}; CRS {prof.crs}.  " + SHORT_CAUTION,
             fontsize=7, color="#333333")
    return fig


def draw_panels(ax, axp, plan: Plan, window: tuple[float, float] | None = None, *,
                title: bool = True, layout_fixed: bool = False) -> float:
    """Draw the elevation panel (and the pressure panel if ``axp``) over a chainage window.

    Returns the vertical exaggeration of the elevation panel as drawn [-].
    """
    prof, e = plan.profile, plan.energy
    km = prof.chainage_m / 1000.0
    lo, hi = window if window is not None else (0.0, prof.length_m)
    inside, view = _window_points(prof, lo, hi)
    base = float(np.nanmin(prof.pipe_m[inside])) - 20.0
    _draw_ground_and_pipe(ax, axp, prof, km, view, base)
    _draw_head_lines(ax, plan)
    _draw_source_and_tanks(ax, plan, lo, hi)
    _draw_outlets(ax, plan, lo, hi)
    _draw_features(ax, plan, lo, hi)
    top = max(float(np.nanmax(e.static_head[inside])), float(np.nanmax(e.hgl[inside]))) + 15.0
    ax.set_ylim(base, top)
    _class_band(ax, plan, km, base, top)
    _finish_elevation_panel(ax, plan, lo, hi, title)
    if axp is not None:
        _draw_pressure_panel(axp, plan, km, view)
    return vertical_exaggeration(ax, layout_fixed=layout_fixed)


def _window_points(prof, lo: float, hi: float):
    """The points inside a chainage window [m], and the slice to draw (one point beyond each end).

    Parameters
    ----------
    prof : Profile
    lo, hi : float
        Chainage of the window's ends [m].

    Returns
    -------
    inside : ndarray of bool
        Points within the window.
    view : slice
        The points drawn: the window and one point beyond each end, so sheets draw fast.
    """
    inside = (prof.chainage_m >= lo - 1e-6) & (prof.chainage_m <= hi + 1e-6)
    # draw only the window (and one point beyond each end), so sheets draw fast
    i0 = max(int(np.argmax(inside)) - 1, 0)
    i1 = min(int(prof.n - np.argmax(inside[::-1])) + 1, prof.n)
    return inside, slice(i0, i1)


def _in_window(c: float, lo: float, hi: float) -> bool:
    """Whether chainage ``c`` lies in the window from ``lo`` to ``hi`` [m]."""
    return lo - 1e-6 <= c <= hi + 1e-6


def _draw_ground_and_pipe(ax, axp, prof, km, view: slice, base: float) -> None:
    """Ground (filled down to ``base`` [m]), pipe, and the DEM voids bridged, hatched on both panels."""
    ax.fill_between(km[view], prof.ground_m[view], base, color="#d9cbb0", edgecolor="none",
                    label="ground")
    ax.plot(km[view], prof.ground_m[view], color="#6b5a3e", lw=1.0)
    ax.plot(km[view], prof.pipe_m[view], color="black", lw=1.6,
            label=f"pipe ({prof.cover_m:g} m cover)")
    for n, (a, b) in enumerate(true_runs(prof.filled)):
        v0, v1 = km[max(a - 1, 0)], km[min(b + 1, km.size - 1)]
        for axis in (ax, axp) if axp is not None else (ax,):
            axis.axvspan(v0, v1, facecolor="none", edgecolor="#b00000", hatch="///", lw=0.0,
                         label="DEM void, ground bridged" if n == 0 and axis is ax else None)


def _draw_head_lines(ax, plan: Plan) -> None:
    """The static head line and the hydraulic grade line of each reach [m] (x in km)."""
    first = True
    for x, y, static in _hgl_segments(plan):
        ax.plot(x / 1000.0, np.full(x.size, static), color="#1f4e9c", lw=1.2, ls="--",
                label="static head line" if first else None)
        ax.plot(x / 1000.0, y, color="#c0392b", lw=1.8, ls="-",
                label="hydraulic grade line (design flow)" if first else None)
        first = False


def _draw_source_and_tanks(ax, plan: Plan, lo: float, hi: float) -> None:
    """The source's top water level and each tank's water level [m], within the window [m]."""
    if _in_window(0.0, lo, hi):
        ax.plot([0], [plan.source_top_level_m], marker="v", ms=10, color="#1f4e9c", ls="none",
                label=plan.scenario.source.name)
    for t in plan.tanks:
        if not _in_window(t.chainage_m, lo, hi):
            continue
        c = t.chainage_m / 1000.0
        ax.plot([c], [t.water_level_m], marker="s", ms=9, mfc="white", mec="black", ls="none")
        ax.annotate(f"{t.name}\nch {t.chainage_m:,.0f} m, WL {t.water_level_m:.1f} m", (c, t.water_level_m),
                    xytext=(6, 14), textcoords="offset points", fontsize=8,
                    bbox=dict(boxstyle="round,pad=0.2", fc="white", ec="none", alpha=0.8))


def _draw_outlets(ax, plan: Plan, lo: float, hi: float) -> None:
    """Each outlet within the window [m], labelled with its flow [L/s] and residual pressure [m]."""
    prof = plan.profile
    for o in plan.outlets:
        if not _in_window(o.chainage_m, lo, hi):
            continue
        c = o.chainage_m / 1000.0
        z = prof.pipe_m[o.index]
        ax.plot([c], [z], marker="o", ms=8, mfc="#2e8b57", mec="black", ls="none")
        near_end = o.chainage_m > lo + 0.85 * (hi - lo)
        ax.annotate(f"{o.name}\n{o.flow_m3s * 1e3:.2f} L/s, {o.pressure_head_m:.1f} m",
                    (c, z), xytext=(-8, 12) if near_end else (8, -34), textcoords="offset points",
                    fontsize=8, ha="right" if near_end else "left",
                    bbox=dict(boxstyle="round,pad=0.2", fc="white", ec="none", alpha=0.8))


def _draw_features(ax, plan: Plan, lo: float, hi: float) -> None:
    """Air valves and washouts within the window [m], at the pipe elevation [m]."""
    marks = {"air_valve": ("^", "white", "air valve"), "washout": ("v", "#555555", "washout")}
    shown = set()
    for f in plan.features:
        if not _in_window(f.chainage_m, lo, hi):
            continue
        marker, colour, label = marks.get(f.kind, ("x", "black", f.kind))
        ax.plot([f.chainage_m / 1000.0], [f.elevation_m], marker=marker, ms=7, mfc=colour,
                mec="black", ls="none", label=None if f.kind in shown else label)
        shown.add(f.kind)


def _finish_elevation_panel(ax, plan: Plan, lo: float, hi: float, title: bool) -> None:
    """Label, grid, legend, x limits of the window [m, drawn in km] and title of the elevation panel."""
    ax.set_ylabel("elevation [m]")
    ax.grid(True, color="#cccccc", lw=0.5)
    handles, labels = ax.get_legend_handles_labels()
    ax.legend(handles, labels, loc="lower left", fontsize=8, framealpha=0.9)
    pad = 0.01 * (hi - lo) / 1000.0
    ax.set_xlim(lo / 1000.0 - pad, hi / 1000.0 + pad)
    sc = plan.scenario
    if title:
        pipes = (sc.pipe.label or sc.pipe.material) if sc.pipe is not None else \
            (f"{len({st.option.label for st in plan.stretches})} pipe sizes/classes, "
             f"cost {plan.pipe_cost:,.0f}")
        ax.set_title(f"{sc.project.name}\n{pipes}, design flow {plan.total_flow_m3s * 1e3:.2f} L/s",
                     fontsize=11, loc="left")


def _draw_pressure_panel(axp, plan: Plan, km, view: slice) -> None:
    """The pressure panel: pressure head at design flow and static, against the rating [m]."""
    e = plan.energy
    axp.plot(km[view], e.pressure_head[view], color="#c0392b", lw=1.5,
             label="pressure head, design flow")
    axp.plot(km[view], e.static_pressure_head[view], color="#1f4e9c", lw=1.2, ls="--",
             label="static pressure head (outlets closed)")
    axp.plot(km[view], plan.rating_head_m[view], color="black", lw=1.0, ls="-.",
             drawstyle="steps-post",
             label="pipe rating (derated), as head")
    axp.axhline(0.0, color="#888888", lw=0.8)
    axp.set_ylabel("pressure head [m]")
    axp.set_xlabel("chainage [km]")
    axp.grid(True, color="#cccccc", lw=0.5)
    axp.legend(loc="upper left", fontsize=8, framealpha=0.9)


def axes_size_in(ax, *, layout_fixed: bool = False) -> tuple[float, float]:
    """Width and height of an axes on the sheet [inches].

    With a fixed layout (no constrained layout) the axes' position is known without
    drawing the figure, which is much faster for multi-sheet output.
    """
    fig = ax.figure
    if layout_fixed:
        pos = ax.get_position()
        w, h = fig.get_size_inches()
        return pos.width * w, pos.height * h
    fig.canvas.draw()
    bbox = ax.get_window_extent().transformed(fig.dpi_scale_trans.inverted())
    return bbox.width, bbox.height


def vertical_exaggeration(ax, *, layout_fixed: bool = False) -> float:
    """Horizontal over vertical scale of an elevation panel (x in km, y in m) [-]."""
    w, h = axes_size_in(ax, layout_fixed=layout_fixed)
    (x0, x1), (y0, y1) = ax.get_xlim(), ax.get_ylim()
    return ((x1 - x0) * 1000.0 / w) / ((y1 - y0) / h)


def write_profile_png(plan: Plan, path: str | Path, *, dpi: int = 130) -> Path:
    """Draw the profile and save it as PNG, atomically."""
    import matplotlib.pyplot as plt

    fig = draw_profile(plan)
    try:
        with atomic_path(path) as tmp:
            fig.savefig(tmp, dpi=dpi, format="png")
    finally:
        plt.close(fig)
    return Path(path)
