"""Capacitor part models: bank current sharing, MLCC capacitance at DC bias, electrolytic heating and life.

Plain functions of SI floats (capacitance [F], resistance [Ω], inductance [H], current [A],
voltage [V], frequency [Hz]); temperatures in °C, life in hours.  Nothing here knows about the
catalog: the caller passes the ratings and curves as numbers and sequences of ``(x, y)`` tuples.

Conditions that fall outside a model's validity are returned as notes (plain strings), never as
warnings, so the pipeline can collect them beside the figures.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from partcheck.stress.waveform import PiecewiseLinear, harmonics_needed

Curve = Sequence[tuple[float, float]]


# --------------------------------------------------------------------------------------------
# Bank current sharing
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class CapacitorModel:
    """One capacitor of a parallel bank, as its series R-L-C equivalent.

    Attributes
    ----------
    ref: designator (e.g. ``"C7"``); only carried through to the result.
    capacitance_f: effective capacitance, after DC bias (see :func:`effective_capacitance`). [F]
    esr_ohm: equivalent series resistance at the switching frequency. [Ω]
    esl_h: equivalent series inductance (0 when unknown). [H]
    """

    ref: str
    capacitance_f: float
    esr_ohm: float
    esl_h: float = 0.0

    def admittance(self, omega: np.ndarray) -> np.ndarray:
        """Complex admittance Y = 1/(ESR + jωESL + 1/(jωC)) at angular frequencies ``omega`` [rad/s]."""
        omega = np.asarray(omega, dtype=float)
        z = self.esr_ohm + 1j * omega * self.esl_h
        if self.capacitance_f > 0.0:
            z = z + 1.0 / (1j * omega * self.capacitance_f)
        else:  # no capacitance left: an open circuit
            return np.zeros_like(omega, dtype=complex)
        return 1.0 / z


@dataclass(frozen=True)
class BankSplit:
    """Result of :func:`split_bank_current`.

    Attributes
    ----------
    refs: designators, in the order of the input.
    i_rms: RMS current of each capacitor (AC only; a capacitor carries no DC). [A]
    share: each capacitor's fraction of the bank's AC power-equivalent current,
        (i_rms / i_bank_ac_rms)² — sums to about 1 only when the currents are in phase.
    i_bank_ac_rms: exact AC RMS of the bank current (from the waveform, not the harmonics). [A]
    v_rms: RMS ripple voltage across the bank (capacitance + ESR + ESL, harmonics 1..n). [V]
    v_pp: peak-to-peak ripple voltage across the bank from the capacitances and ESRs, synthesised
        from harmonics 1..n with Lanczos σ-factors; the ESL spike at current steps is left out
        (it depends on the real edge rate, which a piecewise-linear jump does not have). [V]
    n_harmonics: harmonics used.
    captured: fraction of the AC RMS current captured by those harmonics (Parseval). [-]
    notes: conditions the caller should report.
    """

    refs: tuple[str, ...]
    i_rms: np.ndarray
    share: np.ndarray
    i_bank_ac_rms: float
    v_rms: float
    v_pp: float
    n_harmonics: int
    captured: float
    notes: tuple[str, ...] = field(default_factory=tuple)

    def as_dict(self) -> dict[str, float]:
        """Per-capacitor RMS current keyed by designator. [A]"""
        return {r: float(i) for r, i in zip(self.refs, self.i_rms)}


def _lanczos_sigma(n: int) -> np.ndarray:
    k = np.arange(1, n + 1, dtype=float)
    return np.sinc(k / (n + 1))


def split_bank_current(
    wave: PiecewiseLinear,
    caps: Sequence[CapacitorModel],
    *,
    n_harmonics: int | None = None,
    rel_tol: float = 1e-3,
) -> BankSplit:
    """Split a bank's ripple current among parallel capacitors by their complex admittance.

    The bank current's Fourier coefficients c_k (k = 1..n) are divided among the capacitors in
    proportion to Y_i(kω0) = 1/(ESR_i + jkω0·ESL_i + 1/(jkω0·C_i)); capacitor i's RMS current is
    sqrt(Σ_k 2·|c_k·Y_i/ΣY|²).  The bank voltage is c_k/ΣY.  The DC part of ``wave`` (the load
    current) is not carried by the capacitors and is ignored.

    Parameters
    ----------
    wave: one period of the current into the bank (or of the winding current feeding it: its
        mean is dropped). [A]
    caps: the parallel capacitors, with effective capacitance. [F, Ω, H]
    n_harmonics: harmonic count; by default the smallest count that captures the AC RMS current
        to within ``rel_tol`` (:func:`~partcheck.stress.waveform.harmonics_needed`).
    rel_tol: convergence target for the captured AC RMS. [-]

    Returns
    -------
    BankSplit

    References
    ----------
    Superposition of harmonic phasors on a linear network and Parseval's theorem (any circuit
    text, e.g. Erickson & Maksimovic, *Fundamentals of Power Electronics*, 2nd ed., ch. 8 on
    impedances, from memory); Lanczos σ-factors against Gibbs overshoot (Lanczos, *Applied
    Analysis*, 1956, from memory).  Checked against ngspice (tests/reference/bank/).
    """
    if not caps:
        raise ValueError("a capacitor bank needs at least one capacitor")
    notes: list[str] = []
    n = int(n_harmonics) if n_harmonics is not None else harmonics_needed(wave, rel_tol)
    n = max(n, 1)
    c = wave.fourier(n)
    omega = 2.0 * np.pi * np.arange(1, n + 1) / wave.period

    y = np.array([cap.admittance(omega) for cap in caps])  # (caps, n)
    y_total = y.sum(axis=0)
    if np.any(y_total == 0):
        raise ValueError("the bank has no capacitance left at some harmonic (every capacitor open)")
    i_k = c[None, :] * y / y_total[None, :]
    i_rms = np.sqrt(2.0 * np.sum(np.abs(i_k) ** 2, axis=1))

    exact = wave.ac_rms()
    captured_rms = float(np.sqrt(2.0 * np.sum(np.abs(c) ** 2)))
    captured = captured_rms / exact if exact > 0 else 1.0
    if exact > 0 and captured < 1.0 - rel_tol:
        notes.append(
            f"harmonics 1..{n} capture {100 * captured:.2f} % of the bank's AC RMS current; "
            "the per-capacitor currents are low by about that much"
        )

    v_k = c / y_total
    v_rms = float(np.sqrt(2.0 * np.sum(np.abs(v_k) ** 2)))

    # Peak-to-peak from C and ESR only (ESL spike at ideal steps excluded, see BankSplit).
    y_noesl = np.array(
        [CapacitorModel(cp.ref, cp.capacitance_f, cp.esr_ohm, 0.0).admittance(omega) for cp in caps]
    ).sum(axis=0)
    v_k_noesl = c / y_noesl * _lanczos_sigma(n)
    n_points = max(8 * n, 1024)
    spectrum = np.zeros(n_points // 2 + 1, dtype=complex)
    spectrum[1 : n + 1] = v_k_noesl * n_points
    v_t = np.fft.irfft(spectrum, n_points)
    v_pp = float(v_t.max() - v_t.min())

    if any(cp.esl_h > 0 for cp in caps) and np.any(np.diff(wave.t) == 0):
        notes.append("the current waveform has ideal steps: the ESL spike is not in v_pp")

    share = (i_rms / exact) ** 2 if exact > 0 else np.zeros(len(caps))
    return BankSplit(
        refs=tuple(cp.ref for cp in caps),
        i_rms=i_rms,
        share=share,
        i_bank_ac_rms=exact,
        v_rms=v_rms,
        v_pp=v_pp,
        n_harmonics=n,
        captured=captured,
        notes=tuple(notes),
    )


# --------------------------------------------------------------------------------------------
# MLCC capacitance at DC bias
# --------------------------------------------------------------------------------------------

#: Generic class II DC-bias model c/c0 = 1/(1 + a·(V/Vr)^b), constants (a, b) by dielectric.
#: ``common practice``, chosen here, not taken from any standard: no standard gives a generic
#: figure (derating-standards.md §6).  The X7R constants keep 50 % at rated voltage and 80 % at
#: half rated voltage, inside the 30-80 % loss at rated voltage widely reported for small-case
#: parts (from memory) and below the 75 % floor MIL-PRF-123 allows a BX part at rated voltage
#: (Table V, read), so a commercial part is never assumed better than a qualified one.
CLASS2_BIAS_MODEL: dict[str, tuple[float, float]] = {
    "X7R": (1.0, 2.0),
    "X8R": (1.0, 2.0),
    "X6S": (1.5, 2.0),
    "X7S": (1.5, 2.0),
    "X7T": (1.5, 2.0),
    "X5R": (1.5, 2.0),
    "X6T": (1.5, 2.0),
    "Y5V": (4.0, 1.5),
    "Z5U": (4.0, 1.5),
}
#: Class I dielectrics (EIA RS-198 class I code; derating-standards.md §6): no DC-bias loss.
CLASS1_DIELECTRICS = frozenset({"C0G", "NP0", "NPO", "U2J", "P2H", "R2H", "S2H", "T2H", "U2K", "SL"})

#: Normative anchor: MIL-PRF-123D Table V, capacitance change at rated voltage over −55…+125 °C
#: (derating-standards.md §4, READ).  BX may fall to 0.75 × nominal, BR to 0.60 ×.
MIL_PRF_123_FLOOR_AT_RATED_V = {"BX": 0.75, "BR": 0.60}


def effective_capacitance(
    c_nom: float,
    v_dc: float,
    v_rated: float,
    dielectric: str | None,
    curve: Curve | None = None,
) -> tuple[float, str, bool]:
    """Capacitance left at a DC bias.

    With a catalog curve (points of bias [V] → capacitance/nominal [-]) the fraction is linearly
    interpolated (held flat beyond the ends, with a note).  Without one, class I dielectrics keep
    their nominal capacitance and class II dielectrics follow the generic model
    c/c0 = 1/(1 + a·(V/Vr)^b) with the constants of :data:`CLASS2_BIAS_MODEL`; an unknown class II
    code takes the most pessimistic constants (Y5V).

    Parameters
    ----------
    c_nom: nominal capacitance (at 0 V). [F]
    v_dc: DC bias across the part (use the largest DC + half ripple at the corner). [V]
    v_rated: rated voltage. [V]
    dielectric: EIA code such as ``"X7R"`` or ``"C0G"``; ``None`` for non-ceramic parts.
    curve: catalog ``dc_bias`` curve, ``((v, fraction), ...)``.

    Returns
    -------
    (c_eff [F], source_note, is_approximation)

    References
    ----------
    EIA RS-198 class codes and MIL-PRF-123D Table V BX/BR limits (derating-standards.md §4, §6,
    READ).  The generic class II model and its constants are ``common practice`` chosen for this
    project; no standard gives a generic DC-bias figure (derating-standards.md §6), so the result
    is an approximation to be replaced by a catalog curve.
    """
    if c_nom < 0 or v_rated <= 0:
        raise ValueError("c_nom must be ≥ 0 and v_rated > 0")
    v = abs(float(v_dc))
    over = f"; bias {v:g} V exceeds the rated {v_rated:g} V" if v > v_rated else ""
    if curve:
        pts = sorted((float(x), float(y)) for x, y in curve)
        xs = np.array([p[0] for p in pts])
        ys = np.array([p[1] for p in pts])
        frac = float(np.interp(v, xs, ys))
        note = "catalog DC-bias curve, linear interpolation"
        approx = False
        if v > xs[-1] or v < xs[0]:
            note += f"; {v:g} V is outside the curve ({xs[0]:g}..{xs[-1]:g} V), end value held"
            approx = True
        return c_nom * frac, note + over, approx
    code = (dielectric or "").strip().upper()
    if not code:
        return c_nom, "no dielectric given: no DC-bias loss modelled" + over, True
    if code in CLASS1_DIELECTRICS:
        return c_nom, f"{code} is class I: no DC-bias loss (RS-198 class I)" + over, False
    a, b = CLASS2_BIAS_MODEL.get(code, CLASS2_BIAS_MODEL["Y5V"])
    known = code in CLASS2_BIAS_MODEL
    frac = 1.0 / (1.0 + a * (v / v_rated) ** b)
    note = (
        f"generic class II model c/c0 = 1/(1 + {a:g}·(V/Vr)^{b:g}) for "
        f"{code if known else code + ' (unknown code, Y5V constants)'}: approximation, common practice "
        "(no standard gives a generic figure; MIL-PRF-123 BX allows −25 % at rated voltage); "
        "add a dc_bias curve to the catalog"
    )
    return c_nom * frac, note + over, True


# --------------------------------------------------------------------------------------------
# Electrolytic and polymer: ripple rating, hot spot, life
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class RippleRating:
    """Ripple-current rating corrected for frequency and temperature.

    Attributes
    ----------
    i_allowed: rated ripple current × frequency multiplier × temperature multiplier. [A]
    freq_multiplier, temp_multiplier: the multipliers used. [-]
    notes: missing curves, extrapolation.
    """

    i_allowed: float
    freq_multiplier: float
    temp_multiplier: float
    notes: tuple[str, ...] = ()

    def __float__(self) -> float:
        return self.i_allowed


def _curve_value(curve: Curve, x: float, name: str, unit: str, notes: list[str]) -> float:
    pts = sorted((float(a), float(b)) for a, b in curve)
    xs = np.array([p[0] for p in pts])
    ys = np.array([p[1] for p in pts])
    if x < xs[0] or x > xs[-1]:
        notes.append(
            f"{name} {x:g} {unit} is outside the catalog curve ({xs[0]:g}..{xs[-1]:g} {unit}); end value held"
        )
    return float(np.interp(x, xs, ys))


def ripple_rating(
    i_rated: float,
    f: float,
    t: float,
    freq_curve: Curve | None = None,
    temp_curve: Curve | None = None,
    *,
    f_rated: float = 100e3,
    t_rated: float = 105.0,
) -> RippleRating:
    """Ripple-current rating at frequency ``f`` and temperature ``t``.

    Parameters
    ----------
    i_rated: catalog ripple-current rating at ``f_rated`` and ``t_rated``. [A RMS]
    f: ripple frequency (the switching frequency). [Hz]
    t: ambient (or case) temperature the rating is needed at. [°C]
    freq_curve: catalog ``ripple_freq`` curve, ``((Hz, multiplier), ...)``.
    temp_curve: catalog ``ripple_temp`` curve, ``((°C, multiplier), ...)``.
    f_rated: frequency the rating is quoted at (100 kHz for switching-grade parts). [Hz]
    t_rated: temperature the rating is quoted at (normally the upper category temperature). [°C]

    References
    ----------
    Frequency and temperature multipliers are series-specific catalog data; no standard defines
    them (derating-standards.md §5).  Multiplier 1 when a curve is missing: ``common practice``.
    """
    notes: list[str] = []
    if freq_curve:
        fm = _curve_value(freq_curve, f, "frequency", "Hz", notes)
    else:
        fm = 1.0
        if not math.isclose(f, f_rated, rel_tol=0.05):
            notes.append(
                f"no ripple_freq curve: multiplier 1 assumed at {f:g} Hz (rating quoted at {f_rated:g} Hz)"
            )
    if temp_curve:
        tm = _curve_value(temp_curve, t, "temperature", "°C", notes)
    else:
        tm = 1.0
        if t > t_rated:
            notes.append(
                f"{t:g} °C is above the rated {t_rated:g} °C and no ripple_temp curve is given: "
                "the rating does not apply"
            )
        else:
            notes.append(
                "no ripple_temp curve: multiplier 1 assumed (conservative below the rated temperature)"
            )
    return RippleRating(i_rated * fm * tm, fm, tm, tuple(notes))


#: Case-to-ambient thermal resistance used when neither the rated core rise nor Rth is known:
#: about a 10 mm × 16 mm radial can in still air, 1/(h·A) with h ≈ 12 W/(m²·K) and A ≈ 6.6 cm²
#: (``common practice``, from memory).  Small SMD cans run hotter: give rth_k_per_w for them.
DEFAULT_CAP_RTH_K_PER_W = 125.0


def _check_hot_spot_inputs(i_rms: float, esr: float, ripple_rise_k: float | None, i_rated: float | None,
                           rth_k_per_w: float | None, freq_multiplier: float) -> None:
    if not (math.isfinite(freq_multiplier) and freq_multiplier > 0.0):
        raise ValueError(f"freq_multiplier must be a finite number above zero, got {freq_multiplier!r}")
    if not (math.isfinite(i_rms) and i_rms >= 0.0):
        raise ValueError(f"i_rms must be a finite RMS current >= 0, got {i_rms!r}")
    if not (math.isfinite(esr) and esr >= 0.0):
        raise ValueError(f"esr must be a finite resistance >= 0, got {esr!r}")
    if ripple_rise_k is not None and not (math.isfinite(ripple_rise_k) and ripple_rise_k >= 0.0):
        raise ValueError(f"ripple_rise_k must be a finite rise >= 0 K, got {ripple_rise_k!r}")
    if i_rated is not None and not (math.isfinite(i_rated) and i_rated >= 0.0):
        raise ValueError(f"i_rated must be a finite RMS current >= 0, got {i_rated!r}")
    if rth_k_per_w is not None and not (math.isfinite(rth_k_per_w) and rth_k_per_w >= 0.0):
        raise ValueError(f"rth_k_per_w must be a finite thermal resistance >= 0, got {rth_k_per_w!r}")


def hot_spot_temperature(
    t_ambient_c: float,
    i_rms: float,
    esr: float,
    *,
    ripple_rise_k: float | None = None,
    i_rated: float | None = None,
    rth_k_per_w: float | None = None,
    freq_multiplier: float = 1.0,
) -> float:
    """Core (hot-spot) temperature of an electrolytic or polymer capacitor carrying ripple.

    Thermal model, in order of preference:

    1. rated core rise known: ΔT = ΔT0·(I/(I0·Kf))², ΔT0 the catalog's core rise at the rated
       ripple I0, quoted at the rating frequency, and Kf the maker's frequency multiplier at the
       frequency the part runs at.  I0·Kf is the current that gives the same core rise ΔT0 at that
       frequency (ESR falls with frequency, so more current gives the same I²·ESR), so the rise
       scales with the square of the current relative to the rating *at the same frequency*.  The
       temperature multiplier does not enter: it expresses the larger current allowed at a lower
       ambient because a larger rise is then allowed, not a smaller rise per ampere;
    2. otherwise: ΔT = I²·ESR·Rth with ``rth_k_per_w`` or :data:`DEFAULT_CAP_RTH_K_PER_W` and
       ``esr`` as given.  ``freq_multiplier`` is not used here: the catalog ESR is taken at the
       rating frequency, and ESR falls with frequency, so above it this rise is conservative.

    Parameters
    ----------
    t_ambient_c: ambient temperature around the part. [°C]
    i_rms: ripple current the part carries, at the switching frequency. [A RMS]
    esr: ESR for the fallback model (the catalog ESR, at the rating frequency). [Ω]
    ripple_rise_k: rated core temperature rise at ``i_rated``. [K]
    i_rated: ripple current at which ``ripple_rise_k`` is specified, at the rating frequency. [A RMS]
    rth_k_per_w: core-to-ambient thermal resistance. [K/W]
    freq_multiplier: the maker's ripple-current frequency multiplier Kf at the frequency ``i_rms``
        flows at, relative to the frequency ``i_rated`` is quoted at
        (:attr:`RippleRating.freq_multiplier`); 1 at the rating frequency. [-]

    Returns
    -------
    Hot-spot temperature. [°C]

    Raises
    ------
    ValueError: ``freq_multiplier`` not a finite number above zero; a negative or non-finite
        current, ESR, rise or thermal resistance.

    References
    ----------
    P = I²·ESR, ΔT = P·Rth and ΔT = ΔT0·(I/I0)²: derating-standards.md §5 (standard physics and
    ``common practice``, from memory).  Frequency multiplier as the current of equal core rise
    because ESR is lower at higher frequency, and the temperature multiplier as the larger rise
    allowed at a lower ambient: BHC Components, "Aluminium electrolytic capacitors — electrical
    characteristics", section Ripple current (bhc.co.uk/electric03.htm, read); the same method in
    Cornell Dubilier, *Aluminum Electrolytic Capacitor Application Guide*, sections Ripple
    Current and Cooling and Thermal Resistance (from memory).
    """
    _check_hot_spot_inputs(i_rms, esr, ripple_rise_k, i_rated, rth_k_per_w, freq_multiplier)
    if ripple_rise_k is not None and i_rated:
        return float(t_ambient_c + ripple_rise_k * (i_rms / (i_rated * freq_multiplier)) ** 2)
    rth = DEFAULT_CAP_RTH_K_PER_W if rth_k_per_w is None else rth_k_per_w
    return float(t_ambient_c + i_rms * i_rms * esr * rth)


def hot_spot_model(ripple_rise_k: float | None, i_rated: float | None, rth_k_per_w: float | None, *,
                   freq_multiplier: float = 1.0) -> str:
    """One-line statement of the thermal model :func:`hot_spot_temperature` uses for these inputs.

    ``freq_multiplier`` (Kf [-]) is shown in the rated-rise model; the ESR model states that the
    catalog ESR (at the rating frequency) is used, which is conservative above that frequency.

    References
    ----------
    As :func:`hot_spot_temperature`.
    """
    if not (math.isfinite(freq_multiplier) and freq_multiplier > 0.0):
        raise ValueError(f"freq_multiplier must be a finite number above zero, got {freq_multiplier!r}")
    if ripple_rise_k is not None and i_rated:
        return (f"ΔT = ΔT0·(I/(I0·Kf))² with ΔT0 = {ripple_rise_k:g} K at I0 = {i_rated:g} A (catalog) and "
                f"frequency multiplier Kf = {freq_multiplier:.3g}")
    esr_text = "catalog ESR at the rating frequency (conservative above it)"
    if rth_k_per_w is None:
        return f"ΔT = I²·ESR·Rth with the {esr_text} and the default Rth = {DEFAULT_CAP_RTH_K_PER_W:g} K/W (assumed)"
    return f"ΔT = I²·ESR·Rth with the {esr_text} and Rth = {rth_k_per_w:g} K/W"


def electrolytic_life(l0_h: float, t0_c: float, t_hot_c: float) -> float:
    """Expected life by the 10-degree rule, L = L0·2^((T0 − T)/10).

    Parameters
    ----------
    l0_h: rated (load) life at ``t0_c``. [h]
    t0_c: temperature the life is rated at (upper category temperature). [°C]
    t_hot_c: core temperature in use, ambient plus ripple self-heating
        (:func:`hot_spot_temperature`). [°C]

    Returns
    -------
    Expected life. [h]  Above ``t0_c`` the part is outside its rating: the caller must flag it.

    References
    ----------
    Wang & Blaabjerg, "Reliability of Capacitors for DC-Link Applications in Power Electronic
    Converters — An Overview", IEEE Trans. Ind. Appl. 50(5):3569–3578, 2014 (equation from
    memory); derating-standards.md §5.
    """
    return float(l0_h * 2.0 ** ((t0_c - t_hot_c) / 10.0))


def miner_life(lives_h: Sequence[float], fractions: Sequence[float]) -> float:
    """Life over a mission profile by the linear damage rule, L = 1 / Σ(f_i / L_i).

    Each mission point i spends the fraction f_i of the operating time at a condition where the
    part would last L_i; every hour there uses up 1/L_i of the life, and the part wears out when
    the used-up fractions add to 1.

    Parameters
    ----------
    lives_h: life at each mission point (e.g. :func:`electrolytic_life` at that point's hot
        spot); ``math.inf`` for a point that causes no wear. [h]
    fractions: fraction of the operating time at each point, each in [0, 1], summing to 1
        within 1e-6. [-]

    Returns
    -------
    Life over the mission. [h]  A point with zero life and a time fraction above zero gives 0; a
    point with infinite life (or zero time) contributes nothing; all points infinite give
    ``math.inf``.

    Raises
    ------
    ValueError: the sequences differ in length or are empty; a fraction outside [0, 1] or not a
        number; the fractions do not sum to 1; a negative or NaN life.

    References
    ----------
    M. A. Miner, "Cumulative damage in fatigue", J. Appl. Mech. 12 (1945) A159–A164 (the
    Palmgren–Miner linear damage rule, from memory); its use for capacitor wear-out over a
    mission profile is ``common practice`` (from memory).
    """
    lives = [float(x) for x in lives_h]
    fracs = [float(x) for x in fractions]
    if len(lives) != len(fracs):
        raise ValueError(f"{len(lives)} lives but {len(fracs)} time fractions; expected one fraction per life")
    if not lives:
        raise ValueError("no mission points; expected at least one life and time fraction")
    for i, (life, f) in enumerate(zip(lives, fracs)):
        if not (f >= 0.0 and f <= 1.0):  # also refuses NaN
            raise ValueError(f"time fraction {i} is {f!r}; expected a fraction in [0, 1]")
        if not life >= 0.0:  # also refuses NaN
            raise ValueError(f"life {i} is {life!r}; expected a life >= 0 h (math.inf for no wear)")
    total = math.fsum(fracs)
    if abs(total - 1.0) > 1e-6:
        raise ValueError(f"the time fractions sum to {total:.9g}; expected 1")
    damage = 0.0
    for life, f in zip(lives, fracs):
        if f == 0.0 or math.isinf(life):
            continue
        if life == 0.0:
            return 0.0
        damage += f / life
    return math.inf if damage == 0.0 else float(1.0 / damage)


def polymer_life(l0_h: float, t0_c: float, t_hot_c: float) -> float:
    """Expected life of a conductive-polymer aluminium capacitor by the 20-degree rule,
    L = L0·10^((T0 − T)/20).

    Parameters
    ----------
    l0_h: rated life at ``t0_c``. [h]
    t0_c: temperature the life is rated at. [°C]
    t_hot_c: hot-spot temperature in use. [°C]

    Returns
    -------
    Expected life. [h]

    References
    ----------
    Polymer aluminium capacitor makers' life formula (ten times the life per 20 K cooler),
    ``common practice``, from memory; the solid polymer has no electrolyte to dry out, so its
    life grows more slowly with cooling than a wet electrolytic's 10-degree rule.
    """
    return float(l0_h * 10.0 ** ((t0_c - t_hot_c) / 20.0))
