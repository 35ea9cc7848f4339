"""Rectifier ringing model (partcheck/stress/ringing.py) against closed forms and an independent integrator."""

from __future__ import annotations

import math

import numpy as np
import pytest

from partcheck.stress.ringing import (
    DEFAULT_CJ_F,
    DEFAULT_TRR_S,
    DEFAULT_WINDING_CAPACITANCE_F,
    classic_rc_snubber,
    default_secondary_leakage,
    expm,
    qrr_from_trr,
    rectifier_peak,
    rectifier_ring,
    reverse_recovery_current,
    snubber_resistor_power,
)

L, C = 1e-6, 1e-9  # Z0 = 31.62 ohm, f = 5.03 MHz
Z0 = math.sqrt(L / C)


def rk4_reference(l_h, c_f, r, rs, cs, x0, t_end, steps=20_000):
    """Independent reference: classical RK4 on the deviation circuit written out from Kirchhoff's laws.

    Returns (max of the diode-voltage deviation, energy dissipated in r and rs by the trapezoid rule).
    """
    def f(x):
        i, v, vs = x
        i_s = (v - vs) / rs if rs else 0.0
        return np.array([(-r * i - v) / l_h, (i - i_s) / c_f, i_s / cs if cs else 0.0])

    h = t_end / steps
    x = np.array(x0, dtype=float)
    vmax = x[1]
    diss = 0.0

    def p(x):
        return r * x[0] ** 2 + ((x[1] - x[2]) ** 2 / rs if rs else 0.0)

    for _ in range(steps):
        k1 = f(x)
        k2 = f(x + 0.5 * h * k1)
        k3 = f(x + 0.5 * h * k2)
        k4 = f(x + h * k3)
        xn = x + h / 6 * (k1 + 2 * k2 + 2 * k3 + k4)
        diss += 0.5 * h * (p(x) + p(xn))
        x = xn
        vmax = max(vmax, x[1])
    return vmax, diss


def test_undamped_ring_doubles_the_step_exactly():
    # Identity: a lossless L-C step response from rest overshoots by the full step (v = Vf − Vstep·cos ωt).
    r = rectifier_ring(25.0, 40.0, L, C)
    assert r.v_peak == pytest.approx(65.0, rel=1e-12)
    assert r.overshoot_ratio == pytest.approx(1.0, rel=1e-12)
    assert r.t_peak_s == pytest.approx(math.pi * math.sqrt(L * C), rel=1e-9)  # half a period
    assert r.f_ring_hz == pytest.approx(1 / (2 * math.pi * math.sqrt(L * C)))
    assert r.z0_ohm == pytest.approx(Z0)
    assert r.zeta == pytest.approx(0.0, abs=1e-12)
    assert r.dominant == "leakage ring"
    assert r.ring_energy_j == pytest.approx(0.5 * C * 25.0**2)


@pytest.mark.parametrize("zeta", [0.05, 0.1, 0.3, 0.5, 0.7, 0.9])
def test_series_rlc_overshoot_matches_the_second_order_formula(zeta):
    # Ogata, Modern Control Engineering, §5-3 (from memory): step response of ω²/(s² + 2ζωs + ω²) peaks at
    # Mp = exp(−ζπ/√(1−ζ²)) at tp = π/ωd.  Series RLC capacitor voltage: ζ = (R/2)·√(C/L).
    r = rectifier_ring(10.0, 30.0, L, C, r_loop_ohm=2 * zeta * Z0)
    assert r.overshoot_ratio == pytest.approx(math.exp(-zeta * math.pi / math.sqrt(1 - zeta**2)), rel=1e-9)
    wd = math.sqrt(1 - zeta**2) / math.sqrt(L * C)
    assert r.t_peak_s == pytest.approx(math.pi / wd, rel=1e-7)
    assert r.zeta == pytest.approx(zeta, rel=1e-9)


@pytest.mark.parametrize("i0", [0.1, 1.0, 5.0])
def test_undamped_ring_with_initial_current_energy_identity(i0):
    # Energy identity (lossless): ½C·(vpk − vf)² = ½C·Vstep² + ½L·i0²  =>  vpk − vf = √(Vstep² + (i0·Z0)²).
    r = rectifier_ring(20.0, 50.0, L, C, i_initial_a=i0)
    assert r.v_peak - 50.0 == pytest.approx(math.hypot(20.0, i0 * Z0), rel=1e-12)
    assert r.ring_energy_j == pytest.approx(0.5 * L * i0**2 + 0.5 * C * 20.0**2)
    assert r.dominant == ("reverse recovery" if i0 * Z0 > 20.0 else "leakage ring")


def test_critically_damped_uses_the_matrix_exponential_and_matches_the_closed_form():
    # ζ = 1 (R = 2·Z0): repeated eigenvalue.  Closed form x = (a + b·t)·e^(−ωt), a = −Vstep, b = i0/C + ω·a;
    # the peak is at t* = 1/ω − a/b (x' = 0), derived from the ODE v'' + 2ωv' + ω²v = 0.
    w = 1 / math.sqrt(L * C)
    vstep, i0 = 10.0, 1.0
    a = -vstep
    b = i0 / C + w * a
    t_star = 1 / w - a / b
    expected = 20.0 + (a + b * t_star) * math.exp(-w * t_star)
    for force in (False, True):
        r = rectifier_ring(vstep, 20.0, L, C, i_initial_a=i0, r_loop_ohm=2 * Z0, _force_expm=force)
        assert r.v_peak == pytest.approx(expected, rel=1e-9)
        assert r.t_peak_s == pytest.approx(t_star, rel=1e-6)
    # from rest a critically damped loop does not overshoot
    assert rectifier_ring(vstep, 20.0, L, C, r_loop_ohm=2 * Z0).v_peak == pytest.approx(20.0)


def test_expm_agrees_with_eigen_solution_and_series():
    a = np.array([[-0.3, -1.0, 0.0], [1.0, -2.0, 2.0], [0.0, 0.5, -0.5]]) * 7.0
    # reference: truncated Taylor series with squaring, an independent construction
    m = a / 1024
    s = np.eye(3)
    term = np.eye(3)
    for k in range(1, 30):
        term = term @ m / k
        s = s + term
    for _ in range(10):
        s = s @ s
    np.testing.assert_allclose(expm(a), s, rtol=1e-10, atol=1e-14)


@pytest.mark.parametrize("rs_factor,cs_factor,i0", [(1.0, 4.0, 0.0), (0.5, 3.0, 0.5), (2.0, 10.0, 2.0), (1.0, 1.0, 0.0)])
def test_snubbed_ring_against_an_independent_integrator(rs_factor, cs_factor, i0):
    rs, cs = rs_factor * Z0, cs_factor * C
    vstep = 30.0
    res = rectifier_ring(vstep, 40.0, L, C, i_initial_a=i0, r_loop_ohm=0.2, snubber_r_ohm=rs, snubber_c_f=cs)
    t_end = 20 * 2 * math.pi * math.sqrt(L * (C + cs))
    vmax, diss = rk4_reference(L, C, 0.2, rs, cs, [i0, -vstep, -vstep], t_end)
    assert res.v_peak - 40.0 == pytest.approx(vmax, rel=1e-5)  # RK4 with 20k steps
    # energy balance of the deviation circuit: everything initially stored (L, C and Cs) ends in r and rs
    assert diss == pytest.approx(0.5 * L * i0**2 + 0.5 * (C + cs) * vstep**2, rel=2e-3)
    assert res.ring_energy_j == pytest.approx(0.5 * L * i0**2 + 0.5 * C * vstep**2)
    for force in (False, True):
        assert rectifier_ring(vstep, 40.0, L, C, i_initial_a=i0, r_loop_ohm=0.2, snubber_r_ohm=rs, snubber_c_f=cs,
                              _force_expm=force).v_peak == pytest.approx(res.v_peak, rel=1e-9)


def test_snubber_limits():
    # Rs → ∞: the snubber is disconnected (undamped 2×); Rs = 0: Cs simply in parallel (still 2×, lower f).
    assert rectifier_ring(10.0, 20.0, L, C, snubber_r_ohm=1e12, snubber_c_f=4 * C).v_peak == pytest.approx(30.0, rel=1e-6)
    r0 = rectifier_ring(10.0, 20.0, L, C, snubber_r_ohm=0.0, snubber_c_f=4 * C)
    assert r0.v_peak == pytest.approx(30.0, rel=1e-12)
    assert r0.t_peak_s == pytest.approx(math.pi * math.sqrt(L * 5 * C), rel=1e-9)


def test_classic_snubber_sizing_and_its_damping():
    # Severns, "Design of snubbers for power circuits" (RC damping; opening read, the rule from memory) and
    # the flyback reference note §2.2: Rs = √(L/C_par), Cs = 3-4·C_par (4 taken).
    rs, cs = classic_rc_snubber(1e-6, 100e-12)
    assert rs == pytest.approx(100.0)
    assert cs == pytest.approx(400e-12)
    # Analog Devices, "RC Snubbing for the Lab" (read): add capacitance until the ring frequency halves.
    # Halving f needs 4× the capacitance, so the added part is 3·C_par; from f0 and C_par follows L.
    c_par, l_true = 68e-12, 350e-9
    f0 = 1 / (2 * math.pi * math.sqrt(l_true * c_par))
    c_added = 3 * c_par
    assert 1 / (2 * math.pi * math.sqrt(l_true * (c_par + c_added))) == pytest.approx(f0 / 2)
    c_par_found = c_added / 3
    l_found = 1 / ((2 * math.pi * f0) ** 2 * c_par_found)
    rs, cs = classic_rc_snubber(l_found, c_par_found)
    assert rs == pytest.approx(math.sqrt(l_true / c_par))
    assert cs == pytest.approx(4 * c_par)
    # the snubbed ring is damped well below the undamped 100 % overshoot
    r = rectifier_ring(10.0, 20.0, l_true, c_par, snubber_r_ohm=rs, snubber_c_f=cs)
    assert r.overshoot_ratio < 0.5
    assert r.dominant == "snubbed ring"


def test_snubber_power_hand_example():
    # Hand example: Cs = 1 nF swinging 100 V at 100 kHz -> Cs·V²·fs = 1 W; ring energy ½·1 µH·(1 A)² + ½·100 pF·(100 V)²
    # = 1 µJ per turn-on -> 0.1 W; total 1.1 W.
    e_ring = 0.5 * 1e-6 * 1.0**2 + 0.5 * 100e-12 * 100.0**2
    assert snubber_resistor_power(1e-9, 100.0, 100e3, e_ring) == pytest.approx(1.1)
    r = rectifier_ring(100.0, 100.0, 1e-6, 100e-12, i_initial_a=1.0, snubber_r_ohm=100.0, snubber_c_f=1e-9)
    assert r.ring_energy_j == pytest.approx(e_ring)


def test_reverse_recovery_relations():
    # Triangle of slope di/dt and height Irr has area Irr²/(2·di/dt) = Qrr (derived).
    assert reverse_recovery_current(50e-9, 100e6) == pytest.approx(math.sqrt(2 * 50e-9 * 100e6))
    irr = reverse_recovery_current(50e-9, 100e6)
    assert irr**2 / (2 * 100e6) == pytest.approx(50e-9)
    # ta = tb = trr/2: Irr_soft = di/dt·trr/2, Qrr = ½·Irr_soft·trr
    q = qrr_from_trr(40e-9, 100e6)
    assert q == pytest.approx(0.5 * (100e6 * 20e-9) * 40e-9)
    assert reverse_recovery_current(q, 100e6) == pytest.approx(100e6 * 40e-9 / math.sqrt(2))  # √2 above the soft peak
    assert qrr_from_trr(0.0, 1e8) == 0.0


def test_defaults_are_present_for_every_subtype():
    assert set(DEFAULT_CJ_F) == set(DEFAULT_TRR_S) == {"schottky", "ultrafast", "standard", "sic"}
    assert DEFAULT_TRR_S["schottky"] == DEFAULT_TRR_S["sic"] == 0.0
    assert DEFAULT_WINDING_CAPACITANCE_F == 20e-12
    assert default_secondary_leakage(8e-6, 4.0) == pytest.approx(0.5e-6)


def test_rectifier_peak_from_an_operating_point():
    # 48 V in, n = 4, 12 V out, Vf = 0.7 V: V_R = 24 V, step = 24.7 V.
    common = dict(l_sec_h=500e-9, c_j_f=80e-12, c_w_f=20e-12)
    r = rectifier_peak(48.0, 4.0, 12.0, 0.7, "ccm", **common)
    assert r.v_steady == pytest.approx(24.0)
    assert r.v_step == pytest.approx(24.7)
    assert r.v_peak == pytest.approx(48.7)  # undamped: V_R + step
    # CCM with a valley current: recovery from the given Qrr at di/dt = step/L
    di_dt = 24.7 / 500e-9
    r = rectifier_peak(48.0, 4.0, 12.0, 0.7, "ccm", i_sec_valley_a=1.0, qrr_c=20e-9, **common)
    irr = math.sqrt(2 * 20e-9 * di_dt)
    assert r.i_initial_a == pytest.approx(irr)
    assert r.v_peak - 24.0 == pytest.approx(math.hypot(24.7, irr * math.sqrt(500e-9 / 100e-12)))
    # trr only, then the subtype default
    assert rectifier_peak(48.0, 4.0, 12.0, 0.7, 0, i_sec_valley_a=1.0, trr_s=50e-9, **common).i_initial_a == pytest.approx(
        reverse_recovery_current(qrr_from_trr(50e-9, di_dt), di_dt))
    assert rectifier_peak(48.0, 4.0, 12.0, 0.7, "CCM", i_sec_valley_a=1.0, subtype="ultrafast", **common).i_initial_a == (
        pytest.approx(reverse_recovery_current(qrr_from_trr(35e-9, di_dt), di_dt)))
    # no recovery for Schottky / SiC, nor in DCM / BCM
    for kw in (dict(mode="ccm", subtype="schottky"), dict(mode="ccm", subtype="sic"), dict(mode="dcm"), dict(mode="qr")):
        assert rectifier_peak(48.0, 4.0, 12.0, 0.7, kw.pop("mode"), i_sec_valley_a=1.0, qrr_c=20e-9, **kw,
                              **common).i_initial_a == 0.0
    # DCM: worst phase, the same step as CCM
    assert rectifier_peak(48.0, 4.0, 12.0, 0.7, "dcm", **common).v_step == pytest.approx(24.7)


@pytest.mark.parametrize("kwargs", [
    dict(l_loop_h=-1e-6), dict(l_loop_h=0.0), dict(c_diode_f=-1e-12), dict(c_diode_f=0.0), dict(r_loop_ohm=-1.0),
    dict(snubber_r_ohm=10.0), dict(snubber_c_f=1e-9), dict(snubber_r_ohm=-1.0, snubber_c_f=1e-9),
    dict(snubber_r_ohm=10.0, snubber_c_f=-1e-9), dict(l_loop_h=math.nan), dict(v_step=math.inf),
])
def test_ring_input_validation(kwargs):
    args = dict(v_step=10.0, v_final=20.0, l_loop_h=L, c_diode_f=C) | kwargs
    with pytest.raises(ValueError):
        rectifier_ring(args.pop("v_step"), args.pop("v_final"), args.pop("l_loop_h"), args.pop("c_diode_f"), **args)


def test_other_input_validation():
    with pytest.raises(ValueError):
        classic_rc_snubber(-1e-6, 1e-9)
    with pytest.raises(ValueError):
        classic_rc_snubber(1e-6, 0.0)
    with pytest.raises(ValueError):
        reverse_recovery_current(-1e-9, 1e8)
    with pytest.raises(ValueError):
        snubber_resistor_power(-1e-9, 10.0, 1e5, 0.0)
    with pytest.raises(ValueError):
        rectifier_peak(48.0, 4.0, 12.0, 0.7, "ccm", l_sec_h=-1e-9, c_j_f=1e-12, c_w_f=0.0)
    with pytest.raises(ValueError):
        rectifier_peak(48.0, 4.0, 12.0, 0.7, "ccm", l_sec_h=1e-9, c_j_f=0.0, c_w_f=0.0)
    with pytest.raises(ValueError):
        rectifier_peak(48.0, 4.0, 12.0, 0.7, "resonant", l_sec_h=1e-9, c_j_f=1e-12, c_w_f=0.0)
    with pytest.raises(ValueError):
        rectifier_peak(48.0, 4.0, 12.0, 0.7, "ccm", l_sec_h=1e-9, c_j_f=1e-12, c_w_f=0.0, subtype="zener")
