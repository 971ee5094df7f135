"""Surge: Korteweg wave speed and Joukowsky rise against published values."""

import pytest

from planner.hydraulics import surge as sg

PSI = 6894.757
G = 9.80665


@pytest.mark.parametrize("d, e, modulus, a_expected", [
    # Korteweg's formula computed by hand, K = 2.19 GPa, rho = 998.2 kg/m3, psi = 1, mean diameter
    (0.100, 0.010, 1.0e9, 310), (0.100, 0.010, 0.8e9, 278),
    (0.1034, 0.0066, 1.0e9, 249),                       # PE100 SDR17 (110 x 6.6)
    (0.1058, 0.0042, 3.0e9, 336),                       # PVC SDR26 (110 x 4.2)
    (0.0567, 0.0036, 207e9, 1371),                      # steel 2 in medium (60.3 x 3.6)
])
def test_korteweg_wave_speeds(d, e, modulus, a_expected):
    assert sg.wave_speed(d, e, modulus) == pytest.approx(a_expected, abs=2)


@pytest.mark.parametrize("modulus_psi, dr, psi_per_fps", [
    # published PVC / HDPE surge table (of the kind printed in AWWA Manual M23, PVC Pipe, and
    # M55, PE Pipe - Design and Installation; which manual, from memory): surge pressure per
    # 1 ft/s of velocity change, PVC (E = 400,000 psi) 10.8 at DR51 to 19 at DR14, HDPE
    # (E = 115,000 psi) 8.8 at DR21 to 16.3 at DR7.3.  The table's own constants are not
    # printed, so the check is to 6 %.
    (400_000, 51, 10.8), (400_000, 14, 19.0), (115_000, 21, 8.8), (115_000, 7.3, 16.3)])
def test_surge_per_foot_per_second_against_the_published_table(modulus_psi, dr, psi_per_fps):
    k = 300_000 * PSI                                    # water bulk modulus used by the table
    a = sg.wave_speed(dr - 2, 1.0, modulus_psi * PSI, bulk_modulus=k, density=998.2)
    dp_psi = 998.2 * a * 0.3048 / PSI                   # Joukowsky dp = rho a dV, dV = 1 ft/s
    assert dp_psi == pytest.approx(psi_per_fps, rel=0.06)


def test_joukowsky_and_closure_time():
    # worked by hand (Joukowsky; t_c = 2L/a): a = 310 m/s, V = 0.786 m/s -> 24.8 m; 2 km -> 12.9 s
    assert sg.joukowsky_head(310.0, 0.786) == pytest.approx(310 * 0.786 / G)
    assert sg.joukowsky_head(310.0, 0.786) == pytest.approx(24.8, abs=0.05)
    assert sg.critical_closure_time(2000.0, 310.0) == pytest.approx(12.9, abs=0.05)


def test_surge_head_regimes():
    # faster than 2L/a: full Joukowsky; slower: Michaud 2 L V / (g t), never above Joukowsky
    full = sg.surge_head(2000.0, 0.786, 310.0, 5.0)
    assert full == pytest.approx(310 * 0.786 / G)
    slow = sg.surge_head(2000.0, 0.786, 310.0, 60.0)
    assert slow == pytest.approx(2 * 2000 * 0.786 / (G * 60.0))
    assert slow < full
    t = sg.safe_closure_time(2000.0, 0.786, slow)
    assert t == pytest.approx(60.0)


def test_series_pipes_as_one_equivalent_pipe():
    """Pipes in series as one pipe (Chaudhry, Applied Hydraulic Transients, 3rd ed. 2014,
    sec. 3.9, from memory): the wave's travel time and the column's momentum are kept.

    Closed forms: the return time 2 sum(L_i / a_i) decides whether a closure is rapid;
    a slow closure gives the rigid-column rise 2 sum(L_i V_i) / (g t) (Michaud's
    estimate of the whole column, Wylie & Streeter 1993, ch. 1); a rapid one the pipe's
    own Joukowsky a V / g."""
    from planner.hydraulics.surge import equivalent_pipe, series_surge_head, surge_head
    from planner.units import G

    lengths, speeds, velocities = [1200.0, 800.0], [280.0, 1100.0], [0.6, 1.4]
    a_e, v_e = equivalent_pipe(lengths, speeds, velocities)
    travel = 1200.0 / 280.0 + 800.0 / 1100.0
    assert 2000.0 / a_e == pytest.approx(travel, rel=1e-12)
    assert 2000.0 * v_e == pytest.approx(1200.0 * 0.6 + 800.0 * 1.4, rel=1e-12)
    t_r = 2 * travel                                     # 10.0 s
    slow = series_surge_head(2000.0, 0.6, 280.0, 60.0, a_e, v_e)
    assert slow == pytest.approx(2 * (1200.0 * 0.6 + 800.0 * 1.4) / (G * 60.0), rel=1e-12)
    rapid = series_surge_head(2000.0, 0.6, 280.0, 0.9 * t_r, a_e, v_e)
    assert rapid == pytest.approx(280.0 * 0.6 / G, rel=1e-12)
    # the stiff pipe alone would call a 5 s closure slow (2 L / a = 3.6 s); the path does not
    assert float(surge_head(2000.0, 1.4, 1100.0, 5.0)) < 1100.0 * 1.4 / G
    assert series_surge_head(2000.0, 1.4, 1100.0, 5.0, a_e, v_e) == pytest.approx(1100.0 * 1.4 / G)
    # a pipe without a wave speed is left out of the travel time, not made infinite
    assert equivalent_pipe([500.0, 500.0], [300.0, float("nan")], [1.0, 1.0])[0] == 300.0
