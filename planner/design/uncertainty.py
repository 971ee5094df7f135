"""How sure is the plan? DEM vertical error carried through a planned line by Monte Carlo.

A DEM's error ``e = z_dem - z_true`` is modelled along the line as a stationary Gaussian
process with standard deviation ``sigma`` and an exponential correlation
``exp(-d / L)`` over the chainage distance ``d`` (a first-order autoregressive
sequence on the profile points; the exponential model of DEM error is common in the
DEM-uncertainty literature, e.g. Oksanen & Sarjakoski 2005, Int. J. Geogr. Inf. Sci.,
cited from memory).  For a line whose pipes and
flows are fixed, friction does not depend on the levels, so every head follows
exactly:

    pressure_true(x) = pressure_dem(x) + e(x) - e(s)

where ``s`` is the start of the reach (the source or the break-pressure tank, whose
water level follows the ground it is built on; an absolute source level does not
move).  The same holds for the static pressure.  Surveyed points pinned in the
scenario remove the error where they are: the profile was shifted to them, so the
error left is ``e(x)`` minus its interpolation between the pins.

Everything is vectorised over the realisations (arrays ``realisations x points``);
1,000 realisations of a 20 km line at 10 m take well under a second
(benchmarks/bench_uncertainty.py).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from numpy.typing import NDArray

#: Normal quantile of 90 %: LE90 = 1.6449 sigma for a zero-mean Gaussian error.
Z90 = 1.6448536269514722


@dataclass(frozen=True)
class ErrorModel:
    """A DEM's vertical error: standard deviation [m], correlation length [m], source."""

    sigma_m: float
    correlation_m: float
    product: str
    source: str


#: Vertical accuracy of common DEMs (standard deviation of the error, open terrain
#: unless said; forests are worse, see docs/scenario.md).  Each value names its source.
PRODUCTS = {
    "copernicus-glo30": (2.57 / Z90, "Copernicus DEM GLO-30: global mean LE90 = 2.57 m in "
                         "Airbus's validation (2022), sigma = LE90 / 1.645"),
    "srtm": (9.18, "SRTM 1 arc-second: RMSE 9.18 m against ground control, Mukul et al. "
             "2017, Sci. Rep. 7:41672"),
    "nasadem": (3.66, "NASADEM: RMSE 3.66 m against GNSS points, Peninsular Malaysia "
                "(Aziz et al., Int. J. Geoinformatics)"),
    "alos-aw3d30": (5.40, "ALOS AW3D30: RMSE 5.40 m, Nigeria (Apeh et al. 2019, J. Geogr. "
                    "Inf. Syst. 11:91165)"),
    "aster-gdem": (20.0, "ASTER GDEM: RMSE 20.0 m, Nigeria (Apeh et al. 2019, J. Geogr. "
                   "Inf. Syst. 11:91165)"),
    "merit": (2.67, "MERIT DEM: RMSE 2.67 m, Peninsular Malaysia (Aziz et al., Int. J. "
              "Geoinformatics)"),
    "fabdem": (2.88, "FABDEM: mean error 1.12 to 2.88 m by land cover (Hawker et al. 2022, "
               "as listed in the Awesome-DEM survey); the upper value"),
}
#: When the scenario does not say which DEM it is: the commonest global DEM, SRTM,
#: which is also the least accurate of the common 30 m DEMs but ASTER.
DEFAULT_PRODUCT = "srtm"
#: Correlation length of DEM error along a line [m].  From memory (not checked against
#: a published value): errors of 30 m global DEMs stay correlated over a few hundred
#: metres; 250 m is a middle value.  Settable per scenario.
DEFAULT_CORRELATION_M = 250.0


def error_model(product: str | None = None, sigma_m: float | None = None,
                correlation_m: float | None = None) -> ErrorModel:
    """The error model for a named DEM product, with the user's overrides.

    >>> error_model("copernicus-glo30").sigma_m.__round__(2)
    1.56
    """
    name = product or DEFAULT_PRODUCT
    if name not in PRODUCTS and sigma_m is None:
        raise ValueError(f"unknown DEM product {name!r}; known: {', '.join(PRODUCTS)}")
    sigma, source = PRODUCTS.get(name, (None, ""))
    if sigma_m is not None:
        source = f"given in the scenario (sigma {sigma_m:g} m)"
        sigma = sigma_m
    assert sigma is not None                 # a known product, or sigma_m given
    return ErrorModel(sigma_m=float(sigma), product=name,
                      correlation_m=float(correlation_m or DEFAULT_CORRELATION_M),
                      source=source)


def model_for(spec, *, survey: bool = False) -> ErrorModel | None:
    """The error model a scenario's ``[uncertainty]`` asks for, or None when it is off.

    On a CSV survey (``survey``) there is no DEM: the estimate runs only when the user
    gives the levelling's own sigma.
    """
    if not spec.enabled or (survey and spec.sigma_m is None):
        return None
    model = error_model(spec.product, spec.sigma_m, spec.correlation_m)
    if survey:
        from dataclasses import replace
        model = replace(model, product="survey",
                        source=f"given in the scenario (sigma {spec.sigma_m:g} m)")
    return model


def correlated_errors(chainage: NDArray, sigma: float, length: float, realisations: int,
                      rng: np.random.Generator) -> NDArray[np.float64]:
    """Realisations of a zero-mean Gaussian error with exponential correlation.

    Parameters
    ----------
    chainage : ndarray
        Increasing chainage of the points [m].
    sigma : float
        Standard deviation [m].
    length : float
        Correlation length L [m]: corr(d) = exp(-d / L).
    realisations : int
    rng : numpy Generator

    Returns
    -------
    ndarray, shape (realisations, points)

    Notes
    -----
    The exact first-order autoregressive recursion on uneven spacing,
    e_i = r_i e_{i-1} + sigma sqrt(1 - r_i^2) z_i with r_i = exp(-(s_i - s_{i-1}) / L),
    which has exactly the exponential covariance (the Ornstein-Uhlenbeck process
    sampled at the points).
    """
    ch = np.asarray(chainage, dtype=float)
    n = ch.size
    r = np.exp(-np.diff(ch) / length)
    s = np.sqrt(1.0 - r * r)
    z = rng.standard_normal((n, realisations))
    e = np.empty((n, realisations))
    e[0] = z[0]
    for i in range(1, n):
        e[i] = r[i - 1] * e[i - 1] + s[i - 1] * z[i]
    return sigma * e.T


@dataclass(frozen=True)
class Uncertainty:
    """Probabilities from the Monte Carlo (all in 0..1) and the margins it suggests."""

    model: ErrorModel
    realisations: int
    seed: int
    #: per outlet: (name, P(residual < minimum), 95 % fall of the residual [m])
    outlets: tuple[tuple[str, float, float], ...]
    #: per air valve (crests and high points): (chainage, P(pressure < 0 there))
    crests: tuple[tuple[float, float], ...]
    #: per stretch: (chainage from, to, label, P(static pressure > rating somewhere))
    stretches: tuple[tuple[float, float, str, float], ...]
    p_any_outlet_short: float
    #: add this to outlet minimum pressures to be 95 % sure of them [m]
    margin_m: float
    #: 95 % rise of the static pressure above what the DEM gives [m]
    static_margin_m: float
    pinned: tuple[str, ...] = field(default=())
    #: the confidence the design was held to (design.confidence), None when it was not
    design_confidence: float | None = None


def _reach_start(n: int, starts: list[int]) -> NDArray[np.int64]:
    idx = np.searchsorted(np.asarray(starts), np.arange(n), side="right") - 1
    return np.asarray(starts)[idx]


def line_uncertainty(plan, model: ErrorModel, *, realisations: int = 1000, seed: int = 0,
                     source_moves: bool = True, pins: list[float] | None = None,
                     pin_names: tuple[str, ...] = ()) -> Uncertainty:
    """Monte Carlo of DEM error over a planned line (see the module docstring).

    Parameters
    ----------
    plan : Plan
        A line's plan (pipes, tanks and flows fixed).
    model : ErrorModel
    realisations, seed : int
    source_moves : bool
        False when the source's levels are absolute (surveyed), so they do not follow
        the DEM's error at the start.
    pins : list of float, optional
        Chainages [m] of surveyed points the profile was pinned to.
    """
    prof, e = plan.profile, plan.energy
    ch = prof.chainage_m
    n = prof.n
    rng = np.random.default_rng(seed)
    err = correlated_errors(ch, model.sigma_m, model.correlation_m, realisations, rng)
    if pins:
        # the profile was shifted to the surveyed levels, so the error left is e(x) less
        # e at the pins, interpolated as the shift was (linear between, flat beyond)
        pin_ch = np.sort(np.asarray(pins, dtype=float))
        eye = np.eye(pin_ch.size)
        pos = np.interp(pin_ch, ch, np.arange(n, dtype=float))     # pins among the points
        lo = np.minimum(pos.astype(int), n - 2)
        at_pins = err[:, lo] * (lo + 1 - pos) + err[:, lo + 1] * (pos - lo)   # (R, pins)
        weights = np.column_stack([np.interp(ch, pin_ch, eye[k]) for k in range(pin_ch.size)])
        err = err - at_pins @ weights.T
    starts = [0] + [t.index for t in plan.tanks]
    s = _reach_start(n, starts)
    shift = err - err[:, s]                                       # e(x) - e(s)
    if not source_moves:
        src = s == 0
        shift[:, src] = err[:, src]
    p_true = e.pressure_head[None, :] + shift
    static_true = e.static_pressure_head[None, :] + shift
    outlets, shorts = [], []
    for o in plan.outlets:
        below = p_true[:, o.index] < o.min_pressure_m
        shorts.append(below)
        fall = float(np.quantile(-shift[:, o.index], 0.95))
        outlets.append((o.name, float(below.mean()), max(fall, 0.0)))
    crests = tuple((float(f.chainage_m), float((p_true[:, f.index] < 0).mean()))
                   for f in plan.features if f.kind == "air_valve")
    stretches = []
    for st in plan.stretches:
        a, b = st.start_index, st.end_index + 1
        over = np.any(static_true[:, a:b] > st.rating_head_m, axis=1)
        stretches.append((float(st.chainage_m), float(st.chainage_end_m), st.option.label,
                          float(over.mean())))
    any_short = float(np.any(np.column_stack(shorts), axis=1).mean()) if shorts else 0.0
    margin = max((m for _, _, m in outlets), default=0.0)
    static_margin = float(np.quantile(np.max(shift, axis=1), 0.95)) if n else 0.0
    return Uncertainty(model=model, realisations=realisations, seed=seed,
                       outlets=tuple(outlets), crests=crests, stretches=tuple(stretches),
                       p_any_outlet_short=any_short, margin_m=float(np.ceil(margin * 2) / 2),
                       static_margin_m=float(np.ceil(max(static_margin, 0.0) * 2) / 2),
                       pinned=tuple(pin_names))


def deviation_sd(chainage: NDArray, starts: list[int], model: ErrorModel, *,
                 source_moves: bool = True, pins: list[float] | None = None,
                 block: int = 8192) -> NDArray[np.float64]:
    """Standard deviation [m] of the pressure's DEM-error deviation at each point of a path.

    The deviation is ``d(x) = r(x) - r(s)`` (see the module docstring): ``r`` the error
    left after pinning (``e`` less its linear interpolation between the pins), ``s`` the
    start of the point's reach (``starts``: point indices of the source and the tanks;
    without ``r(s)`` in the source's reach when ``source_moves`` is False).  ``d`` is a
    linear combination of ``e`` at the point, its reach start and the pins, so its
    variance is ``a' C a`` with the exponential covariance
    ``C_ij = sigma^2 exp(-|x_i - x_j| / L)``, exactly (no sampling).  Static pressure
    moves by the same ``d``.  ``block`` rows are computed at a time (memory).

    Examples
    --------
    >>> m = ErrorModel(sigma_m=2.0, correlation_m=100.0, product="test", source="test")
    >>> sd = deviation_sd(np.array([0.0, 100.0]), [0], m)
    >>> round(float(sd[1]), 4) == round(float(np.sqrt(2 * 4.0 * (1 - np.exp(-1)))), 4)
    True
    """
    ch = np.asarray(chainage, dtype=float)
    n = ch.size
    s = _reach_start(n, starts)
    keep_s = np.ones(n) if source_moves else (s != 0).astype(float)
    pin_ch = np.sort(np.asarray(pins if pins else [], dtype=float))
    eye = np.eye(pin_ch.size)
    w = (np.column_stack([np.interp(ch, pin_ch, eye[k]) for k in range(pin_ch.size)])
         if pin_ch.size else np.zeros((n, 0)))
    out = np.empty(n)
    for a in range(0, n, block):
        b = min(a + block, n)
        rows = np.arange(a, b)
        pos = np.column_stack([ch[rows], ch[s[rows]],
                               np.broadcast_to(pin_ch, (b - a, pin_ch.size))])
        coef = np.column_stack([np.ones(b - a), -keep_s[rows],
                                -w[rows] + keep_s[rows, None] * w[s[rows]]])
        cov = np.exp(-np.abs(pos[:, :, None] - pos[:, None, :]) / model.correlation_m)
        var = np.einsum("ri,rij,rj->r", coef, cov, coef) * model.sigma_m ** 2
        out[a:b] = np.sqrt(np.maximum(var, 0.0))
    return out


def margin_sentence(outlet_m: float, static_m: float, confidence: float | None) -> str:
    """The DEM-error margins in words, for the findings, the CLI and the report.

    ``outlet_m`` and ``static_m`` are the 95 % fall of the residual pressures and rise
    of the static pressure that the DEM's error allows [m]; ``confidence`` the design
    confidence the design was held to (None: it was not, and the margins are advice).
    """
    if confidence is not None:
        return (f"the design holds margins for this error at {confidence:.0%} confidence per "
                f"point (design.confidence); the 95 % fall of residual pressures is "
                f"{outlet_m:.1f} m, the 95 % rise of static pressure {static_m:.1f} m")
    return (f"to be 95 % sure, add {outlet_m:.1f} m to outlet minimum pressures and allow "
            f"{static_m:.1f} m more static pressure than the DEM gives (or name the DEM in "
            "uncertainty.product so that the design holds them)")

