"""Profile drawings for a permit file.

The line is drawn on numbered sheets, each with a data band and a title block.

Each sheet covers ``km_per_sheet`` of chainage; consecutive sheets meet at the same
chainage.  Under the profile and pressure panels a data band gives chainage, ground,
pipe, hydraulic grade line and pressure at the key points of the sheet (its ends, tanks,
outlets, valves and regular stations); the title block states the project, the line,
date and revision, horizontal and vertical scales, CRS and vertical datum, the DEM, and
the sheet number; the notes carry the cautions.  Written as one multi-page PDF and an
SVG per sheet (text kept as text).  Reads results only.
"""

from __future__ import annotations

import datetime as _dt
import math
import textwrap
from pathlib import Path

import numpy as np

from ..cautions import CAUTIONS
from .mpl import pyplot
from .files import atomic_path
from .paper import SHEETS
from .profile_plot import axes_size_in, draw_panels


def windows(length_m: float, km_per_sheet: float) -> list[tuple[float, float]]:
    """Chainage windows of the sheets; they meet end to end and cover the line.

    Examples
    --------
    >>> windows(5000.0, 2.0)
    [(0.0, 2000.0), (2000.0, 4000.0), (4000.0, 5000.0)]
    """
    n = max(1, math.ceil(length_m / (km_per_sheet * 1000.0) - 1e-9))
    edges = [min(k * km_per_sheet * 1000.0, length_m) for k in range(n + 1)]
    return [(float(a), float(b)) for a, b in zip(edges[:-1], edges[1:])]


def key_points(plan, lo: float, hi: float, *, station_m: float = 250.0, max_points: int = 18):
    """Indices of the points a sheet's data band lists, in order of chainage."""
    prof = plan.profile
    ch = prof.chainage_m
    marked = {prof.index_at(lo), prof.index_at(hi)}
    marked |= {t.index for t in plan.tanks if lo <= t.chainage_m <= hi}
    marked |= {o.index for o in plan.outlets if lo <= o.chainage_m <= hi}
    marked |= {f.index for f in plan.features if lo <= f.chainage_m <= hi}
    stations = [prof.index_at(c) for c in np.arange(math.ceil(lo / station_m) * station_m, hi,
                                                    station_m)]
    for i in stations:
        if all(abs(ch[i] - ch[j]) > station_m / 4 for j in marked):
            marked.add(i)
    idx = sorted(marked, key=lambda i: ch[i])
    while len(idx) > max_points:                 # thin the regular stations first
        spare = [i for i in idx if i in stations and i not in (idx[0], idx[-1])]
        if not spare:
            break
        idx.remove(spare[len(spare) // 2])
    return idx


def draw_sheet(plan, window, number: int, total: int, *, sheet: str = "A3",
               revision: str = "A", date: str | None = None):
    """One sheet; returns the matplotlib Figure."""
    plt = pyplot()
    from matplotlib.patches import Rectangle

    w_mm, h_mm = SHEETS[sheet]
    fig = plt.figure(figsize=(w_mm / 25.4, h_mm / 25.4))
    gs = fig.add_gridspec(4, 2, height_ratios=[3.0, 1.2, 2.0, 0.9], width_ratios=[2.2, 1],
                          left=0.06, right=0.98, bottom=0.03, top=0.96, hspace=0.22, wspace=0.05)
    ax = fig.add_subplot(gs[0, :])
    axp = fig.add_subplot(gs[1, :], sharex=ax)
    band = fig.add_subplot(gs[2, :], sharex=ax)
    notes = fig.add_subplot(gs[3, 0])
    block = fig.add_subplot(gs[3, 1])
    ve = draw_panels(ax, axp, plan, window, title=False, layout_fixed=True)
    axp.set_xlabel("")
    lo, hi = window
    prof, e = plan.profile, plan.energy

    # the data band: one column of values per key point, read downwards
    band.set_ylim(0, 5.6)
    band.set_yticks([])
    band.tick_params(axis="x", labelsize=7)
    band.set_xlabel("chainage [km]")
    rows = (("chainage [m]", prof.chainage_m, "{:,.0f}"), ("ground [m]", prof.ground_m, "{:.1f}"),
            ("pipe [m]", prof.pipe_m, "{:.1f}"), ("HGL [m]", e.hgl, "{:.1f}"),
            ("pressure [m]", e.pressure_head, "{:.1f}"))
    for r, (label, values, fmt) in enumerate(rows):
        y = 5.0 - r * 1.05
        band.axhline(y - 0.5, color="#999999", lw=0.5)
        band.text(-0.005, y, label, transform=band.get_yaxis_transform(), ha="right",
                  va="center", fontsize=7)
        for i in key_points(plan, lo, hi):
            band.text(prof.chainage_m[i] / 1000.0, y, fmt.format(values[i]), rotation=90,
                      ha="center", va="center", fontsize=5.5)
    for i in key_points(plan, lo, hi):
        for axis in (ax, axp, band):
            axis.axvline(prof.chainage_m[i] / 1000.0, color="#dddddd", lw=0.4, zorder=0)

    # scales as printed on this sheet size
    width_in, height_in = axes_size_in(ax, layout_fixed=True)
    (x0, x1), (y0, y1) = ax.get_xlim(), ax.get_ylim()
    h_scale = (x1 - x0) * 1e6 / (width_in * 25.4)            # mm of ground per mm of paper
    v_scale = (y1 - y0) * 1e3 / (height_in * 25.4)
    sc = plan.scenario
    for axis in (notes, block):
        axis.set_xticks([])
        axis.set_yticks([])
    notes.text(0.01, 0.95, "Notes and cautions", fontsize=8, weight="bold", va="top")
    notes.text(0.01, 0.78, "\n".join(
        textwrap.fill(f"{i}. {c}", width=120, subsequent_indent="   ")
        for i, c in enumerate(CAUTIONS, start=1)), fontsize=6.5, va="top", family="monospace")
    today = date or _dt.date.today().isoformat()
    lines = [
        ("project", sc.project.name), ("reference", sc.project.reference or "-"),
        ("line", "longitudinal profile" + (f" - {sc.project.engineer}" if sc.project.engineer else "")),
        ("date / revision", f"{today} / {revision}"),
        ("scales", f"horizontal 1:{h_scale:,.0f}, vertical 1:{v_scale:,.0f} on {sheet} "
                   f"(exaggeration {ve:,.0f}:1)"),
        ("CRS / datum", f"{prof.crs} / {prof.vertical_datum}"),
        ("elevations", prof.elevation_source[:70]),
        ("chainage", f"{lo:,.0f} to {hi:,.0f} m"),
        ("sheet", f"{number} of {total}"),
    ]
    block.add_patch(Rectangle((0, 0), 1, 1, fill=False, lw=1.2,
                                                 transform=block.transAxes))
    for k, (label, text) in enumerate(lines):
        y = 0.92 - k * 0.105
        block.text(0.02, y, label, fontsize=6.5, weight="bold", va="center")
        block.text(0.27, y, text, fontsize=6.5, va="center")
    return fig


def write_sheets(plan, folder: str | Path, *, stem: str = "profile", sheet: str = "A3",
                 km_per_sheet: float = 2.0, revision: str = "A", date: str | None = None):
    """Write ``<stem>.pdf`` (all sheets) and ``<stem>_sheetN.svg``, each atomically."""
    plt = pyplot()
    from matplotlib.backends.backend_pdf import PdfPages

    folder = Path(folder)
    out = {}
    wins = windows(plan.profile.length_m, km_per_sheet)
    with atomic_path(folder / f"{stem}.pdf", suffix=".pdf") as tmp:
        with plt.rc_context({"pdf.fonttype": 42, "svg.fonttype": "none"}), \
                PdfPages(tmp) as pdf:
            for k, win in enumerate(wins, start=1):
                fig = draw_sheet(plan, win, k, len(wins), sheet=sheet, revision=revision, date=date)
                pdf.savefig(fig)
                svg = folder / f"{stem}_sheet{k}.svg"
                with atomic_path(svg, suffix=".svg") as stmp:
                    fig.savefig(stmp, format="svg")
                out[svg.name] = svg
                plt.close(fig)
    out[f"{stem}.pdf"] = folder / f"{stem}.pdf"
    return out
