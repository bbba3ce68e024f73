"""Thermal impedance from the modes: Zth(t), pulsed family Z(t_p, D), Foster extraction.

Sources: Foster step response Zth = Σ R_i(1 − e^{−t/τ_i}) and the exact periodic pulse peak
P·Σ R_i(1 − e^{−t_p/τ_i})/(1 − e^{−T/τ_i}) — physics brief §5 (deriv); duty-cycle
approximation values 21.1992 / 20.6442 K from the same table (1970s application-note
practice, they overestimate).  Transfer-impedance peak: independent dense evaluation of
matrix exponentials (scipy.linalg.expm), common practice, no source.
"""
from __future__ import annotations

import numpy as np
import pytest
import scipy.linalg as sla

from pulsetherm.network.model import ThermalNetwork

R_F = np.array([0.2, 0.5, 1.3])
TAU_F = np.array([1e-5, 1e-3, 1e-1])
CAUER_R = [0.21033899, 0.51612360, 1.27353741]       # physics brief §6 (deriv)
CAUER_C = [4.87495734e-5, 1.93913951e-3, 7.65129454e-2]


class Ladder:
    def __init__(self, R, C):
        self.R, self.C = np.asarray(R, float), np.asarray(C, float)


def foster_net():
    net = ThermalNetwork()
    net.add_boundary("case", temperature=25.0)
    net.add_cauer(Ladder(CAUER_R, CAUER_C), top="j", bottom="case")
    net.add_input("die", nodes={"j": 1.0})
    return net


def test_zth_axis_and_values():
    """Zth(t) from 1 ns to settling equals the Foster sum (1e-6 relative, ladder digits)."""
    z = foster_net().zth("j", input="die")
    assert z.t[0] == pytest.approx(1e-9) and z.t[-1] >= 5 * TAU_F.max()
    ref = (1 - np.exp(-np.divide.outer(z.t, TAU_F))) @ R_F
    assert np.max(np.abs(z.K_per_W - ref) / ref) < 1e-6
    assert z.R_th == pytest.approx(2.0, rel=1e-8)
    assert np.all(np.diff(z.K_per_W) >= 0)


def test_pulsed_zth_exact_not_duty_approximation():
    """Z(t_p, D) at 100 µs: exact periodic peak; D = 0.1 gives 20.2925 K / 50 W, below the
    duty-cycle approximations 21.1992 and 20.6442 K (brief §5 table)."""
    net = foster_net()
    widths = np.logspace(-7, 2, 19)
    duties = (0.0, 0.01, 0.02, 0.05, 0.1, 0.2, 0.5)
    pz = net.pulsed_zth("j", widths=np.concatenate([widths, [1e-4]]), duties=duties)
    for D in duties:
        tp = pz.widths
        if D == 0:
            ref = (1 - np.exp(-np.divide.outer(tp, TAU_F))) @ R_F
        else:
            ref = ((1 - np.exp(-np.divide.outer(tp, TAU_F)))
                   / (1 - np.exp(-np.divide.outer(tp / D, TAU_F)))) @ R_F
        assert np.max(np.abs(pz.Z(D) - ref) / ref) < 1e-6
    z01 = 50 * pz.Z(0.1)[-1]
    assert round(z01, 4) == 20.2925
    assert z01 < 20.6442 < 21.1992
    # monotone in duty at every width
    assert np.all(np.diff(pz.K_per_W, axis=0) >= -1e-12)


def transfer_net():
    """j (small C) -> k (C) -> sink: the impedance from the input at j to k has residues of
    both signs (the response at k is delayed)."""
    net = ThermalNetwork()
    net.add_boundary("sink", temperature=25.0)
    net.add_node("j", capacity=1e-4)
    net.add_node("k", capacity=1e-3)
    net.connect("j", "k", resistance=2.0)
    net.connect("k", "sink", resistance=1.0)
    net.add_input("die", nodes={"j": 1.0})
    return net


def dense_periodic_peak(tp, T, n=200_001):
    """Independent: periodic state of C x' = −G x + b·P by matrix exponentials, then the
    maximum of x_k over a dense grid of one period."""
    C = np.diag([1e-4, 1e-3])
    G = np.array([[0.5, -0.5], [-0.5, 1.5]])
    A = -np.linalg.solve(C, G)
    b = np.linalg.solve(C, np.array([1.0, 0.0]))
    xinf = np.linalg.solve(G, np.array([1.0, 0.0]))
    E_on, E_off = sla.expm(A * tp), sla.expm(A * (T - tp))
    # x_end_on = E_on x0 + (I − E_on) xinf ; x0 = E_off x_end_on
    M = np.eye(2) - E_off @ E_on
    x0 = np.linalg.solve(M, E_off @ (np.eye(2) - E_on) @ xinf)
    t = np.linspace(0, T, n)
    lam, V = np.linalg.eig(A)
    Vi = np.linalg.inv(V)
    x1 = E_on @ x0 + (np.eye(2) - E_on) @ xinf
    vals = []
    for tt in t:
        if tt <= tp:
            e = (V * np.exp(lam * tt)) @ Vi
            x = e.real @ (x0 - xinf) + xinf
        else:
            e = (V * np.exp(lam * (tt - tp))) @ Vi
            x = e.real @ x1
        vals.append(x[1])
    vals = np.array(vals)
    return vals.max(), x1[1]


def test_transfer_impedance_peak_after_pulse_end():
    net = transfer_net()
    f = net.foster("k", input="die")
    assert f.transfer and np.any(f.R < 0)
    assert f.R.sum() == pytest.approx(1.0, rel=1e-12)      # R_kj = 1 K/W
    tp, D = 2e-5, 0.05
    pz = net.pulsed_zth("k", widths=[tp], duties=[D])
    ref, at_end = dense_periodic_peak(tp, tp / D, n=4001)
    assert ref > at_end * (1 + 1e-3)                        # peak is not at the pulse end
    assert abs(pz.K_per_W[0, 0] - ref) < 1e-6 * ref
    # the time-domain periodic response finds the same peak
    from pulsetherm.waveforms.canonical import Piecewise
    res = net.periodic({"die": Piecewise([0.0, tp, tp / D], [1.0, 0.0])}, probes=["k"])
    assert abs(res.peak("k") - 25.0 - ref) < 1e-6 * ref
    assert res.peak_time("k") > tp


def test_foster_driving_point_roundtrip():
    f = foster_net().foster("j", input="die")
    assert not f.transfer
    assert np.allclose(f.R, R_F, rtol=1e-6) and np.allclose(f.tau, TAU_F, rtol=1e-6)


@pytest.mark.parametrize("massless", [False, True])
def test_pulsed_zth_against_brute_force_periodic_runs(massless):
    """Z(t_p, D) at every node of a branched network (transfer impedances with negative
    residues; the heated node massless or not) equals the peak rise per watt of an explicit
    periodic run of the network under the rectangular train (D > 0) and of a single-pulse
    transient (D = 0), to 1e-12 K/W (two computations; common practice, no source)."""
    from pulsetherm.waveforms.canonical import Piecewise

    net = ThermalNetwork()
    net.add_boundary("sink", temperature=25.0)
    net.add_node("j", capacity=0.0 if massless else 1e-4)
    net.add_node("k", capacity=1e-3)
    net.add_node("m", capacity=1e-5)
    net.connect("j", "k", resistance=2.0)
    net.connect("k", "sink", resistance=1.0)
    net.connect("j", "m", resistance=0.5)
    net.add_input("die", nodes={"j": 1.0})
    widths = np.array([1e-6, 1e-4, 1e-2])
    for node in ("j", "k", "m"):
        pz = net.pulsed_zth(node, widths=widths, duties=(0.0, 0.1, 0.5))
        for w_i, tp in enumerate(widths):
            for D in (0.1, 0.5):
                run = net.periodic({"die": Piecewise([0.0, tp, tp / D], [1.0, 0.0])},
                                   probes=[node])
                assert abs(pz.Z(D)[w_i] - (run.peak(node) - 25.0)) <= 1e-12
            one = net.transient({"die": Piecewise([0.0, tp], [1.0], periodic=False)},
                                duration=tp + 0.1, probes=[node])
            assert abs(pz.Z(0.0)[w_i] - (one.peak(node) - 25.0)) <= 1e-12


def test_foster_of_a_node_no_heat_reaches_is_a_clear_error():
    """A node held between boundaries, not on the heat path: Zth = 0 at every time, the
    Foster request is refused by name (was an empty-array message from the Foster class)."""
    from pulsetherm.network.assemble import NetworkError

    net = ThermalNetwork()
    net.add_boundary("a", temperature=25.0)
    net.add_boundary("b", temperature=80.0)
    net.add_node("j", capacity=1e-3)
    net.add_node("x", capacity=1e-3)
    net.connect("j", "a", resistance=1.0)
    net.connect("x", "a", resistance=1.0)
    net.connect("x", "b", resistance=1.0)
    net.add_input("P", nodes={"j": 1.0})
    assert net.zth("x").R_th == 0.0
    with pytest.raises(NetworkError, match="no heat from this input reaches the node"):
        net.foster("x")
