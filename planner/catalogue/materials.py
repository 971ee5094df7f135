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

#: Allowed values of the ``jointing`` column (what the bill makes of each:
#: :data:`planner.report.quantities.JOINTING`).
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
