"""What each segment of a laid-out system may be made of, and the state the steps share.

A candidate pipe is admitted in a segment when its derated class holds the static head
there, the static head plus surge stays within ``criteria.surge_rating_factor`` times
that class, and the water moves no faster than ``criteria.velocity_max_mps``.  Surge is
first judged for each candidate as if it were the whole reach; once a design is built,
each reach's pipes are taken as one equivalent pipe and the candidates admitted again
where that gives more (:func:`surge_paths`).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from numpy.typing import NDArray

from ..hydraulics import surge as sg
from ..scenario import Scenario
from .layout import Layout
from .problem import reach_equivalents, surge_pool


@dataclass
class System:
    """What the steps share: the layout and everything derived from it before sizing."""

    sc: Scenario
    lay: Layout
    draws: list                     # per link: (chainage [m], flow [m3/s]) drawn off it
    flows: list                     # per link: flow in each segment [m3/s]
    total_in: NDArray               # per link: flow entering it [m3/s]
    options: list
    rating_head: NDArray            # derated rating of each option as head [m]
    wave: NDArray                   # wave speed of each option [m/s]
    cand: list                      # per link: (velocity, velocity head, friction slope)
    nu: float
    rho: float
    sites: list = field(default_factory=list)       # per link: TankSite list
    surfaces: list = field(default_factory=list)    # per link: FreeSurface list (first:
    #                                                 the source or the junction)
    allowed: list = field(default_factory=list)     # per link: (segments, options) admissible
    seg_static: list = field(default_factory=list)  # per link: static head of each segment [m]
    surge_len: list = field(default_factory=list)   # per link: the wave's path of each reach [m]
    # per link: each reach's equivalent pipe (wave speed [m/s], velocity [m/s]) that the
    # candidates are admitted with; empty: each candidate as if it were the whole reach
    paths: list = field(default_factory=list)
    # per link: the margin at each point that holds the design to design.confidence [m]
    # (empty: none); added to the pressures required and to the static head
    margin: list = field(default_factory=list)

    def on(self, k: int) -> str:
        """The prefix naming link ``k`` in a message (none on a single line)."""
        return f"{self.lay.names[k]}: " if len(self.lay.profiles) > 1 else ""


#: Rounds of "size, find each reach's equivalent pipe, admit the candidates again with
#: it" at most [-].  The equivalent velocities only grow and wave speeds only fall from
#: round to round, so the admitted sets only shrink.
SURGE_ROUNDS = 4


def surge_paths(s: System, built, energies, remaps) -> bool:
    """Admit the candidates again where the built reaches' surge exceeds a rating.

    Each reach's pipes as built, taken as one equivalent pipe
    (:func:`~planner.hydraulics.surge.equivalent_pipe`), may give more slow-closure
    surge than the candidates were admitted with (each as if it were the whole reach).
    Where a built segment then exceeds its class, the reaches' equivalent pipes (the
    higher velocity and the lower wave speed of this and earlier rounds) become the
    rule and every link's candidates are admitted again.  Returns whether they were.
    """
    cr = s.sc.criteria
    found, short = [], False
    for k, ((refined, seg_opt), e, remap) in enumerate(zip(built, energies, remaps)):
        surf_r = [int(remap[f.index]) for f in s.surfaces[k]]
        reaches_r = list(zip(surf_r, surf_r[1:] + [refined.n - 1]))
        a_e, v_e = reach_equivalents(refined, seg_opt, e.velocity, reaches_r, s.wave)
        if s.paths:
            a_e, v_e = np.fmin(a_e, s.paths[k][0]), np.fmax(v_e, s.paths[k][1])
        found.append((a_e, v_e))
        seg_r = np.searchsorted(surf_r, np.arange(refined.n - 1), side="right") - 1
        static = e.static_head[:-1] - np.minimum(refined.pipe_m[:-1], refined.pipe_m[1:])
        wave = s.wave[seg_opt]
        rise = sg.series_surge_head(s.surge_len[k][seg_r], e.velocity[:-1], wave, cr.valve_closure_s,
                                    a_e[seg_r], v_e[seg_r])
        if s.margin:
            m = np.interp(refined.chainage_m, s.lay.profiles[k].chainage_m, s.margin[k])
            static = static + np.maximum(m[:-1], m[1:])
        over = static + np.where(np.isfinite(wave), rise, 0.0) \
            - cr.surge_rating_factor * s.rating_head[seg_opt]
        short |= bool(np.any(over > 1e-6))
    if not short:
        return False
    s.paths = found
    s.allowed = [admissible(s, k, prof)[0] for k, prof in enumerate(s.lay.profiles)]
    return True


def admissible(s: System, k: int, prof):
    """Candidates admissible in each segment of link ``k``, and why others are not.

    Returns the (segments, candidates) mask, the segments' static head as the DEM gives
    it [m] (for messages), and how far short of a class [m] the segments are that surge
    and the confidence margin leave without one.
    """
    cr = s.sc.criteria
    surf = s.surfaces[k]
    seg_r = np.searchsorted([f.index for f in surf], np.arange(prof.n - 1), side="right") - 1
    level = np.array([surf[r].static_level for r in seg_r])
    static = level - np.minimum(prof.pipe_m[:-1], prof.pipe_m[1:])
    v = s.cand[k][0]
    length = s.surge_len[k][seg_r][:, None]
    if s.paths:
        a_e, v_e = (arr[seg_r][:, None] for arr in s.paths[k])
        rise = sg.series_surge_head(length, v, s.wave[None, :], cr.valve_closure_s, a_e, v_e)
    else:
        rise = sg.surge_head(length, v, s.wave[None, :], cr.valve_closure_s)
    surge = np.where(np.isfinite(s.wave)[None, :], rise, 0.0)
    ok_static = static[:, None] <= s.rating_head[None, :]
    held = static                # the class holds the static head at the design confidence
    if s.margin:
        held = static + np.maximum(s.margin[k][:-1], s.margin[k][1:])
    fits = np.minimum(s.rating_head[None, :] - held[:, None],
                      cr.surge_rating_factor * s.rating_head[None, :] - held[:, None] - surge)
    slow = v <= cr.velocity_max_mps
    allowed = ok_static & (fits >= 0) & slow
    pool = surge_pool(ok_static & slow, v, cr.velocity_min_mps)
    short = ~(allowed & pool).any(axis=1) & pool.any(axis=1)
    return allowed, static, -np.max(np.where(pool, fits, -np.inf), axis=1)[short]
