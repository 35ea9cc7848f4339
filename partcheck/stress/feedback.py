"""Feedback-path part models: primary-side sensing divider, PSR output spread, optocoupler loop.

Plain functions of SI floats (voltages [V], currents [A], resistances [Ω], temperatures in °C or
differences in K, life in hours).  Results carry notes; nothing here raises for a design that
merely lacks margin — the rules decide that.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

#: Forward-voltage temperature coefficient of a rectifier, −1 to −2 mV/K for Si PN and Schottky
#: parts (flyback-equations.md §6 [M], from memory).
DEFAULT_DVF_DT_V_PER_K = -1.5e-3
#: Rise of the forward voltage per decade of current, 60-120 mV/decade (flyback-equations.md §6
#: [M], from memory).
DEFAULT_VF_SLOPE_V_PER_DECADE = 0.08
#: Output accuracy primary-side regulation typically achieves, ± percent (flyback-equations.md
#: §6 [CP], common practice).
TYPICAL_PSR_ACCURACY_PCT = (1.0, 1.5)

#: Optocoupler CTR degradation model, CTR(t) = CTR0·(1 − d·log10(t/t0)) for t > t0.
#: ASSUMPTION THE USER MUST CONFIRM: the defaults (10 % loss per decade of operating hours after
#: the first 1000 h) are chosen for this project, not taken from a standard; ECSS-Q-TM-30-12A
#: (end-of-life parameter drifts; title read only, derating-standards.md §0) is where a
#: qualified figure would come from.  The LED current and temperature accelerate the loss.
DEFAULT_CTR_LOSS_PER_DECADE = 0.10
DEFAULT_CTR_T0_H = 1000.0
#: Minimum cathode current for a shunt reference to regulate (``common practice``, about 1 mA
#: for the usual 2.5 V adjustable shunt references; from memory).  Use the part's own value.
DEFAULT_SHUNT_I_K_MIN_A = 1.0e-3


@dataclass(frozen=True)
class DividerStress:
    """Sensing-divider operating point: ``v_sense`` [V] at the midpoint, ``i`` [A RMS] through it,
    ``p_top``/``p_bottom`` [W] and, where ratings were given, their utilisation [-]."""

    v_sense: float
    i: float
    p_top: float
    p_bottom: float
    util_top: float | None
    util_bottom: float | None
    notes: tuple[str, ...] = ()


def psr_divider(
    v_aux: float,
    r_top: float,
    r_bottom: float,
    *,
    v_aux_rms: float | None = None,
    p_rated_top: float | None = None,
    p_rated_bottom: float | None = None,
) -> DividerStress:
    """Auxiliary-winding sensing divider of a primary-side-regulated flyback.

    ``v_sense = v_aux·R_bottom/(R_top + R_bottom)`` during the demagnetising plateau.  The power
    uses the RMS winding voltage ``v_aux_rms`` (plateau and the negative swing during the on
    time); without it the plateau voltage is treated as continuous, which over-estimates.

    Parameters
    ----------
    v_aux: auxiliary winding voltage on the plateau, (Na/Ns)·(Vo + Vf). [V]
    r_top, r_bottom: divider resistors. [Ω]
    v_aux_rms: RMS of the whole auxiliary waveform. [V]
    p_rated_top, p_rated_bottom: power ratings at the board temperature. [W]

    References
    ----------
    Voltage divider and P = V²/R (``common practice``); the plateau voltage: flyback-equations.md
    §6 [M].
    """
    if r_top <= 0 or r_bottom <= 0:
        raise ValueError("divider resistors must be > 0")
    notes: list[str] = []
    r_sum = r_top + r_bottom
    v_sense = v_aux * r_bottom / r_sum
    if v_aux_rms is None:
        v_aux_rms = abs(v_aux)
        notes.append("aux RMS voltage not given: plateau voltage taken as continuous (over-estimate)")
    i = v_aux_rms / r_sum
    p_top, p_bottom = i * i * r_top, i * i * r_bottom
    util_top = p_top / p_rated_top if p_rated_top else None
    util_bottom = p_bottom / p_rated_bottom if p_rated_bottom else None
    return DividerStress(v_sense, i, p_top, p_bottom, util_top, util_bottom, tuple(notes))


@dataclass(frozen=True)
class PsrSpread:
    """Estimated output-voltage spread of primary-side regulation from the rectifier's Vf.

    ``dv_temp``/``dv_load`` [V] are the two contributions, ``spread_v`` [V] their sum (full
    width, worst-case linear sum), ``spread_pct`` [%] the ± half width relative to vout, beside
    ``typical_pct`` (±1-1.5 %, common practice) and the design's ``target_pct`` if given.
    ``meets_target`` is None without a target."""

    dv_temp: float
    dv_load: float
    spread_v: float
    spread_pct: float
    typical_pct: tuple[float, float]
    target_pct: float | None
    meets_target: bool | None
    notes: tuple[str, ...] = ()


def psr_output_spread(
    vout: float,
    vf_nom: float,
    t_range_k: float,
    i_min: float,
    i_max: float,
    *,
    dvf_dt_v_per_k: float = DEFAULT_DVF_DT_V_PER_K,
    vf_load_slope_v_per_decade: float = DEFAULT_VF_SLOPE_V_PER_DECADE,
    target_pct: float | None = None,
    compensated_fraction: float = 0.0,
) -> PsrSpread:
    """Output spread a PSR controller cannot see: the rectifier drop's change with Tj and load.

    The controller regulates Vo + Vf(I_knee, Tj) (flyback-equations.md §6), so any change of Vf
    appears at the output: ΔV_T = |dVf/dT|·ΔT over the junction-temperature range and
    ΔV_I = slope·log10(i_max/i_min), taking the knee current proportional to the load current
    (ASSUMPTION).  ``compensated_fraction`` is the share the controller's own cable/temperature
    compensation removes (0 by default).

    Parameters
    ----------
    vout: nominal output voltage [V]; vf_nom: rectifier forward voltage at nominal load [V].
    t_range_k: rectifier junction-temperature range over the corners. [K]
    i_min, i_max: lightest and heaviest load current (``i_min`` > 0: PSR needs a minimum load). [A]
    dvf_dt_v_per_k: forward-voltage temperature coefficient (default −1.5 mV/K, from memory). [V/K]
    vf_load_slope_v_per_decade: Vf rise per decade of current (default 80 mV, from memory). [V]
    target_pct: the design's regulation target, ± percent.

    References
    ----------
    flyback-equations.md §6: Vf temperature coefficient and per-decade slope [M] (from memory);
    typical PSR accuracy ±1-1.5 % [CP] (common practice).
    """
    if i_min <= 0 or i_max < i_min:
        raise ValueError("need 0 < i_min ≤ i_max (primary-side regulation needs a minimum load)")
    notes: list[str] = []
    keep = 1.0 - compensated_fraction
    dv_temp = abs(dvf_dt_v_per_k) * abs(t_range_k) * keep
    dv_load = abs(vf_load_slope_v_per_decade) * math.log10(i_max / i_min) * keep
    spread = dv_temp + dv_load
    pct = 100.0 * spread / 2.0 / vout
    if dv_temp + dv_load > vf_nom:
        notes.append("the estimated Vf change exceeds the nominal Vf: check the coefficients")
    notes.append("knee current taken proportional to the load current (assumption)")
    meets = None if target_pct is None else pct <= target_pct
    return PsrSpread(dv_temp, dv_load, spread, pct, TYPICAL_PSR_ACCURACY_PCT, target_pct, meets, tuple(notes))


def ctr_after(
    ctr0: float,
    life_h: float,
    *,
    loss_per_decade: float = DEFAULT_CTR_LOSS_PER_DECADE,
    t0_h: float = DEFAULT_CTR_T0_H,
) -> float:
    """Current-transfer ratio after ``life_h`` hours: CTR0·(1 − d·log10(t/t0)) for t > t0, ≥ 0.

    Parameters: ctr0 — initial CTR (fraction, 1.0 = 100 %) [-]; life_h [h]; loss_per_decade d [-];
    t0_h [h].

    References: ASSUMPTION THE USER MUST CONFIRM (see :data:`DEFAULT_CTR_LOSS_PER_DECADE`);
    qualified drift figures: ECSS-Q-TM-30-12A (title read only).
    """
    if life_h <= t0_h:
        return ctr0
    return max(0.0, ctr0 * (1.0 - loss_per_decade * math.log10(life_h / t0_h)))


@dataclass(frozen=True)
class OptoLoop:
    """Optocoupler feedback operating point.

    ``i_led`` [A] LED forward current; ``i_bias`` [A] through the bias resistor across the LED;
    ``i_k`` [A] and ``v_ka`` [V] shunt-reference cathode current and voltage; ``ctr_eol`` [-] the
    minimum CTR after the required life; ``i_c_available`` [A] = ctr_eol·i_led; ``ctr_margin``
    [-] = i_c_available/i_c_needed − 1 (None without i_c_needed); ``loop_ok`` whether the loop
    still has the current it needs and the reference its minimum cathode current."""

    i_led: float
    i_bias: float
    i_k: float
    v_ka: float
    ctr_eol: float
    i_c_available: float
    ctr_margin: float | None
    loop_ok: bool
    notes: tuple[str, ...] = ()


def opto_loop(
    vout: float,
    r_led: float,
    v_led_f: float,
    v_ka: float,
    r_bias: float | None = None,
    *,
    ctr_min: float,
    i_c_needed: float | None = None,
    life_h: float = 0.0,
    loss_per_decade: float = DEFAULT_CTR_LOSS_PER_DECADE,
    t0_h: float = DEFAULT_CTR_T0_H,
    i_k_min: float = DEFAULT_SHUNT_I_K_MIN_A,
    v_ref: float | None = None,
) -> OptoLoop:
    """LED current, shunt-reference cathode current and CTR margin of an optocoupler loop.

    I_LED = (Vout − V_F,LED − V_KA)/R_LED; the bias resistor across the LED adds V_F,LED/R_bias
    to the cathode current, I_K = I_LED + I_bias.  Use the cathode voltage at which the loop
    demands the most LED current (the reference's lowest V_KA, at least its reference voltage).
    After ``life_h`` the minimum CTR falls to :func:`ctr_after`; the loop still works if
    CTR_eol·I_LED ≥ the collector current the controller's feedback pin needs.

    Parameters
    ----------
    vout: output voltage feeding the LED resistor [V]; r_led [Ω]; v_led_f: LED forward voltage [V];
    v_ka: shunt-reference cathode-anode voltage [V]; r_bias: resistor across the LED [Ω];
    ctr_min: minimum initial CTR (fraction) [-]; i_c_needed: collector current needed [A];
    life_h: required life [h]; i_k_min: reference's minimum cathode current [A];
    v_ref: reference voltage, to check V_KA ≥ V_ref [V].

    References
    ----------
    Kirchhoff's laws (``common practice``); CTR degradation: ASSUMPTION THE USER MUST CONFIRM
    (defaults stated at :data:`DEFAULT_CTR_LOSS_PER_DECADE`; ECSS-Q-TM-30-12A names the drift,
    title read only).
    """
    if r_led <= 0:
        raise ValueError("r_led must be > 0")
    notes: list[str] = []
    i_led = (vout - v_led_f - v_ka) / r_led
    if i_led <= 0:
        notes.append("no LED current: Vout does not exceed V_F,LED + V_KA")
        i_led = 0.0
    i_bias = v_led_f / r_bias if r_bias else 0.0
    i_k = i_led + i_bias
    ctr_eol = ctr_after(ctr_min, life_h, loss_per_decade=loss_per_decade, t0_h=t0_h)
    notes.append(
        f"CTR after {life_h:g} h = {ctr_eol:.3g} from CTR0 = {ctr_min:.3g} by CTR0·(1 − {loss_per_decade:g}"
        f"·log10(t/{t0_h:g} h)): ASSUMPTION THE USER MUST CONFIRM"
    )
    i_c_avail = ctr_eol * i_led
    margin = None if not i_c_needed else i_c_avail / i_c_needed - 1.0
    ok = True
    if margin is not None and margin < 0:
        ok = False
        notes.append(
            f"end-of-life collector current {i_c_avail * 1e3:.3g} mA is below the "
            f"{i_c_needed * 1e3:.3g} mA the controller needs"
        )
    if i_k < i_k_min:
        ok = False
        notes.append(
            f"cathode current {i_k * 1e3:.3g} mA is below the reference's minimum "
            f"{i_k_min * 1e3:.3g} mA: add or lower the bias resistor"
        )
    if v_ref is not None and v_ka < v_ref:
        ok = False
        notes.append(f"cathode voltage {v_ka:g} V is below the reference voltage {v_ref:g} V")
    return OptoLoop(i_led, i_bias, i_k, v_ka, ctr_eol, i_c_avail, margin, ok, tuple(notes))
