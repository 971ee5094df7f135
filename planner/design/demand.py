"""Design flows from what people and fields need, and storage to balance them with a source.

Pure functions in SI units (flows in m^3/s, volumes in m^3, time in s) except where a
parameter name carries its unit, as engineers quote it (litres per person per day,
millimetres per day, hours per day).  Each default names its source or says
"common practice"; values recalled but not seen in a published copy say "from memory".
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

from ..errors import InputError

DAY = 86_400.0

#: Peak factor on the average day for public taps with storage (2-3) and without (3-4):
#: common practice (Tanzania Ministry of Water, "Design, Construction Supervision,
#: Operation and Maintenance (DCOM) Manual", 4th ed., ch. 4, tabulates peak factors
#: by consumer type).
PEAK_FACTOR_WITH_STORAGE = 3.0
#: Flow of one public tap [m^3/s]: Sphere's 7.5 L/min per tap (from memory; Sphere 2011/2018).
TAP_FLOW = 7.5e-3 / 60.0
#: Day-school water use [L/pupil/day] (WHO school WASH standards, Adams et al. 2009: from memory).
SCHOOL_LPD = 5.0
#: Health post in-patient water use [L/bed/day] (WHO health-care standards 40-60: from memory).
CLINIC_LPD = 50.0
#: Hours over which a day school and a health post draw their day's water [h] (common
#: practice: the opening hours).
SCHOOL_HOURS = 8.0
CLINIC_HOURS = 12.0


#: A rural day of water use in 24 hourly shares, with morning and evening peaks and
#: nothing at night (common practice shape, not a measured pattern: replace it with a
#: local one).  Its peak hour is 2.4 times the mean.
TYPICAL_DAY = (0, 0, 0, 0, 0, 1, 3, 4, 3, 2, 1.5, 1.5, 2, 1.5, 1, 1, 1.5, 2.5, 3, 2, 1, 0.5, 0, 0)


def future_population(population: float, growth_rate: float, years: float) -> float:
    """Population after ``years`` of geometric growth, ``P0 (1 + r)^n`` [people].

    Geometric growth over a 15-20 year design horizon is common practice (rates from the
    census, often 2-3 % a year; Jordan's handbook ch. 4 covers the forecast).

    Examples
    --------
    >>> round(future_population(1000, 0.025, 15))
    1448
    """
    if population < 0 or years < 0 or growth_rate <= -1:
        raise InputError(f"population {population}, growth {growth_rate}, years {years}: "
                         "expected population >= 0, years >= 0, growth rate > -1 (a fraction)")
    return float(population * (1.0 + growth_rate) ** years)


def domestic_flow(population: float, per_capita_lpd: float, *, peak_factor: float = 3.0,
                  growth_rate: float = 0.0, horizon_years: float = 0.0) -> float:
    """Peak design flow for a community [m^3/s].

    ``Q = P_n x q x peak / 86400`` with ``P_n`` from :func:`future_population` and ``q``
    in litres per person per day.

    Examples
    --------
    >>> round(domestic_flow(1200, 40, peak_factor=3) * 1e3, 3)   # L/s
    1.667
    """
    if per_capita_lpd <= 0 or peak_factor < 1:
        raise InputError(f"per_capita_lpd must be > 0 and peak_factor >= 1, got "
                         f"{per_capita_lpd}, {peak_factor}")
    p = future_population(population, growth_rate, horizon_years)
    return p * per_capita_lpd * 1e-3 * peak_factor / DAY


def tap_stand_flow(taps: int, *, tap_flow: float = TAP_FLOW, use_factor: float = 1.0) -> float:
    """Design flow of a group of taps: taps x tap flow x share open at once [m^3/s].

    Examples
    --------
    >>> round(tap_stand_flow(4) * 1e3, 3)    # 4 taps at 7.5 L/min
    0.5
    """
    if taps < 0 or not 0 < use_factor <= 1:
        raise InputError(f"taps must be >= 0 and use_factor in (0, 1], got {taps}, {use_factor}")
    return float(taps * tap_flow * use_factor)


def institution_flow(count: float, litres_per_day: float, *, hours: float = SCHOOL_HOURS) -> float:
    """A school or clinic drawing its daily need over ``hours`` of use [m^3/s].

    Examples
    --------
    >>> round(institution_flow(400, SCHOOL_LPD, hours=8) * 1e3, 4)
    0.0694
    """
    if count < 0 or litres_per_day <= 0 or not 0 < hours <= 24:
        raise InputError("count must be >= 0, litres_per_day > 0 and hours in (0, 24]")
    return count * litres_per_day * 1e-3 / (hours * 3600.0)


def irrigation_flow(area_ha: float, crop_water_mm_per_day: float, *, efficiency: float,
                    hours_per_day: float) -> float:
    """System capacity of an irrigation block [m^3/s].

    ``Q = A x ETc / (E x H / 24)``: the peak crop water need ``ETc`` (FAO-56,
    ``ETc = Kc ET0``) over the application efficiency ``E`` (about 0.8 for sprinklers, 0.9
    for drip), delivered in ``H`` hours of operation a day.  ``ETc`` after Allen, Pereira,
    Raes & Smith, "Crop evapotranspiration", FAO Irrigation and Drainage Paper 56, 1998;
    the continuous-flow capacity form is common practice, and E = 0.9 for drip is from
    memory.

    Examples
    --------
    >>> round(irrigation_flow(5, 6, efficiency=0.9, hours_per_day=12) * 1e3, 2)   # L/s
    7.72
    """
    if area_ha < 0 or crop_water_mm_per_day < 0 or not 0 < efficiency <= 1 \
            or not 0 < hours_per_day <= 24:
        raise InputError("area >= 0, crop water >= 0, efficiency in (0, 1], hours in (0, 24]")
    daily = area_ha * 1e4 * crop_water_mm_per_day * 1e-3 / efficiency      # m^3/day
    return daily / (hours_per_day * 3600.0)


def balancing_storage(demand_pattern: NDArray, daily_demand: float, supply: float) -> float:
    """Storage a tank needs to meet a daily demand pattern from a steady supply [m^3].

    Parameters
    ----------
    demand_pattern : ndarray
        Relative demand in equal steps over one day (any positive scale; e.g. 24 hourly
        values).
    daily_demand : float
        Water used per day [m^3].
    supply : float
        Steady inflow from the source [m^3/s]; at least the mean demand.

    Returns
    -------
    float
        The spread of the cumulative surplus of inflow over demand (mass curve, Rippl
        1883): the smallest tank that is never empty when it starts the day at the
        right level.  With supply above the mean, the overflow spills.

    Raises
    ------
    InputError
        If the supply over a day is less than the daily demand: no tank helps.

    Examples
    --------
    >>> pattern = [0] * 12 + [1] * 12        # all the water drawn in 12 hours
    >>> round(balancing_storage(pattern, 100.0, 100.0 / 86400))
    50
    """
    w = np.asarray(demand_pattern, dtype=float)
    if w.ndim != 1 or w.size == 0 or np.any(w < 0) or w.sum() <= 0:
        raise InputError("the demand pattern must be a list of non-negative numbers, not all zero")
    if supply * DAY < daily_demand * (1 - 1e-9):
        raise InputError(f"the source gives {supply * DAY:,.1f} m3 a day but {daily_demand:,.1f} m3 "
                         "are needed: storage cannot make up a daily deficit; reduce the demand "
                         "or add a source")
    step = DAY / w.size
    used = daily_demand * w / w.sum()
    inflow = np.full(w.size, supply * step)
    # with more supply than demand the tank overflows; balance against the mean inflow
    inflow *= daily_demand / inflow.sum()
    surplus = np.concatenate([[0.0], np.cumsum(inflow - used)])
    return float(surplus.max() - surplus.min())


def from_table(kind: str, vals: dict[str, float]) -> tuple[float, str, float | None]:
    """Design flow [m^3/s], basis in words, and day's volume [m^3] of a demand table.

    ``kind`` and its keys, defaults filled in (:data:`planner.scenario.keys.DEMAND_KEYS`);
    the volume is None for taps.
    """
    if kind == "domestic":
        q = domestic_flow(vals["population"], vals["per_capita_lpd"],
                          peak_factor=vals["peak_factor"], growth_rate=vals["growth_rate"],
                          horizon_years=vals["horizon_years"])
        people = future_population(vals["population"], vals["growth_rate"], vals["horizon_years"])
        return q, (f"{people:,.0f} people in {vals['horizon_years']:g} years x "
                   f"{vals['per_capita_lpd']:g} L/day x peak factor {vals['peak_factor']:g}"), \
            people * vals["per_capita_lpd"] * 1e-3
    if kind == "taps":
        q = tap_stand_flow(int(vals["taps"]), tap_flow=vals["tap_flow_lpm"] * 1e-3 / 60,
                           use_factor=vals["use_factor"])
        return q, (f"{vals['taps']:g} taps x {vals['tap_flow_lpm']:g} L/min x use factor "
                   f"{vals['use_factor']:g}"), None
    if kind in ("school", "clinic"):
        count = vals["pupils" if kind == "school" else "beds"]
        q = institution_flow(count, vals["litres_per_day"], hours=vals["hours"])
        return q, (f"{count:g} {'pupils' if kind == 'school' else 'beds'} x "
                   f"{vals['litres_per_day']:g} L/day over {vals['hours']:g} h"), \
            count * vals["litres_per_day"] * 1e-3
    q = irrigation_flow(vals["area_ha"], vals["crop_water_mm_per_day"],
                        efficiency=vals["efficiency"], hours_per_day=vals["hours_per_day"])
    return q, (f"{vals['area_ha']:g} ha x {vals['crop_water_mm_per_day']:g} mm/day / "
               f"efficiency {vals['efficiency']:g} over {vals['hours_per_day']:g} h/day"), \
        q * vals["hours_per_day"] * 3600.0
