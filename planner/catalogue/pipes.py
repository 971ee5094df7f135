"""Pipe options: loading, validating and filtering catalogues.

A catalogue is a CSV file (columns as in the built-in files under ``data/``, with
``#`` comment lines naming the standard).  Its optional ``derating`` and ``jointing``
columns say how each pipe derates with temperature and how it is jointed; where a file
has not got them, or a cell is empty, they follow from the material name
(:func:`~planner.catalogue.materials.columns_from_material`).  Built-in catalogues are addressed by name
(``pe100``, ``pe80``, ``pvc-u``, ``gi-medium``); any other value is read as a path.
Values are converted to SI on loading.
"""

from __future__ import annotations

import csv
import math
from dataclasses import dataclass
from pathlib import Path

from ..errors import InputError, InputFileError
from ..inputs import read_text
from ..units import BAR, MM
from .materials import JOINTINGS, columns_from_material
from .standards import DERATING_FAMILIES

DATA = Path(__file__).resolve().parent / "data"
BUILTIN = {"pe100": "pe100.csv", "pe80": "pe80.csv", "pvc-u": "pvc-u.csv",
           "gi-medium": "gi-medium.csv"}
REQUIRED = ("material", "label", "outside_diameter_mm", "inside_diameter_mm",
            "pressure_rating_bar", "roughness_mm", "hazen_williams_c", "cost_per_m")


@dataclass(frozen=True)
class PipeOption:
    """One pipe size and class that can be bought (SI units).

    Attributes
    ----------
    material : str
        e.g. ``"PE100"``, ``"PVC-U"``, ``"GI"``.
    label : str
        Unique name, e.g. ``"PE100 110 SDR11 PN16"``.
    outside_diameter, inside_diameter, wall : float
        [m].
    rating : float
        Pressure rating at 20 degC [Pa].
    roughness : float
        Absolute roughness [m].
    c_factor : float
        Hazen-Williams C [-].
    elastic_modulus : float
        Short-term Young's modulus for surge [Pa] (NaN if unknown).
    cost_per_m : float
        Price per metre of pipe [currency/m].
    sdr : float
        Standard dimension ratio [-] (NaN for steel).
    catalogue : str
        Where it came from.
    derating : str
        Temperature derating family, a key of the tables in
        :mod:`planner.catalogue.standards` (``"PE"``, ``"PVC"``, ``"STEEL"``), or ``""``
        if not known (refused above 20 degC).
    jointing : str
        How it is jointed, one of :data:`~planner.catalogue.materials.JOINTINGS`; the
        bill of quantities lists its joints by this.

    Left empty, ``derating`` and ``jointing`` are taken from the material name and size.
    """

    material: str
    label: str
    outside_diameter: float
    inside_diameter: float
    wall: float
    rating: float
    roughness: float
    c_factor: float
    elastic_modulus: float
    cost_per_m: float
    sdr: float = float("nan")
    catalogue: str = ""
    derating: str = ""
    jointing: str = ""

    def __post_init__(self) -> None:
        if not (self.derating and self.jointing):
            size = self.outside_diameter if math.isfinite(self.outside_diameter) \
                else self.inside_diameter
            derating, jointing = columns_from_material(self.material, size / MM)
            object.__setattr__(self, "derating", self.derating or derating)
            object.__setattr__(self, "jointing", self.jointing or jointing)
        if self.derating not in ("", *DERATING_FAMILIES) or self.jointing not in JOINTINGS:
            raise ValueError(f"{self.label}: derating {self.derating!r} or jointing "
                             f"{self.jointing!r} is not one of {DERATING_FAMILIES} / {JOINTINGS}")


def _number(row: dict, key: str, where: str, *, positive=True, default=None) -> float:
    """A finite number from a catalogue row, ``default`` where the cell is empty.

    It must be > 0 (``positive``) or, for a price or a roughness, >= 0.
    """
    text = (row.get(key) or "").strip()
    if not text:
        if default is not None:
            return default
        raise InputFileError(f"{where}: column {key!r} is empty")
    try:
        value = float(text)
    except ValueError:
        raise InputFileError(f"{where}: column {key!r} is not a number ({text!r})") from None
    if not math.isfinite(value):
        raise InputFileError(f"{where}: column {key!r} must be a finite number, got {text!r}")
    if positive and not value > 0:
        raise InputFileError(f"{where}: column {key!r} must be positive, got {value:g}")
    if not positive and value < 0:
        raise InputFileError(f"{where}: column {key!r} must not be negative, got {value:g}")
    return value


def _choice(row: dict, key: str, allowed: tuple[str, ...], where: str, *, upper: bool) -> str:
    """The value of an optional column of named values, ``""`` where absent or empty."""
    text = (row.get(key) or "").strip()
    value = text.upper() if upper else text.lower()
    if value and value not in allowed:
        raise InputFileError(f"{where}: column {key!r} is {text!r}, which is not one of "
                             f"{', '.join(allowed)} (or leave it empty to take it from the "
                             "material name)")
    return value


def load_catalogue(name_or_path: str | Path) -> list[PipeOption]:
    """Read a catalogue by built-in name or path; return its options.

    Raises
    ------
    InputFileError
        Naming the file and row of any missing column, bad value or duplicate label.
    """
    key = str(name_or_path).lower()
    path = DATA / BUILTIN[key] if key in BUILTIN else Path(name_or_path)
    if not path.exists():
        import difflib
        close = difflib.get_close_matches(key, BUILTIN, n=1)
        raise InputFileError(f"{name_or_path}: pipe catalogue not found"
                             + (f"; did you mean {close[0]!r}?" if close else "")
                             + f" (built-in catalogues: {', '.join(BUILTIN)}; anything else is "
                             "read as a CSV path)")
    lines = [line for line in read_text(path, "pipe catalogue").splitlines(keepends=True)
             if not line.lstrip().startswith("#")]
    reader = csv.DictReader(lines)
    missing = [c for c in REQUIRED if c not in (reader.fieldnames or [])]
    if missing:
        raise InputFileError(f"{path}: missing column(s) {', '.join(missing)}; a catalogue needs "
                             f"{', '.join(REQUIRED)}")
    options, seen = [], set()
    for n, row in enumerate(reader, start=2):
        where = f"{path}, row {n}"
        label = (row.get("label") or "").strip()
        if not label:
            raise InputFileError(f"{where}: column 'label' is empty")
        if label in seen:
            raise InputFileError(f"{where}: label {label!r} appears twice")
        seen.add(label)
        od = _number(row, "outside_diameter_mm", where)
        idia = _number(row, "inside_diameter_mm", where)
        if idia >= od:
            raise InputFileError(f"{where}: inside diameter {idia:g} mm is not below the outside "
                                 f"diameter {od:g} mm")
        if od > 3000:
            raise InputFileError(f"{where}: outside diameter {od:g} mm; give diameters in mm")
        options.append(PipeOption(
            material=(row.get("material") or "").strip(), label=label,
            outside_diameter=od * MM, inside_diameter=idia * MM,
            wall=_number(row, "wall_mm", where, default=(od - idia) / 2) * MM,
            rating=_number(row, "pressure_rating_bar", where) * BAR,
            roughness=_number(row, "roughness_mm", where, positive=False) * MM,
            c_factor=_number(row, "hazen_williams_c", where),
            elastic_modulus=_number(row, "elastic_modulus_gpa", where,
                                    default=float("nan")) * 1e9,
            cost_per_m=_number(row, "cost_per_m", where, positive=False),
            sdr=_number(row, "sdr", where, default=float("nan")),
            catalogue=path.name,
            derating=_choice(row, "derating", DERATING_FAMILIES, where, upper=True),
            jointing=_choice(row, "jointing", JOINTINGS, where, upper=False)))
    if not options:
        raise InputFileError(f"{path}: the catalogue has no rows")
    return options


def filter_options(options: list[PipeOption], *, materials=None, min_od_mm=None,
                   max_od_mm=None, min_rating_bar=None) -> list[PipeOption]:
    """Options matching all given filters (materials compared case-insensitively)."""
    out = []
    wanted = {m.upper() for m in materials} if materials else None
    for o in options:
        if wanted is not None and o.material.upper() not in wanted:
            continue
        if min_od_mm is not None and o.outside_diameter < min_od_mm * MM - 1e-12:
            continue
        if max_od_mm is not None and o.outside_diameter > max_od_mm * MM + 1e-12:
            continue
        if min_rating_bar is not None and o.rating < min_rating_bar * BAR - 1e-6:
            continue
        out.append(o)
    return out


def load_options(catalogues, **filters) -> list[PipeOption]:
    """Load several catalogues and filter them; at least one option must remain."""
    options = []
    for c in catalogues:
        options.extend(load_catalogue(c))
    labels = [o.label for o in options]
    dup = {x for x in labels if labels.count(x) > 1}
    if dup:
        raise InputError(f"pipe label(s) {', '.join(sorted(dup))} appear in more than one catalogue")
    kept = filter_options(options, **filters)
    if not kept:
        materials = sorted({o.material for o in options})
        sizes = sorted({o.outside_diameter * 1e3 for o in options})
        asked = []
        if filters.get("materials"):
            asked.append(f"materials {', '.join(filters['materials'])}")
        if filters.get("min_od_mm") is not None or filters.get("max_od_mm") is not None:
            asked.append(f"outside diameters {filters.get('min_od_mm') or 0:g} to "
                         f"{filters.get('max_od_mm') or float('inf'):g} mm")
        if filters.get("min_rating_bar") is not None:
            asked.append(f"ratings from PN{filters['min_rating_bar']:g}")
        raise InputError(
            f"no pipe in {', '.join(map(str, catalogues))} has {' and '.join(asked) or 'what was asked'}; "
            f"those catalogues hold {', '.join(materials)} from {sizes[0]:g} to {sizes[-1]:g} mm: "
            "check design.materials, min_size_mm and max_size_mm")
    return kept
