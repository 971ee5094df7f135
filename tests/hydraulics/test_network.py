"""A three-branch tree, checked by hand with `fluids`; mass balance at every node."""

import numpy as np
import pytest
from fluids.friction import Colebrook

from planner.hydraulics.line import FreeSurface, PipeHydraulics
from planner.hydraulics.network import LinkData, accumulate_flows, tree_energy
from planner.units import G, LPS

NU = 1.0034e-6          # water at 20 C (IAPWS-95 density, IAPWS 2008 viscosity)


def straight(length, z0, z1, n=11):
    ch = np.linspace(0, length, n)
    z = np.linspace(z0, z1, n)
    return np.concatenate([[0], np.cumsum(np.hypot(np.diff(ch), np.diff(z)))]), z


def dw(q, d, eps, length):
    v = q / (np.pi * d**2 / 4)
    return Colebrook(v * d / NU, eps / d) * length / d * v**2 / (2 * G), v**2 / (2 * G)


def test_three_branches_by_hand():
    # main 1,000 m (110 SDR11, ID 90 mm) to a junction, then a village branch (3 L/s,
    # ID 61.4 mm) and a school branch (1 L/s, ID 40.8 mm)
    q = accumulate_flows([-1, 0, 0], [0.0, 3 * LPS, 1 * LPS])
    assert q.tolist() == pytest.approx([4 * LPS, 3 * LPS, 1 * LPS])
    s0, z0 = straight(1000, 100, 60)
    s1, z1 = straight(600, 60, 40)
    s2, z2 = straight(400, 60, 45)
    eps = 7e-6
    links = [LinkData(s0, z0, np.full(10, q[0]), PipeHydraulics(0.090, roughness=eps)),
             LinkData(s1, z1, np.full(10, q[1]), PipeHydraulics(0.0614, roughness=eps), parent=0),
             LinkData(s2, z2, np.full(10, q[2]), PipeHydraulics(0.0408, roughness=eps), parent=0)]
    e = tree_energy(links, FreeSurface(0, 101.0, 100.5), kinematic_viscosity=NU)
    h0, hv0 = dw(q[0], 0.090, eps, s0[-1])
    egl_junction = 100.5 - 0.5 * hv0 - h0
    assert e[0].energy[-1] == pytest.approx(egl_junction, abs=1e-9)
    for k, (d, s) in ((1, (0.0614, s1)), (2, (0.0408, s2))):
        hk, hvk = dw(q[k], d, eps, s[-1])
        # the energy grade line runs on through the junction with no entrance loss
        assert e[k].energy[0] == pytest.approx(egl_junction, abs=1e-9)
        assert e[k].hgl[-1] == pytest.approx(egl_junction - hk - hvk, abs=1e-9)
        assert e[k].static_head[-1] == pytest.approx(101.0)
    # mass balance at the junction: what the main brings equals what the branches take
    assert e[0].flow[-1] == pytest.approx(e[1].flow[0] + e[2].flow[0])


def test_tank_inside_a_branch_resets_it():
    s0, z0 = straight(500, 100, 80)
    s1, z1 = straight(1000, 80, 0)
    links = [LinkData(s0, z0, np.full(10, 2 * LPS), PipeHydraulics(0.06, roughness=7e-6)),
             LinkData(s1, z1, np.full(10, 1 * LPS), PipeHydraulics(0.05, roughness=7e-6), parent=0,
                      tanks=[FreeSurface(5, 41.0, 41.0)])]
    e = tree_energy(links, FreeSurface(0, 101.0, 101.0), kinematic_viscosity=NU)
    assert e[1].static_head[-1] == 41.0 and e[1].static_head[4] == 101.0
    assert np.isfinite(e[1].arrival_hgl[5])


def test_parents_first():
    from planner.errors import InputError

    with pytest.raises(InputError, match="parent before its children"):
        accumulate_flows([1, -1], [0.0, 0.0])
