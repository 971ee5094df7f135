"""Plan a scenario: its line, or its branched network, by the one design engine.

``plan_scenario`` takes the scenario's line (or a profile already sampled, for the live
editor) as a tree of one link and returns the line's :class:`~planner.design.results.Plan`;
``plan_network`` takes its network file (or lines drawn in the editor) and returns the
:class:`~planner.design.results.NetworkPlan`.  Both lay the system out
(:mod:`~planner.design.layout`) and hand it to :func:`~planner.design.engine.design_layout`.
"""

from __future__ import annotations

from dataclasses import replace

from ..errors import DesignError
from ..geo.profile import Profile
from ..scenario import Scenario
from .engine import design_layout
from .layout import build_profile, line_layout, tree_layout
from .results import NetworkPlan, Plan, line_result

__all__ = ["build_profile", "plan_network", "plan_scenario", "CONFIDENCE_LEVELS"]

#: Design confidences whose costs are reported as the price of confidence [-].
CONFIDENCE_LEVELS = (0.5, 0.9, 0.95, 0.99)


def plan_scenario(scenario: Scenario, *, profile: Profile | None = None, dem=None,
                  compare_single_size: bool = True) -> Plan:
    """Compute (and in design mode, design) a scenario's line at design flow.

    Parameters
    ----------
    scenario : Scenario
        From :func:`planner.scenario.load_scenario`.
    profile : Profile, optional
        A profile already sampled (e.g. while editing a route); else sampled here.
    dem : Dem, optional
        An open DEM to reuse between calls.
    compare_single_size : bool
        Also price the cheapest single size for comparison (the live editor skips it).

    Raises
    ------
    DesignError
        In design mode, when no design can meet the limits; the message says where
        and why, in numbers.
    """
    lay = line_layout(scenario, profile, dem)
    plan = design_layout(scenario, lay, compare_single_size=compare_single_size)
    if compare_single_size:
        plan = replace(plan, confidence_prices=_prices(scenario, lay, plan))
    return line_result(plan)


def plan_network(scenario: Scenario, *, lines=None, dem=None,
                 compare_single_size: bool = True) -> NetworkPlan:
    """Design a branched system (``route.network = true``).

    ``lines`` (lon/lat ``(LineString, name)`` pairs) replaces the scenario's route file
    and ``dem`` (an open :class:`~planner.geo.terrain.Dem`) its DEM paths, for the live
    editor, which keeps one DEM open between edits.
    """
    lay = tree_layout(scenario, lines, dem)
    plan = design_layout(scenario, lay, compare_single_size=compare_single_size)
    if compare_single_size:
        plan = replace(plan, confidence_prices=_prices(scenario, lay, plan))
    return plan


def _prices(sc: Scenario, lay, plan) -> tuple[tuple[float, float | None], ...]:
    """The cost of the design at each of :data:`CONFIDENCE_LEVELS` (None: no design).

    Only when the design is held to a confidence (its DEM named, design mode); the
    other designs skip the comparison of single sizes and use a small Monte Carlo
    (their chances are not reported).  The plan's own confidence reuses its cost.
    """
    u = plan.uncertainty[0][1] if plan.uncertainty else None
    if sc.design is None or u is None or u.design_confidence is None:
        return ()
    quick = replace(sc.uncertainty, realisations=10)
    out: list[tuple[float, float | None]] = []
    for c in CONFIDENCE_LEVELS:
        if c == sc.design.confidence:
            out.append((c, float(plan.pipe_cost)))
            continue
        other = replace(sc, design=replace(sc.design, confidence=c), uncertainty=quick)
        try:
            out.append((c, float(design_layout(other, lay, compare_single_size=False).pipe_cost)))
        except DesignError:
            out.append((c, None))
    return tuple(out)
