"""The primary clamp: RCD clamp voltage from its resistor, Zener/TVS level at tolerance and
temperature, the drain-peak additions (clamp-diode forward recovery, clamp-loop inductance) and
the avalanche energy a switch would absorb without the clamp.

The physics functions are vectorised (numpy arrays or scalars in, arrays out) and are used by
:func:`partcheck.stress.flyback.solve` at every corner.  :func:`resolve` turns a design's
``[clamp]`` table into the per-design parameters with the stated defaults applied, and
:func:`assumptions` words the defaults that were used, for a report.

Stated defaults (each a design key of ``[clamp]``, see ``docs/design-file.md``):

* ``tolerance`` 5 %: the most common Zener voltage tolerance grade (common practice, from memory).
* ``tempco`` +0.1 %/K for a clamp voltage above about 7 V, 0 below: avalanche breakdown has a
  positive temperature coefficient of roughly 0.05-0.1 %/K (common practice, from memory).
* ``t_junction`` ambient_max + 50 K: a conservative estimate of a clamp Zener's or TVS's
  junction temperature in operation, not a thermal calculation.
* ``v_forward_recovery`` per ``diode_type``: ultrafast 5 V, standard (slow PN) 20 V,
  Schottky and SiC Schottky 1 V (majority carriers, no conductivity modulation; common practice,
  from memory: data sheets give V_FRM of a few volts for ultrafast diodes).
* ``loop_inductance`` 10 nH: about 1 cm of loop (drain, clamp diode, clamp capacitor or Zener,
  back to the primary's supply end) at ~1 nH/mm (common practice).
* node capacitance for the drain rise time, when ``[switch_node] capacitance`` is not given:
  100 pF (a small high-voltage MOSFET's Coss plus the winding and diode capacitances; common
  practice, from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: Zener/TVS breakdown tolerance when ``[clamp] tolerance`` is not given [-].
DEFAULT_ZENER_TOLERANCE = 0.05
#: Breakdown temperature coefficient when ``[clamp] tempco`` is not given, above the knee [1/K].
DEFAULT_ZENER_TEMPCO_PER_K = 0.001
#: Below this clamp voltage the default temperature coefficient is 0 (Zener effect, tempco ≤ 0) [V].
ZENER_TEMPCO_KNEE_V = 7.0
#: Default junction temperature rise of the Zener/TVS above ambient_max [K].
DEFAULT_TJ_RISE_K = 50.0
#: Reference temperature of a Zener/TVS voltage rating [°C].
T_REFERENCE_C = 25.0
#: Clamp-diode forward-recovery overshoot by diode type when ``v_forward_recovery`` is not given [V].
DEFAULT_FORWARD_RECOVERY_V = {"ultrafast": 5.0, "standard": 20.0, "schottky": 1.0, "sic": 1.0}
DIODE_TYPES = tuple(DEFAULT_FORWARD_RECOVERY_V)
DEFAULT_DIODE_TYPE = "ultrafast"
#: Stray inductance of the clamp loop when ``loop_inductance`` is not given [H].
DEFAULT_LOOP_INDUCTANCE_H = 10e-9
#: Drain-node capacitance for the drain rise time when ``[switch_node] capacitance`` is not given [F].
DEFAULT_NODE_CAPACITANCE_F = 100e-12
#: A resistor clamp's settled voltage may differ this much from the designer's ``vclamp`` before a note [-].
EXPECTED_VCLAMP_SLACK = 0.10


def rcd_clamp_voltage(rc, llk, ipk, fs, vr):
    """Settled clamp-capacitor voltage of an RCD clamp with total resistance ``rc``. [V]

    The resistor dissipates what the clamp takes per cycle: Vc²/Rc = ½·Llk·Ipk²·fs·Vc/(Vc − Vr),
    so Vc = Vr/2 + √(Vr²/4 + ½·Rc·Llk·Ipk²·fs).  Always above Vr when Llk·Ipk > 0.

    Parameters
    ----------
    rc: clamp resistance [Ω]; llk: leakage inductance [H]; ipk: switch peak current [A];
    fs: switching frequency [Hz]; vr: reflected voltage [V].

    References
    ----------
    flyback-equations.md §2.1 ("check an existing Rc", [D] from the clamp energy [M]).
    """
    rc, vr = np.asarray(rc, dtype=float), np.asarray(vr, dtype=float)
    return 0.5 * vr + np.sqrt(0.25 * vr * vr + 0.5 * rc * llk * np.square(ipk) * fs)


def clamp_ripple(p_clamp, vc, cc, fs):
    """Peak-to-peak clamp-capacitor ripple ΔVc ≈ P_clamp/(Vc·Cc·fs) = Vc/(Rc·Cc·fs). [V]

    Crude: the whole charge of one cycle, P/(Vc·fs), arrives at once and leaves through the
    resistor over the period at a constant current; the true ripple is slightly smaller.

    Parameters
    ----------
    p_clamp: clamp power [W]; vc: mean clamp voltage [V]; cc: clamp capacitance [F];
    fs: switching frequency [Hz].

    References
    ----------
    flyback-equations.md §2.1 (Cc ≥ Vc/(ΔVc·Rc·fs), [M]/[CP]); common practice.
    """
    return np.asarray(p_clamp, dtype=float) / (np.asarray(vc, dtype=float) * cc * fs)


def zener_level_factor(tolerance, tempco, t_junction, t_cold=None):
    """The highest clamp level of a Zener/TVS over its tolerance and temperature, per volt of rating. [-]

    (1 + tolerance)·(1 + tempco·(Tj − 25 °C)); with a negative ``tempco`` the level is highest
    cold, at ``t_cold`` (°C; 25 °C when None), never below the 25 °C value.

    Parameters
    ----------
    tolerance: voltage tolerance [-]; tempco: temperature coefficient [1/K];
    t_junction: hot junction temperature [°C]; t_cold: coldest junction temperature [°C].

    References
    ----------
    flyback-equations.md §2.1 (Vds_pk = Vin_max + Vz_clamp(Ipk, Tj), [M]); common practice.
    """
    t_cold = T_REFERENCE_C if t_cold is None else t_cold
    tempco = np.asarray(tempco, dtype=float)
    temp = np.maximum(np.maximum(1.0 + tempco * (t_junction - T_REFERENCE_C), 1.0 + tempco * (t_cold - T_REFERENCE_C)),
                      1.0)
    return (1.0 + np.asarray(tolerance, dtype=float)) * temp


def loop_overshoot(l_loop, ipk, c_node, v_step=None):
    """Drain overshoot of the clamp loop's stray inductance, undamped L-C bound Ipk·√(L_loop/C_node). [V]

    When the drain reaches the clamp level, the leakage inductance (µH, a current source of Ipk
    on this time scale) still charges the drain-node capacitance; the current must move into the
    clamp through the loop's stray inductance, so node capacitance and loop inductance ring with
    an initial current Ipk and the drain overshoots by Ipk·√(L/C) (energy ½·L·Ipk² = ½·C·ΔV²).
    Against ngspice (zener-like clamp, 3-30 nH, 100-330 pF) it is within +0.2..+3.3 % of the
    simulated overshoot; series resistance in the loop adds about 0.2·R·Ipk on top (not modelled:
    the loop resistance is not known), and on an RCD clamp it is added to the capacitor's peak
    where the ring starts near its minimum, so there it is high by about the clamp ripple.
    An edge-rate estimate L·Ipk²/(C·V) gave only 12-71 % of the simulated overshoots.

    Parameters
    ----------
    l_loop: clamp-loop stray inductance [H]; ipk: switch peak current [A]; c_node: drain-node
    capacitance [F]; v_step: unused (kept for callers of the edge-rate form) [V].

    References
    ----------
    Energy balance of an undamped L-C tank with an initial current (any circuit text; the same
    relation as the unclamped leakage spike ΔV = Ipk·√(Llk/Cd), flyback-equations.md §2.1 [D]).
    """
    del v_step
    return np.asarray(ipk, dtype=float) * np.sqrt(np.asarray(l_loop, dtype=float) / np.asarray(c_node, dtype=float))


def avalanche_energy(llk, ipk, v_br, vr):
    """Energy per switching event a switch absorbs when its own avalanche breakdown clamps the drain. [J]

    E_av = ½·Llk·Ipk²·V_BR/(V_BR − Vr), with V_BR the breakdown voltage above the input (the
    drain-to-supply voltage across the primary, like Vc): the same energy balance as the clamp,
    the breakdown taking the leakage energy plus the magnetizing energy passed on while the
    leakage current resets.  Infinite where V_BR ≤ Vr (the breakdown would conduct the
    magnetizing current for the whole off-time).  Compare with the switch's single-pulse or
    repetitive avalanche rating (UIS test, JEDEC-style).

    Parameters
    ----------
    llk: leakage inductance [H]; ipk: switch peak current [A]; v_br: avalanche voltage minus Vin
    [V]; vr: reflected voltage [V].

    References
    ----------
    flyback-equations.md §2.1 (E_clamp = ½·Llk·Ipk²·Vc/(Vc − Vr), [M]); MOSFET avalanche ratings by
    the unclamped inductive switching test: common practice.
    """
    v_br, vr = np.asarray(v_br, dtype=float), np.asarray(vr, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        e = 0.5 * np.asarray(llk, dtype=float) * np.square(ipk) * v_br / (v_br - vr)
    return np.where(v_br > vr, e, np.inf)


@dataclass(frozen=True)
class ClampModel:
    """A design's clamp parameters with the stated defaults applied (SI units, °C)."""

    kind: str
    vclamp: float  # fixed or expected clamp voltage (inf: none given) [V]
    resistor: float  # RCD resistance (inf: the clamp voltage is fixed) [Ω]
    capacitor: float  # RCD capacitance (NaN: no ripple estimate) [F]
    level_factor: float  # Zener/TVS highest level per volt of vclamp (1 for RCD) [-]
    tolerance: float  # [-]
    tempco: float  # [1/K]
    t_junction: float  # [°C]
    v_forward_recovery: float  # [V]
    loop_inductance: float  # [H]
    node_capacitance: float  # for the drain rise time [F]
    defaults: tuple[str, ...]  # the keys left at their stated default


def resolve(design) -> ClampModel | None:
    """The clamp of ``design`` with defaults applied; None without a ``[clamp]``."""
    c = design.clamp
    if c is None:
        return None
    env = design.environment
    defaults = []
    zener = c.kind in ("zener", "tvs")

    def pick(name, given, default):
        if given is None:
            defaults.append(name)
            return default
        return given

    if zener:
        tol = pick("tolerance", c.tolerance, DEFAULT_ZENER_TOLERANCE)
        tempco = pick("tempco", c.tempco,
                      DEFAULT_ZENER_TEMPCO_PER_K if c.vclamp > ZENER_TEMPCO_KNEE_V else 0.0)
        tj = pick("t_junction", c.t_junction, env.ambient_max + DEFAULT_TJ_RISE_K)
        factor = float(zener_level_factor(tol, tempco, tj, env.ambient_min))
    else:
        tol, tempco, tj, factor = 0.0, 0.0, env.ambient_max, 1.0
    diode = getattr(c, "diode_type", None) or DEFAULT_DIODE_TYPE
    v_fr = pick("v_forward_recovery", c.v_forward_recovery, DEFAULT_FORWARD_RECOVERY_V[diode])
    l_loop = pick("loop_inductance", c.loop_inductance, DEFAULT_LOOP_INDUCTANCE_H)
    c_node = design.switch_node_capacitance
    if c_node is None:
        defaults.append("switch_node.capacitance")
        c_node = DEFAULT_NODE_CAPACITANCE_F
    return ClampModel(
        kind=c.kind, vclamp=c.vclamp, resistor=c.resistor if c.resistor is not None else np.inf,
        capacitor=c.capacitor if c.capacitor is not None else np.nan, level_factor=factor, tolerance=tol,
        tempco=tempco, t_junction=tj, v_forward_recovery=v_fr, loop_inductance=l_loop, node_capacitance=c_node,
        defaults=tuple(defaults))


def assumptions(design) -> list[str]:
    """Sentences stating the clamp defaults ``design`` relies on (empty without a clamp)."""
    m = resolve(design)
    if m is None:
        return []
    texts = {
        "tolerance": f"clamp.tolerance not given: the Zener/TVS level is taken {m.tolerance:.0%} above vclamp "
                     "(the common 5 % tolerance grade)",
        "tempco": f"clamp.tempco not given: {m.tempco * 100:.2g} %/K assumed for the breakdown voltage "
                  "(+0.1 %/K above about 7 V, common practice, from memory)",
        "t_junction": f"clamp.t_junction not given: the clamp junction is taken at {m.t_junction:.0f} °C "
                      "(ambient_max + 50 K, a conservative estimate)",
        "v_forward_recovery": f"clamp.v_forward_recovery not given: {m.v_forward_recovery:g} V of clamp-diode "
                              f"forward recovery added to the drain peak (typical of its diode_type, from memory)",
        "loop_inductance": f"clamp.loop_inductance not given: {m.loop_inductance * 1e9:g} nH of clamp-loop "
                           "stray inductance assumed for the drain overshoot",
        "switch_node.capacitance": f"switch_node.capacitance not given: {m.node_capacitance * 1e12:g} pF assumed "
                                   "for the drain rise time of the clamp-loop overshoot",
    }
    return [texts[k] for k in m.defaults]


def notes(design, specs, sol) -> list[str]:
    """Remarks on a solved design's clamp: a resistor clamp far from the designer's ``vclamp``."""
    m = resolve(design)
    if m is None or not np.isfinite(m.resistor) or not np.isfinite(m.vclamp):
        return []
    full = [i for i, s in enumerate(specs) if s.load == "full"]
    if not full:
        return []
    vc = sol["clamp_vc"][full]
    off = np.abs(vc / m.vclamp - 1.0) > EXPECTED_VCLAMP_SLACK
    if not np.any(off):
        return []
    return [f"clamp: the resistor {m.resistor:.4g} Ω settles the clamp at {vc.min():.4g}-{vc.max():.4g} V at full load, "
            f"more than {EXPECTED_VCLAMP_SLACK:.0%} from clamp.vclamp = {m.vclamp:.4g} V; the resistor decides "
            "(Vc = Vr/2 + √(Vr²/4 + ½·Rc·Llk·Ipk²·fs)), vclamp is only the expected value"]


def check(design, specs, op, sol) -> None:
    """Raise DesignError where a resistor clamp settles so close to Vr that the leakage reset outlasts the off-time."""
    from ..errors import DesignError

    if design.clamp is None:
        return
    bad = np.isfinite(op.rclamp) & (op.llk > 0) & ~sol["secondary_fit"]
    if np.any(bad):
        i = int(np.argmax(bad))
        raise DesignError(
            f"{op.rclamp[i]:.4g} Ω settles the clamp at {sol['clamp_vc'][i]:.4g} V, so close to the reflected "
            f"voltage {sol['vr'][i]:.4g} V that the leakage reset outlasts the off-time at {specs[i].id}; "
            "expected a larger clamp resistor", file=design.file, key="clamp.resistor")
