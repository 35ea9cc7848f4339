"""Tests for partcheck.stress.feedback: PSR divider and spread, optocoupler loop and CTR margin."""

from __future__ import annotations

import math

import pytest

from partcheck.stress.feedback import (
    DEFAULT_CTR_LOSS_PER_DECADE,
    DEFAULT_DVF_DT_V_PER_K,
    DEFAULT_VF_SLOPE_V_PER_DECADE,
    TYPICAL_PSR_ACCURACY_PCT,
    ctr_after,
    opto_loop,
    psr_divider,
    psr_output_spread,
)


def test_divider_voltage_and_power_identities():
    # Ohm's law (common practice): 15 V across 40 kΩ + 10 kΩ → 3 V at the pin; power adds up
    # to V²/R_total and splits in proportion to the resistances.
    d = psr_divider(15.0, 40e3, 10e3, v_aux_rms=12.0, p_rated_top=0.1, p_rated_bottom=0.1)
    assert d.v_sense == pytest.approx(3.0)
    assert d.p_top + d.p_bottom == pytest.approx(12.0**2 / 50e3)
    assert d.p_top / d.p_bottom == pytest.approx(4.0)
    assert d.util_top == pytest.approx(d.p_top / 0.1)
    flat = psr_divider(15.0, 40e3, 10e3)
    assert flat.p_top > d.p_top and flat.notes  # the continuous-plateau bound is larger and noted


def test_psr_spread_from_the_recalled_coefficients():
    # flyback-equations.md §6 [M] (from memory): −1 to −2 mV/K, "over a 100 K swing that is
    # 0.1-0.2 V, i.e. 2-4 % of a 5 V output"; 60-120 mV per decade of current.
    assert DEFAULT_DVF_DT_V_PER_K == -1.5e-3 and DEFAULT_VF_SLOPE_V_PER_DECADE == 0.08
    s = psr_output_spread(5.0, 0.45, 100.0, 0.02, 2.0)
    assert s.dv_temp == pytest.approx(0.15)  # inside the note's 0.1-0.2 V
    assert 2.0 <= 100 * s.dv_temp / 5.0 <= 4.0
    assert s.dv_load == pytest.approx(0.08 * 2.0)  # two decades of load
    assert s.spread_pct == pytest.approx(100 * (0.15 + 0.16) / 2 / 5.0)
    assert s.typical_pct == TYPICAL_PSR_ACCURACY_PCT == (1.0, 1.5)  # common practice
    assert s.meets_target is None


def test_psr_spread_against_a_target_and_compensation():
    s = psr_output_spread(5.0, 0.45, 60.0, 0.2, 2.0, target_pct=5.0)
    assert s.meets_target is True
    tight = psr_output_spread(5.0, 0.45, 60.0, 0.2, 2.0, target_pct=1.0)
    assert tight.meets_target is False
    half = psr_output_spread(5.0, 0.45, 60.0, 0.2, 2.0, compensated_fraction=0.5)
    assert half.spread_v == pytest.approx(s.spread_v / 2)
    with pytest.raises(ValueError, match="minimum load"):
        psr_output_spread(5.0, 0.45, 60.0, 0.0, 2.0)


def test_ctr_degradation_model_is_the_stated_assumption():
    # ASSUMPTION (feedback.py): CTR0·(1 − 0.1·log10(t/1000 h)); 100 000 h is two decades → −20 %.
    assert DEFAULT_CTR_LOSS_PER_DECADE == 0.10
    assert ctr_after(0.5, 100_000.0) == pytest.approx(0.5 * 0.8)
    assert ctr_after(0.5, 500.0) == 0.5
    assert ctr_after(0.5, 1e15, loss_per_decade=0.5) == 0.0


def test_opto_loop_currents_from_the_resistor_values():
    # Kirchhoff (common practice): (12 − 1.2 − 2.5)/1 kΩ = 8.3 mA in the LED; bias 1.2 V/1 kΩ.
    loop = opto_loop(12.0, 1e3, 1.2, 2.5, 1e3, ctr_min=0.5, i_c_needed=2e-3, life_h=60_000.0, v_ref=2.495)
    assert loop.i_led == pytest.approx(8.3e-3)
    assert loop.i_bias == pytest.approx(1.2e-3)
    assert loop.i_k == pytest.approx(9.5e-3)
    eol = 0.5 * (1 - 0.1 * math.log10(60.0))
    assert loop.ctr_eol == pytest.approx(eol)
    assert loop.ctr_margin == pytest.approx(eol * 8.3e-3 / 2e-3 - 1)
    assert loop.loop_ok
    assert any("ASSUMPTION THE USER MUST CONFIRM" in n for n in loop.notes)


def test_opto_loop_flags_missing_current():
    starved = opto_loop(5.0, 2.2e3, 1.2, 2.5, None, ctr_min=0.2, i_c_needed=1e-3, life_h=100_000.0)
    assert starved.ctr_margin < 0 and not starved.loop_ok
    assert starved.i_k < 1e-3 and any("minimum" in n for n in starved.notes)
    dead = opto_loop(3.3, 1e3, 1.2, 2.5, ctr_min=0.5)
    assert dead.i_led == 0.0 and not dead.loop_ok
