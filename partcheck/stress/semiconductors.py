"""Semiconductor and resistor part models: losses and junction temperatures.

Plain functions of SI floats: currents [A], voltages [V], frequency [Hz], resistance [Ω],
capacitance [F], charge [C], thermal resistance [K/W]; temperatures in °C.  The caller passes
the part's ratings as numbers (no catalog records).  Conditions outside a model's reach come
back as notes; a thermal runaway is a flag on the result, never an exception.

Modes are the engine's operating modes: ``"ccm"``, ``"dcm"``, ``"bcm"`` (boundary / valley
switching; ``"qr"`` is accepted as a synonym).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

#: Rds_on temperature coefficient of silicon MOSFETs for the exponential model
#: Rds(Tj) = Rds25·(1 + α)^(Tj − 25).  ``common practice`` (0.5-0.8 %/K, derating-standards.md §7).
DEFAULT_RDS_ALPHA_PER_K = 0.007
#: Fraction of the total gate charge that is delivered while the drain voltage and current cross
#: (Qgs2 + Qgd, the Miller share).  ``common practice``, from memory: 30-50 % for power MOSFETs.
DEFAULT_MILLER_SHARE = 0.4
#: Share of a diode's catalog forward voltage taken as the threshold Vt0 when Vf(I) is modelled
#: as Vt0 + rd·I from the single catalog point (Vf at vf_current).  ASSUMPTION, stated.
DEFAULT_VT0_SHARE = 0.75
#: Degrees above tj_max at which an iteration that is still climbing is declared a runaway.
RUNAWAY_MARGIN_K = 100.0

_MODES = {"ccm": "ccm", "dcm": "dcm", "bcm": "bcm", "qr": "bcm", "crm": "bcm"}


def _mode(mode) -> str:
    """Mode name from ``"ccm"``/``"CCM"``... or the engine's integer codes (0 CCM, 1 DCM, 2 BCM)."""
    if isinstance(mode, (int, np.integer)) and not isinstance(mode, bool) and 0 <= int(mode) <= 2:
        return ("ccm", "dcm", "bcm")[int(mode)]
    try:
        return _MODES[mode.strip().lower()]
    except (KeyError, AttributeError):
        raise ValueError(f"unknown operating mode {mode!r}: expected one of ccm, dcm, bcm") from None


def rds_on_at(
    tj_c: float, rds25: float, rds125: float | None = None, alpha_per_k: float = DEFAULT_RDS_ALPHA_PER_K
) -> float:
    """On-resistance at junction temperature ``tj_c``.

    With both catalog points, linear in Tj through (25 °C, rds25) and (125 °C, rds125),
    extrapolated beyond them; with rds25 only, Rds25·(1 + α)^(Tj − 25).

    Parameters
    ----------
    tj_c: junction temperature. [°C]
    rds25, rds125: on-resistance at 25 °C and 125 °C. [Ω]
    alpha_per_k: temperature coefficient of the exponential model. [1/K]

    Returns
    -------
    Rds_on(Tj). [Ω]

    References
    ----------
    derating-standards.md §7 (``common practice``, exponential model and α ≈ 0.7 %/K).
    """
    if rds125 is not None:
        return rds25 + (rds125 - rds25) * (tj_c - 25.0) / 100.0
    return rds25 * (1.0 + alpha_per_k) ** (tj_c - 25.0)


@dataclass(frozen=True)
class MosfetThermal:
    """Losses and junction temperature of a switch.  Powers [W], temperatures [°C], times [s].

    ``p_total`` is what heats the junction (conduction + overlap + Coss); the gate-drive power
    ``p_gate`` is dissipated in the driver and gate resistor and is kept apart (it counts in the
    efficiency, not in Tj).  ``runaway`` means no thermal equilibrium exists below
    tj_max + RUNAWAY_MARGIN_K; then ``tj`` is the temperature where the search stopped.
    """

    p_cond: float
    p_sw_off: float
    p_sw_on: float
    p_coss: float
    p_gate: float
    p_total: float
    tj: float
    rds_at_tj: float
    t_sw_off: float
    t_sw_on: float
    v_on: float
    iterations: int
    converged: bool
    runaway: bool
    notes: tuple[str, ...] = ()


def _solve_junction(
    t_amb_c: float, rth: float, power, tol_k: float, ceiling_c: float, max_iter: int
) -> tuple[float, int, bool]:
    """Fixed point Tj = Ta + P(Tj)·Rth; returns (tj, iterations, converged)."""

    def g(t: float) -> float:
        return t_amb_c + power(t) * rth - t

    tj = t_amb_c
    for it in range(1, max_iter + 1):
        tj_new = t_amb_c + power(tj) * rth
        tj = tj_new
        if tj > ceiling_c:
            return tj, it, False
        # Converged when the equilibrium is bracketed within ±tol around the iterate.
        if g(tj - tol_k) >= 0.0 >= g(tj + tol_k):
            return tj, it, True
    # Slow creep (loop gain close to 1): look for the first equilibrium above the iterate.
    lo, step = tj, 1.0
    while lo < ceiling_c:
        hi = lo + step
        if g(hi) <= 0.0:
            for _ in range(60):
                mid = 0.5 * (lo + hi)
                lo, hi = (mid, hi) if g(mid) > 0.0 else (lo, mid)
            return 0.5 * (lo + hi), max_iter, True
        lo = hi
    return lo, max_iter, False


def mosfet_losses(
    i_rms: float,
    i_peak: float,
    i_valley: float,
    v_off: float,
    fsw: float,
    mode: str,
    *,
    rds25: float,
    rds125: float | None = None,
    coss: float,
    qg: float,
    gate_drive_current_a: float,
    vgs: float,
    t_amb_c: float,
    rth_ja: float,
    valley_v: float | None = None,
    v_on: float | None = None,
    v_in: float | None = None,
    gate_drive_current_on_a: float | None = None,
    miller_share: float = DEFAULT_MILLER_SHARE,
    alpha_per_k: float = DEFAULT_RDS_ALPHA_PER_K,
    tj_max_c: float = 150.0,
    tol_k: float = 0.1,
    max_iter: int = 200,
) -> MosfetThermal:
    """Switch losses with Rds_on at its own junction temperature, and that temperature.

    * Conduction: I_rms²·Rds_on(Tj) (:func:`rds_on_at`).
    * Turn-off, linear V-I overlap: P_off = ½·V_off·I_peak·t_off·fs, with the crossing time
      t_off = miller_share·Qg/Ig (ASSUMPTION: the gate is driven by a constant current Ig through
      the Miller plateau and the threshold region, which take ``miller_share`` of Qg).
    * Turn-on: overlap ½·V_on·I_valley·t_on·fs in CCM only; in DCM and BCM the current starts
      from zero (zero-current turn-on, no overlap loss).
    * Coss: ½·Coss·V_on²·fs at every turn-on, with V_on = drain voltage when the switch closes:
      CCM: ``v_on`` or ``v_off`` (Vin + Vr); DCM: ``v_on`` or ``v_in`` (the ring is centred on
      Vin; worst case Vin + Vr), else ``v_off``; BCM: ``valley_v`` = max(0, Vin − Vr), else
      ``v_on``, else ``v_off`` (each fallback is noted).
    * Gate drive: Qg·Vgs·fs, dissipated outside the switch (reported, not in Tj).
    * Junction: Tj = Ta + P(Tj)·Rth_ja by fixed-point iteration to ``tol_k``; no equilibrium
      below tj_max_c + 100 K → ``runaway=True``.

    Parameters
    ----------
    i_rms, i_peak, i_valley: switch RMS, peak and turn-on (valley) current. [A]
    v_off: drain voltage the switch turns off against (Vin + Vr, or Vin + Vclamp). [V]
    fsw: switching frequency. [Hz]
    mode: ``"ccm"``, ``"dcm"`` or ``"bcm"``.
    rds25, rds125: on-resistance at 25 °C and 125 °C (125 °C optional). [Ω]
    coss: output capacitance, energy-related where known (Co(er)), plus any extra drain-node
        capacitance the caller wants counted. [F]
    qg: total gate charge at ``vgs``. [C]
    gate_drive_current_a: gate current at turn-off (sink); at turn-on too unless
        ``gate_drive_current_on_a`` is given. [A]
    vgs: gate drive voltage. [V]
    t_amb_c: ambient temperature. [°C]
    rth_ja: junction-to-ambient thermal resistance (state which Rθ was used). [K/W]
    valley_v, v_on, v_in: drain voltage at turn-on, see above. [V]

    References
    ----------
    Linear V-I overlap switching energy ½·V·I·t_c: Mohan, Undeland & Robbins, *Power Electronics:
    Converters, Applications and Design*, ch. 2 "switching characteristics" (from memory);
    capacitive turn-on loss, zero-current turn-on in DCM, valley voltage max(0, Vin − Vr) and
    the Tj iteration: flyback-equations.md §4.1, §4.4 [M]; Rds(T): derating-standards.md §7
    (``common practice``).
    """
    m = _mode(mode)
    notes: list[str] = []
    if gate_drive_current_a <= 0:
        raise ValueError("gate_drive_current_a must be > 0")
    ig_on = gate_drive_current_on_a if gate_drive_current_on_a is not None else gate_drive_current_a
    t_off = miller_share * qg / gate_drive_current_a
    t_on = miller_share * qg / ig_on
    notes.append(
        f"switching crossing time = {miller_share:g}·Qg/Ig (assumed Miller share): "
        f"t_off = {t_off * 1e9:.3g} ns, t_on = {t_on * 1e9:.3g} ns"
    )
    if rds125 is None:
        notes.append(f"Rds_on(Tj) = Rds25·(1 + {alpha_per_k:g})^(Tj − 25) (no 125 °C value; common practice)")

    if m == "ccm":
        von = v_on if v_on is not None else v_off
    elif m == "dcm":
        if v_on is not None:
            von = v_on
        elif v_in is not None:
            von = v_in
            notes.append("DCM turn-on voltage taken as Vin (ring centre); worst case is Vin + Vr")
        else:
            von = v_off
            notes.append("DCM turn-on voltage unknown: V_off used (worst case)")
    else:
        if valley_v is not None:
            von = max(0.0, valley_v)
        elif v_on is not None:
            von = v_on
        else:
            von = v_off
            notes.append("valley voltage not given: V_off used for the Coss loss (no valley benefit)")

    p_off = 0.5 * v_off * i_peak * t_off * fsw
    p_on = 0.5 * von * i_valley * t_on * fsw if m == "ccm" else 0.0
    if m != "ccm":
        notes.append(f"{m.upper()}: zero-current turn-on, no turn-on overlap loss")
    p_coss = 0.5 * coss * von * von * fsw
    p_gate = qg * vgs * fsw
    p_fixed = p_off + p_on + p_coss

    def power(tj: float) -> float:
        return p_fixed + i_rms * i_rms * rds_on_at(tj, rds25, rds125, alpha_per_k)

    ceiling = tj_max_c + RUNAWAY_MARGIN_K
    tj, iterations, converged = _solve_junction(t_amb_c, rth_ja, power, tol_k, ceiling, max_iter)
    runaway = not converged
    if runaway:
        notes.append(
            f"thermal runaway: no equilibrium below {ceiling:g} °C (conduction loss grows faster "
            "than the junction can shed it)"
        )
    rds = rds_on_at(tj, rds25, rds125, alpha_per_k)
    p_cond = i_rms * i_rms * rds
    return MosfetThermal(
        p_cond=p_cond,
        p_sw_off=p_off,
        p_sw_on=p_on,
        p_coss=p_coss,
        p_gate=p_gate,
        p_total=p_cond + p_fixed,
        tj=tj,
        rds_at_tj=rds,
        t_sw_off=t_off,
        t_sw_on=t_on,
        v_on=von,
        iterations=iterations,
        converged=converged,
        runaway=runaway,
        notes=tuple(notes),
    )


@dataclass(frozen=True)
class DiodeThermal:
    """Rectifier losses [W] and junction temperature [°C]; ``qrr_used`` [C] (0 when none)."""

    p_cond: float
    p_rr: float
    p_total: float
    tj: float
    qrr_used: float
    notes: tuple[str, ...] = ()


def rectifier_loss(
    i_avg: float,
    i_rms: float,
    vf: float,
    vf_current: float | None,
    subtype: str,
    *,
    qrr: float | None = None,
    trr: float | None = None,
    v_reverse: float,
    fsw: float,
    mode: str,
    t_amb_c: float,
    rth_ja: float,
    i_commutation: float | None = None,
    vt0_share: float = DEFAULT_VT0_SHARE,
) -> DiodeThermal:
    """Output-rectifier losses and junction temperature.

    * Conduction: Vf·I_avg; when the catalog gives the current ``vf_current`` at which ``vf``
      holds, Vf(I) = Vt0 + rd·I with Vt0 = vt0_share·Vf and rd = (1 − vt0_share)·Vf/I_vf
      (ASSUMPTION), so P = Vt0·I_avg + rd·I_rms².
    * Reverse recovery (PN parts: ultrafast, standard) in CCM only: ½·Qrr·V_R·fs.  In DCM/BCM
      the current is already zero when the reverse voltage appears.  Without Qrr it is estimated
      from trr as Qrr ≈ ½·I_F·trr (triangular recovery with a peak equal to the forward current at
      commutation ``i_commutation``, default ``i_avg``; ASSUMPTION).  Schottky and SiC: none.
    * Junction: Tj = Ta + P·Rth_ja (Vf at its catalog temperature; Vf falls as Tj rises, so this
      over-estimates the conduction loss of a hot PN part; Schottky reverse leakage, which rises
      steeply with Tj, is not modelled).

    Parameters
    ----------
    i_avg, i_rms: rectifier average and RMS current. [A]
    vf: catalog forward voltage. [V]
    vf_current: current at which ``vf`` is specified (``None``: use vf flat). [A]
    subtype: ``schottky``, ``ultrafast``, ``standard`` or ``sic``.
    qrr, trr: recovered charge [C] and recovery time [s].
    v_reverse: reverse voltage at the commutation (Vin/n + Vout). [V]
    fsw: switching frequency [Hz]; mode: ``ccm`` / ``dcm`` / ``bcm``.
    t_amb_c: ambient temperature [°C]; rth_ja: junction-to-ambient resistance [K/W].

    References
    ----------
    flyback-equations.md §4.2 (P_d = Vf0·Io + rd·Is_rms² [M]; P_rr ≈ ½·Qrr·V_R·fs and DCM/BCM ≈ 0
    [CP]/[M]); Tj = Ta + P·Rθ: derating-standards.md §7.
    """
    m = _mode(mode)
    notes: list[str] = []
    if vf_current:
        vt0 = vt0_share * vf
        rd = (1.0 - vt0_share) * vf / vf_current
        p_cond = vt0 * i_avg + rd * i_rms * i_rms
        notes.append(
            f"Vf(I) = {vt0:.3g} V + {rd:.3g} Ω·I from Vf = {vf:g} V at {vf_current:g} A "
            f"(threshold share {vt0_share:g} assumed)"
        )
    else:
        p_cond = vf * i_avg
    sub = subtype.strip().lower()
    p_rr = 0.0
    q_used = 0.0
    if sub in ("schottky", "sic"):
        pass
    elif m != "ccm":
        notes.append(f"{m.upper()}: current is zero before reverse bias, no recovery loss")
    elif qrr is not None:
        q_used = qrr
    elif trr is not None:
        i_f = i_commutation if i_commutation is not None else i_avg
        q_used = 0.5 * i_f * trr
        notes.append(f"Qrr estimated as ½·I_F·trr = {q_used:.3g} C with I_F = {i_f:g} A (assumption)")
    else:
        notes.append("no Qrr or trr in the catalog: reverse-recovery loss not counted")
    if q_used:
        p_rr = 0.5 * q_used * v_reverse * fsw
    p_total = p_cond + p_rr
    return DiodeThermal(p_cond, p_rr, p_total, t_amb_c + p_total * rth_ja, q_used, tuple(notes))


def clamp_loss(
    llk: float, i_peak: float, fsw: float, v_clamp: float, v_reflected: float, n_parts: int = 1
) -> float:
    """Power each of ``n_parts`` series clamp parts (Zener/TVS or RCD resistor) dissipates.

    P = ½·Llk·Ipk²·fs·Vc/(Vc − Vr), shared equally by ``n_parts`` identical series parts.

    Parameters
    ----------
    llk: leakage inductance referred to the primary [H]; i_peak: primary peak current [A];
    fsw: switching frequency [Hz]; v_clamp: clamp voltage across the primary [V];
    v_reflected: reflected voltage n·(Vout + Vf) [V].

    Returns
    -------
    Power per part. [W]

    References
    ----------
    flyback-equations.md §2.1 (E_clamp = ½·Llk·Ipk²·Vc/(Vc − Vr) [M]).
    """
    if v_clamp <= v_reflected:
        raise ValueError(
            f"clamp voltage {v_clamp:g} V must exceed the reflected voltage {v_reflected:g} V: "
            "a lower clamp conducts the magnetizing current"
        )
    return 0.5 * llk * i_peak * i_peak * fsw * v_clamp / (v_clamp - v_reflected) / n_parts


def zener_temperature(p: float, t_amb_c: float, rth_ja: float) -> float:
    """Junction temperature Tj = Ta + P·Rth_ja. [°C]

    Parameters: p [W], t_amb_c [°C], rth_ja [K/W].

    References: derating-standards.md §7 (Tj = Ta + P·RθJA, JESD51-2A figure of merit).
    """
    return t_amb_c + p * rth_ja


def sense_resistor_power(i_rms: float, r: float) -> float:
    """Current-sense resistor dissipation I_rms²·R. [W]  (i_rms [A], r [Ω])

    References: flyback-equations.md §4.4 [M].
    """
    return i_rms * i_rms * r


def gate_resistor_power(qg: float, vgs: float, fsw: float, r_gate: float, r_driver: float) -> float:
    """Power in an external gate resistor [W]: its share of the gate-charge energy per cycle.

    Charging and discharging the gate through Rg + Rdrv dissipates Qg·Vgs per cycle in the
    resistances of the loop, divided in proportion to resistance: P = Qg·Vgs·fs·Rg/(Rg + Rdrv).

    Parameters: qg total gate charge [C]; vgs drive voltage [V]; fsw [Hz]; r_gate, r_driver [Ω].

    References: gate-drive energy balance, e.g. Balogh, "Fundamentals of MOSFET and IGBT gate
    driver circuits", application report, 2002 (from memory); ``common practice``.
    """
    if r_gate < 0 or r_driver < 0 or r_gate + r_driver == 0:
        raise ValueError("r_gate and r_driver must be ≥ 0 and not both zero")
    return qg * vgs * fsw * r_gate / (r_gate + r_driver)


def estimated_efficiency(p_out: float, losses: Mapping[str, float]) -> float:
    """Efficiency P_out/(P_out + Σ losses) from the modelled losses. [-]

    Parameters: p_out [W]; losses: name → power [W].  Losses that are not modelled (magnetics,
    controller, snubbers) are absent, so the figure is an upper bound.

    References: energy balance (``common practice``).
    """
    total = float(sum(losses.values()))
    return p_out / (p_out + total) if p_out + total > 0 else 0.0


@dataclass(frozen=True)
class EfficiencyCheck:
    """Estimated efficiency beside the design's; ``difference_points`` in percentage points."""

    eta_estimated: float
    eta_design: float
    difference_points: float
    warn: bool
    note: str


def compare_efficiency(
    p_out: float, losses: Mapping[str, float], eta_design: float, warn_points: float = 3.0
) -> EfficiencyCheck:
    """Compare the loss-based efficiency with the design file's estimate.

    Warns (``warn=True``) when they differ by more than ``warn_points`` percentage points:
    the design's input power, and with it every primary stress, then rests on a figure the
    parts do not support.

    References: ``common practice``.
    """
    eta = estimated_efficiency(p_out, losses)
    diff = 100.0 * (eta - eta_design)
    warn = abs(diff) > warn_points
    names = ", ".join(sorted(losses))
    note = (
        f"estimated efficiency {100 * eta:.1f} % from the modelled losses ({names}) "
        f"beside {100 * eta_design:.1f} % in the design"
    )
    if warn:
        if diff < 0:
            note += f": {abs(diff):.1f} points lower — the design's efficiency is optimistic"
        else:
            note += (
                f": {diff:.1f} points higher — unmodelled losses (magnetics, controller, snubbers) "
                "or a pessimistic design estimate"
            )
    if not math.isfinite(eta):
        raise ValueError("efficiency is not finite")
    return EfficiencyCheck(eta, eta_design, diff, warn, note)
