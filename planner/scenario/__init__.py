"""The scenario file (TOML): what the engineer states about one gravity system.

All unit handling of the input happens here: keys carry their unit in their name
(``flow_lps``, ``inside_diameter_mm``, ``pressure_rating_bar``) and are converted to SI on
loading.  Three modules: :mod:`~planner.scenario.keys` (every key once: type, default,
unit, range, meaning, source), :mod:`~planner.scenario.model` (the loaded records) and
:mod:`~planner.scenario.load` (reading and checking).  Every key is documented in
docs/scenario.md, whose key tables are generated from the key table.
"""

from .load import load_scenario, scenario_from_dict
from .model import (Criteria, Design, Drawing, Fitting, Outlet, Pipe, Project, RouteSpec,
                    Scenario, Source, SurveyPoint, Tank, Terrain, UncertaintySpec)

__all__ = ["Criteria", "Design", "Drawing", "Fitting", "Outlet", "Pipe", "Project", "RouteSpec",
           "Scenario", "Source", "SurveyPoint", "Tank", "Terrain", "UncertaintySpec",
           "load_scenario", "scenario_from_dict"]
