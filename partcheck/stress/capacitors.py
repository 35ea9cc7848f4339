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


def hot_spot_temperature(
    t_ambient_c: float,
    i_rms: float,
    esr: float,
    *,
    ripple_rise_k: float | None = None,
    i_rated: float | None = None,
    rth_k_per_w: float | None = None,
) -> float:
    """Core (hot-spot) temperature of an electrolytic or polymer capacitor carrying ripple.

    Thermal model, in order of preference:

    1. rated core rise known: ΔT = ΔT0·(I/I0)², ΔT0 the catalog's core rise at rated ripple I0;
    2. otherwise: ΔT = I²·ESR·Rth with ``rth_k_per_w`` or :data:`DEFAULT_CAP_RTH_K_PER_W`.

    Parameters
    ----------
    t_ambient_c: ambient temperature around the part. [°C]
    i_rms: ripple current the part carries. [A RMS]
    esr: ESR at the ripple frequency and temperature. [Ω]
    ripple_rise_k: rated core temperature rise at ``i_rated``. [K]
    i_rated: ripple current at which ``ripple_rise_k`` is specified. [A RMS]
    rth_k_per_w: core-to-ambient thermal resistance. [K/W]

    Returns
    -------
    Hot-spot temperature. [°C]

    References
    ----------
    P = I²·ESR, ΔT = P·Rth and ΔT = ΔT0·(I/I0)²: derating-standards.md §5 (standard physics and
    ``common practice``, from memory).
    """
    if ripple_rise_k is not None and i_rated:
        return float(t_ambient_c + ripple_rise_k * (i_rms / i_rated) ** 2)
    rth = DEFAULT_CAP_RTH_K_PER_W if rth_k_per_w is None else rth_k_per_w
    return float(t_ambient_c + i_rms * i_rms * esr * rth)


def hot_spot_model(ripple_rise_k: float | None, i_rated: float | None, rth_k_per_w: float | None) -> str:
    """One-line statement of the thermal model :func:`hot_spot_temperature` uses for these inputs."""
    if ripple_rise_k is not None and i_rated:
        return f"ΔT = ΔT0·(I/I0)² with ΔT0 = {ripple_rise_k:g} K at I0 = {i_rated:g} A (catalog)"
    if rth_k_per_w is None:
        return f"ΔT = I²·ESR·Rth with the default Rth = {DEFAULT_CAP_RTH_K_PER_W:g} K/W (assumed)"
    return f"ΔT = I²·ESR·Rth with Rth = {rth_k_per_w:g} K/W"


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
