"""What a scenario holds once loaded: frozen records, every quantity in SI units.

The defaults are the key table's (:mod:`planner.scenario.keys`), written nowhere else.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from .keys import default as _d


@dataclass(frozen=True)
class Project:
    """The project's name, reference, engineer and notes, as printed on the deliverables."""

    name: str
    reference: str = _d("project", "reference")
    engineer: str = _d("project", "engineer")
    notes: str = _d("project", "notes")


@dataclass(frozen=True)
class Terrain:
    """The DEM file(s), their vertical datum and the longest void bridged along the line [m]."""

    dem: tuple[Path, ...]
    vertical_datum: str = _d("terrain", "vertical_datum")
    max_void_m: float = _d("terrain", "max_void_m")


@dataclass(frozen=True)
class RouteSpec:
    """The route file, its largest point spacing [m], CRS, and a network's join tolerance [m]."""

    file: Path
    spacing_m: float | None = None
    crs: str | None = None
    network: bool = _d("route", "network")
    join_tolerance_m: float = _d("route", "join_tolerance_m")


@dataclass(frozen=True)
class Source:
    """The source's free surface; levels absolute [m] or above the ground at the start."""

    name: str = _d("source", "name")
    top_level_m: float | None = None
    low_level_m: float | None = None
    top_above_ground_m: float | None = None
    low_above_ground_m: float | None = None
    yield_m3s: float | None = None
    location: tuple[float, float] | None = None


@dataclass(frozen=True)
class Pipe:
    """One given pipe ([pipe]): diameters and roughness [m], rating and elastic modulus [Pa]."""

    material: str
    inside_diameter_m: float
    rating_pa: float
    label: str = _d("pipe", "label")
    roughness_m: float | None = None
    c_factor: float | None = None
    outside_diameter_m: float | None = None
    elastic_modulus_pa: float | None = None


@dataclass(frozen=True)
class Outlet:
    """A draw-off point: its design (peak) flow [m3/s] and, when derived, how."""

    name: str
    flow_m3s: float
    min_pressure_m: float = _d("outlets", "min_pressure_m")
    chainage_m: float | None = None
    location: tuple[float, float] | None = None
    kind: str = _d("outlets", "kind")
    basis: str = "flow given"
    daily_volume_m3: float | None = None
    link: str | None = None
    max_pressure_m: float | None = None


@dataclass(frozen=True)
class Tank:
    """A given break-pressure tank: its chainage [m] and water level above the ground [m]."""

    name: str
    chainage_m: float
    water_above_ground_m: float = _d("break_pressure_tanks", "water_above_ground_m")
    link: str | None = None


@dataclass(frozen=True)
class Fitting:
    """A fitting: its chainage [m] and local loss coefficient k [-] (times the velocity head)."""

    name: str
    chainage_m: float
    k: float
    link: str | None = None


@dataclass(frozen=True)
class Criteria:
    """Design criteria; each default and its source is in the key table."""

    friction: str = _d("criteria", "friction")
    temperature_c: float = _d("criteria", "temperature_c")
    pipe_temperature_c: float | None = None
    cover_m: float = _d("criteria", "cover_m")
    entrance_k: float = _d("criteria", "entrance_k")
    velocity_min_mps: float = _d("criteria", "velocity_min_mps")
    velocity_max_mps: float = _d("criteria", "velocity_max_mps")
    min_line_pressure_m: float = _d("criteria", "min_line_pressure_m")
    snap_tolerance_m: float = _d("criteria", "snap_tolerance_m")
    tank_inlet_head_m: float = _d("criteria", "tank_inlet_head_m")
    allow_siphon: bool = _d("criteria", "allow_siphon")
    siphon_margin_m: float = _d("criteria", "siphon_margin_m")
    valve_closure_s: float = _d("criteria", "valve_closure_s")
    surge_rating_factor: float = _d("criteria", "surge_rating_factor")
    feature_prominence_m: float = _d("criteria", "feature_prominence_m")
    grade_break: float = _d("criteria", "grade_break")
    grade_window_m: float = _d("criteria", "grade_window_m")
    air_valve_spacing_m: float = _d("criteria", "air_valve_spacing_m")
    long_ascent_m: float = _d("criteria", "long_ascent_m")
    max_outlet_pressure_m: float = _d("criteria", "max_outlet_pressure_m")

    @property
    def wall_temperature_c(self) -> float:
        """Temperature for derating plastic pipe [degC] (defaults to the water's)."""
        return self.temperature_c if self.pipe_temperature_c is None else self.pipe_temperature_c


@dataclass(frozen=True)
class Design:
    """What the designer may choose from, and the rules for tanks and sizes (SI units)."""

    catalogues: tuple[str, ...] = tuple(_d("design", "catalogues"))
    materials: tuple[str, ...] | None = None
    min_size_m: float | None = None            # smallest outside diameter [m]
    max_size_m: float | None = None            # largest outside diameter [m]
    one_size_per_reach: bool = _d("design", "one_size_per_reach")
    auto_tanks: bool = _d("design", "auto_tanks")
    max_static_pressure_m: float | None = None
    tank_water_depth_m: float = _d("design", "tank_water_depth_m")
    no_tank_zones: tuple[tuple[float, float], ...] = ()
    split_spacing_m: float = _d("design", "split_spacing_m")
    whole_pieces: bool = _d("design", "whole_pieces")
    confidence: float = _d("design", "confidence")


@dataclass(frozen=True)
class Drawing:
    """How the profile is drawn on sheets for a permit file."""

    sheet: str = _d("drawing", "sheet")
    km_per_sheet: float = _d("drawing", "km_per_sheet")
    revision: str = _d("drawing", "revision")
    date: str | None = None


@dataclass(frozen=True)
class UncertaintySpec:
    """The DEM error model and the Monte Carlo's size ([uncertainty])."""

    enabled: bool = _d("uncertainty", "enabled")
    product: str | None = None                     # a key of design.uncertainty.PRODUCTS
    sigma_m: float | None = None                   # overrides the product's value
    correlation_m: float = _d("uncertainty", "correlation_m")
    realisations: int = _d("uncertainty", "realisations")
    seed: int = _d("uncertainty", "seed")


@dataclass(frozen=True)
class SurveyPoint:
    """A surveyed ground level [m] the profile is pinned to ([[survey_points]])."""

    name: str
    elevation_m: float
    chainage_m: float | None = None
    location: tuple[float, float] | None = None
    link: str | None = None


@dataclass(frozen=True)
class Scenario:
    """Everything the scenario file states about one system, checked and in SI units."""

    path: Path
    project: Project
    terrain: Terrain | None
    route: RouteSpec
    source: Source
    pipe: Pipe | None
    outlets: tuple[Outlet, ...]
    tanks: tuple[Tank, ...] = field(default=())
    fittings: tuple[Fitting, ...] = field(default=())
    criteria: Criteria = field(default_factory=Criteria)
    design: Design | None = None
    drawing: Drawing = field(default_factory=Drawing)
    uncertainty: UncertaintySpec = field(default_factory=UncertaintySpec)
    survey_points: tuple[SurveyPoint, ...] = field(default=())
