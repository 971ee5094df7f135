"""The ``derating`` and ``jointing`` a material name implies, for rows that do not say.

Every catalogue row carries how its pipe derates with temperature (``derating``, a
family whose table is in :mod:`planner.catalogue.standards`) and how it is jointed
(``jointing``, a key the bill of quantities reads, :mod:`planner.report.quantities`).
A catalogue CSV written before those columns existed, an empty cell, and a scenario's
one ``[pipe]`` (which has a material name only) get them from
:func:`columns_from_material`: the one place where a material's name decides either.
It lives apart from the loader (:mod:`planner.catalogue.pipes`) only so that
:func:`~planner.catalogue.standards.temperature_factor` can read a bare material name
without an import cycle.
"""

from __future__ import annotations

from dataclasses import dataclass

#: Allowed values of the ``jointing`` column (what the bill makes of each:
#: :data:`JOINTING`).
JOINTINGS = ("electrofusion", "butt-fusion", "solvent", "rubber-ring", "threaded", "other")

#: Material names (upper case, or their start) of each derating family.
_FAMILY_NAMES = {"PE": ("PE", "HDPE", "MDPE", "LDPE"), "PVC": ("PVC",),
                 "STEEL": ("GI", "GS", "STEEL", "GALV", "DI", "DUCTILE")}
#: Names that start like PE but are other plastics, whose derating is not PE's.
_NOT_PE = ("PP", "PERT", "PE-RT", "PEX")
#: Largest outside diameter [mm] of PE sold in coils and electrofusion-jointed (larger PE
#: comes in straight lengths, butt-fused), and of PVC-U solvent-cemented (larger PVC-U
#: has rubber-ring sockets); common practice, check your supplier.
PE_COIL_MAX_MM = 110.0
PVC_SOLVENT_MAX_MM = 90.0


def columns_from_material(material: str, size_mm: float = float("nan")) -> tuple[str, str]:
    """The ``(derating, jointing)`` of a catalogue row that gives only its material name.

    Parameters
    ----------
    material : str
        The row's material name, any case.
    size_mm : float
        Its outside diameter [mm] (the inside one where that is not known); the jointing
        of PE and PVC-U depends on it.  NaN takes the larger sizes' jointing.

    Returns
    -------
    tuple of str
        The derating family, ``"PE"``, ``"PVC"`` or ``"STEEL"``, or ``""`` for a
        material of none of these (PP-R, GRP, PE-RT, ...), whose derating is never
        guessed; and the jointing, one of :data:`JOINTINGS` (``"other"`` when the name
        says nothing).

    Examples
    --------
    >>> columns_from_material("PE100", 63), columns_from_material("PE100", 160)
    (('PE', 'electrofusion'), ('PE', 'butt-fusion'))
    >>> columns_from_material("PVC-U", 110), columns_from_material("GI", 60.3)
    (('PVC', 'rubber-ring'), ('STEEL', 'threaded'))
    >>> columns_from_material("PP-R", 32)
    ('', 'other')
    """
    m = material.upper().replace(" ", "")
    family = "PVC" if "PVC" in m else next(
        (f for f, names in _FAMILY_NAMES.items()
         if any(m.startswith(n) for n in names) and not m.startswith(_NOT_PE)), "")
    if family == "PE":
        return family, "electrofusion" if size_mm <= PE_COIL_MAX_MM else "butt-fusion"
    if family == "PVC":
        return family, "solvent" if size_mm <= PVC_SOLVENT_MAX_MM else "rubber-ring"
    if family == "STEEL":
        return family, "rubber-ring" if m.startswith(("DI", "DUCTILE")) else "threaded"
    return family, "other"


@dataclass(frozen=True)
class Jointing:
    """What the bill makes of one catalogue ``jointing`` key.

    Attributes
    ----------
    coil_up_to_mm : float
        Sold in 100 m coils up to this outside diameter [mm] (0: never).
    length_m : float
        Else in straight lengths of this [m].
    joint : str
        The joint listed, one per length or coil bought (an item of ``items.csv``,
        priced by the pipe's outside diameter); ``""`` lists none.
    """

    coil_up_to_mm: float
    length_m: float
    joint: str


#: How a pipe of each jointing is sold and joined (common practice; check your supplier):
#: electrofusion-jointed PE in 100 m coils up to 110 mm, 12 m lengths above; butt-fused PE
#: in 12 m lengths; PVC-U (solvent-cement or rubber-ring sockets) and steel (screwed
#: sockets) in 6 m lengths; other jointing in 6 m lengths, joints not counted.
JOINTING = {
    "electrofusion": Jointing(110.0, 12.0, "electrofusion coupler"),
    "butt-fusion": Jointing(0.0, 12.0, "butt-fusion weld"),
    "solvent": Jointing(0.0, 6.0, "solvent-cement joint"),
    "rubber-ring": Jointing(0.0, 6.0, "rubber-ring joint"),
    "threaded": Jointing(0.0, 6.0, "threaded socket"),
    "other": Jointing(0.0, 6.0, ""),
}
if set(JOINTING) != set(JOINTINGS):                  # the catalogue's keys, every one here
    raise AssertionError(f"JOINTING keys {sorted(JOINTING)} differ from JOINTINGS {JOINTINGS}")


def supply_length(jointing: str, outside_diameter_mm: float) -> tuple[float, str]:
    """How a pipe of this catalogue ``jointing`` is sold: the supply length [m] and its description.

    Examples
    --------
    >>> supply_length("electrofusion", 110), supply_length("butt-fusion", 160)
    ((100.0, 'coil of 100 m'), (12.0, '12 m length'))
    """
    j = JOINTING[jointing]
    if outside_diameter_mm <= j.coil_up_to_mm:
        return 100.0, "coil of 100 m"
    return j.length_m, f"{j.length_m:g} m length"
