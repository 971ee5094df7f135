"""plan.json: the machine-readable result of a plan (schema in docs/plan-json.md).

The file is deterministic: the same inputs give the same bytes (no timestamps, fixed
key order, fixed rounding).  Heads are in metres of water; pressures are also given
in bar using the water density at the design temperature.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np

from ..version import VERSION
from ..cautions import CAUTIONS
from ..design.results import Plan
from ..units import BAR, G, LPS
from .files import write_text

SCHEMA = "gravplan.plan/1"


def _r(values, digits):
    """Round an array to a list, NaN -> None."""
    arr = np.round(np.asarray(values, dtype=float), digits)
    return [None if not math.isfinite(v) else (0.0 if v == 0 else float(v)) for v in arr]


def json_number(value, digits=3):
    """A float rounded to ``digits`` for JSON, or None for a missing or non-finite value."""
    if value is None or not math.isfinite(value):
        return None
    return round(float(value), digits)


_f = json_number          # the short name used for the many fields below


def plan_to_dict(plan: Plan) -> dict:
    """The plan as plain JSON-ready data (see docs/plan-json.md)."""
    sc, prof = plan.scenario, plan.profile
    bar_per_m = plan.density * G / BAR
    points = _points_dict(plan)
    balance = _energy_balance_list(plan)
    return {
        "schema": SCHEMA,
        "mode": plan.mode,
        "tool": {"name": "gravplan", "version": VERSION},
        "project": {"name": sc.project.name, "reference": sc.project.reference,
                    "engineer": sc.project.engineer, "notes": sc.project.notes},
        "inputs": _inputs_dict(plan),
        "water": {"temperature_c": sc.criteria.temperature_c,
                  "density_kg_m3": _f(plan.density, 3),
                  "kinematic_viscosity_m2_s": float(f"{plan.kinematic_viscosity:.6g}"),
                  "bar_per_m_head": _f(bar_per_m, 6)},
        "source": {"name": sc.source.name, "top_water_level_m": _f(plan.source_top_level_m),
                   "low_water_level_m": _f(plan.source_low_level_m),
                   "yield_lps": _f(sc.source.yield_m3s / LPS, 3)
                   if sc.source.yield_m3s is not None else None},
        "summary": _summary_dict(plan, bar_per_m),
        "outlets": _outlets_list(plan, bar_per_m),
        "break_pressure_tanks": [{
            "name": t.name, "chainage_m": _f(t.chainage_m, 2), "point_index": t.index,
            "water_level_m": _f(t.water_level_m), "arrival_hgl_m": _f(t.arrival_hgl_m),
            "head_dissipated_m": _f(t.dissipated_m), "rule": t.rule,
        } for t in plan.tanks],
        "energy_balance": balance,
        "stretches": _stretches_list(plan),
        "features": [{
            "kind": f.kind, "chainage_m": _f(f.chainage_m, 2), "point_index": f.index,
            "lon": _f(float(prof.lon[f.index]), 7), "lat": _f(float(prof.lat[f.index]), 7),
            "pipe_elevation_m": _f(f.elevation_m), "size_mm": f.size_mm, "rule": f.rule,
            "source": f.source, "detail": f.detail,
        } for f in plan.features],
        "costs": {"pipe": _f(plan.pipe_cost, 2),
                  "note": "in the catalogues' currency; the built-in prices are invented demo values"},
        "sizing": _sizing_dict(plan),
        "findings": [{
            "severity": f.severity, "code": f.code, "chainage_m": _f(f.chainage_m, 2),
            "chainage_end_m": _f(f.chainage_end_m, 2), "message": f.message, "remedy": f.remedy,
        } for f in plan.findings],
        "uncertainty": uncertainty_to_dict(plan.uncertainty),
        "confidence_prices": prices_to_list(plan.confidence_prices),
        "elevations": elevations_to_dict(prof, plan.stretches),
        "cautions": list(CAUTIONS),
        "points": points,
    }


def _points_dict(plan: Plan) -> dict:
    """The per-point arrays of plan.json: geometry [m, degrees], heads [m], flow [L/s], velocity [m/s]."""
    prof, e = plan.profile, plan.energy
    return {
        "chainage_m": _r(prof.chainage_m, 2),
        "slope_length_m": _r(prof.slope_length_m, 2),
        "x": _r(prof.x, 2), "y": _r(prof.y, 2),
        "lon": _r(prof.lon, 7), "lat": _r(prof.lat, 7),
        "ground_m": _r(prof.ground_m, 3), "pipe_m": _r(prof.pipe_m, 3),
        "ground_filled": [bool(v) for v in prof.filled],
        "inserted": [bool(v) for v in (prof.inserted if prof.inserted is not None
                                       else np.zeros(prof.n, dtype=bool))],
        "static_head_m": _r(e.static_head, 3),
        "hgl_m": _r(e.hgl, 3),
        "energy_m": _r(e.energy, 3),
        "pressure_head_m": _r(e.pressure_head, 3),
        "static_pressure_head_m": _r(e.static_pressure_head, 3),
        "flow_lps": _r(e.flow / LPS, 4),
        "velocity_mps": _r(e.velocity, 4),
        "rating_head_m": _r(plan.rating_head_m, 3),
        "required_pressure_head_m": _r(plan.required_pressure_m, 3)
        if plan.required_pressure_m is not None else None,
    }


def _energy_balance_list(plan: Plan) -> list[dict]:
    """The energy balance of each reach, every term in metres of head [m]."""
    prof = plan.profile
    return [{
        "from_chainage_m": _f(prof.chainage_m[r.start_index], 2),
        "to_chainage_m": _f(prof.chainage_m[r.end_index], 2),
        "operating_level_m": _f(r.operating_level), "end_pipe_elevation_m": _f(r.end_elevation),
        "available_head_m": _f(r.available), "friction_loss_m": _f(r.friction),
        "minor_loss_m": _f(r.minor), "velocity_head_m": _f(r.velocity_head),
        "residual_pressure_head_m": _f(r.residual_pressure), "closure_m": _f(r.closure, 6),
    } for r in plan.energy.reaches]


def _inputs_dict(plan: Plan) -> dict:
    """What the plan was made from: files, elevations, spacing and cover [m], pipe, design, criteria."""
    sc, prof = plan.scenario, plan.profile
    return {
        "scenario": sc.path.name,
        "route": sc.route.file.name,
        "elevation_source": prof.elevation_source,
        "vertical_datum": prof.vertical_datum,
        "crs": prof.crs,
        "spacing_m": _f(prof.spacing_m, 3),
        "cover_m": _f(prof.cover_m, 3),
        "pipe": ({"material": sc.pipe.material, "label": sc.pipe.label,
                  "inside_diameter_mm": _f(sc.pipe.inside_diameter_m * 1e3, 2),
                  "roughness_mm": _f(sc.pipe.roughness_m * 1e3, 4)
                  if sc.pipe.roughness_m is not None else None,
                  "hazen_williams_c": sc.pipe.c_factor,
                  "pressure_rating_bar": _f(sc.pipe.rating_pa / BAR, 2),
                  "rating_head_m": _f(float(plan.rating_head_m[0]), 2)}
                 if sc.pipe is not None else None),
        "design": ({k: (list(v) if isinstance(v, tuple) else v)
                    for k, v in vars(sc.design).items()} if sc.design is not None else None),
        "criteria": {k: getattr(sc.criteria, k) for k in sc.criteria.__dataclass_fields__},
    }


def _summary_dict(plan: Plan, bar_per_m: float) -> dict:
    """The plan's headline numbers: lengths [m], flow [L/s], extreme pressures [m, bar], counts.

    ``bar_per_m`` converts metres of head to bar [bar/m].
    """
    prof, e = plan.profile, plan.energy
    return {
        "length_m": _f(prof.length_m, 2),
        "pipe_length_m": _f(prof.slope_length_m[-1], 2),
        "design_flow_lps": _f(plan.total_flow_m3s / LPS, 3),
        "min_pressure_head_m": _f(np.nanmin(e.pressure_head)),
        "min_pressure_chainage_m": _f(prof.chainage_m[int(np.nanargmin(e.pressure_head))], 2),
        "max_static_pressure_head_m": _f(plan.max_static[0]),
        "max_static_pressure_bar": _f(plan.max_static[0] * bar_per_m, 3),
        "max_static_chainage_m": _f(plan.max_static[1], 2),
        "errors": sum(f.severity == "error" for f in plan.findings),
        "warnings": sum(f.severity == "warning" for f in plan.findings),
    }


def _outlets_list(plan: Plan, bar_per_m: float) -> list[dict]:
    """Each outlet's place [m], flow [L/s] and residual pressure [m, bar] against its minimum.

    ``bar_per_m`` converts metres of head to bar [bar/m].
    """
    return [{
        "name": o.name, "kind": o.kind, "chainage_m": _f(o.chainage_m, 2),
        "flow_basis": o.basis,
        "point_index": o.index, "flow_lps": _f(o.flow_m3s / LPS, 4),
        "ground_m": _f(o.ground_m), "residual_pressure_head_m": _f(o.pressure_head_m),
        "residual_pressure_bar": _f(o.pressure_head_m * bar_per_m, 3),
        "min_pressure_head_m": o.min_pressure_m, "ok": o.ok,
    } for o in plan.outlets]


def _stretches_list(plan: Plan) -> list[dict]:
    """Each stretch of one pipe option: sizes [mm], rating [bar, m], extent [m], cost, surge [m]."""
    return [{
        "material": st.option.material, "label": st.option.label,
        "outside_diameter_mm": _f(st.option.outside_diameter * 1e3, 2),
        "inside_diameter_mm": _f(st.option.inside_diameter * 1e3, 2),
        "pressure_rating_bar": _f(st.option.rating / BAR, 2),
        "roughness_mm": _f(st.option.roughness * 1e3, 4),
        "hazen_williams_c": _f(st.option.c_factor, 1),
        "rating_head_m": _f(st.rating_head_m, 2),
        "from_chainage_m": _f(st.chainage_m, 2), "to_chainage_m": _f(st.chainage_end_m, 2),
        "length_m": _f(st.length_m, 2), "cost_per_m": _f(st.option.cost_per_m, 2),
        "cost": _f(st.cost, 2), "max_static_head_m": _f(st.max_static_head_m, 2),
        "min_pressure_head_m": _f(st.min_pressure_head_m, 2),
        "max_velocity_mps": _f(st.max_velocity_mps, 3),
        "wave_speed_mps": _f(st.wave_speed_mps, 1), "surge_head_m": _f(st.surge_head_m, 2),
        "catalogue": st.option.catalogue,
    } for st in plan.stretches]


def _sizing_dict(plan: Plan) -> dict | None:
    """How the pipe sizes were chosen: method, status, costs and bounds, binding chainages [m]."""
    if plan.sizing is None:
        return None
    return {
        "method": plan.sizing.method, "status": plan.sizing.status,
        "objective": _f(plan.sizing.cost, 2), "optimality_gap": plan.sizing.gap,
        "lower_bound": _f(plan.sizing.lower_bound, 2),
        "split_pipe_optimum": _f(plan.sizing.split_pipe_cost, 2),
        "summary": plan.sizing.summary,
        "variables": plan.sizing.variables, "constraints": plan.sizing.constraints,
        "binding_chainages_m": [_f(c, 2) for c in plan.binding_chainages_m],
        "cheapest_single_size_cost": _f(plan.single_size_cost, 2)
        if plan.single_size_cost is not None and math.isfinite(plan.single_size_cost) else None,
    }


def uncertainty_to_dict(u) -> dict | None:
    """The DEM-error Monte Carlo: model, probabilities per outlet, crest and stretch."""
    if u is None:
        return None
    return _uncertainty_dict(u)


def prices_to_list(prices) -> list[dict]:
    """The price of confidence: the pipe cost at each design confidence (null: no design)."""
    return [{"confidence": c, "pipe_cost": _f(cost, 2) if cost is not None else None}
            for c, cost in prices]


def _uncertainty_dict(u) -> dict:
    """The DEM-error Monte Carlo ``u`` (not None) as in :func:`uncertainty_to_dict`."""
    m = u.model
    return {
        "model": {"product": m.product, "sigma_m": _f(m.sigma_m, 3),
                  "correlation_length_m": _f(m.correlation_m, 1), "source": m.source,
                  "correlation": "exponential along the chainage"},
        "realisations": u.realisations, "seed": u.seed,
        "pinned_to": list(u.pinned),
        "p_any_outlet_below_minimum": _f(u.p_any_outlet_short, 4),
        "design_confidence": u.design_confidence,
        "recommended_outlet_margin_m": _f(u.margin_m, 2),
        "recommended_static_margin_m": _f(u.static_margin_m, 2),
        "outlets": [{"name": n, "p_below_minimum": _f(p, 4), "residual_fall_95_m": _f(fall, 2)}
                    for n, p, fall in u.outlets],
        "crests": [{"chainage_m": _f(c, 2), "p_above_hgl": _f(p, 4)} for c, p in u.crests],
        "stretches": [{"from_chainage_m": _f(a, 2), "to_chainage_m": _f(b, 2), "label": lab,
                       "p_static_over_rating": _f(p, 4)} for a, b, lab, p in u.stretches],
    }


def elevations_to_dict(prof, stretches) -> dict:
    """Where the elevations come from: DEM, pins to surveyed levels, GPS comparison."""
    from ..geo.gps_comparison import gps_offset_summary
    from ..geo.profile import elevation_source_between

    gps = None
    if prof.gps_offset_m is not None and prof.gps_offset_m.size:
        g = gps_offset_summary(prof.gps_offset_m)
        gps = {"vertices": g["vertices"], "mean_offset_m": _f(g["mean_m"], 2),
               "sd_offset_m": _f(g["sd_m"], 2), "rms_offset_m": _f(g["rms_m"], 2),
               "max_abs_offset_m": _f(abs(g["largest_m"]), 2),
               "offsets": [{"chainage_m": _f(c, 2), "gps_minus_dem_m": _f(o, 2)}
                           for c, o in zip(prof.gps_chainage_m, prof.gps_offset_m)]}
    return {"source": prof.elevation_source,
            "pins": [{"name": n, "chainage_m": _f(c, 2), "offset_m": _f(o, 3)}
                     for n, c, o in prof.pins],
            "gps_comparison": gps,
            "by_stretch": [{"from_chainage_m": _f(st.chainage_m, 2),
                            "to_chainage_m": _f(st.chainage_end_m, 2),
                            "elevation_source": elevation_source_between(prof, st.chainage_m,
                                                                         st.chainage_end_m)}
                           for st in stretches]}


def write_plan_json(plan: Plan, path: str | Path) -> Path:
    """Write plan.json atomically."""
    text = json.dumps(plan_to_dict(plan), indent=1, ensure_ascii=False, allow_nan=False)
    return write_text(path, text + "\n")


NETWORK_SCHEMA = "gravplan.network/1"


def network_to_dict(plan, link_plans, drawings) -> dict:
    """A branched system as JSON-ready data (docs/plan-json.md, "Networks")."""
    first = plan_to_dict(link_plans[0])
    per_link_keys = ("summary", "outlets", "break_pressure_tanks", "energy_balance", "stretches",
                     "features", "points")
    links = []
    for lk, lp, flow in zip(plan.links, link_plans, plan.link_flow_m3s):
        d = plan_to_dict(lp)
        net_link = plan.network.links[lk.id]
        links.append({"id": lk.id, "name": lk.name, "parent": lk.parent,
                      "upstream_node": net_link.upstream, "downstream_node": net_link.downstream,
                      "drawn_line": net_link.name,
                      "starts_at_drawn_chainage_m": _f(net_link.offset_m, 2),
                      "design_flow_lps": _f(flow / LPS, 4), **{k: d[k] for k in per_link_keys}})
    s = plan.sizing
    sizing = None if s is None else {
        "method": s.method, "status": s.status, "objective": _f(s.cost, 2),
        "optimality_gap": s.gap, "lower_bound": _f(s.lower_bound, 2),
        "split_pipe_optimum": _f(s.split_pipe_cost, 2), "summary": s.summary,
        "variables": s.variables, "constraints": s.constraints,
        "cheapest_single_size_cost": _f(plan.single_size_cost, 2)
        if plan.single_size_cost is not None else None}
    uncertainty = [{"path": name, **_uncertainty_dict(u)} for name, u in plan.uncertainty]
    return {
        "schema": NETWORK_SCHEMA, "mode": plan.mode, "uncertainty": uncertainty,
        "confidence_prices": prices_to_list(plan.confidence_prices),
        "tool": first["tool"], "project": first["project"], "inputs": first["inputs"],
        "water": first["water"], "source": first["source"],
        "summary": {
            "links": len(plan.links), "design_flow_lps": _f(plan.total_flow_m3s / LPS, 3),
            "pipe_length_m": _f(sum(float(lk.profile.slope_length_m[-1]) for lk in plan.links), 2),
            "pipe_cost": _f(plan.pipe_cost, 2),
            "errors": sum(f.severity == "error" for f in plan.findings),
            "warnings": sum(f.severity == "warning" for f in plan.findings),
        },
        "nodes": [{"id": i, "lon": _f(float(x), 7), "lat": _f(float(y), 7)}
                  for i, (x, y) in enumerate(plan.network.nodes)],
        "root_node": plan.network.root,
        "links": links,
        "drawings": drawings,
        "sizing": sizing,
        "findings": [{"severity": f.severity, "code": f.code, "chainage_m": _f(f.chainage_m, 2),
                      "chainage_end_m": _f(f.chainage_end_m, 2), "message": f.message,
                      "remedy": f.remedy} for f in plan.findings],
        "cautions": list(CAUTIONS),
    }


def write_network_json(plan, link_plans, drawings, path: str | Path) -> Path:
    """Write a network's plan.json atomically."""
    text = json.dumps(network_to_dict(plan, link_plans, drawings), indent=1, ensure_ascii=False,
                      allow_nan=False)
    return write_text(path, text + "\n")
