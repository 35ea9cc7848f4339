"""The primary clamp: RCD voltage from its resistor, Zener/TVS level, drain-peak additions, avalanche energy.

Each expected value is computed independently beside its assertion: the energy balance solved by
a root finder instead of the closed form, hand arithmetic of the stated formulas (flyback-equations.md
§2.1), or the engine's own clamp power per cycle.
"""

from __future__ import annotations

import copy

import numpy as np
import pytest
from scipy.optimize import brentq

from partcheck.design import design_from_dict
from partcheck.errors import DesignError
from partcheck.stress import clamp as cl
from partcheck.stress.corners import build_corners, operating_points
from partcheck.stress.flyback import OperatingPoints, evaluate, role_stresses, solve

BASE = {
    "name": "t",
    "converter": {"switching": "fixed", "fsw": "200 kHz", "efficiency": 0.85, "current_limit": "0.8 A",
                  "max_duty": 0.7},
    "input": {"vin_min": "36 V", "vin_nom": "48 V", "vin_max": "60 V"},
    "output": [{"name": "15V", "vout": "15 V", "iout": "0.4 A", "vf": "0.8 V", "turns_ratio": 2.0}],
    "transformer": {"lm": "200 uH", "llk": "3 uH"},
    "clamp": {"kind": "rcd", "resistor": "11 kOhm"},
    "environment": {"ambient_max": "60 degC"},
}


def make(**tables):
    data = copy.deepcopy(BASE)
    for table, values in tables.items():
        if values is None:
            data.pop(table, None)
            continue
        data.setdefault(table, {}).update(values)
        data[table] = {k: v for k, v in data[table].items() if v is not None}
    return data


def design(**tables):
    return design_from_dict(make(**tables))


def solved(d):
    specs = build_corners(d)
    op = operating_points(d, specs)
    return specs, op, solve(op)


# ---------------------------------------------------------------- physics functions


def test_rcd_clamp_voltage_solves_the_energy_balance():
    # Independent: brentq on Vc²/Rc − ½·Llk·Ipk²·fs·Vc/(Vc − Vr) = 0 above Vr (flyback-equations.md §2.1).
    rc, llk, ipk, fs, vr = 11e3, 3e-6, 0.63, 200e3, 31.6
    root = brentq(lambda v: v * v / rc - 0.5 * llk * ipk**2 * fs * v / (v - vr), vr * (1 + 1e-9), 10 * vr)
    assert float(cl.rcd_clamp_voltage(rc, llk, ipk, fs, vr)) == pytest.approx(root, rel=1e-10)
    assert root == pytest.approx(55.0, rel=0.01)  # the demo's hand check: 2 × 22 kΩ in parallel gives ~55 V


def test_ripple_hand_value():
    # ΔVc = Vc/(Rc·Cc·fs): 55 V / (11 kΩ · 10 nF · 200 kHz) = 2.5 V; as P/(Vc·Cc·fs) with P = Vc²/Rc.
    p = 55.0**2 / 11e3
    assert float(cl.clamp_ripple(p, 55.0, 10e-9, 200e3)) == pytest.approx(2.5, rel=1e-12)


def test_zener_level_factor_hand_values():
    # 1.05 · (1 + 0.001 · (110 − 25)) = 1.13925 (hot, positive tempco).
    assert float(cl.zener_level_factor(0.05, 0.001, 110.0)) == pytest.approx(1.13925, rel=1e-12)
    # Negative tempco: the cold end decides, 1.05 · (1 + 0.0005 · 65) at −40 °C = 1.084125.
    assert float(cl.zener_level_factor(0.05, -0.0005, 110.0, -40.0)) == pytest.approx(1.084125, rel=1e-12)
    assert float(cl.zener_level_factor(0.0, -0.0005, 110.0)) == 1.0  # never below the 25 °C value


def test_loop_overshoot_hand_value():
    # Undamped L-C bound Ipk·√(L/C): 2 A · √(10 nH / 100 pF) = 2 A · 10 Ω = 20 V.
    assert float(cl.loop_overshoot(10e-9, 2.0, 100e-12, 80.0)) == pytest.approx(20.0, rel=1e-12)
    # The drain step no longer enters (the edge-rate form L·Ipk²/(C·V) gave 5 V here).
    assert float(cl.loop_overshoot(10e-9, 2.0, 100e-12)) == pytest.approx(20.0, rel=1e-12)
    # 0.5 A · √(30 nH / 330 pF) = 0.5 A · 9.535 Ω = 4.767 V; 1 A · √(3 nH / 100 pF) = 5.477 V.
    got = cl.loop_overshoot(np.array([30e-9, 3e-9]), np.array([0.5, 1.0]), np.array([330e-12, 100e-12]))
    np.testing.assert_allclose(got, [4.7673129462, 5.4772255751], rtol=1e-9)
    # Identity (energy of an undamped tank with an initial current): ½·L·Ipk² = ½·C·ΔV², here
    # ½ · 10 nH · (2 A)² = 20 nJ = ½ · 100 pF · (20 V)², for any L, C and Ipk.
    for l_loop, ipk, c_node in ((10e-9, 2.0, 100e-12), (3e-9, 0.7, 330e-12), (30e-9, 4.0, 47e-12)):
        dv = float(cl.loop_overshoot(l_loop, ipk, c_node))
        assert 0.5 * c_node * dv**2 == pytest.approx(0.5 * l_loop * ipk**2, rel=1e-12)
    # Scaling: √L and 1/√C, linear in Ipk.
    assert float(cl.loop_overshoot(40e-9, 2.0, 100e-12)) == pytest.approx(40.0, rel=1e-12)
    assert float(cl.loop_overshoot(10e-9, 2.0, 400e-12)) == pytest.approx(10.0, rel=1e-12)
    assert float(cl.loop_overshoot(10e-9, 0.0, 100e-12)) == 0.0


def test_avalanche_energy_is_the_clamp_energy_per_cycle():
    # Independent: the engine's clamp power per cycle with the clamp at V_BR (same energy balance, §2.1).
    op = OperatingPoints.create(vin=48.0, vout=[15.0], iout=[0.4], vf=[0.8], n=[2.0], lm=200e-6, llk=3e-6, fsw=200e3,
                                eta=0.85, vclamp=80.0)
    s = solve(op)
    e = cl.avalanche_energy(3e-6, s["ipk"][0], 80.0, s["vr"][0])
    assert float(e) == pytest.approx(s["p_clamp"][0] / s["fs"][0], rel=1e-12)
    # Hand value: ½ · 3 µH · (1 A)² · 100/(100 − 40) = 2.5 µJ; V_BR at or below Vr: infinite.
    assert float(cl.avalanche_energy(3e-6, 1.0, 100.0, 40.0)) == pytest.approx(2.5e-6, rel=1e-12)
    assert np.all(np.isinf(cl.avalanche_energy(3e-6, 1.0, np.array([40.0, 30.0]), 40.0)))


# ---------------------------------------------------------------- engine


def test_resistor_clamp_per_corner_balances_and_rises_at_the_limit():
    d = design()
    specs, op, s = solved(d)
    ids = [c.id for c in specs]
    assert np.all(np.isfinite(op.rclamp))
    # The resistor dissipates the clamp power at every corner: Vc²/Rc = P_clamp (energy balance, §2.1).
    np.testing.assert_allclose(s["clamp_vc"] ** 2 / 11e3, s["p_clamp"], rtol=1e-10)
    # ... with Vc from the independent root finder at each corner's own Ipk, fs and Vr.
    for i in range(len(specs)):
        ipk, fs, vr = s["ipk"][i], s["fs"][i], s["vr"][i]
        root = brentq(lambda v, ipk=ipk, fs=fs, vr=vr: v * v / 11e3 - 0.5 * 3e-6 * ipk**2 * fs * v / (v - vr),
                      vr * (1 + 1e-9), 10 * vr)
        assert s["clamp_vc"][i] == pytest.approx(root, rel=1e-9)
    vc = dict(zip(ids, s["clamp_vc"]))
    assert vc["vin_max-ilim"] > vc["vin_max-full"] * 1.15  # Vc grows with Ipk²·fs (§2.1, §5)
    # No capacitor: the drain sees Vin + Vc, plus forward recovery (5 V ultrafast) and the loop term.
    np.testing.assert_allclose(s["sw_vpk_steady"], op.vin + s["clamp_vc"], rtol=1e-12)
    np.testing.assert_allclose(s["sw_vpk"], s["sw_vpk_steady"] + 5.0 + s["sw_vpk_loop"], rtol=1e-12)
    # Loop (defaults 10 nH, 100 pF): Ipk · √(10 nH / 100 pF) = Ipk · 10 Ω by hand at each corner.
    np.testing.assert_allclose(s["sw_vpk_loop"], 10.0 * s["ipk"], rtol=1e-12)


def test_capacitor_adds_half_the_ripple():
    d = design(clamp={"capacitor": "10 nF"})
    _specs, op, s = solved(d)
    ripple = s["clamp_vc"] / (11e3 * 10e-9 * s["fs"])  # ΔVc = Vc/(Rc·Cc·fs) by hand
    np.testing.assert_allclose(s["clamp_ripple"], ripple, rtol=1e-10)
    np.testing.assert_allclose(s["sw_vpk_steady"], op.vin + s["clamp_vc"] + ripple / 2, rtol=1e-12)
    np.testing.assert_allclose(s["clamp_v"], s["clamp_vc"] + ripple / 2, rtol=1e-12)
    np.testing.assert_allclose(s["clamp_diode_vr"], op.vin + s["clamp_vc"] + ripple / 2, rtol=1e-12)
    roles = role_stresses(d, s, 0)
    assert roles["clamp"]["v_ripple_pp"] == pytest.approx(ripple[0], rel=1e-10)


def test_fixed_vclamp_keeps_todays_numbers_and_only_adds_the_overshoots():
    # Pin: vclamp alone (rcd) gives Vin + vclamp as before, the clamp power of §2.1 at that vclamp.
    d = design(clamp={"resistor": None, "vclamp": "55 V"})
    _specs, op, s = solved(d)
    np.testing.assert_array_equal(s["sw_vpk_steady"], op.vin + 55.0)
    np.testing.assert_array_equal(s["clamp_v"], np.full(len(op), 55.0))
    np.testing.assert_array_equal(s["clamp_diode_vr"], op.vin + 55.0)
    p = 0.5 * 3e-6 * s["ipk"] ** 2 * s["fs"] * 55.0 / (55.0 - s["vr"])
    np.testing.assert_allclose(s["p_clamp"], p, rtol=1e-12)
    # OperatingPoints' own defaults add nothing: the drain peak is exactly Vin + vclamp.
    op0 = OperatingPoints.create(vin=48.0, vout=[15.0], iout=[0.4], vf=[0.8], n=[2.0], lm=200e-6, llk=3e-6,
                                 fsw=200e3, eta=0.85, vclamp=55.0)
    assert solve(op0)["sw_vpk"][0] == 48.0 + 55.0


def test_zener_level_at_tolerance_and_temperature_defaults():
    d = design(clamp={"kind": "zener", "resistor": None, "vclamp": "50 V"})
    _specs, op, s = solved(d)
    factor = 1.05 * (1 + 0.001 * (60 + 50 - 25))  # 5 %, +0.1 %/K, Tj = ambient_max + 50 K
    np.testing.assert_allclose(s["sw_vpk_steady"], op.vin + 50.0 * factor, rtol=1e-12)
    np.testing.assert_allclose(s["clamp_level"], 50.0 * factor, rtol=1e-12)
    # Power, reset time and the blocking diode stay at the nominal 50 V.
    np.testing.assert_allclose(s["p_clamp"], 0.5 * 3e-6 * s["ipk"] ** 2 * s["fs"] * 50 / (50 - s["vr"]), rtol=1e-12)
    np.testing.assert_array_equal(s["clamp_diode_vr"], op.vin + 50.0)
    given = design(clamp={"kind": "tvs", "resistor": None, "vclamp": "50 V", "tolerance": "2%",
                          "tempco": "0.05 %/K", "t_junction": "100 degC"})
    _specs, op, s = solved(given)
    np.testing.assert_allclose(s["clamp_level"], 50.0 * 1.02 * (1 + 0.0005 * 75), rtol=1e-12)
    assert cl.resolve(given).defaults == ("v_forward_recovery", "loop_inductance", "switch_node.capacitance")
    assert len(cl.assumptions(d)) == 6


def test_role_stresses_split_the_drain_peak():
    d = design(clamp={"v_forward_recovery": "3 V", "loop_inductance": "20 nH"}, switch_node={"capacitance": "50 pF"})
    _specs, op, s = solved(d)
    for i in range(len(op)):
        sw = role_stresses(d, s, i)["switch"]
        assert sw["v_peak"] == pytest.approx(sw["v_clamp_level"] + sw["v_overshoot_fr"] + sw["v_overshoot_loop"],
                                             rel=1e-12)
        assert sw["v_overshoot_fr"] == 3.0
        # Ipk · √(20 nH / 50 pF) = Ipk · 20 Ω by hand.
        assert sw["v_overshoot_loop"] == pytest.approx(20.0 * s["ipk"][i], rel=1e-12)
        assert sw["v_plateau"] < sw["v_clamp_level"]
        assert sw["v_reflected"] == pytest.approx(2.0 * 15.8)
        assert role_stresses(d, s, i)["clamp_diode"]["i_off"] == 0.0


def test_no_leakage_no_overshoot():
    d = design(transformer={"llk": 0}, clamp=None)
    _specs, op, s = solved(d)
    np.testing.assert_array_equal(s["sw_vpk"], s["sw_v_plateau"])
    assert np.all(s["sw_vpk_fr"] == 0) and np.all(s["sw_vpk_loop"] == 0)


def test_expected_vclamp_note_beyond_ten_percent():
    assert not [n for n in evaluate(design(clamp={"vclamp": "55 V"})).notes if n.startswith("clamp:")]
    notes = [n for n in evaluate(design(clamp={"vclamp": "70 V"})).notes if n.startswith("clamp:")]
    assert len(notes) == 1 and "resistor decides" in notes[0] and "70 V" in notes[0]


def test_tiny_resistor_is_an_error_naming_it():
    with pytest.raises(DesignError) as exc:
        evaluate(design(clamp={"resistor": "5 Ohm"}))
    assert exc.value.key == "clamp.resistor" and "outlasts the off-time" in exc.value.message


# ---------------------------------------------------------------- design file


@pytest.mark.parametrize("clamp,key,words", [
    ({"kind": "zener", "resistor": "10 kOhm", "vclamp": "50 V"}, "clamp.resistor", "no resistor"),
    ({"kind": "tvs", "resistor": None, "vclamp": "50 V", "capacitor": "1 nF"}, "clamp.capacitor", "no capacitor"),
    ({"tolerance": "5%"}, "clamp.tolerance", "Zener or TVS"),
    ({"tempco": 0.001}, "clamp.tempco", "Zener or TVS"),
    ({"resistor": None}, "clamp.vclamp", "resistor"),
    ({"resistor": "-1 kOhm"}, "clamp.resistor", "greater than zero"),
    ({"capacitor": "0 nF"}, "clamp.capacitor", "greater than zero"),
    ({"resistor": "10 uF"}, "clamp.resistor", "resistance"),
    ({"v_forward_recovery": "-1 V"}, "clamp.v_forward_recovery", "not be negative"),
    ({"loop_inductance": "-1 nH"}, "clamp.loop_inductance", "not be negative"),
    ({"loop_inductance": "3 uH"}, "clamp.loop_inductance", "more than 1"),
    ({"diode_type": "fast"}, "clamp.diode_type", "not one of"),
    ({"resistr": "1 kOhm"}, "clamp.resistr", "did you mean 'resistor'"),
    ({"kind": "zener", "resistor": None, "vclamp": "50 V", "tolerance": "60%"}, "clamp.tolerance", "50 %"),
    ({"kind": "zener", "resistor": None, "vclamp": "50 V", "tempco": "5 %/K"}, "clamp.tempco", "±1 %/K"),
    ({"kind": "zener", "resistor": None, "vclamp": "50 V", "tempco": "hot"}, "clamp.tempco", "per kelvin"),
    ({"kind": "zener", "resistor": None, "vclamp": "50 V", "t_junction": "300 degC"}, "clamp.t_junction", "-70..250"),
    ({"kind": "zener", "resistor": None, "vclamp": "50 V", "tolerance": "-1%"}, "clamp.tolerance", "negative"),
])
def test_clamp_key_errors(clamp, key, words):
    with pytest.raises(DesignError) as exc:
        design(clamp=clamp)
    assert exc.value.key == key and words in exc.value.message, exc.value.message


def test_clamp_keys_parse_to_si():
    c = design(clamp={"capacitor": "10 nF", "vclamp": "55 V", "v_forward_recovery": "2 V", "loop_inductance": "5 nH",
                      "diode_type": "schottky"}).clamp
    assert (c.kind, c.resistor, c.capacitor, c.vclamp) == ("rcd", 11e3, pytest.approx(10e-9), 55.0)
    assert (c.v_forward_recovery, c.loop_inductance, c.diode_type) == (2.0, pytest.approx(5e-9), "schottky")
    z = design(clamp={"kind": "zener", "resistor": None, "vclamp": "50 V", "tempco": "0.08 %/K"}).clamp
    assert z.tempco == pytest.approx(0.0008) and z.tolerance is None and z.resistor is None
    assert design(clamp={"diode_type": "schottky"}).clamp.vclamp == float("inf")  # resistor only
    assert cl.resolve(design(clamp={"diode_type": "standard"})).v_forward_recovery == 20.0
