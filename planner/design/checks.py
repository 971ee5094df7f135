"""Checks of a computed line against the design criteria, as Findings.

Each check looks at every profile point, not only at outlets: the critical point of
a gravity line is often a crest in the middle.  A finding says where, what, and what
to do about it.  Sources of the limits are given with the criteria in
docs/scenario.md.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from .._arrays import true_runs
from ..units import G, LPS
from .uncertainty import margin_sentence


@dataclass(frozen=True)
class Finding:
    """One result of a check.

    Attributes
    ----------
    severity : str
        ``"error"`` (the design does not work or is unsafe as stated), ``"warning"``
        (works, but outside good practice) or ``"note"``.
    code : str
        Short stable identifier of the check, e.g. ``"sub-atmospheric"``.
    message : str
        What is wrong, with numbers.
    remedy : str
        What to do about it.
    chainage_m : float or None
        Start of the stretch concerned [m].
    chainage_end_m : float or None
        End of the stretch [m] (equal to the start for a point).
    """

    severity: str
    code: str
    message: str
    remedy: str = ""
    chainage_m: float | None = None
    chainage_end_m: float | None = None


def _where(ch: NDArray, a: int, b: int) -> str:
    return f"at chainage {ch[a]:,.0f} m" if a == b else \
        f"from chainage {ch[a]:,.0f} to {ch[b]:,.0f} m"


def check_line(*, chainage: NDArray, pressure_head: NDArray, static_pressure_head: NDArray,
               velocity: NDArray, flowing: NDArray, rating_head, criteria,
               elevation: NDArray | None = None, temperature_c: float = 20.0,
               surface_index: tuple[int, ...] = (0,)) -> list[Finding]:
    """Pressure and velocity checks at every profile point.

    Parameters
    ----------
    chainage : ndarray
        [m].
    pressure_head : ndarray
        Pressure head at design flow [m].
    static_pressure_head : ndarray
        Pressure head with all outlets closed [m].
    velocity : ndarray
        Velocity of the pipe leaving each point [m/s].
    flowing : ndarray of bool
        Where the pipe carries flow at design conditions.
    rating_head : float or ndarray
        The pipe's (derated) pressure rating as head at each point [m].
    criteria : Criteria
        Limits (see :class:`planner.scenario.Criteria`).
    elevation : ndarray, optional
        Pipe elevation [m], for the siphon (vapour) limit.
    temperature_c : float
        Water temperature [degC], for the vapour pressure.
    surface_index : tuple of int
        Points where a free surface feeds the line (source, tanks).  A low-pressure
        stretch that starts there is the tank's own shallow head, not a margin
        problem, and is not reported as one.

    Returns
    -------
    list of Finding
    """
    ch = chainage
    rating = np.broadcast_to(np.asarray(rating_head, dtype=float), ch.shape)
    siphon_limit = None if elevation is None else _siphon_limit(elevation, temperature_c, criteria)
    out = _below_atmospheric(ch, pressure_head, siphon_limit, criteria)
    out += _low_pressure(ch, pressure_head, flowing, criteria, surface_index)
    out += _over_rating(ch, static_pressure_head, rating)
    out += _velocity_out_of_range(ch, velocity, flowing, criteria)
    return out


def _siphon_limit(elevation: NDArray, temperature_c: float, criteria) -> NDArray:
    """Lowest pressure head allowed in a siphon at each point: the vapour limit plus a margin [m].

    Parameters
    ----------
    elevation : ndarray
        Pipe elevation [m].
    temperature_c : float
        Water temperature [degC].
    criteria : Criteria
        For ``siphon_margin_m`` [m].

    Returns
    -------
    ndarray
        The limit, negative: H_atm(z) - H_v(T) less the margin, below atmospheric [m].
    """
    from ..hydraulics.water import atmospheric_pressure, density, vapour_pressure
    rho_g = density(temperature_c) * G
    # at most H_atm(z) - H_v(T) - a margin below atmospheric (standard atmosphere,
    # ISO 2533:1975; vapour pressure, IAPWS-IF97; the margin is common practice)
    return -((atmospheric_pressure(elevation) - vapour_pressure(temperature_c))
             / rho_g - criteria.siphon_margin_m)


def _below_atmospheric(ch: NDArray, pressure_head: NDArray, siphon_limit: NDArray | None,
                       criteria) -> list[Finding]:
    """Findings for stretches below atmospheric pressure at design flow: siphons or errors.

    Parameters
    ----------
    ch : ndarray
        Chainage [m].
    pressure_head : ndarray
        Pressure head at design flow [m].
    siphon_limit : ndarray or None
        Lowest pressure head a siphon can hold [m] (see :func:`_siphon_limit`); None
        when the elevation is unknown.
    criteria : Criteria
        For ``allow_siphon`` and ``siphon_margin_m`` [m].

    Returns
    -------
    list of Finding
    """
    out: list[Finding] = []
    for a, b in true_runs(pressure_head < 0):
        worst = a + int(np.argmin(pressure_head[a:b + 1]))
        beyond = siphon_limit is not None and np.any(pressure_head[a:b + 1] < siphon_limit[a:b + 1])
        where = (f"pressure below atmospheric {_where(ch, a, b)} (lowest {pressure_head[worst]:.1f} m "
                 f"at {ch[worst]:,.0f} m): the pipe lies above the hydraulic grade line")
        if criteria.allow_siphon and not beyond:
            out.append(Finding(
                "warning", "siphon", where + ", so this stretch runs as a siphon (allowed by "
                "criteria.allow_siphon): it needs an airtight line, no air valves there, and "
                "priming; dirty water can be drawn in at any leak",
                "prefer a larger pipe upstream or a lower line; never in a drinking-water line "
                "without disinfection", float(ch[a]), float(ch[b])))
            continue
        out.append(Finding(
            "error", "sub-atmospheric",
            where + (", deeper than water can be lifted by siphon there (vapour limit less the "
                     f"{criteria.siphon_margin_m:g} m margin)" if beyond else
                     ", so the line runs as a siphon, air comes out of solution and dirty water "
                     "can be drawn in at leaks"),
            "use a larger pipe upstream of this stretch, lower the line (deeper trench or "
            "another route), or move a break-pressure tank",
            float(ch[a]), float(ch[b])))
    return out


def _low_pressure(ch: NDArray, pressure_head: NDArray, flowing: NDArray, criteria,
                  surface_index: tuple[int, ...]) -> list[Finding]:
    """Warnings for flowing stretches with a pressure head between 0 and the minimum [m].

    Parameters
    ----------
    ch : ndarray
        Chainage [m].
    pressure_head : ndarray
        Pressure head at design flow [m].
    flowing : ndarray of bool
        Where the pipe carries flow at design conditions.
    criteria : Criteria
        For ``min_line_pressure_m`` [m].
    surface_index : tuple of int
        Points where a free surface feeds the line; a stretch starting there is skipped.

    Returns
    -------
    list of Finding
    """
    out: list[Finding] = []
    low = (pressure_head >= 0) & (pressure_head < criteria.min_line_pressure_m) & flowing
    for a, b in true_runs(low):
        if a in surface_index:
            continue
        worst = a + int(np.argmin(pressure_head[a:b + 1]))
        out.append(Finding(
            "warning", "low-pressure",
            f"pressure head below {criteria.min_line_pressure_m:g} m {_where(ch, a, b)} (lowest "
            f"{pressure_head[worst]:.1f} m): little margin before sub-atmospheric pressure, "
            "given DEM error",
            "check the levels in the field; consider a larger pipe upstream",
            float(ch[a]), float(ch[b])))
    return out


def _over_rating(ch: NDArray, static_pressure_head: NDArray, rating: NDArray) -> list[Finding]:
    """Errors for stretches whose static pressure head exceeds the pipe rating [m].

    Parameters
    ----------
    ch : ndarray
        Chainage [m].
    static_pressure_head : ndarray
        Pressure head with all outlets closed [m].
    rating : ndarray
        The pipe's (derated) pressure rating as head at each point [m].

    Returns
    -------
    list of Finding
    """
    out: list[Finding] = []
    for a, b in true_runs(static_pressure_head > rating + 1e-6):
        worst = a + int(np.argmax(static_pressure_head[a:b + 1]))
        out.append(Finding(
            "error", "over-rating",
            f"static pressure above the pipe rating ({rating[worst]:.0f} m of head) "
            f"{_where(ch, a, b)} (highest {static_pressure_head[worst]:.1f} m at "
            f"{ch[worst]:,.0f} m): the pipe may burst when outlets close",
            "add a break-pressure tank upstream of this stretch or use a higher pressure class",
            float(ch[a]), float(ch[b])))
    return out


def _velocity_out_of_range(ch: NDArray, velocity: NDArray, flowing: NDArray,
                           criteria) -> list[Finding]:
    """Warnings for flowing stretches above the velocity maximum, then below the minimum [m/s].

    Parameters
    ----------
    ch : ndarray
        Chainage [m].
    velocity : ndarray
        Velocity of the pipe leaving each point [m/s].
    flowing : ndarray of bool
        Where the pipe carries flow at design conditions.
    criteria : Criteria
        For ``velocity_max_mps`` and ``velocity_min_mps`` [m/s].

    Returns
    -------
    list of Finding
    """
    out: list[Finding] = []
    fast = (velocity > criteria.velocity_max_mps) & flowing
    for a, b in true_runs(fast):
        out.append(Finding(
            "warning", "velocity-high",
            f"velocity {velocity[a:b + 1].max():.2f} m/s {_where(ch, a, b)} is above "
            f"{criteria.velocity_max_mps:g} m/s: surge and erosion risk",
            "use a larger pipe; close valves slowly", float(ch[a]), float(ch[b])))
    slow = (velocity < criteria.velocity_min_mps) & flowing
    for a, b in true_runs(slow):
        out.append(Finding(
            "warning", "velocity-low",
            f"velocity {velocity[a:b + 1].min():.2f} m/s {_where(ch, a, b)} is below "
            f"{criteria.velocity_min_mps:g} m/s: sediment settles and air is not carried along",
            "use a smaller pipe where pressure allows; provide washouts and air valves",
            float(ch[a]), float(ch[b])))
    return out


def check_outlet(name: str, chainage: float, pressure_head: float, min_pressure: float,
                 max_pressure: float | None = None) -> list[Finding]:
    """Residual pressure at an outlet against its minimum and maximum.

    Too much pressure at a tap wastes water and breaks taps and floats: the maximum is
    the outlet's own ``max_pressure_m`` or ``criteria.max_outlet_pressure_m`` (60 m,
    the upper value listed in Malaysian water distribution design criteria; that it is
    meant as a maximum is from memory.  South Africa's Department of Water Affairs and
    Forestry rural water supply guidelines, DWAF 2004, cap static pressure at 90 m).
    """
    if max_pressure is not None and pressure_head > max_pressure + 1e-3:
        return [Finding(
            "warning", "outlet-pressure-high",
            f"{name} at chainage {chainage:,.0f} m gets {pressure_head:.1f} m of pressure head at "
            f"design flow, above {max_pressure:g} m: water is wasted and taps and floats wear out",
            "put a break-pressure tank or a pressure-reducing valve upstream, or a smaller pipe "
            "on the branch (give the outlet max_pressure_m and the design will burn the head)",
            chainage, chainage)]
    if pressure_head >= min_pressure - 5e-4:
        return []
    return [Finding(
        "error", "outlet-pressure",
        f"{name} at chainage {chainage:,.0f} m gets {pressure_head:.1f} m of pressure head at "
        f"design flow, below its minimum of {min_pressure:g} m",
        "use a larger pipe upstream, reduce the design flow, or move the outlet lower",
        chainage, chainage)]


def check_tank(name: str, chainage: float, arrival_hgl: float, level: float) -> list[Finding]:
    """Whether the design flow reaches a break-pressure tank's water level."""
    if arrival_hgl >= level:
        return []
    return [Finding(
        "error", "tank-not-reached",
        f"at design flow the hydraulic grade line arrives at {name} (chainage {chainage:,.0f} m) "
        f"at {arrival_hgl:.1f} m, {level - arrival_hgl:.1f} m below the tank's water level "
        f"{level:.1f} m: the tank cannot fill at that flow",
        "use a larger pipe upstream or place the tank lower", chainage, chainage)]


def check_yield(total_flow: float, yield_flow: float | None,
                daily_volume: float | None = None) -> list[Finding]:
    """Design flow against the source's safe yield.

    Where the peak flow exceeds the yield but the day's volume does not, a balancing
    tank can bridge the peaks: its size is found from the mass curve of the typical
    day (:func:`planner.design.demand.balancing_storage`).
    """
    if yield_flow is None:
        return [Finding("note", "yield-unknown", "the source's yield is not stated, so the "
                        "design flow is not checked against it",
                        "measure the yield in the dry season and add source.yield_lps")]
    if total_flow <= yield_flow:
        return []
    if daily_volume is not None and daily_volume <= yield_flow * 86400.0:
        from .demand import TYPICAL_DAY, balancing_storage

        storage = balancing_storage(np.asarray(TYPICAL_DAY), daily_volume, yield_flow)
        return [Finding(
            "warning", "storage-needed",
            f"peak design flow {total_flow / LPS:.2f} L/s is above the source yield "
            f"{yield_flow / LPS:.2f} L/s, but the day's use ({daily_volume:,.1f} m3) is within "
            f"it ({yield_flow * 86400:,.1f} m3): a balancing tank of at least {storage:,.1f} m3 "
            "between source and users bridges the peaks (mass curve of a typical rural day)",
            "build the tank, size the line below it for the peak and above it for the yield")]
    return [Finding(
        "error", "yield-exceeded",
        f"design flow {total_flow / LPS:.2f} L/s exceeds the source yield "
        f"{yield_flow / LPS:.2f} L/s",
        "add a storage tank to balance peak demand against the yield, reduce the demand, "
        "or add a source")]


def check_surge(stretches_, criteria) -> list[Finding]:
    """Static head plus the surge of closing a valve in ``valve_closure_s`` against the rating.

    The rise is Joukowsky's ``a V / g`` for closures faster than ``2 L / a``, Michaud's
    ``2 L V / (g t)`` otherwise (see :func:`planner.hydraulics.surge.surge_head`), with L
    the length of the reach from its free surface.  The allowed total is the derated
    rating times ``criteria.surge_rating_factor``.
    """
    from ..hydraulics.surge import safe_closure_time

    out = []
    if any(not np.isfinite(s.surge_head_m) for s in stretches_):
        out.append(Finding("note", "surge-unchecked",
                           "surge is not checked for pipes without an outside diameter and an "
                           "elastic modulus", "give pipe.outside_diameter_mm and "
                           "pipe.elastic_modulus_gpa (or use a catalogue)"))
    for s in stretches_:
        if not np.isfinite(s.surge_head_m):
            continue
        allowed = criteria.surge_rating_factor * s.rating_head_m
        # the worst segment, each with its own static head and velocity (the designer's
        # rule); without it, the stretch's highest static head and highest surge
        static, surge = ((s.surge_check_static_m, s.surge_check_surge_m)
                         if np.isfinite(s.surge_check_static_m)
                         else (s.max_static_head_m, s.surge_head_m))
        if static + surge <= allowed + 1e-6:
            continue
        room = allowed - static
        slower = ""
        if room > 0:
            t_safe = float(safe_closure_time(s.reach_length_m, s.max_velocity_mps, room))
            t_min = max(t_safe, 2 * s.reach_length_m / s.wave_speed_mps)
            slower = f"close valves over at least {t_min:.0f} s, "
        out.append(Finding(
            "error", "surge",
            f"{s.option.label} from chainage {s.chainage_m:,.0f} to {s.chainage_end_m:,.0f} m: "
            f"static {static:.0f} m plus surge {surge:.0f} m "
            f"(valve closed in {criteria.valve_closure_s:g} s, wave speed {s.wave_speed_mps:.0f} m/s) "
            f"exceeds {allowed:.0f} m",
            slower + "use a higher pressure class, or add a break-pressure tank",
            s.chainage_m, s.chainage_end_m))
    return out


def gravity_reachable(top_level_m: float, pipe_start_m: float,
                      outlets: list[tuple[str, float, float]]) -> list[str]:
    """What gravity cannot do at all, whatever the pipe: one message per problem.

    Parameters
    ----------
    top_level_m : float
        The source's highest water level [m].
    pipe_start_m : float
        Pipe elevation where the line leaves the source [m].
    outlets : list of (name, chainage [m], ground [m])

    Notes
    -----
    Water runs downhill only: with no pump, the energy line falls from the source's
    water level, so a tap above that level gets nothing, and a source whose water
    stands below its outlet pipe feeds nothing (the energy balance of the line itself;
    no empirical rule is involved).
    """
    problems = []
    if top_level_m <= pipe_start_m:
        problems.append(
            f"the source's top water level {top_level_m:,.2f} m is not above the pipe where it "
            f"leaves the source ({pipe_start_m:,.2f} m): no water enters the line; check the "
            "source levels (absolute levels must be on the DEM's datum)")
    for name, chainage, ground in outlets:
        if ground >= top_level_m:
            problems.append(
                f"outlet {name!r} at chainage {chainage:,.0f} m stands at {ground:,.1f} m, "
                f"{ground - top_level_m:,.1f} m above the source's water level "
                f"({top_level_m:,.1f} m): gravity cannot deliver there; move the outlet, find "
                "a higher source, or pump")
    return problems


#: A limit is warned about when DEM error breaks it in more than this share of the
#: realisations (common practice for a planning-stage check: 1 in 10).
PROBABILITY_WARN = 0.10


def check_uncertainty(u, path: str | None = None) -> list[Finding]:
    """Warnings where DEM error makes a limit uncertain, and the margin to add.

    ``u`` is a :class:`planner.design.uncertainty.Uncertainty`.  A limit is warned about
    when it breaks in more than :data:`PROBABILITY_WARN` of the realisations.  On a tree,
    ``path`` names the path from the source whose chainages the findings use (outlets
    are named by their own names and need no path).
    """
    m = u.model
    on = f"path {path}: " if path else ""
    short = f"DEM error sigma {m.sigma_m:.1f} m"
    basis = (f"DEM vertical error sigma {m.sigma_m:.1f} m, correlated over {m.correlation_m:,.0f} m "
             f"({m.source}); {u.realisations:,} realisations")
    out = []
    for name, p, fall in u.outlets:
        if p > PROBABILITY_WARN:
            out.append(Finding("warning", "dem-uncertainty",
                               f"outlet {name!r}: {p:.0%} chance that the residual pressure falls "
                               f"below its minimum ({short})",
                               f"survey the levels of the source, tanks and this outlet, or add "
                               f"{fall:.1f} m to its minimum pressure"))
    for chainage, p in u.crests:
        if p > PROBABILITY_WARN:
            out.append(Finding("warning", "dem-uncertainty",
                               f"{on}crest at chainage {chainage:,.0f} m: {p:.0%} chance that it rises "
                               f"above the hydraulic grade line ({short})",
                               "survey this crest; lower the pipe or re-route if it is confirmed",
                               chainage, chainage))
    for a, b, label, p in u.stretches:
        if p > PROBABILITY_WARN:
            out.append(Finding("warning", "dem-uncertainty",
                               f"{on}{label} from {a:,.0f} to {b:,.0f} m: {p:.0%} chance that the static "
                               f"pressure exceeds its rating somewhere ({short})",
                               "use the next pressure class there, or survey the low points", a, b))
    out.append(Finding("note", "dem-uncertainty",
                       f"{on}with {basis}: {u.p_any_outlet_short:.0%} chance that some outlet is "
                       f"short of its minimum pressure; "
                       + margin_sentence(u.margin_m, u.static_margin_m, u.design_confidence),
                       "a field survey of the line's levels removes most of this uncertainty"))
    return out
