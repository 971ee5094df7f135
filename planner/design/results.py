"""What a plan is: the records the designer fills and the report package reads.

A line and a tree are planned by the same engine (:mod:`planner.design.engine`) into a
:class:`NetworkPlan`; a line is a tree of one link.  :func:`as_line_plan` joins a chain
of links (a line, or the path from the source to a branch end) into one :class:`Plan`
that report code draws and writes.  Nothing here computes hydraulics; the module
imports no planner code beyond the record types, so report/ never imports the planner.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import TYPE_CHECKING

import numpy as np
from numpy.typing import NDArray

from ..catalogue.pipes import PipeOption
from ..geo.profile import Profile
from ..hydraulics.line import LineEnergy
from .checks import Finding
from .features import Feature
from .sizing import SizingResult
from .uncertainty import Uncertainty, margin_sentence  # noqa: F401  (for report/)

if TYPE_CHECKING:                        # type names only: the scenario is read elsewhere
    from ..geo.network import RouteNetwork
    from ..scenario import Scenario

SEVERITY_ORDER = {"error": 0, "warning": 1, "note": 2}


def finding_order(f: Finding) -> tuple:
    """How findings are listed, for lines and trees alike: errors first, then by chainage."""
    return (SEVERITY_ORDER[f.severity], f.chainage_m if f.chainage_m is not None else -1.0,
            f.message)


@dataclass(frozen=True)
class OutletResult:
    """An outlet as placed on the profile, with its residual pressure at design flow."""

    name: str
    kind: str
    chainage_m: float
    index: int
    flow_m3s: float
    ground_m: float
    pressure_head_m: float
    min_pressure_m: float
    basis: str = "flow given"
    max_pressure_m: float | None = None

    @property
    def ok(self) -> bool:
        """Whether the residual pressure meets the outlet's minimum."""
        return self.pressure_head_m >= self.min_pressure_m - 1e-6


@dataclass(frozen=True)
class TankResult:
    """A break-pressure tank: its water level and the head it takes out of the line."""

    name: str
    chainage_m: float
    index: int
    water_level_m: float
    arrival_hgl_m: float
    rule: str = "placed by the engineer"

    @property
    def dissipated_m(self) -> float:
        """Head destroyed in the tank at design flow [m] (negative: tank not reached)."""
        return self.arrival_hgl_m - self.water_level_m


@dataclass(frozen=True)
class Stretch:
    """A run of one pipe option along the line."""

    option: PipeOption
    start_index: int
    end_index: int
    chainage_m: float
    chainage_end_m: float
    length_m: float                 # along the pipe (3-D)
    cost: float
    rating_head_m: float            # derated rating as head
    max_static_head_m: float
    min_pressure_head_m: float
    max_velocity_mps: float
    surge_head_m: float = float("nan")
    wave_speed_mps: float = float("nan")
    reach_length_m: float = float("nan")   # from the free surface feeding it [m]
    #: the segment where static head plus surge is highest: its static head and surge [m]
    #: (each segment with its own velocity, as the designer admits candidates)
    surge_check_static_m: float = float("nan")
    surge_check_surge_m: float = float("nan")


@dataclass(frozen=True)
class Plan:
    """Everything computed for one line; report code reads it and computes nothing."""

    scenario: Scenario
    profile: Profile
    energy: LineEnergy
    outlets: tuple[OutletResult, ...]
    tanks: tuple[TankResult, ...]
    source_top_level_m: float
    source_low_level_m: float
    total_flow_m3s: float
    density: float
    kinematic_viscosity: float
    rating_head_m: NDArray[np.float64]           # derated rating at each point, as head
    findings: tuple[Finding, ...]
    mode: str = "check"
    stretches: tuple[Stretch, ...] = field(default=())
    features: tuple[Feature, ...] = field(default=())
    sizing: SizingResult | None = None
    single_size_cost: float | None = None
    required_pressure_m: NDArray[np.float64] | None = None
    binding_chainages_m: tuple[float, ...] = field(default=())
    uncertainty: Uncertainty | None = None
    #: the price of confidence: (design confidence, pipe cost or None where no design)
    confidence_prices: tuple[tuple[float, float | None], ...] = field(default=())

    @property
    def errors(self) -> list[Finding]:
        """The findings of severity "error"."""
        return [f for f in self.findings if f.severity == "error"]

    @property
    def pipe_cost(self) -> float:
        """Cost of the pipe laid, at the catalogues' unit prices."""
        return float(sum(s.cost for s in self.stretches))

    @property
    def max_static(self) -> tuple[float, float]:
        """Highest static pressure head on the line [m] and its chainage [m].

        Includes the pipe arriving at each tank, which still sees the level upstream.
        """
        e, prof = self.energy, self.profile
        heads = list(e.static_pressure_head)
        where = list(prof.chainage_m)
        levels = [self.source_top_level_m] + [t.water_level_m for t in self.tanks]
        for t, level in zip(self.tanks, levels[:-1]):
            heads.append(level - float(prof.pipe_m[t.index]))
            where.append(float(prof.chainage_m[t.index]))
        k = int(np.nanargmax(heads))
        return float(heads[k]), float(where[k])


@dataclass(frozen=True)
class LinkPlan:
    """One link of a designed tree."""

    id: int
    name: str
    parent: int                      # upstream link, -1 from the source
    profile: Profile
    energy: LineEnergy
    stretches: tuple[Stretch, ...]
    features: tuple[Feature, ...]
    tanks: tuple[TankResult, ...]
    outlets: tuple[OutletResult, ...]
    rating_head_m: NDArray[np.float64]
    required_pressure_m: NDArray[np.float64]


@dataclass(frozen=True)
class NetworkPlan:
    """Everything computed for a branched system."""

    scenario: Scenario
    network: RouteNetwork | None                 # None for a single line
    links: tuple[LinkPlan, ...]
    source_top_level_m: float
    source_low_level_m: float
    total_flow_m3s: float
    density: float
    kinematic_viscosity: float
    findings: tuple[Finding, ...]
    sizing: SizingResult | None = None
    single_size_cost: float | None = None
    mode: str = "design"
    link_flow_m3s: tuple[float, ...] = field(default=())
    #: the DEM-error Monte Carlo along each path from the source to a branch end
    uncertainty: tuple[tuple[str, Uncertainty], ...] = field(default=())
    #: the price of confidence: (design confidence, pipe cost or None where no design)
    confidence_prices: tuple[tuple[float, float | None], ...] = field(default=())
    #: points where a pressure limit binds the least-cost design: (link, chainage [m])
    binding: tuple[tuple[int, float], ...] = field(default=())

    @property
    def errors(self) -> list[Finding]:
        """The findings of severity "error"."""
        return [f for f in self.findings if f.severity == "error"]

    @property
    def pipe_cost(self) -> float:
        """Cost of the pipe laid, at the catalogues' unit prices."""
        return float(sum(s.cost for lk in self.links for s in lk.stretches))

    @property
    def outlets(self) -> list[OutletResult]:
        """Every outlet of the tree, link by link."""
        return [o for lk in self.links for o in lk.outlets]

    def path(self, link: int) -> list[int]:
        """Links from the source down to ``link``, in flow order."""
        out = []
        while link >= 0:
            out.append(link)
            link = self.links[link].parent
        return out[::-1]

    @property
    def ends(self) -> list[int]:
        """Links no other link hangs from: each path from the source ends at one."""
        return [k for k in range(len(self.links)) if not any(lk.parent == k for lk in self.links)]

    def path_name(self, link: int) -> str:
        """The names of the links from the source to ``link``, e.g. "main > school branch"."""
        return " > ".join(dict.fromkeys(self.links[i].name for i in self.path(link)))

    @property
    def outlet_risk(self) -> dict[str, tuple[float, float]]:
        """Outlet name -> (chance below its minimum, 95 % fall [m]).

        From the first path through the outlet (see
        :func:`planner.design.engine.design_layout`).
        """
        risk: dict[str, tuple[float, float]] = {}
        for _, u in self.uncertainty:
            for name, p, fall in u.outlets:
                risk.setdefault(name, (p, fall))
        return risk


def _shift(items, di, dch):
    """Records of a link with their indices and chainages moved along a joined path."""
    out = []
    for it in items:
        fields = {}
        for name in ("index", "start_index", "end_index"):
            if hasattr(it, name):
                fields[name] = getattr(it, name) + di
        for name in ("chainage_m", "chainage_end_m"):
            if hasattr(it, name) and getattr(it, name) is not None:
                fields[name] = getattr(it, name) + dch
        out.append(replace(it, **fields))
    return out


def as_line_plan(plan: NetworkPlan, link_ids: list[int]):
    """A chain of links (e.g. the path from the source to an outlet) as one line's Plan.

    Only re-indexing: arrays are joined at the junctions (the branch's first point, the
    junction itself, is dropped), chainages run on, indices shift.  Report code can then
    draw and write it like a single line.
    """
    parts = [plan.links[k] for k in link_ids]
    if len(parts) == 1:
        profile, energy = parts[0].profile, parts[0].energy
        rating, required = parts[0].rating_head_m, parts[0].required_pressure_m
        lk = parts[0]
        stretches, features, tanks, outlets = lk.stretches, lk.features, lk.tanks, lk.outlets
    else:
        profile, energy, rating, required, stretches, features, tanks, outlets = _joined(parts)
    names = " > ".join(dict.fromkeys(lk.name for lk in parts))
    sc = plan.scenario
    if len(plan.links) > 1:
        sc = replace(sc, project=replace(sc.project, name=f"{sc.project.name}: {names}"))
    return Plan(scenario=sc, profile=profile, energy=energy, outlets=tuple(outlets),
                tanks=tuple(tanks), source_top_level_m=plan.source_top_level_m,
                source_low_level_m=plan.source_low_level_m,
                total_flow_m3s=plan.link_flow_m3s[link_ids[0]], density=plan.density,
                kinematic_viscosity=plan.kinematic_viscosity,
                rating_head_m=rating, findings=(), mode=plan.mode,
                stretches=tuple(stretches), features=tuple(features), sizing=plan.sizing,
                single_size_cost=plan.single_size_cost, required_pressure_m=required)


def _joined(parts: list[LinkPlan]):
    """The arrays and records of a chain of links joined into one line."""
    keys_p = ("chainage_m", "slope_length_m", "x", "y", "lon", "lat", "ground_m", "pipe_m", "filled")
    keys_e = ("flow", "velocity", "static_head", "energy", "hgl", "pressure_head",
              "static_pressure_head", "friction_loss", "reynolds", "arrival_hgl")
    cols_p: dict[str, list] = {k: [] for k in keys_p}
    cols_e: dict[str, list] = {k: [] for k in keys_e}
    rating, required, inserted, vidx = [], [], [], []
    stretches, features, tanks, outlets, reaches = [], [], [], [], []
    pins, gps, gps_ch = [], [], []
    di, dch, dsl, fric = 0, 0.0, 0.0, 0.0
    for n, lk in enumerate(parts):
        p, e = lk.profile, lk.energy
        cut = 0 if n == 0 else 1                 # the junction is the parent's last point
        for k in keys_p:
            a = np.asarray(getattr(p, k))[cut:]
            cols_p[k].append(a + dch if k == "chainage_m" else a + dsl if k == "slope_length_m" else a)
        for k in keys_e:
            a = np.asarray(getattr(e, k))[cut:]
            cols_e[k].append(a + fric if k == "friction_loss" else a)
        rating.append(lk.rating_head_m[cut:])
        required.append(lk.required_pressure_m[cut:])
        inserted.append((p.inserted if p.inserted is not None else np.zeros(p.n, bool))[cut:])
        vidx.append(p.vertex_index[p.vertex_index >= cut] - cut + di)
        shift = di - cut
        stretches += _shift(lk.stretches, shift, dch)
        features += _shift(lk.features, shift, dch)
        tanks += _shift(lk.tanks, shift, dch)
        outlets += _shift(lk.outlets, shift, dch)
        reaches += [replace(r, start_index=r.start_index + shift, end_index=r.end_index + shift)
                    for r in e.reaches]
        pins += [(name, c + dch, off) for name, c, off in p.pins]
        if p.gps_offset_m is not None and p.gps_chainage_m is not None:
            gps.append(p.gps_offset_m)
            gps_ch.append(p.gps_chainage_m + dch)
        di += p.n - cut
        dch += p.length_m
        dsl += float(p.slope_length_m[-1])
        fric += float(e.friction_loss[-1])
    prof0 = parts[0].profile
    profile = Profile(**{k: np.concatenate(v) for k, v in cols_p.items()},
                      vertex_index=np.unique(np.concatenate(vidx)).astype(np.int64),
                      crs=prof0.crs, spacing_m=prof0.spacing_m, cover_m=prof0.cover_m,
                      elevation_source=prof0.elevation_source, vertical_datum=prof0.vertical_datum,
                      notes=tuple(n for lk in parts for n in lk.profile.notes),
                      inserted=np.concatenate(inserted), pins=tuple(pins),
                      gps_offset_m=np.concatenate(gps) if gps else None,
                      gps_chainage_m=np.concatenate(gps_ch) if gps else None)
    energy = LineEnergy(**{k: np.concatenate(v) for k, v in cols_e.items()}, reaches=tuple(reaches))
    return profile, energy, np.concatenate(rating), np.concatenate(required), stretches, \
        features, tanks, outlets


def line_result(plan: NetworkPlan) -> Plan:
    """A plan of one link as the line's :class:`Plan`, findings and estimates included."""
    if len(plan.links) != 1:
        raise ValueError("line_result takes a plan of one link; use as_line_plan for a path")
    return replace(as_line_plan(plan, [0]), findings=plan.findings,
                   binding_chainages_m=tuple(c for _, c in plan.binding),
                   confidence_prices=plan.confidence_prices,
                   uncertainty=plan.uncertainty[0][1] if plan.uncertainty else None)
