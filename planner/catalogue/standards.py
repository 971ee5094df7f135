"""Pressure ratings and temperature derating from the pipe standards' own relations.

Pure functions; the numbers behind each are cited in place.  Values marked "from
memory" could not be confirmed in a published copy and must be checked against the
standard before a design is built on them.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np

from .materials import columns_from_material

if TYPE_CHECKING:                         # the type only: pipes imports this module
    from .pipes import PipeOption

#: Minimum required strength MRS at 50 years, 20 degC [MPa] (ISO 9080 / ISO 12162).
MRS_MPA = {"PE100": 10.0, "PE80": 8.0, "PVC-U": 25.0}
#: Minimum overall service (design) coefficient C for water (ISO 4427-1 / ISO 12162).
DESIGN_COEFFICIENT = {"PE100": 1.25, "PE80": 1.25}
#: The R10 series of nominal pressures (ISO 3 preferred numbers) [bar].
R10_PN = (2.5, 3.2, 4.0, 5.0, 6.0, 8.0, 10.0, 12.5, 16.0, 20.0, 25.0, 32.0)


def pvc_design_coefficient(outside_diameter_mm: float) -> float:
    """Design coefficient of PVC-U pressure pipe by size (ISO 1452-2, from memory).

    2.5 for dn <= 90 mm and 2.0 for dn >= 110 mm; ISO 12162 sets 1.6 as the minimum.
    """
    return 2.5 if outside_diameter_mm <= 90.0 else 2.0


def nominal_pressure(sdr: float, mrs_mpa: float, design_coefficient: float) -> float:
    """Nominal pressure PN of a plastic pipe from its SDR [bar].

    Parameters
    ----------
    sdr : float
        Standard dimension ratio, outside diameter over wall [-].
    mrs_mpa : float
        Minimum required strength [MPa].
    design_coefficient : float
        Overall service coefficient C [-].

    Returns
    -------
    float
        The listed PN [bar]: the thin-wall hoop-stress value
        ``20 MRS / (C (SDR - 1))`` rounded down to the R10 series, as ISO 4427-2 lists it.

    Notes
    -----
    Hoop stress ``sigma = p (SDR - 1) / 2`` with the design stress ``sigma_s = MRS / C``
    (ISO 4427-1; PE100+ Association).  E.g. PE100 SDR 11: 20 x 10 / (1.25 x 10) = 16 bar.

    Examples
    --------
    >>> nominal_pressure(11, 10.0, 1.25)
    16.0
    >>> nominal_pressure(26, 10.0, 1.25)
    6.0
    """
    raw = 20.0 * mrs_mpa / (design_coefficient * (sdr - 1.0))
    listed = [pn for pn in R10_PN if pn <= raw + 1e-9]
    return float(listed[-1]) if listed else float("nan")


# The derating table of each family, keyed by the family name a catalogue's ``derating``
# column gives: (temperature degC, factor) pairs; linear in between; 1.0 below the first.
_DERATING = {
    # ISO 4427-1:2019 / EN 12201-1 Annex A, from memory (1.00 / 0.87 / 0.74)
    "PE": ((20.0, 1.00), (30.0, 0.87), (40.0, 0.74)),
    # ISO 1452-2 Fig. A.1 for 25-45 degC, from memory (1.00 / 0.80 / 0.63)
    "PVC": ((25.0, 1.00), (35.0, 0.80), (45.0, 0.63)),
    # steel tube: no derating at water-supply temperatures
    "STEEL": ((0.0, 1.00), (100.0, 1.00)),
}


#: The derating families, the values of a catalogue's ``derating`` column.
DERATING_FAMILIES = tuple(_DERATING)


def temperature_factor(pipe: PipeOption | str, temperature_c: float) -> float:
    """Factor on the 20 degC pressure rating at a wall temperature [-].

    Parameters
    ----------
    pipe : PipeOption or str
        A catalogue option, whose ``derating`` column names the table; or a bare
        material name, read as a catalogue row without that column would be
        (:func:`~planner.catalogue.materials.columns_from_material`).
    temperature_c : float
        Wall temperature [degC].

    Returns
    -------
    float
        Ratings are stated at 20 degC, so the factor there and below is 1 for any
        material; above, the family's table, linear in between.

    Raises
    ------
    ValueError
        Above the last tabulated temperature (the pipe is not rated there) and, above
        20 degC, for a pipe of no known derating family.

    Examples
    --------
    >>> temperature_factor("PE100", 30.0)
    0.87
    >>> temperature_factor("PVC-U", 20.0)
    1.0
    """
    if temperature_c <= 20.0:
        return 1.0
    if isinstance(pipe, str):
        material, family = pipe, columns_from_material(pipe)[0]
    else:
        material, family = pipe.material, pipe.derating
    if family not in _DERATING:
        raise ValueError(f"the temperature derating of material {material!r} is not known "
                         f"(gravplan knows {', '.join(DERATING_FAMILIES)}): above 20 degC it is "
                         "needed; name the family whose table applies in the catalogue's "
                         "'derating' column, or enter the derated rating in the catalogue and "
                         "keep the pipe temperature at 20 degC or below")
    table = _DERATING[family]
    t = np.array([p[0] for p in table])
    f = np.array([p[1] for p in table])
    if temperature_c > t[-1] + 1e-9:
        raise ValueError(f"{material} is not rated above {t[-1]:g} degC "
                         f"(asked for {temperature_c:g} degC)")
    return float(np.interp(temperature_c, t, f, left=1.0))


def wall_from_sdr(outside_diameter_mm: float, sdr: float, *, minimum_mm: float = 2.0) -> float:
    """Minimum wall ``e = OD / SDR`` rounded up to 0.1 mm, not below ``minimum_mm``.

    The ISO 4065 rule behind the ISO 4427-2 and ISO 1452-2 tables.  Tabulated walls
    are preferred where the standard's table is known (see the catalogue files).

    Examples
    --------
    >>> wall_from_sdr(110, 11)
    10.0
    """
    return max(minimum_mm, math.ceil(outside_diameter_mm / sdr * 10.0 - 1e-9) / 10.0)
