"""Tests for partcheck.stress.capacitors: bank sharing, DC bias, ripple rating, hot spot, life."""

from __future__ import annotations

import itertools
import math
import os
import re
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pytest

from partcheck.stress.capacitors import (
    CLASS2_BIAS_MODEL,
    DEFAULT_CAP_RTH_K_PER_W,
    MIL_PRF_123_FLOOR_AT_RATED_V,
    CapacitorModel,
    effective_capacitance,
    electrolytic_life,
    hot_spot_model,
    hot_spot_temperature,
    miner_life,
    ripple_rating,
    split_bank_current,
)
from partcheck.stress.waveform import PiecewiseLinear

REFERENCE = Path(__file__).resolve().parents[1] / "reference" / "bank"


def dcm_secondary(i_pk=5.0, fs=100e3, d=0.4, d2=0.4, edge=10e-9, ac_only=True) -> PiecewiseLinear:
    """A DCM secondary current: off during ton, step to i_pk (finite edge), ramp to 0, dead time."""
    T = 1.0 / fs
    t = np.array([0.0, d * T, d * T + edge, (d + d2) * T, T])
    y = np.array([0.0, 0.0, i_pk, 0.0, 0.0])
    w = PiecewiseLinear(t, y)
    return PiecewiseLinear(t, y - w.mean()) if ac_only else w


# ---------------------------------------------------------------- bank sharing: identities


def test_single_capacitor_takes_all_of_the_ac_current():
    # Identity (common practice): one capacitor carries the whole AC RMS, to the captured fraction.
    w = dcm_secondary(ac_only=False)
    split = split_bank_current(w, [CapacitorModel("C1", 100e-6, 0.02, 5e-9)], rel_tol=1e-4)
    assert split.i_rms[0] == pytest.approx(w.ac_rms() * split.captured, rel=1e-9)
    assert split.captured == pytest.approx(1.0, abs=1e-4)


def test_identical_capacitors_share_equally_and_parseval_holds():
    # Identity (common practice): N equal parallel parts each take 1/N of every harmonic, so each
    # RMS is total/N and the sum of squares is total²/N.
    w = dcm_secondary()
    caps = [CapacitorModel(f"C{i}", 22e-6, 5e-3, 1e-9) for i in range(4)]
    split = split_bank_current(w, caps, rel_tol=1e-4)
    total = w.ac_rms() * split.captured
    np.testing.assert_allclose(split.i_rms, total / 4, rtol=1e-9)
    assert np.sum(split.i_rms**2) == pytest.approx(total**2 / 4, rel=1e-9)


def test_pure_esr_bank_splits_in_inverse_esr():
    # Identity (Ohm's law, common practice): with C → ∞ and no ESL the branches are resistors in
    # parallel, so the currents are in inverse ratio of the resistances at every harmonic.
    w = dcm_secondary()
    caps = [CapacitorModel("A", 1e3, 0.01), CapacitorModel("B", 1e3, 0.03)]
    split = split_bank_current(w, caps, rel_tol=1e-4)
    assert split.i_rms[0] / split.i_rms[1] == pytest.approx(3.0, rel=1e-6)
    assert split.i_rms.sum() == pytest.approx(w.ac_rms() * split.captured, rel=1e-6)
    # Bank voltage is the current times 7.5 mΩ: peak-to-peak = R_par × the waveform's span.
    assert split.v_pp == pytest.approx(0.0075 * 5.0, rel=0.02)


def test_ideal_capacitor_ripple_matches_the_charge_formula():
    # flyback-equations.md §3.2 [D]: DCM dV_C = (Ispk − Io)²·D2/(2·Ispk·fs·C).
    i_pk, fs, d2, c = 5.0, 100e3, 0.4, 100e-6
    w = dcm_secondary(i_pk=i_pk, fs=fs, d2=d2, edge=1e-12)
    io = i_pk * d2 / 2
    expected = (i_pk - io) ** 2 * d2 / (2 * i_pk * fs * c)
    split = split_bank_current(w, [CapacitorModel("C", c, 0.0)], rel_tol=1e-5)
    assert split.v_pp == pytest.approx(expected, rel=0.01)


def test_harmonic_count_is_stated_and_converges():
    w = dcm_secondary()
    coarse = split_bank_current(w, [CapacitorModel("C", 10e-6, 0.005)], rel_tol=1e-2)
    fine = split_bank_current(w, [CapacitorModel("C", 10e-6, 0.005)], rel_tol=1e-4)
    assert coarse.n_harmonics < fine.n_harmonics
    assert coarse.captured >= 0.99 and fine.captured >= 0.9999
    forced = split_bank_current(w, [CapacitorModel("C", 10e-6, 0.005)], n_harmonics=3)
    assert forced.n_harmonics == 3 and forced.notes  # too few harmonics is reported


def test_capacitor_with_no_capacitance_carries_nothing():
    w = dcm_secondary()
    split = split_bank_current(w, [CapacitorModel("dead", 0.0, 0.01), CapacitorModel("ok", 10e-6, 0.01)])
    assert split.i_rms[0] == 0.0 and split.i_rms[1] > 0.0


# ---------------------------------------------------------------- bank sharing: ngspice


@pytest.fixture
def ngspice() -> str:
    exe = shutil.which("ngspice")
    if exe is None:
        if os.environ.get("CI"):
            pytest.fail("ngspice is not installed; tests/run-all.sh installs it (apt-get install ngspice)")
        pytest.skip("ngspice is not installed")
    return exe


BANK = (
    CapacitorModel("C1", 10e-6, 3e-3, 1e-9),  # 22 µF X7R left with 10 µF at its bias
    CapacitorModel("C2", 4.7e-6, 4e-3, 0.8e-9),  # a smaller ceramic
    CapacitorModel("C3", 220e-6, 40e-3, 8e-9),  # electrolytic / polymer
)


def bank_netlist(wave: PiecewiseLinear, caps, periods: int = 30, with_esl: bool = True) -> str:
    """ngspice deck: the periodic PWL current source into the parallel R-L-C branches."""
    pts = []
    for k in range(periods):
        for t, y in zip(wave.t[:-1], wave.y[:-1]):
            pts.append(f"{k * wave.period + t:.12g} {y:.12g}")
    pts.append(f"{periods * wave.period:.12g} {wave.y[-1]:.12g}")
    lines = [
        f"* capacitor bank driven by a flyback secondary current ({'with' if with_esl else 'no'} ESL)",
        "I1 0 n PWL(" + " ".join(pts) + ")",
        "Rleak n 0 1G",
    ]
    for i, c in enumerate(caps, 1):
        lines += [
            f"Vam{i} n a{i} 0",
            f"R{i} a{i} b{i} {c.esr_ohm:.12g}",
            f"L{i} b{i} c{i} {c.esl_h if with_esl else 0:.12g}" if with_esl else f"Vsh{i} b{i} c{i} 0",
            f"C{i} c{i} 0 {c.capacitance_f:.12g}",
        ]
    t_end = periods * wave.period
    t_from = (periods - 5) * wave.period
    lines.append(f".tran 2n {t_end:.12g} 0 2n uic")
    for i, _ in enumerate(caps, 1):
        lines.append(f".meas tran irms{i} RMS i(vam{i}) from={t_from:.12g} to={t_end:.12g}")
    lines.append(f".meas tran vpp PP v(n) from={t_from:.12g} to={t_end:.12g}")
    lines.append(f".meas tran vrms RMS v(n) from={t_from:.12g} to={t_end:.12g}")
    lines.append(f".meas tran vavg AVG v(n) from={t_from:.12g} to={t_end:.12g}")
    lines.append(".end")
    return "\n".join(lines) + "\n"


def run_ngspice(exe: str, deck: str, tmp_path: Path) -> dict[str, float]:
    path = tmp_path / "bank.cir"
    path.write_text(deck)
    out = subprocess.run([exe, "-b", str(path)], check=False, capture_output=True, text=True, timeout=60)
    found = dict(re.findall(r"^(\w+)\s*=\s*([-+0-9.eE]+)", out.stdout, flags=re.MULTILINE))
    assert found, f"no measurements in ngspice output:\n{out.stdout}\n{out.stderr}"
    return {k.lower(): float(v) for k, v in found.items()}


@pytest.mark.ngspice
@pytest.mark.parametrize("with_esl", [True, False])
def test_bank_sharing_matches_ngspice_transient(ngspice, tmp_path, with_esl):
    # Reference: ngspice-39 transient of the same bank driven by the same PWL current
    # (tests/reference/bank/README.md).  Per-capacitor RMS within 1 % (measured: < 0.1 %).
    wave = dcm_secondary()
    caps = BANK if with_esl else tuple(CapacitorModel(c.ref, c.capacitance_f, c.esr_ohm, 0.0) for c in BANK)
    sim = run_ngspice(ngspice, bank_netlist(wave, caps, with_esl=with_esl), tmp_path)
    split = split_bank_current(wave, caps, rel_tol=1e-4)
    for i, value in enumerate(split.i_rms, 1):
        assert value == pytest.approx(sim[f"irms{i}"], rel=0.01), f"capacitor {i}"
    v_ac = np.sqrt(max(sim["vrms"] ** 2 - sim["vavg"] ** 2, 0.0))
    assert split.v_rms == pytest.approx(v_ac, rel=0.03)
    if not with_esl:
        assert split.v_pp == pytest.approx(sim["vpp"], rel=0.03)


def test_stored_reference_decks_are_the_generated_ones():
    # The decks under tests/reference/bank/ are what this test file generates (README says how).
    wave = dcm_secondary()
    no_esl = tuple(CapacitorModel(c.ref, c.capacitance_f, c.esr_ohm, 0.0) for c in BANK)
    assert (REFERENCE / "bank_esl.cir").read_text() == bank_netlist(wave, BANK, with_esl=True)
    assert (REFERENCE / "bank_no_esl.cir").read_text() == bank_netlist(wave, no_esl, with_esl=False)


# ---------------------------------------------------------------- effective capacitance


def test_catalog_curve_is_interpolated_and_not_an_approximation():
    curve = ((0.0, 1.0), (10.0, 0.8), (20.0, 0.5))
    c, note, approx = effective_capacitance(22e-6, 15.0, 25.0, "X7R", curve)
    assert c == pytest.approx(22e-6 * 0.65)
    assert not approx and "catalog" in note
    c, note, approx = effective_capacitance(22e-6, 24.0, 25.0, "X7R", curve)
    assert c == pytest.approx(22e-6 * 0.5) and approx and "outside the curve" in note


def test_class1_keeps_its_capacitance():
    # EIA RS-198 class I (C0G = 0 ± 30 ppm/K), derating-standards.md §6, READ (secondary).
    c, _note, approx = effective_capacitance(1e-9, 50.0, 50.0, "C0G")
    assert c == 1e-9 and not approx


def test_generic_x7r_model_at_rated_voltage_is_in_a_sensible_band():
    # Upper bound: MIL-PRF-123D Table V lets a BX part fall to 0.75 × nominal at rated voltage
    # (derating-standards.md §4, READ); a generic commercial X7R must not be assumed better.
    # Lower bound: losses of 30-80 % at rated voltage are widely reported (§6, from memory).
    c, note, approx = effective_capacitance(10e-6, 25.0, 25.0, "X7R")
    frac = c / 10e-6
    assert 0.20 <= frac <= MIL_PRF_123_FLOOR_AT_RATED_V["BX"]
    assert approx and "approximation" in note and "BX" in note and "−25 %" in note
    assert MIL_PRF_123_FLOOR_AT_RATED_V == {"BX": 0.75, "BR": 0.60}  # Table V, READ


def test_generic_model_falls_with_bias_and_orders_the_classes():
    fr = {code: effective_capacitance(1.0, 12.0, 25.0, code)[0] for code in ("X7R", "X5R", "Y5V")}
    assert 1.0 > fr["X7R"] > fr["X5R"] > fr["Y5V"] > 0.0
    vs = np.linspace(0, 25, 11)
    seq = [effective_capacitance(1.0, v, 25.0, "X5R")[0] for v in vs]
    assert all(a > b for a, b in itertools.pairwise(seq))
    # Scenario 2 of demo-scenarios.md: a 25 V X7R on a 15 V rail "loses most of its capacitance"
    # only in the catalog curve; the generic model must at least show a substantial loss.
    assert effective_capacitance(1.0, 15.0, 25.0, "X7R")[0] < 0.8


def test_unknown_dielectric_uses_the_pessimistic_constants_and_says_so():
    c, note, approx = effective_capacitance(1.0, 10.0, 25.0, "Q9Z")
    assert c == pytest.approx(effective_capacitance(1.0, 10.0, 25.0, "Y5V")[0])
    assert "unknown" in note and approx
    assert "Y5V" in CLASS2_BIAS_MODEL


# ---------------------------------------------------------------- ripple rating


def test_ripple_rating_multipliers_from_catalog_curves():
    freq = ((120.0, 0.5), (1e3, 0.75), (10e3, 0.9), (100e3, 1.0))
    temp = ((65.0, 2.0), (85.0, 1.6), (105.0, 1.0))
    r = ripple_rating(2.0, 50e3, 75.0, freq, temp)
    fm = 0.9 + (1.0 - 0.9) * (50e3 - 10e3) / 90e3
    assert r.freq_multiplier == pytest.approx(fm)
    assert r.temp_multiplier == pytest.approx(1.8)
    assert r.i_allowed == pytest.approx(2.0 * fm * 1.8)
    assert float(r) == r.i_allowed


def test_ripple_rating_without_curves_is_the_rating_with_notes():
    r = ripple_rating(1.5, 65e3, 70.0)
    assert r.i_allowed == 1.5 and len(r.notes) == 2
    assert any("above the rated" in n for n in ripple_rating(1.5, 100e3, 110.0).notes)


# ---------------------------------------------------------------- hot spot and life


def test_hot_spot_from_rated_core_rise():
    # derating-standards.md §5 (common practice, MEM-M): ΔT = ΔT0·(I/I0)², 5 K at 0.8 → 3.2 K.
    assert hot_spot_temperature(65.0, 0.8, 0.1, ripple_rise_k=5.0, i_rated=1.0) == pytest.approx(68.2)
    assert "ΔT0" in hot_spot_model(5.0, 1.0, None)


def test_hot_spot_from_esr_and_thermal_resistance():
    # derating-standards.md §5 (standard physics): ΔT = I²·ESR·Rth: 1 A, 50 mΩ, 40 K/W → 2 K.
    assert hot_spot_temperature(60.0, 1.0, 0.05, rth_k_per_w=40.0) == pytest.approx(62.0)
    assert hot_spot_temperature(60.0, 1.0, 0.05) == pytest.approx(60.0 + 0.05 * DEFAULT_CAP_RTH_K_PER_W)
    assert "default" in hot_spot_model(None, None, None)


@pytest.mark.parametrize("t_c, life_h", [(95.0, 4000.0), (85.0, 8000.0), (65.0, 32000.0)])
def test_ten_degree_rule_handbook_example(t_c, life_h):
    # derating-standards.md §5, READ (forum quote of the handbook example): a 105 °C / 2000 h part
    # lasts 4 000 h at 95 °C, 8 000 h at 85 °C, 32 000 h at 65 °C.  Rule: Wang & Blaabjerg 2014,
    # IEEE TIA 50(5) (equation from memory).
    assert electrolytic_life(2000.0, 105.0, t_c) == pytest.approx(life_h, rel=1e-12)


def test_life_with_ripple_self_heating():
    # derating-standards.md §5 and best check value 2 (CALC): ΔT0 = 5 K, I/I0 = 0.8, Ta = 65 °C
    # → 3.2 K → 25 634 h (32 000 h without ripple).
    t_hot = hot_spot_temperature(65.0, 0.8, 0.05, ripple_rise_k=5.0, i_rated=1.0)
    assert electrolytic_life(2000.0, 105.0, t_hot) == pytest.approx(25634.0, abs=1.0)


# ---------------------------------------------------------------- hot spot at the rating's frequency

#: The demo's output electrolytic C10 (sample_boms/battery_monitor_48v, part CEG-101-25-6.3x11 in
#: db/parts.csv): ripple 0.12 A rated at 120 Hz, ripple_freq curve 1.5 from 100 kHz to 500 kHz (so
#: Kf = 1.5 at the 200 kHz switching frequency), core rise 5 K at rated ripple, 2000 h at 105 °C.
C10 = {"i_rated": 0.12, "kf_200k": 1.5, "rise_k": 5.0, "life_h": 2000.0, "life_t_c": 105.0, "esr": 0.5}


def test_demo_electrolytic_hot_spot_at_the_current_limit_corner():
    """Hand-worked: C10 at 60 °C ambient carrying 0.48 A RMS at the current-limit corner.

    Old model, rise against the 120 Hz rating: 60 + 5·(0.48/0.12)² = 60 + 5·16 = 140 °C, far above
    the 105 °C category (10-degree rule: 2000·2^(−3.5) = 176.8 h).  Consistent model, rise against
    the rating at the same frequency, I0·Kf = 0.12·1.5 = 0.18 A: 60 + 5·(0.48/0.18)² = 60 + 5·64/9
    = 60 + 35.56 = 95.56 °C, and life 2000·2^((105 − 95.56)/10) = 2000·2^(17/18) = 3848.9 h.
    """
    old = hot_spot_temperature(60.0, 0.48, C10["esr"], ripple_rise_k=C10["rise_k"], i_rated=C10["i_rated"])
    assert old == pytest.approx(140.0, rel=1e-12)  # Kf defaults to 1: the rating frequency
    t_hot = hot_spot_temperature(60.0, 0.48, C10["esr"], ripple_rise_k=C10["rise_k"], i_rated=C10["i_rated"],
                                 freq_multiplier=C10["kf_200k"])
    # Source: the maker's method: the frequency multiplier is the current of equal core rise, since
    # ESR is lower at higher frequency; the temperature multiplier is the larger rise allowed at a
    # lower ambient and does not enter the rise.  BHC Components, "Aluminium electrolytic
    # capacitors — electrical characteristics", Ripple current (read); Cornell Dubilier, Aluminum
    # Electrolytic Capacitor Application Guide, Ripple Current (from memory).
    assert t_hot == pytest.approx(60.0 + 5.0 * 64.0 / 9.0, rel=1e-12)
    assert t_hot == pytest.approx(95.56, abs=0.005)
    # 10-degree rule: Wang & Blaabjerg 2014, IEEE TIA 50(5) (equation from memory).
    assert electrolytic_life(C10["life_h"], C10["life_t_c"], t_hot) == pytest.approx(2000.0 * 2 ** (17 / 18), rel=1e-12)
    assert electrolytic_life(C10["life_h"], C10["life_t_c"], t_hot) == pytest.approx(3848.9, abs=0.05)
    assert electrolytic_life(C10["life_h"], C10["life_t_c"], old) == pytest.approx(176.78, abs=0.005)


@pytest.mark.parametrize("kf", [1.0, 1.5, 0.7, 2.8])
def test_rated_rise_at_the_rating_at_that_frequency_is_exactly_the_rated_rise(kf):
    # Identity (definition of the multiplier, BHC Components Ripple current, read): at I = I0·Kf
    # the core rise is the rated ΔT0, at any frequency.
    t = hot_spot_temperature(40.0, 0.12 * kf, 0.5, ripple_rise_k=5.0, i_rated=0.12, freq_multiplier=kf)
    assert t - 40.0 == pytest.approx(5.0, rel=1e-12)


def test_frequency_multiplier_does_not_change_the_esr_fallback():
    # The I²·ESR·Rth fallback keeps the catalog ESR (at the rating frequency; conservative above it).
    base = hot_spot_temperature(60.0, 1.0, 0.05, rth_k_per_w=40.0)
    assert hot_spot_temperature(60.0, 1.0, 0.05, rth_k_per_w=40.0, freq_multiplier=1.5) == base == pytest.approx(62.0)
    assert "rating frequency" in hot_spot_model(None, None, 40.0, freq_multiplier=1.5)


def test_hot_spot_model_states_the_multiplier():
    text = hot_spot_model(5.0, 0.12, None, freq_multiplier=1.5)
    assert "I0·Kf" in text and "Kf = 1.5" in text and "I0 = 0.12 A" in text
    assert "Kf = 1" in hot_spot_model(5.0, 0.12, None)


@pytest.mark.parametrize("kwargs", [
    {"freq_multiplier": 0.0}, {"freq_multiplier": -1.5}, {"freq_multiplier": float("nan")},
    {"freq_multiplier": float("inf")}, {"ripple_rise_k": -5.0, "i_rated": 0.12}, {"i_rated": -0.1, "ripple_rise_k": 5.0},
    {"rth_k_per_w": -1.0},
])
def test_hot_spot_refuses_bad_inputs(kwargs):
    with pytest.raises(ValueError):
        hot_spot_temperature(60.0, 0.48, 0.5, **kwargs)


def test_hot_spot_refuses_negative_current_or_esr():
    with pytest.raises(ValueError, match="i_rms"):
        hot_spot_temperature(60.0, -0.1, 0.5)
    with pytest.raises(ValueError, match="esr"):
        hot_spot_temperature(60.0, 0.1, -0.5)
    with pytest.raises(ValueError, match="freq_multiplier"):
        hot_spot_model(5.0, 0.12, None, freq_multiplier=0.0)


# ---------------------------------------------------------------- Miner's rule over a mission


def test_miner_two_point_hand_example():
    """70 % of the time at 65 °C and 30 % at 85 °C for a 2000 h / 105 °C part.

    10-degree rule: 32 000 h at 65 °C, 8 000 h at 85 °C.  Damage per hour
    0.7/32 000 + 0.3/8 000 = 2.1875e-5 + 3.75e-5 = 5.9375e-5, so L = 16 842.1 h.
    """
    lives = [electrolytic_life(2000.0, 105.0, 65.0), electrolytic_life(2000.0, 105.0, 85.0)]
    # Miner, J. Appl. Mech. 12 (1945), linear damage rule L = 1/Σ(f_i/L_i) (from memory).
    assert miner_life(lives, [0.7, 0.3]) == pytest.approx(1.0 / 5.9375e-5, rel=1e-12)
    assert miner_life(lives, [0.7, 0.3]) == pytest.approx(16842.1, abs=0.05)


def test_miner_three_point_hand_example():
    # 0.5/16 000 + 0.3/8 000 + 0.2/4 000 = 3.125e-5 + 3.75e-5 + 5e-5 = 1.1875e-4 → 8 421.05 h
    # (Miner 1945, linear damage rule, from memory; hand-worked).
    assert miner_life([16000.0, 8000.0, 4000.0], [0.5, 0.3, 0.2]) == pytest.approx(1.0 / 1.1875e-4, rel=1e-12)
    assert miner_life((16000.0, 8000.0, 4000.0), (0.5, 0.3, 0.2)) == pytest.approx(8421.05, abs=0.005)


@pytest.mark.parametrize("n", [1, 2, 5])
def test_miner_identity_equal_points_give_the_same_life(n):
    # Identity: when every point has the same life, the mission life is that life.
    assert miner_life([12345.0] * n, [1.0 / n] * n) == pytest.approx(12345.0, rel=1e-12)


def test_miner_ten_percent_at_a_tenth_of_the_life():
    # 90 % at L and 10 % at L/10: damage 0.9/L + 0.1·10/L = 1.9/L → L/1.9 = 0.5263·L (not quite
    # half: the short, harsh point uses up 1/1.9 = 53 % of the damage). Hand-worked, Miner 1945.
    assert miner_life([10000.0, 1000.0], [0.9, 0.1]) == pytest.approx(10000.0 / 1.9, rel=1e-12)


def test_miner_zero_and_infinite_lives():
    assert miner_life([0.0, 1000.0], [0.5, 0.5]) == 0.0  # a point that wears out at once
    assert miner_life([math.inf, 1000.0], [0.5, 0.5]) == pytest.approx(2000.0, rel=1e-12)  # no wear there
    assert miner_life([math.inf, math.inf], [0.3, 0.7]) == math.inf
    assert miner_life([0.0, 1000.0], [0.0, 1.0]) == pytest.approx(1000.0)  # no time at the zero-life point


@pytest.mark.parametrize("lives,fractions,words", [
    ([1000.0, 2000.0], [1.0], "one fraction per life"),
    ([], [], "at least one"),
    ([1000.0, 2000.0], [0.5, 0.4], "sum to 0.9"),
    ([1000.0, 2000.0], [1.2, -0.2], "fraction in"),
    ([1000.0], [float("nan")], "fraction in"),
    ([-1.0], [1.0], "life >= 0"),
    ([float("nan")], [1.0], "life >= 0"),
])
def test_miner_refuses_bad_inputs(lives, fractions, words):
    with pytest.raises(ValueError, match=words):
        miner_life(lives, fractions)
