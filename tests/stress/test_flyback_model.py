"""The engine against itself: closed forms vs its own waveforms, and physical properties.

The waveforms of :func:`corner_waveforms` are integrated numerically (dense samples + numpy) and
compared with the closed-form averages and RMS values the engine reports; hypothesis then checks
properties that any correct model has: energy balance, RMS >= |average|, a drain voltage rising
with the input, and currents continuous across the CCM/DCM boundary.
"""

from __future__ import annotations

import copy

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from partcheck.design import design_from_dict
from partcheck.stress.flyback import CCM, DCM, OperatingPoints, corner_waveforms, evaluate, solve

BASE = {
    "name": "t",
    "converter": {"switching": "fixed", "fsw": "100 kHz", "efficiency": 0.85, "current_limit": "4 A"},
    "input": {"vin_min": "18 V", "vin_nom": "24 V", "vin_max": "32 V"},
    "output": [{"name": "5V", "vout": "5 V", "iout": "2 A", "vf": "0.45 V", "cout": "220 uF", "esr": "15 mOhm",
                "turns_ratio": 4.0}],
    "transformer": {"lm": "100 uH", "llk": "2 uH"},
    "clamp": {"kind": "zener", "vclamp": "50 V"},
    "environment": {"ambient_max": "70 degC"},
}
TWO_OUTPUTS = [{"name": "p18", "vout": "18 V", "iout": "0.1 A", "vf": "0.6 V", "turns_ratio": 0.8},
               {"name": "n4", "vout": "-4 V", "iout": "0.2 A", "vf": "0.5 V", "cout": "10 uF", "esr": "5 mOhm"}]


def variant(**tables):
    data = copy.deepcopy(BASE)
    for table, values in tables.items():
        if isinstance(values, dict):
            data.setdefault(table, {}).update(values)
            data[table] = {k: v for k, v in data[table].items() if v is not None}
        else:
            data[table] = values
    return design_from_dict(data)


DESIGNS = {
    "ccm_leakage": variant(),
    "dcm_leakage": variant(transformer={"lm": "15 uH"}),
    "ccm_ideal": variant(transformer={"llk": 0}),
    "bcm_valley": variant(converter={"switching": "boundary", "fsw": "300 kHz"}, transformer={"lm": "30 uH"},
                          switch_node={"capacitance": "200 pF"}),
    "two_outputs": variant(output=TWO_OUTPUTS, transformer={"lm": "200 uH", "llk": "1 uH"}, clamp={"vclamp": "40 V"},
                           input={"vin_min": "9 V", "vin_nom": "12 V", "vin_max": "16 V"},
                           converter={"current_limit": None}),
}


def numeric(wave, n=100_001):
    """Average and RMS by dense sampling (independent of the waveform's exact integrals)."""
    _, y = wave.sample(n)
    return float(np.mean(y)), float(np.sqrt(np.mean(y * y)))


@pytest.mark.parametrize("name", list(DESIGNS))
def test_closed_forms_equal_integrated_waveforms(name):
    design = DESIGNS[name]
    result = evaluate(design)
    names = [o.name for o in design.outputs]
    for c in result.corners:
        if c.load == "surge":
            continue
        waves = corner_waveforms(design, c.id)
        sw = c.roles["switch"]
        avg, rms = numeric(waves["switch"])
        assert avg == pytest.approx(sw["i_avg"], rel=1e-3) and rms == pytest.approx(sw["i_rms"], rel=1e-3)
        assert waves["switch"].peak() == pytest.approx(sw["i_peak"], rel=1e-9)
        _, rms = numeric(waves["input_cap"])
        assert rms == pytest.approx(c.roles["input_cap"]["i_rms"], rel=1e-3)
        _, rms = numeric(waves["primary"])
        assert rms == pytest.approx(c.roles["transformer"]["i_rms_pri"], rel=1e-3)
        if "clamp" in c.roles:
            avg, rms = numeric(waves["clamp"], n=2_000_001)  # a pulse tens of ns long: finer sampling
            assert avg == pytest.approx(c.roles["clamp"]["i_avg"], rel=1e-3, abs=1e-9)
            assert rms == pytest.approx(c.roles["clamp"]["i_rms"], rel=1e-3, abs=1e-9)
        for out in names:
            role = "rectifier" if len(names) == 1 else f"rectifier:{out}"
            cap = "output_cap" if len(names) == 1 else f"output_cap:{out}"
            avg, rms = numeric(waves[f"rectifier:{out}"])
            assert avg == pytest.approx(c.iout[out], rel=1e-3)  # charge balance: the rectifier carries Iout
            assert rms == pytest.approx(c.roles[role]["i_rms"], rel=1e-3)
            assert waves[f"rectifier:{out}"].peak() <= c.roles[role]["i_peak"] * (1 + 1e-9)
            avg, rms = numeric(waves[f"output_cap:{out}"])
            assert abs(avg) < 1e-3 * c.iout[out]
            assert rms == pytest.approx(c.roles[cap]["i_rms"], rel=1e-3)


def test_magnetizing_waveform_is_continuous_and_balanced():
    # The magnetizing current has no jumps (an inductor), and rises Vin/(Lm+Llk) then falls Vr/Lm.
    design = DESIGNS["ccm_leakage"]
    w = corner_waveforms(design, "vin_min-full")["magnetizing"]
    t, y = w.t, w.y
    assert np.all(np.abs(np.diff(y)[np.diff(t) == 0]) < 1e-12)
    assert y[0] == pytest.approx(y[-1], rel=1e-9)


def test_output_ripple_matches_integrated_capacitor_charge():
    # dV_C = (max - min) of ∫ i_c dt / C, integrated from the engine's own capacitor current.
    design = DESIGNS["dcm_leakage"]
    c = evaluate(design).corner("vin_min-full")
    w = corner_waveforms(design, "vin_min-full")["output_cap"]
    t, y = w.sample(100_001)
    q = np.cumsum(y) * (t[1] - t[0])
    ripple_c = (q.max() - q.min()) / 220e-6
    esr_step = 15e-3 * (w.y.max() - w.y.min())
    assert c.roles["output_cap"]["v_ripple_pp"] == pytest.approx(ripple_c + esr_step, rel=2e-3)


# ---- hypothesis properties ------------------------------------------------------------------

points = st.fixed_dictionaries({
    "vin": st.floats(9.0, 400.0), "vout": st.floats(3.0, 48.0), "po": st.floats(1.0, 100.0),
    "vf": st.floats(0.0, 1.0), "vr_ratio": st.floats(0.3, 3.0), "lm": st.floats(5e-6, 5e-3),
    "fsw": st.floats(20e3, 500e3), "eta": st.floats(0.6, 1.0), "llk_frac": st.floats(0.0, 0.03),
    "vc_ratio": st.floats(1.4, 3.0), "boundary": st.booleans(), "cd": st.floats(0.0, 500e-12),
})


def build(p, vin=None):
    vr = p["vr_ratio"] * p["vin"]
    n = vr / (p["vout"] + p["vf"])
    llk = p["llk_frac"] * p["lm"]
    # No efficiency above what the model's own losses allow: the rectifier drop (Po/Psec) and, at the
    # boundary, the clamp's share Llk·Vc/((Lm + Llk)(Vc − Vr)) of the stored energy (note sec. 2.1).
    k_clamp = llk * p["vc_ratio"] / ((p["lm"] + llk) * (p["vc_ratio"] - 1.0))
    eta = min(p["eta"], p["vout"] / (p["vout"] + p["vf"]) * (1.0 - k_clamp) * (1 - 1e-9))
    return OperatingPoints.create(
        vin=p["vin"] if vin is None else vin, vout=[p["vout"]], iout=[p["po"] / p["vout"]], vf=[p["vf"]], n=[n],
        lm=p["lm"], llk=llk, fsw=p["fsw"], eta=eta, vclamp=p["vc_ratio"] * vr if llk > 0 else np.inf,
        boundary=p["boundary"], cd=p["cd"])


def valid(s) -> bool:
    """The operating-point checks of partcheck.stress.validity that the arrays decide alone."""
    return bool(np.all(s["secondary_fit"]) and np.all(s["duty"] + s["d2"] <= 1 + 1e-6)
                and np.all(np.isfinite(s["is_rms_j"])))


@settings(max_examples=150, deadline=None)
@given(points)
def test_energy_balance(p):
    op = build(p)
    s = solve(op)
    assume(valid(s))
    pin, vin = s["pin"][0], op.vin[0]
    assert vin * s["sw_avg"][0] == pytest.approx(pin, rel=1e-9)  # what the switch draws is Pin
    if s["mode"][0] != CCM:  # all the energy stored per cycle: 0.5·(Lm+Llk)·Ipk²·fs = Pin (note sec. 1.3)
        assert 0.5 * s["lp"][0] * s["ipk"][0] ** 2 * s["fs"][0] == pytest.approx(pin, rel=1e-9)
    # Secondary side: the referred current times Vr delivers Psec (charge balance, note sec. 0).
    assert s["is_avg_j"][0, 0] * (op.vout[0, 0] + op.vf[0, 0]) == pytest.approx(s["psec"][0], rel=1e-9)
    # The clamp dissipates its voltage times its average current (note sec. 2.1).
    assert s["p_clamp"][0] == pytest.approx(op.vclamp[0] * s["clamp_avg"][0] if op.llk[0] > 0 else 0.0,
                                            rel=1e-9, abs=1e-12)
    # Lossless otherwise (eta = Po/(Psec + Pclamp) would need iteration): Pin ≥ Psec at least.
    assert s["psec"][0] <= pin * (1 + 1e-12)


@settings(max_examples=150, deadline=None)
@given(points)
def test_rms_at_least_average(p):
    s = solve(build(p))
    assume(valid(s))
    for rms, avg in (("sw_rms", "sw_avg"), ("is_rms_j", "is_avg_j"), ("clamp_rms", "clamp_avg")):
        assert np.all(s[rms] >= np.abs(s[avg]) * (1 - 1e-12))
    assert np.all(s["is_pk_j"] >= s["is_rms_j"] * (1 - 1e-12)) and np.all(s["ipk"] >= s["sw_rms"] * (1 - 1e-12))


@settings(max_examples=100, deadline=None)
@given(points)
def test_switch_peak_voltage_rises_with_vin(p):
    vin = np.linspace(p["vin"], 2.0 * p["vin"], 25)
    s = solve(build(p, vin=vin))
    assume(valid(s))
    assert np.all(np.diff(s["sw_vpk"]) > 0)
    assert np.all(np.diff(s["vrect_j"][:, 0]) > 0)


@settings(max_examples=100, deadline=None)
@given(points)
def test_currents_continuous_across_the_ccm_dcm_boundary(p):
    p = dict(p, boundary=False)
    probe = solve(build(p))
    # Critical load at this operating point (note sec. 1.1): Pin_crit = (Vin·D)²/(2·(Lm+Llk)·fs).
    vr, vin, lp, fs = probe["vr"][0], p["vin"], probe["lp"][0], p["fsw"]
    d = vr / (vin * p["lm"] / lp + vr)
    op = build(p)
    pin_crit = (vin * d) ** 2 / (2 * lp * fs)
    po_crit = pin_crit * op.eta[0]
    eps = 1e-7
    ops = [build(dict(p, po=po_crit * (1 + k * eps))) for k in (-1, 1)]
    below, above = solve(ops[0]), solve(ops[1])
    assume(valid(below) and valid(above))
    assert below["mode"][0] == DCM and above["mode"][0] == CCM
    for key in ("ipk", "sw_rms", "sw_avg", "duty", "is_pk_j", "is_rms_j", "icout_j", "icin", "p_clamp"):
        a, b = np.ravel(below[key])[0], np.ravel(above[key])[0]
        assert b == pytest.approx(a, rel=1e-4, abs=1e-12), key


def test_blockwise_solve_equals_one_pass():
    # solve() works through large inputs in cache-sized blocks; the result must not depend on it.
    rng = np.random.default_rng(5)
    n = 103
    op = OperatingPoints.create(
        vin=rng.uniform(18, 60, n), vout=[5.0], iout=rng.uniform(0.2, 3, (n, 1)), vf=[0.45], n=[4.0],
        lm=rng.uniform(20e-6, 200e-6, n), llk=1e-6, fsw=100e3, eta=0.85, vclamp=60.0)
    whole, blocks = solve(op, chunk=10_000), solve(op, chunk=7)
    assert whole.keys() == blocks.keys()
    for key in whole:
        np.testing.assert_array_equal(np.broadcast_to(whole[key], np.shape(blocks[key])), blocks[key], err_msg=key)


@pytest.mark.parametrize("name", ["ccm_leakage", "dcm_leakage", "bcm_valley"])
def test_overload_corner_runs_at_the_current_limit(name):
    # At the -ilim corners the load rises until the switch peak is the limit plus the delay
    # overshoot Vin·t_pd/(Lm + Llk) (reference note sec. 5); the power and output current rise with it.
    data = copy.deepcopy(DESIGNS[name].raw)
    data["converter"]["current_limit_delay"] = "150 ns"
    design = design_from_dict(data)
    result = evaluate(design)
    lp = design.transformer.lm + design.transformer.llk
    for cid, vin in (("vin_max-ilim", 32.0), ("vin_min-ilim", 18.0)):
        c = result.corner(cid)
        assert c.roles["transformer"]["i_peak"] == pytest.approx(4.0 + vin * 150e-9 / lp, rel=1e-9)
        assert c.iout["5V"] > 2.0
        full = result.corner(cid.replace("ilim", "full"))
        assert c.roles["rectifier"]["i_avg"] > full.roles["rectifier"]["i_avg"]


def test_overload_corner_beyond_max_duty_is_left_out_with_a_note():
    # DCM at fixed frequency: full load at 18 V needs D = 0.351; at the limit D = Lp·Ipk·fs/Vin = 0.378.
    data = copy.deepcopy(DESIGNS["dcm_leakage"].raw)
    data["converter"]["max_duty"] = 0.36
    result = evaluate(design_from_dict(data))
    ids = [c.id for c in result.corners]
    assert "vin_max-ilim" in ids and "vin_min-ilim" not in ids
    assert any(n.startswith("vin_min-ilim: the duty would reach") for n in result.notes)


@pytest.mark.parametrize("cd,ipk,fs,duty", [(0.0, 2.0, 125.0e3, 0.5), (100e-12, 2.1055, 112.79e3, 0.4749)])
def test_boundary_mode_with_valley_delay(cd, ipk, fs, duty):
    # Constructed self-check of the reference note, sec. 9 Ex. 5 (not published; derived there from
    # sec. 1.4): Vin = 100 V, Vr = 100 V, Lm = 200 uH, Pin = 50 W; first valley td = pi·sqrt(Lm·Cd).
    s = solve(OperatingPoints.create(vin=100.0, vout=[100.0], iout=[0.5], n=[1.0], lm=200e-6, fsw=np.inf, eta=1.0,
                                     boundary=True, cd=cd))
    assert s["ipk"][0] == pytest.approx(ipk, rel=2e-4)
    assert s["fs"][0] == pytest.approx(fs, rel=2e-4)
    assert s["duty"][0] == pytest.approx(duty, rel=2e-4)
    assert 0.5 * 200e-6 * s["ipk"][0] ** 2 * s["fs"][0] == pytest.approx(50.0, rel=1e-9)  # energy per cycle × fs
