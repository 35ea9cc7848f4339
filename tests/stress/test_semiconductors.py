"""Tests for partcheck.stress.semiconductors: switch and rectifier losses, Tj, efficiency."""

from __future__ import annotations

import pytest

from partcheck.stress.semiconductors import (
    DEFAULT_RDS_ALPHA_PER_K,
    clamp_loss,
    compare_efficiency,
    estimated_efficiency,
    mosfet_losses,
    rds_on_at,
    rectifier_loss,
    sense_resistor_power,
    zener_temperature,
)

SWITCH = {
    "rds25": 0.5,
    "coss": 100e-12,
    "qg": 25e-9,
    "gate_drive_current_a": 0.2,
    "vgs": 10.0,
    "rth_ja": 40.0,
}


def test_rds_on_exponential_and_linear_models_best_check_value_14():
    # derating-standards.md best check value 14 (CALC, common practice): α = 0.7 %/K,
    # 100 mΩ at 25 °C → 181 mΩ at 110 °C exponential, 159.5 mΩ linear.
    assert DEFAULT_RDS_ALPHA_PER_K == 0.007
    assert rds_on_at(110.0, 0.100) == pytest.approx(0.181, abs=0.5e-3)
    # Linear through two catalog points that follow 1 + α·(T − 25): 170 mΩ at 125 °C.
    assert rds_on_at(110.0, 0.100, rds125=0.170) == pytest.approx(0.1595, rel=1e-12)
    # "≈ doubles from 25 to 125 °C" (derating-standards.md §7, common practice): ×2.01.
    assert rds_on_at(125.0, 1.0) == pytest.approx(2.01, abs=0.005)


def test_junction_temperature_best_check_value_13():
    # derating-standards.md best check value 13 (CALC): Ta 50 °C, 1.5 W, 40 K/W → 110 °C.
    assert zener_temperature(1.5, 50.0, 40.0) == pytest.approx(110.0)
    # The same through the switch model with a temperature-independent 1.5 W (Coss loss only):
    # ½·C·V²·f = 1.5 W with C = 100 pF, V = 300 V → f = 1.5/(0.5·1e-10·9e4) = 333.3 kHz.
    r = mosfet_losses(
        0.0, 0.0, 0.0, 300.0, 1.5 / (0.5 * 100e-12 * 300.0**2), "dcm", **{**SWITCH, "vgs": 0.0}, t_amb_c=50.0
    )
    assert r.p_coss == pytest.approx(1.5)
    assert r.tj == pytest.approx(110.0, abs=0.1)
    assert r.converged and not r.runaway


def test_turn_off_overlap_loss_textbook_formula():
    # Linear V-I overlap, W = ½·V·I·t_c per transition: Mohan, Undeland & Robbins, Power
    # Electronics, ch. 2 "switching characteristics" (from memory).  Worked by hand:
    # V = 300 V, I = 2 A, t_c = 0.4·25 nC/0.2 A = 50 ns, fs = 100 kHz → ½·300·2·50e-9·1e5 = 1.5 W.
    r = mosfet_losses(1.0, 2.0, 0.0, 300.0, 100e3, "dcm", **SWITCH, t_amb_c=25.0, v_in=150.0)
    assert r.t_sw_off == pytest.approx(50e-9)
    assert r.p_sw_off == pytest.approx(1.5, rel=1e-12)
    assert r.p_sw_on == 0.0  # DCM: zero-current turn-on (flyback-equations.md §4.1 [M])
    # DCM Coss loss at the ring centre Vin: ½·100 pF·150²·100 kHz = 0.1125 W.
    assert r.p_coss == pytest.approx(0.1125)
    assert r.p_gate == pytest.approx(25e-9 * 10.0 * 100e3)


def test_ccm_has_turn_on_overlap_with_the_valley_current():
    # flyback-equations.md §4.1 [M]: P_on = ½·(Vin + Vr)·Iv·tr·fs; Coss at Vin + Vr.
    r = mosfet_losses(1.0, 2.0, 1.0, 300.0, 100e3, "ccm", **SWITCH, t_amb_c=25.0)
    assert r.p_sw_on == pytest.approx(0.5 * 300.0 * 1.0 * 50e-9 * 100e3)
    assert r.p_coss == pytest.approx(0.5 * 100e-12 * 300.0**2 * 100e3)


def test_valley_switching_removes_the_coss_loss_when_vr_exceeds_vin():
    # flyback-equations.md §1.4 [M]: first-valley voltage max(0, Vin − Vr).
    low = mosfet_losses(
        1.0, 2.0, 0.0, 300.0, 100e3, "bcm", **SWITCH, t_amb_c=25.0, valley_v=max(0.0, 100 - 150)
    )
    high = mosfet_losses(1.0, 2.0, 0.0, 400.0, 100e3, "qr", **SWITCH, t_amb_c=25.0, valley_v=250.0 - 150.0)
    assert low.p_coss == 0.0 and low.p_sw_on == 0.0
    assert high.p_coss == pytest.approx(0.5 * 100e-12 * 100.0**2 * 100e3)
    unknown = mosfet_losses(1.0, 2.0, 0.0, 300.0, 100e3, "bcm", **SWITCH, t_amb_c=25.0)
    assert unknown.v_on == 300.0 and any("valley voltage not given" in n for n in unknown.notes)


def test_fixed_point_matches_the_closed_form_for_linear_rds():
    # With Rds linear in Tj, Tj = Ta + Rth·(Pf + I²·(r25 + s·(Tj − 25))) solves in closed form.
    i, r25, r125, rth, ta = 2.0, 0.2, 0.36, 30.0, 40.0
    r = mosfet_losses(
        i, 3.0, 0.0, 200.0, 65e3, "dcm", **{**SWITCH, "rth_ja": rth, "rds25": r25}, rds125=r125, t_amb_c=ta
    )
    s = (r125 - r25) / 100.0
    pf = r.p_sw_off + r.p_coss
    tj = (ta + rth * (pf + i * i * (r25 - 25.0 * s))) / (1.0 - rth * i * i * s)
    assert r.converged and abs(r.tj - tj) <= 0.1
    assert r.rds_at_tj == pytest.approx(rds_on_at(r.tj, r25, r125))
    assert r.p_total == pytest.approx(r.p_cond + r.p_sw_off + r.p_sw_on + r.p_coss)
    assert r.tj == pytest.approx(ta + r.p_total * rth, abs=0.1)


def test_slow_convergence_near_loop_gain_one_still_converges():
    # Loop gain Rth·I²·s = 0.98: the plain iteration creeps; the result must still be within 0.1 K.
    i, r25, rth, ta = 1.0, 0.1, 98.0, 25.0
    s = 0.98 / (rth * i * i)
    r = mosfet_losses(
        i,
        0.0,
        0.0,
        0.0,
        1.0,
        "dcm",
        **{**SWITCH, "rth_ja": rth, "rds25": r25, "vgs": 0.0},
        rds125=r25 + 100 * s,
        t_amb_c=ta,
        tj_max_c=2000.0,
    )
    tj = (ta + rth * i * i * (r25 - 25.0 * s)) / (1.0 - rth * i * i * s)
    assert r.converged and abs(r.tj - tj) <= 0.1


def test_thermal_runaway_is_a_flag_not_an_exception():
    # Exponential Rds with a large current and a poor thermal path has no equilibrium.
    r = mosfet_losses(
        5.0, 8.0, 0.0, 100.0, 100e3, "dcm", **{**SWITCH, "rds25": 0.1, "rth_ja": 60.0}, t_amb_c=60.0
    )
    assert r.runaway and not r.converged
    assert r.tj > 150.0 + 100.0 - 1e-9
    assert any("runaway" in n for n in r.notes)


def test_engine_mode_codes_and_names_are_accepted():
    by_code = mosfet_losses(1, 2, 1, 100, 1e5, 0, **SWITCH, t_amb_c=25.0)
    by_name = mosfet_losses(1, 2, 1, 100, 1e5, "CCM", **SWITCH, t_amb_c=25.0)
    assert by_code == by_name and by_code.p_sw_on > 0


def test_unknown_mode_is_rejected():
    with pytest.raises(ValueError, match="unknown operating mode 'buck'"):
        mosfet_losses(1, 1, 0, 100, 1e5, "buck", **SWITCH, t_amb_c=25.0)


def test_schottky_rectifier_has_conduction_loss_only():
    # flyback-equations.md §4.2 [CP]: Schottky, no recovery loss.
    d = rectifier_loss(
        2.0,
        3.5,
        0.5,
        None,
        "schottky",
        qrr=10e-9,
        v_reverse=40.0,
        fsw=100e3,
        mode="ccm",
        t_amb_c=70.0,
        rth_ja=50.0,
    )
    assert d.p_cond == pytest.approx(1.0) and d.p_rr == 0.0
    assert d.tj == pytest.approx(70.0 + 50.0)


def test_dynamic_resistance_split_reproduces_the_catalog_point_at_dc():
    # Vf(I) = Vt0 + rd·I through the catalog point: at DC (I_rms = I_avg = I_vf) P = Vf·I_vf.
    d = rectifier_loss(
        3.0, 3.0, 0.7, 3.0, "ultrafast", v_reverse=60.0, fsw=100e3, mode="dcm", t_amb_c=25.0, rth_ja=40.0
    )
    assert d.p_cond == pytest.approx(0.7 * 3.0)
    pulsed = rectifier_loss(
        3.0, 5.0, 0.7, 3.0, "ultrafast", v_reverse=60.0, fsw=100e3, mode="dcm", t_amb_c=25.0, rth_ja=40.0
    )
    assert pulsed.p_cond > d.p_cond  # a pulsed current costs more than its average at the same Vf


def test_reverse_recovery_in_ccm_only_and_estimate_from_trr():
    # flyback-equations.md §4.2: P_rr ≈ ½·Qrr·V_R·fs in CCM [CP]; ≈ 0 in DCM/BCM [M].
    kw = {"v_reverse": 100.0, "fsw": 100e3, "t_amb_c": 25.0, "rth_ja": 40.0}
    ccm = rectifier_loss(1.0, 1.5, 0.9, None, "ultrafast", qrr=50e-9, mode="ccm", **kw)
    assert ccm.p_rr == pytest.approx(0.5 * 50e-9 * 100.0 * 100e3)
    dcm = rectifier_loss(1.0, 1.5, 0.9, None, "ultrafast", qrr=50e-9, mode="dcm", **kw)
    assert dcm.p_rr == 0.0
    est = rectifier_loss(1.0, 1.5, 0.9, None, "standard", trr=40e-9, mode="ccm", i_commutation=2.0, **kw)
    assert est.qrr_used == pytest.approx(0.5 * 2.0 * 40e-9) and "estimated" in est.notes[0]
    none = rectifier_loss(1.0, 1.5, 0.9, None, "standard", mode="ccm", **kw)
    assert none.p_rr == 0.0 and "not counted" in none.notes[0]


def test_clamp_loss_leakage_energy_with_clamp_factor():
    # flyback-equations.md §2.1 [M]: P = ½·Llk·Ipk²·fs·Vc/(Vc − Vr).  By hand: 5 µH, 2 A, 100 kHz,
    # Vc = 150 V, Vr = 100 V → ½·5e-6·4·1e5·3 = 3.0 W, 1.5 W in each of two series Zeners.
    assert clamp_loss(5e-6, 2.0, 100e3, 150.0, 100.0) == pytest.approx(3.0)
    assert clamp_loss(5e-6, 2.0, 100e3, 150.0, 100.0, n_parts=2) == pytest.approx(1.5)
    with pytest.raises(ValueError, match="must exceed the reflected voltage"):
        clamp_loss(5e-6, 2.0, 100e3, 90.0, 100.0)


def test_sense_resistor_power():
    assert sense_resistor_power(0.8, 0.33) == pytest.approx(0.2112)


def test_efficiency_energy_balance_and_warning():
    # Identity (energy balance): P_in = P_out + losses.
    losses = {"switch": 0.6, "rectifier": 1.0, "clamp": 0.4}
    eta = estimated_efficiency(10.0, losses)
    assert eta * (10.0 + 2.0) == pytest.approx(10.0)
    close = compare_efficiency(10.0, losses, 0.85)
    assert not close.warn and close.difference_points == pytest.approx(100 * (eta - 0.85))
    far = compare_efficiency(10.0, losses, 0.90)
    assert far.warn and "optimistic" in far.note
