"""Energy along a line: hand-checkable cases recomputed with `fluids`."""

import numpy as np
import pytest
from fluids.friction import Colebrook

from planner.errors import InputError
from planner.hydraulics.line import FreeSurface, PipeHydraulics, line_energy, segment_flows
from planner.units import G, LPS

NU = 1.0034e-6          # water at 20 C [m2/s] (IAPWS-95 density, IAPWS 2008 viscosity)
D, EPS = 0.090, 1.5e-6


def straight_line(n=11, length=1000.0, z0=100.0, z1=50.0):
    ch = np.linspace(0, length, n)
    z = np.linspace(z0, z1, n)
    s = np.concatenate([[0], np.cumsum(np.hypot(np.diff(ch), np.diff(z)))])
    return ch, s, z


def hf(q, length):
    """Darcy-Weisbach loss recomputed with fluids' Colebrook."""
    v = q / (np.pi * D**2 / 4)
    return Colebrook(v * D / NU, EPS / D) * length / D * v**2 / (2 * G), v**2 / (2 * G)


PIPE = PipeHydraulics(inside_diameter=D, method="colebrook", roughness=EPS)


def test_single_reach_hgl_and_energy_balance():
    ch, s, z = straight_line()
    q = np.full(10, 5 * LPS)
    e = line_energy(s, z, q, PIPE, kinematic_viscosity=NU,
                    surfaces=[FreeSurface(0, 101.5, 101.0)], entrance_k=0.5)
    loss, hv = hf(5 * LPS, s[-1])
    # Bernoulli with losses from the reservoir surface to the end of the pipe
    expected_hgl_end = 101.0 - 0.5 * hv - loss - hv
    assert e.hgl[-1] == pytest.approx(expected_hgl_end, abs=1e-9)
    assert e.pressure_head[-1] == pytest.approx(expected_hgl_end - 50.0, abs=1e-9)
    assert e.static_pressure_head[-1] == pytest.approx(51.5)
    r = e.reaches[0]
    assert r.available == pytest.approx(51.0)
    assert r.friction == pytest.approx(loss, rel=1e-12)
    assert abs(r.closure) < 1e-9
    # the HGL falls along the flow, by the friction loss of each segment
    assert np.all(np.diff(e.hgl) < 0)


def test_break_pressure_tank_resets_both_lines():
    ch, s, z = straight_line()
    q = np.full(10, 5 * LPS)
    e = line_energy(s, z, q, PIPE, kinematic_viscosity=NU, entrance_k=0.5,
                    surfaces=[FreeSurface(0, 101.5, 101.0), FreeSurface(5, 76.0, 76.0)])
    loss_half, hv = hf(5 * LPS, s[5])
    assert e.arrival_hgl[5] == pytest.approx(101.0 - 1.5 * hv - loss_half, abs=1e-9)
    assert e.hgl[5] == pytest.approx(76.0 - 1.5 * hv, abs=1e-9)
    assert e.static_head[4] == 101.5 and e.static_head[5] == 76.0
    assert e.static_pressure_head[-1] == pytest.approx(26.0)
    assert len(e.reaches) == 2 and all(abs(r.closure) < 1e-9 for r in e.reaches)


def test_withdrawals_mass_balance_and_velocity_change():
    ch, s, z = straight_line()
    q = segment_flows(ch, [(ch[5], 2 * LPS), (ch[-1], 3 * LPS)])
    np.testing.assert_allclose(q[:5], 5 * LPS)
    np.testing.assert_allclose(q[5:], 3 * LPS)
    # mass balance at the draw-off point: what enters minus what leaves is the draw
    assert q[4] - q[5] == pytest.approx(2 * LPS)
    e = line_energy(s, z, q, PIPE, kinematic_viscosity=NU,
                    surfaces=[FreeSurface(0, 101.0, 101.0)], entrance_k=0.0)
    l1, _ = hf(5 * LPS, s[5])
    l2, hv2 = hf(3 * LPS, s[-1] - s[5])
    assert e.energy[-1] == pytest.approx(101.0 - l1 - l2, abs=1e-9)
    assert e.hgl[-1] == pytest.approx(101.0 - l1 - l2 - hv2, abs=1e-9)


def test_no_flow_gives_static_pressures():
    ch, s, z = straight_line()
    e = line_energy(s, z, np.zeros(10), PIPE, kinematic_viscosity=NU,
                    surfaces=[FreeSurface(0, 101.0, 101.0)])
    np.testing.assert_allclose(e.pressure_head, 101.0 - z)


def test_fitting_loss_and_hazen_williams():
    ch, s, z = straight_line()
    q = np.full(10, 5 * LPS)
    k = np.zeros(11)
    k[3] = 2.0
    hw = PipeHydraulics(inside_diameter=D, method="hazen-williams", c_factor=150.0)
    base = line_energy(s, z, q, hw, kinematic_viscosity=NU, surfaces=[FreeSurface(0, 101.0, 101.0)])
    with_k = line_energy(s, z, q, hw, kinematic_viscosity=NU,
                         surfaces=[FreeSurface(0, 101.0, 101.0)], point_k=k)
    hv = (5 * LPS / (np.pi * D**2 / 4)) ** 2 / (2 * G)
    assert base.hgl[-1] - with_k.hgl[-1] == pytest.approx(2.0 * hv, abs=1e-12)
    assert with_k.reaches[0].minor == pytest.approx(2.5 * hv, abs=1e-12)


@pytest.mark.parametrize("kwargs, match", [
    (dict(surfaces=[]), "source"),
    (dict(surfaces=[FreeSurface(0, 1, 1), FreeSurface(10, 1, 1)]), "before the line end"),
])
def test_bad_arguments(kwargs, match):
    ch, s, z = straight_line()
    with pytest.raises(InputError, match=match):
        line_energy(s, z, np.zeros(10), PIPE, kinematic_viscosity=NU, **kwargs)


def test_pipe_validation_lists_methods():
    with pytest.raises(InputError, match="colebrook, hazen-williams"):
        PipeHydraulics(inside_diameter=0.1, method="manning")
    with pytest.raises(InputError, match="positive"):
        PipeHydraulics(inside_diameter=0.0, roughness=1e-5)
