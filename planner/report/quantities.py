"""Bill of quantities: pipe by material, size and class, valves, tanks and fittings.

Reads results only.  Pipe lengths are the pipe's own (3-D) lengths, with a waste
allowance, rounded up to whole pipe lengths or coils; joints follow each pipe's
catalogue ``jointing`` (:data:`~planner.catalogue.materials.JOINTING`); valves and tanks
are counted from the plan's features, fittings from its size changes and junctions.  Unit costs
come from the catalogue (pipe) and ``catalogue/data/items.csv`` (the rest); the
built-in prices are invented demo values.  Written as CSV and as XLSX (openpyxl).
"""

from __future__ import annotations

import csv
import io
import math
from dataclasses import dataclass
from pathlib import Path

from ..catalogue.materials import JOINTING, supply_length
from .files import atomic_path, write_text

ITEMS = Path(__file__).resolve().parent.parent / "catalogue" / "data" / "items.csv"
#: Waste and offcut allowance on pipe lengths [-] (common practice, 2-5 %).
WASTE = 0.03


@dataclass(frozen=True)
class Line:
    """One line of the bill."""

    item: str
    description: str
    quantity: float
    unit: str
    unit_cost: float

    @property
    def total(self) -> float:
        """The line's cost: quantity times unit cost."""
        return self.quantity * self.unit_cost


def _item_costs() -> dict[tuple[str, float], float]:
    with ITEMS.open(encoding="utf-8") as fh:
        rows = csv.DictReader(line for line in fh if not line.startswith("#"))
        return {(r["item"], float(r["size_mm"])): float(r["unit_cost"]) for r in rows}


def _cost(costs, item, size):
    """The item's price for its size, or the next size up, or the largest listed size."""
    sizes = sorted(s for (i, s) in costs if i == item)
    if not sizes:
        return 0.0
    fits = [s for s in sizes if s >= (size or 0.0) - 1e-9]
    return costs[(item, fits[0] if fits else sizes[-1])]


def _pipe_lines(plans, costs, waste: float) -> list[Line]:
    """The pipe lines of the bill, by option, and their joints, by joint and size."""
    pipes: dict[str, list] = {}
    for pl in plans:
        for st in pl.stretches:
            key = st.option.label
            entry = pipes.setdefault(key, [st.option, 0.0])
            entry[1] += st.length_m
    lines: list[Line] = []
    joints: dict[tuple[str, float], int] = {}
    for label, (opt, length) in sorted(pipes.items(), key=lambda kv: (kv[1][0].material,
                                                                      kv[1][0].outside_diameter,
                                                                      kv[1][0].rating)):
        od = opt.outside_diameter * 1e3 if math.isfinite(opt.outside_diameter) else opt.inside_diameter * 1e3
        unit_len, unit = supply_length(opt.jointing, od)
        n = math.ceil(length * (1 + waste) / unit_len - 1e-9)
        lines.append(Line("pipe", f"{label}: {length:,.1f} m laid + {waste * 100:g} % = {n} x {unit}",
                          n * unit_len, "m", opt.cost_per_m))
        joint = JOINTING[opt.jointing].joint
        if joint:
            joints[(joint, od)] = joints.get((joint, od), 0) + n
    for (joint, od), n in sorted(joints.items()):
        lines.append(Line(joint, f"{joint} for {od:g} mm pipe, one per length or coil bought",
                          float(n), "each", _cost(costs, joint, od)))
    return lines


def bill(plans, *, junctions: int = 0, waste: float = WASTE) -> list[Line]:
    """The bill of quantities of one line plan, or of the link plans of a tree.

    Parameters
    ----------
    plans : Plan or list of Plan
    junctions : int
        Branch points of a tree (one tee each).
    waste : float
        Allowance on pipe lengths [-].
    """
    plans = list(plans) if isinstance(plans, (list, tuple)) else [plans]
    costs = _item_costs()
    lines = _pipe_lines(plans, costs, waste)
    counts: dict[tuple[str, float], int] = {}
    for pl in plans:
        for f in pl.features:
            name = f.kind.replace("_", " ")
            counts[(name, f.size_mm or 0.0)] = counts.get((name, f.size_mm or 0.0), 0) + 1
        counts[("break-pressure tank", 0.0)] = counts.get(("break-pressure tank", 0.0), 0) + len(pl.tanks)
        counts[("outlet", 0.0)] = counts.get(("outlet", 0.0), 0) + len(pl.outlets)
        changes = sum(1 for a, b in zip(pl.stretches[:-1], pl.stretches[1:])
                      if a.option.outside_diameter != b.option.outside_diameter
                      and a.end_index == b.start_index)
        counts[("reducer", 0.0)] = counts.get(("reducer", 0.0), 0) + changes
    if junctions:
        counts[("tee", 0.0)] = junctions
    for (name, size), n in sorted(counts.items()):
        if n:
            what = f"{name} DN{size:.0f}" if size else name
            lines.append(Line(name, what, float(n), "each", _cost(costs, name, size)))
    return lines


def bill_csv_text(lines: list[Line]) -> str:
    """The bill as CSV text, one row per line and a total row."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["item", "description", "quantity", "unit", "unit_cost", "total"])
    for ln in lines:
        w.writerow([ln.item, ln.description, f"{ln.quantity:g}", ln.unit, f"{ln.unit_cost:.2f}",
                    f"{ln.total:.2f}"])
    w.writerow(["total", "", "", "", "", f"{sum(ln.total for ln in lines):.2f}"])
    w.writerow(["note", "built-in unit costs are invented demo prices; replace them", "", "", "", ""])
    return buf.getvalue()


def write_bill(lines: list[Line], folder: str | Path) -> dict[str, Path]:
    """Write quantities.csv and quantities.xlsx atomically."""
    from openpyxl import Workbook

    folder = Path(folder)
    out = {"quantities.csv": write_text(folder / "quantities.csv", bill_csv_text(lines))}
    wb = Workbook()
    ws = wb.active
    ws.title = "bill of quantities"
    ws.append(["item", "description", "quantity", "unit", "unit cost", "total"])
    for ln in lines:
        ws.append([ln.item, ln.description, ln.quantity, ln.unit, ln.unit_cost, ln.total])
    ws.append(["total", "", "", "", "", sum(ln.total for ln in lines)])
    ws.append(["note", "built-in unit costs are invented demo prices; replace them"])
    for col, width in zip("ABCDEF", (20, 70, 10, 8, 10, 12)):
        ws.column_dimensions[col].width = width
    with atomic_path(folder / "quantities.xlsx", suffix=".xlsx") as tmp:
        wb.save(tmp)
    out["quantities.xlsx"] = folder / "quantities.xlsx"
    return out
