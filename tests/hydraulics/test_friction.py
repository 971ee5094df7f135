"""Friction factors and head losses against `fluids` and published values."""

import numpy as np
import pytest
from fluids.friction import Clamond, Colebrook, Swamee_Jain_1976

from planner.errors import ConvergenceError, InputError, RangeWarning
from planner.hydraulics import friction as fr
from planner.units import G, LPS, MM

RE = np.geomspace(4e3, 1e8, 25)
ED = np.array([0.0, 1e-6, 1e-5, 1e-4, 1e-3, 1e-2, 5e-2])


def test_colebrook_matches_fluids_over_the_moody_range():
    # fluids.friction.Colebrook solves the same equation exactly (Lambert W); Clamond
    # 2009 (fluids.friction.Clamond) is accurate to machine precision.
    re, ed = np.meshgrid(RE, ED)
    ours = fr.colebrook(re, ed)
    with np.errstate(over="ignore"):   # fluids' Lambert-W form overflows internally
        ref = np.vectorize(Colebrook)(re, ed)
    ref2 = np.vectorize(Clamond)(re, ed)
    np.testing.assert_allclose(ours, ref, rtol=1e-11)
    np.testing.assert_allclose(ours, ref2, rtol=1e-11)


def test_colebrook_published_value():
    # fluids documentation, Colebrook(1E5, 1E-4) = 0.018513866077471
    assert fr.colebrook(1e5, 1e-4) == pytest.approx(0.018513866077471, rel=1e-12)


def test_moody_point_white_example():
    # White, "Fluid Mechanics" (McGraw-Hill), Example 6.6 in the 4th-7th editions, from
    # memory: 200 ft of 6-in asphalted cast iron (eps = 0.0004 ft), water at 6 ft/s,
    # nu = 1.1e-5 ft2/s -> Re = 2.73e5, eps/d = 0.0008, read f = 0.0196 from the Moody
    # chart and h_f = 4.4 ft.  Tolerances follow the printed precision of a chart reading.
    re = 6.0 * 0.5 / 1.1e-5
    f = fr.colebrook(re, 0.0004 / 0.5)
    assert f == pytest.approx(0.0196, abs=0.0005)
    hf_ft = f * 200 / 0.5 * 6.0**2 / (2 * 32.174)
    assert hf_ft == pytest.approx(4.4, abs=0.1)


def test_swamee_jain_matches_fluids_and_is_close_to_colebrook():
    re, ed = np.meshgrid(RE[RE >= 5e3], ED[ED >= 1e-6])
    sj = fr.swamee_jain_1976(re, ed)
    # fluids writes 5.74/Re^0.9 as (6.97/Re)^0.9 (6.97^0.9 = 5.7405), hence 2e-5
    np.testing.assert_allclose(sj, np.vectorize(Swamee_Jain_1976)(re, ed), rtol=2e-5)
    # Swamee & Jain 1976: within about 1 % of Colebrook over most of the range; the
    # largest error, at Re = 5e3 and eps/D = 5e-2, is 2.6 %, inside the +-3 % some
    # references quote
    np.testing.assert_allclose(sj, fr.colebrook(re, ed), rtol=0.03)


def test_laminar_and_transition():
    assert fr.friction_factor(1000.0, 1e-3) == pytest.approx(0.064)  # Hagen-Poiseuille 64/Re
    with pytest.warns(RangeWarning, match="transition"):
        f = fr.friction_factor(3000.0, 0.0)
    assert f == pytest.approx(Colebrook(3000.0, 0.0))
    assert np.isnan(fr.friction_factor(0.0, 0.0))


def test_non_convergence_is_reported():
    with pytest.raises(ConvergenceError) as info:
        fr.colebrook(1e5, 1e-4, max_iter=1, tol=0.0)
    assert info.value.iterations == 1 and info.value.residual > 0


@pytest.mark.parametrize("q_lps, d_mm, eps_mm, hf_dw", [
    # computed with `fluids` (Colebrook 1939, solved by Clamond 2009), 1 km, water at 20 C
    # (nu = 1.0034e-6 from IAPWS-95 and IAPWS 2008)
    (5, 90.0, 0.0015, 6.81), (2, 51.4, 0.0015, 19.40), (1, 44.0, 0.0015, 11.92),
    (10, 101.6, 0.0015, 13.19), (0.5, 27.3, 0.15, 47.25), (2, 53.1, 0.15, 22.22),
    (10, 105.3, 0.045, 12.47)])
def test_darcy_weisbach_head_loss_cases(q_lps, d_mm, eps_mm, hf_dw):
    h = fr.darcy_weisbach_head_loss(q_lps * LPS, d_mm * MM, 1000.0, eps_mm * MM, 1.0034e-6)
    # independent recomputation with fluids' Colebrook
    d = d_mm * MM
    v = 4 * q_lps * LPS / (np.pi * d**2)
    ref = Colebrook(v * d / 1.0034e-6, eps_mm / d_mm) * 1000.0 / d * v**2 / (2 * G)
    assert h == pytest.approx(ref, rel=1e-10)
    assert h == pytest.approx(hf_dw, abs=0.006)


@pytest.mark.parametrize("q_lps, d_mm, c", [(5, 90.0, 150), (2, 51.4, 150), (0.5, 27.3, 120),
                                            (10, 105.3, 130), (150, 300.0, 100)])
def test_hazen_williams_against_printed_forms(q_lps, d_mm, c):
    ours = fr.hazen_williams_head_loss(q_lps * LPS, d_mm * MM, 1000.0, c)
    # the SI form printed in most handbooks: h = 10.67 L Q^1.852 / (C^1.852 D^4.87)
    si = 10.67 * 1000.0 * (q_lps * LPS) ** 1.852 / (c**1.852 * (d_mm * MM) ** 4.87)
    # the litres-per-second / millimetre form: h = L (279000 Q / (C D^2.63))^1.852
    lps = 1000.0 * (279000 * q_lps / (c * d_mm**2.63)) ** 1.852
    # the US customary form, NCEES PE Civil Reference Handbook: psi/ft = 4.52 Q^1.85 / (C^1.85 d^4.87)
    gpm, inch = q_lps * 15.850323, d_mm / 25.4
    psi = 4.52 * 3280.84 * gpm**1.85 / (c**1.85 * inch**4.87)
    us = psi * 6894.757 / (998.2 * G)
    for ref in (si, lps, us):
        assert ours == pytest.approx(ref, rel=0.01)


def test_head_loss_dispatch_and_errors():
    assert fr.head_loss(0.0, 0.1, 100.0, method="colebrook", roughness=1e-5,
                        kinematic_viscosity=1e-6) == 0.0
    neg = fr.head_loss(-0.005, 0.09, 100.0, method="hazen-williams", c_factor=150)
    assert neg < 0
    with pytest.raises(InputError, match="unknown friction method 'manning'.*colebrook"):
        fr.head_loss(0.005, 0.09, 100.0, method="manning")


def test_head_loss_rises_with_flow():
    q = np.linspace(0.1, 10, 50) * LPS
    h = fr.darcy_weisbach_head_loss(q, 0.0614, 1000.0, 7e-6, 1.0034e-6)
    assert np.all(np.diff(h) > 0)
