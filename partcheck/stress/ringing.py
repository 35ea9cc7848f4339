"""Output-rectifier ringing at switch turn-on: reverse-voltage overshoot and the RC snubber.

When the flyback switch turns on, the secondary winding voltage reverses and the rectifier goes
from forward conduction (or, in DCM, from wherever the dead-time ring left it) to blocking.  The
step drives the secondary loop inductance (the secondary leakage plus the primary leakage referred
to the secondary) into the capacitance across the diode (junction + winding capacitance), so the
reverse voltage overshoots the steady ``V_R = Vin/n + Vout``: by up to the full step when nothing
damps the ring, more when the diode snaps off with a reverse-recovery current in the loop.

The circuit, in deviation from its steady state (the source is then a short), is linear:

* 2 states without a snubber: loop current ``i`` and diode voltage ``v``;
  ``L·di/dt = −r·i − v``, ``C·dv/dt = i``.
* 3 states with an RC snubber (Rs in series with Cs) across the diode, adding the snubber
  capacitor voltage ``vs``: ``C·dv/dt = i − (v − vs)/Rs``, ``Cs·dvs/dt = (v − vs)/Rs``.

``rectifier_ring`` solves it exactly by eigen-decomposition (complex arithmetic); a defective
(critically damped) or ill-conditioned state matrix falls back to exact propagation with the
matrix exponential (scaling and squaring with a Padé approximant).  ``rectifier_peak`` turns a
flyback operating point into the ring inputs.

Plain functions of SI floats: voltages [V], currents [A], inductance [H], capacitance [F],
resistance [Ω], charge [C], time [s], frequency [Hz], energy [J], power [W].  Scalar in, scalar out.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

#: Diode capacitance (junction at a typical blocking voltage) used when the catalog gives none,
#: per diode subtype [F].  ``common practice`` (from memory): a few-ampere Schottky has 100-300 pF,
#: ultrafast and standard PN rectifiers some 10-30 pF, SiC Schottky some 30-80 pF at tens of volts.
DEFAULT_CJ_F = {"schottky": 150e-12, "ultrafast": 20e-12, "standard": 20e-12, "sic": 50e-12}
#: Reverse-recovery time used when the catalog gives neither qrr nor trr, per subtype [s].
#: ``common practice`` (from memory): ultrafast 25-50 ns, standard recovery rectifiers ~2 us;
#: Schottky and SiC Schottky diodes are majority-carrier parts with no recovery charge (capacitive only).
DEFAULT_TRR_S = {"ultrafast": 35e-9, "standard": 2e-6, "schottky": 0.0, "sic": 0.0}
#: Capacitance of the secondary winding lumped at its terminals when the design gives none [F].
#: ``common practice`` (from memory): a few tens of pF for a small flyback transformer's secondary.
DEFAULT_WINDING_CAPACITANCE_F = 20e-12
#: Snubber capacitor as a multiple of the parasitic capacitance in the classic RC sizing (3-4x; 4 taken).
CLASSIC_SNUBBER_C_RATIO = 4.0

#: Subtypes that store no minority charge: no reverse-recovery current.
_NO_RECOVERY = frozenset({"schottky", "sic"})
_MODES = {"ccm": "ccm", "dcm": "dcm", "bcm": "bcm", "qr": "bcm", "crm": "bcm"}
#: eigenvector matrices worse conditioned than this are treated as defective (critically damped)
_COND_LIMIT = 1e8


def _positive(name: str, value: float) -> float:
    value = float(value)
    if not math.isfinite(value) or value <= 0.0:
        raise ValueError(f"{name} must be a positive finite number, got {value!r}")
    return value


def _non_negative(name: str, value: float) -> float:
    value = float(value)
    if not math.isfinite(value) or value < 0.0:
        raise ValueError(f"{name} must be a non-negative finite number, got {value!r}")
    return value


def _mode(mode) -> str:
    """Mode name from ``"ccm"``/``"CCM"``... or the engine's integer codes (0 CCM, 1 DCM, 2 BCM)."""
    if isinstance(mode, (int, np.integer)) and not isinstance(mode, bool) and 0 <= int(mode) <= 2:
        return ("ccm", "dcm", "bcm")[int(mode)]
    try:
        return _MODES[mode.strip().lower()]
    except (KeyError, AttributeError):
        raise ValueError(f"unknown operating mode {mode!r}: expected one of ccm, dcm, bcm") from None


# --------------------------------------------------------------------------------------------
# Reverse recovery
# --------------------------------------------------------------------------------------------


def reverse_recovery_current(qrr_c: float, di_dt_a_per_s: float) -> float:
    """Peak reverse-recovery current of a snappy diode, Irr = sqrt(2·Qrr·di/dt).

    The whole recovered charge is taken out while the reverse current still ramps at the circuit's
    di/dt, and the diode then snaps off abruptly: the reverse current is a triangle of height Irr
    and slope di/dt, whose area Irr²/(2·di/dt) is Qrr.  A soft diode (current tail after the peak)
    has a lower Irr for the same Qrr, so this is the conservative, abrupt-recovery bound.  It is
    also exactly what the SPICE charge-control diode does (reverse current ramps until the stored
    charge is gone, then the junction capacitance takes over).

    Parameters
    ----------
    qrr_c: reverse-recovery charge (the reverse part only, after the current crosses zero). [C]
    di_dt_a_per_s: rate at which the forward current falls (magnitude). [A/s]

    Returns
    -------
    Irr, the loop current at the instant the diode snaps off. [A]

    References
    ----------
    Triangular (abrupt) recovery: Mohan, Undeland & Robbins, *Power Electronics*, ch. 20 (diode
    reverse recovery, Irr = sqrt(2·Qrr·di/dt) for ta ≫ tb) (from memory); derived here from the
    triangle's area.
    """
    q = _non_negative("qrr_c", qrr_c)
    a = _non_negative("di_dt_a_per_s", di_dt_a_per_s)
    return math.sqrt(2.0 * q * a)


def qrr_from_trr(trr_s: float, di_dt_a_per_s: float) -> float:
    """Recovery charge from the reverse-recovery time when only trr is known.

    Stated relation: the reverse current rises at di/dt for ta = trr/2 to Irr = di/dt·trr/2 and
    falls back to zero in tb = trr/2 (softness tb/ta = 1), a triangle of base trr:
    Qrr = ½·Irr·trr = di/dt·trr²/4.  trr is taken at the circuit's di/dt (a datasheet quotes it at
    its own test condition, usually a lower di/dt, where it is longer, so the figure errs high).
    Fed back into ``reverse_recovery_current`` (all of Qrr removed at di/dt, then a snap) this
    charge gives Irr = di/dt·trr/√2, √2 above the soft triangle's own peak: conservative.

    Parameters
    ----------
    trr_s: reverse-recovery time. [s]
    di_dt_a_per_s: rate of fall of the forward current (magnitude). [A/s]

    Returns
    -------
    Qrr. [C]

    References
    ----------
    ``common practice`` (from memory): the triangular trr/Irr/Qrr relation Qrr ≈ ½·Irr·trr as in
    Mohan, Undeland & Robbins, *Power Electronics*, ch. 20; ta = tb = trr/2 is an assumption stated here.
    """
    t = _non_negative("trr_s", trr_s)
    a = _non_negative("di_dt_a_per_s", di_dt_a_per_s)
    return 0.5 * (a * t / 2.0) * t


# --------------------------------------------------------------------------------------------
# The ring
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class RingResult:
    """Rectifier reverse voltage after the switch turns on.  Volts [V], hertz [Hz], ohms [Ω], joules [J].

    ``v_steady`` is the settled reverse voltage (V_R), ``v_peak`` the highest reverse voltage of the
    ring, ``overshoot_ratio`` = (v_peak − v_steady)/v_step (1 for an undamped ring with no recovery
    current).  ``f_ring_hz`` and ``z0_ohm`` are those of the unsnubbed L–C loop, 1/(2π√(LC)) and
    √(L/C); ``zeta`` is the damping ratio of the dominant pole pair (≥ 1 when nothing oscillates).
    ``ring_energy_j`` = ½·L·i0² + ½·C·v_step², the energy of the parasitic tank beyond its steady
    state, which the loop and snubber resistances dissipate at every turn-on (the snubber
    capacitor's own charge energy is separate: see ``snubber_resistor_power``).  ``dominant`` is
    ``"reverse recovery"`` when ½·L·i0² exceeds ½·C·v_step², else ``"snubbed ring"`` with a snubber,
    else ``"leakage ring"``.  ``t_peak_s`` is the time of the peak after the step [s].
    """

    v_steady: float
    v_peak: float
    overshoot_ratio: float
    f_ring_hz: float
    z0_ohm: float
    zeta: float
    ring_energy_j: float
    dominant: str
    t_peak_s: float = 0.0
    v_step: float = 0.0
    i_initial_a: float = 0.0
    #: The reverse voltage after the step, sampled over the solved window (times [s], volts [V]);
    #: for plots of the ring at the worst corner.
    t_s: tuple[float, ...] = ()
    v_t: tuple[float, ...] = ()


def _state_matrix(l_h: float, c_f: float, r_ohm: float, rs_ohm: float | None, cs_f: float | None) -> np.ndarray:
    """State matrix of the deviation circuit; states (i, v[, vs])."""
    if rs_ohm is None:
        return np.array([[-r_ohm / l_h, -1.0 / l_h], [1.0 / c_f, 0.0]])
    g = 1.0 / rs_ohm
    return np.array([
        [-r_ohm / l_h, -1.0 / l_h, 0.0],
        [1.0 / c_f, -g / c_f, g / c_f],
        [0.0, g / cs_f, -g / cs_f],
    ])


def expm(a: np.ndarray) -> np.ndarray:
    """Matrix exponential by scaling and squaring with a diagonal [6/6] Padé approximant.

    Parameters
    ----------
    a: square matrix (here the state matrix times a time step, dimensionless).

    Returns
    -------
    exp(a).

    References
    ----------
    Golub & Van Loan, *Matrix Computations*, 3rd ed., §11.3, Algorithm 11.3.1 (from memory).
    """
    a = np.asarray(a, dtype=float)
    norm = np.linalg.norm(a, np.inf)
    s = max(0, int(math.ceil(math.log2(norm))) + 1) if norm > 0.5 else 0
    a = a / 2.0**s
    q = 6
    c = 1.0
    x = np.eye(a.shape[0])
    n = np.eye(a.shape[0])
    d = np.eye(a.shape[0])
    sign = 1.0
    for k in range(1, q + 1):
        c = c * (q - k + 1) / (k * (2 * q - k + 1))
        x = a @ x
        n = n + c * x
        sign = -sign
        d = d + sign * c * x
    e = np.linalg.solve(d, n)
    for _ in range(s):
        e = e @ e
    return e


class _Solution:
    """x(t) = exp(A·t)·x0, by eigen-decomposition or (defective A) by the matrix exponential."""

    def __init__(self, a: np.ndarray, x0: np.ndarray, force_expm: bool = False):
        self.a = a
        self.x0 = x0
        self.eigenvalues = np.linalg.eigvals(a)
        self.method = "expm"
        if not force_expm:
            lam, vec = np.linalg.eig(a)
            if np.isfinite(vec).all() and np.linalg.cond(vec) < _COND_LIMIT:
                self.method = "eig"
                self.lam = lam
                self.vec = vec
                self.coef = np.linalg.solve(vec, x0.astype(complex))

    def states(self, t: np.ndarray) -> np.ndarray:
        """States at the times ``t`` (ascending, from 0 for the expm path), shape (len(t), n)."""
        t = np.asarray(t, dtype=float)
        if self.method == "eig":
            modes = np.exp(np.outer(t, self.lam)) * self.coef  # (len(t), n)
            return (modes @ self.vec.T).real
        # exact propagation on a uniform grid: x_{k+1} = exp(A·dt)·x_k
        out = np.empty((t.size, self.x0.size))
        x = expm(self.a * t[0]) @ self.x0
        out[0] = x
        if t.size > 1:
            step = expm(self.a * (t[1] - t[0]))
            for k in range(1, t.size):
                x = step @ x
                out[k] = x
        return out

    def at(self, t: float) -> np.ndarray:
        if self.method == "eig":
            return self.states(np.array([t]))[0]
        return expm(self.a * t) @ self.x0


def _zeta(eigenvalues: np.ndarray) -> float:
    """Damping ratio of the dominant pole pair: the oscillatory pair with the least damping, else
    (nothing oscillates) that of the two slowest real poles, (p1 + p2)/(2·√(p1·p2)) ≥ 1."""
    osc = [lam for lam in eigenvalues if abs(lam.imag) > 1e-9 * abs(lam)]
    if osc:
        return min(-lam.real / abs(lam) for lam in osc)
    poles = sorted(-lam.real for lam in eigenvalues if abs(lam) > 0)
    if len(poles) < 2 or poles[0] <= 0:
        return math.inf
    p1, p2 = poles[0], poles[1]
    return (p1 + p2) / (2.0 * math.sqrt(p1 * p2))


def rectifier_ring(
    v_step: float,
    v_final: float,
    l_loop_h: float,
    c_diode_f: float,
    *,
    i_initial_a: float = 0.0,
    r_loop_ohm: float = 0.0,
    snubber_r_ohm: float | None = None,
    snubber_c_f: float | None = None,
    _force_expm: bool = False,
) -> RingResult:
    """Peak rectifier reverse voltage of the secondary loop's step response at switch turn-on.

    A voltage step ``v_step`` drives the loop inductance ``l_loop_h`` (in series with ``r_loop_ohm``)
    into the diode capacitance ``c_diode_f`` (junction + winding capacitance in parallel),
    optionally with an RC snubber (``snubber_r_ohm`` in series with ``snubber_c_f``) across the
    diode.  The diode (and snubber-capacitor) voltage starts at ``v_final − v_step`` and settles at
    ``v_final``; the inductor carries ``i_initial_a`` at t = 0 in the direction that charges the
    capacitance further (the reverse-recovery current at snap-off).  The linear ODE is solved
    exactly (eigen-decomposition, complex arithmetic; matrix exponential when the state matrix is
    defective, e.g. critically damped), sampled densely over the first ring periods and the maximum
    refined by bisection on dv/dt = 0.  A response that never exceeds ``v_final`` has v_peak = v_final.

    Parameters
    ----------
    v_step: the step of the diode voltage (final − initial). [V]
    v_final: the settled reverse voltage, V_R. [V]
    l_loop_h: loop inductance (secondary leakage, all leakage referred to the secondary). [H]
    c_diode_f: capacitance across the diode (junction + winding). [F]
    i_initial_a: loop current at t = 0, charging the capacitance (Irr at snap-off). [A]
    r_loop_ohm: series resistance of the loop (winding, diode Rs, traces). [Ω]
    snubber_r_ohm, snubber_c_f: RC snubber across the diode (both or neither). [Ω], [F]

    Returns
    -------
    RingResult.

    References
    ----------
    Series RLC / linear state equations: Ogata, *Modern Control Engineering*, §5-3 (second-order
    step response) and ch. 9 (state-space solution by eigenvalues, from memory); energy bookkeeping
    derived here.  Matrix exponential: Golub & Van Loan, *Matrix Computations*, §11.3 (from memory).
    """
    l_h = _positive("l_loop_h", l_loop_h)
    c_f = _positive("c_diode_f", c_diode_f)
    r = _non_negative("r_loop_ohm", r_loop_ohm)
    v_step = float(v_step)
    v_final = float(v_final)
    i0 = float(i_initial_a)
    if not (math.isfinite(v_step) and math.isfinite(v_final) and math.isfinite(i0)):
        raise ValueError("v_step, v_final and i_initial_a must be finite")
    if (snubber_r_ohm is None) != (snubber_c_f is None):
        raise ValueError("give both snubber_r_ohm and snubber_c_f, or neither")
    rs = cs = None
    c_ring = c_f  # the capacitance in the ring (a snubber with Rs = 0 is plain parallel capacitance)
    if snubber_c_f is not None:
        cs = _positive("snubber_c_f", snubber_c_f)
        rs = _non_negative("snubber_r_ohm", snubber_r_ohm)
        if rs == 0.0:
            c_ring = c_f + cs
            rs = cs = None

    z0 = math.sqrt(l_h / c_f)
    f_ring = 1.0 / (2.0 * math.pi * math.sqrt(l_h * c_f))
    e_ind = 0.5 * l_h * i0**2
    e_cap = 0.5 * c_f * v_step**2
    energy = e_ind + e_cap
    if e_ind > e_cap:
        dominant = "reverse recovery"
    elif snubber_c_f is not None:
        dominant = "snubbed ring"
    else:
        dominant = "leakage ring"

    a = _state_matrix(l_h, c_ring, r, rs, cs)
    x0 = np.array([i0, -v_step] + ([-v_step] if rs is not None else []))
    sol = _Solution(a, x0, force_expm=_force_expm)

    # Window: several periods of the slowest L-C ring the loop can show, plus the slowest decay.
    c_total = c_ring + (cs or 0.0)
    t_ring = 2.0 * math.pi * math.sqrt(l_h * c_total)
    slow = min((-lam.real for lam in sol.eigenvalues if -lam.real > 0), default=0.0)
    t_end = 4.0 * t_ring + (min(3.0 / slow, 40.0 * t_ring) if slow > 0 else 0.0)
    n = 4001
    t = np.linspace(0.0, t_end, n)
    v = sol.states(t)[:, 1]
    k = int(np.argmax(v))
    t_peak, v_peak = float(t[k]), float(v[k])
    if 0 < k < n - 1:
        lo, hi = t[k - 1], t[k + 1]
        # bisection on the sign of dv/dt (row 1 of A·x): + before the peak, − after
        t_mid = float(t[k])
        d_mid = float(a[1] @ sol.at(t_mid))
        if d_mid > 0:
            lo = t_mid
        else:
            hi = t_mid
        for _ in range(80):
            mid = 0.5 * (lo + hi)
            if float(a[1] @ sol.at(mid)) > 0:
                lo = mid
            else:
                hi = mid
            if hi - lo <= 1e-15 * t_end:
                break
        t_ref = 0.5 * (lo + hi)
        v_ref = float(sol.at(t_ref)[1])
        if v_ref > v_peak:
            t_peak, v_peak = t_ref, v_ref
    if v_peak < 0.0:  # never above the steady value: it is approached, not exceeded
        t_peak, v_peak = math.inf, 0.0
    overshoot = v_peak / v_step if v_step != 0 else math.inf if v_peak > 0 else 0.0
    return RingResult(
        v_steady=v_final, v_peak=float(v_final + v_peak), overshoot_ratio=float(overshoot), f_ring_hz=f_ring, z0_ohm=z0,
        zeta=float(_zeta(sol.eigenvalues)), ring_energy_j=energy, dominant=dominant, t_peak_s=float(t_peak), v_step=v_step,
        i_initial_a=i0, t_s=tuple(float(x) for x in t[::20]), v_t=tuple(float(v_final + x) for x in v[::20]))


# --------------------------------------------------------------------------------------------
# Snubber
# --------------------------------------------------------------------------------------------


def snubber_resistor_power(c_s_f: float, v_r: float, fsw: float, ring_energy_j: float) -> float:
    """Average power in the RC snubber resistor, P = Cs·V²·fs + E_ring·fs.

    Each cycle the snubber capacitor is charged by ``v_r`` at switch turn-on and discharged by it at
    turn-off; a capacitor charged through a resistor by a step leaves ½·Cs·V² in the resistor each
    time, Cs·V² per cycle.  On top of that the resistor takes the parasitic tank's ring energy
    (½·L·Irr² + ½·C·V_step², ``RingResult.ring_energy_j``) at every turn-on (all of it when the loop
    resistance is small against the snubber's).  Conservative: the edges are taken as steps.

    Parameters
    ----------
    c_s_f: snubber capacitance. [F]
    v_r: voltage swing of the snubber capacitor at each edge: V_R + Vf in CCM (≈ V_R). [V]
    fsw: switching frequency. [Hz]
    ring_energy_j: ring energy per turn-on. [J]

    Returns
    -------
    Snubber resistor power. [W]

    References
    ----------
    Severns, "Design of snubbers for power circuits" (RC damping network; dissipation ≈ Cs·V²·fs):
    only its opening was read, the dissipation formula is from memory; the flyback reference note
    §2.2 [M] gives the same Cs·V²·fs.  The ring-energy term is derived here (energy balance of the
    deviation circuit).
    """
    c = _non_negative("c_s_f", c_s_f)
    f = _non_negative("fsw", fsw)
    e = _non_negative("ring_energy_j", ring_energy_j)
    v = float(v_r)
    if not math.isfinite(v):
        raise ValueError(f"v_r must be finite, got {v_r!r}")
    return c * v**2 * f + e * f


def classic_rc_snubber(l_loop_h: float, c_par_f: float) -> tuple[float, float]:
    """Classic RC damping snubber for an L–C ring: Rs = √(L/C_par), Cs = 4·C_par.

    The resistor equals the ring's characteristic impedance, which damps it near-critically; the
    capacitor is 3-4 times the parasitic capacitance (4 taken here) so that Rs, not the
    capacitor's reactance, sets the damping at the ring frequency while its Cs·V²·fs loss stays
    moderate.  In the bench form of the same method, capacitance is added across the ringing node
    until the ring frequency halves (then the added capacitance is 3·C_par, which gives C_par and,
    from the original frequency, L), before a series resistor is added until the ring is damped.

    Parameters
    ----------
    l_loop_h: loop inductance of the ring. [H]
    c_par_f: parasitic capacitance the ring sees (diode + winding). [F]

    Returns
    -------
    (Rs [Ω], Cs [F]).

    References
    ----------
    Severns, "Design of snubbers for power circuits" (RC damping network): opening read, the
    R = √(L/C), Cs = 3-4·C_par sizing from memory.  Analog Devices, "RC Snubbing for the Lab"
    (technical article, analog.com): read the method of adding capacitance until the ringing
    frequency is cut in half, then a series resistance until acceptably damped.  Flyback reference
    note §2.2 [M] states the same rule.
    """
    l_h = _positive("l_loop_h", l_loop_h)
    c_f = _positive("c_par_f", c_par_f)
    return math.sqrt(l_h / c_f), CLASSIC_SNUBBER_C_RATIO * c_f


# --------------------------------------------------------------------------------------------
# Flyback operating point → ring
# --------------------------------------------------------------------------------------------


def default_secondary_leakage(llk_primary_h: float, n: float) -> float:
    """Secondary loop inductance when only the primary-referred leakage is known, Llk/n².

    Conservative: the whole measured leakage (primary with the secondary shorted) is referred to the
    secondary loop.  That is also what the ring sees: at turn-on the switch is closed, so the
    primary leakage referred to the secondary is in series with the secondary's own leakage; a
    smaller loop inductance rings with a larger di/dt and so a larger recovery current.

    Parameters
    ----------
    llk_primary_h: leakage inductance referred to the primary. [H]
    n: turns ratio Np/Ns. [-]

    Returns
    -------
    Loop inductance referred to the secondary. [H]

    References
    ----------
    ``common practice`` (from memory): impedance referral through an ideal transformer, Z/n².
    """
    return _non_negative("llk_primary_h", llk_primary_h) / _positive("n", n) ** 2


def rectifier_peak(
    v_in: float,
    n: float,
    v_out: float,
    v_f: float,
    mode,
    *,
    l_sec_h: float,
    c_j_f: float,
    c_w_f: float,
    i_sec_valley_a: float = 0.0,
    qrr_c: float | None = None,
    trr_s: float | None = None,
    subtype: str = "standard",
    r_loop_ohm: float = 0.0,
    snubber_r_ohm: float | None = None,
    snubber_c_f: float | None = None,
) -> RingResult:
    """Peak reverse voltage of a flyback's output rectifier at switch turn-on.

    Assumptions (each conservative where there is a choice):

    * Steady reverse voltage v_final = Vin/n + Vout (the engine's V_R; the leakage divider
      Lm/(Lm + Llk) is ignored).
    * Step = Vin/n + Vout + Vf: from forward conduction (diode at −Vf) to blocking.  In CCM that is
      the real step; in DCM (and BCM) it is the worst phase of the dead-time ring, when the winding
      is back at +(Vout + Vf) and the diode near 0 V as the switch turns on (at the best phase the
      diode sits at about 2·Vout and the step is smaller).
    * di/dt = step / l_sec_h while the secondary current commutates to the primary.
    * Reverse recovery only for PN diodes (not ``schottky``/``sic``) in CCM, when the diode still
      carries ``i_sec_valley_a`` > 0 as the switch turns on; in DCM/BCM the current has reached zero.
      Qrr is the catalog ``qrr_c`` when given (used as is, not rescaled to the operating current),
      else ``qrr_from_trr(trr_s, di/dt)``, else the subtype default ``DEFAULT_TRR_S``; then
      Irr = ``reverse_recovery_current(Qrr, di/dt)`` (abrupt recovery).
    * Capacitance = c_j_f + c_w_f (junction and winding capacitance in parallel across the diode;
      the output capacitor is an AC short).

    Parameters
    ----------
    v_in: DC input voltage. [V]
    n: turns ratio Np/Ns. [-]
    v_out: output voltage. [V]
    v_f: rectifier forward drop at switch turn-on. [V]
    mode: ``"ccm"``, ``"dcm"``, ``"bcm"`` (``"qr"``) or the engine's codes 0, 1, 2.
    l_sec_h: secondary loop inductance (see ``default_secondary_leakage``). [H]
    c_j_f: diode junction capacitance (see ``DEFAULT_CJ_F``). [F]
    c_w_f: winding capacitance (see ``DEFAULT_WINDING_CAPACITANCE_F``). [F]
    i_sec_valley_a: rectifier current when the switch turns on (CCM valley). [A]
    qrr_c: catalog recovery charge. [C]
    trr_s: catalog recovery time. [s]
    subtype: diode subtype (``schottky``, ``ultrafast``, ``standard``, ``sic``).
    r_loop_ohm: loop series resistance. [Ω]
    snubber_r_ohm, snubber_c_f: RC snubber across the rectifier. [Ω], [F]

    Returns
    -------
    RingResult.

    References
    ----------
    Flyback reference note §2.2 (V_R [M], V_step [D], k_ring [CP]); the ring as in ``rectifier_ring``;
    recovery as in ``reverse_recovery_current`` and ``qrr_from_trr``.
    """
    m = _mode(mode)
    v_in = _non_negative("v_in", v_in)
    n = _positive("n", n)
    v_out = _non_negative("v_out", v_out)
    v_f = _non_negative("v_f", v_f)
    l_sec = _positive("l_sec_h", l_sec_h)
    c = _non_negative("c_j_f", c_j_f) + _non_negative("c_w_f", c_w_f)
    i_valley = _non_negative("i_sec_valley_a", i_sec_valley_a)
    sub = str(subtype).strip().lower()
    if sub not in DEFAULT_TRR_S:
        raise ValueError(f"unknown diode subtype {subtype!r}: expected one of {', '.join(DEFAULT_TRR_S)}")
    v_final = v_in / n + v_out
    v_step = v_final + v_f
    di_dt = v_step / l_sec
    i_rr = 0.0
    if m == "ccm" and sub not in _NO_RECOVERY and i_valley > 0.0:
        if qrr_c is not None:
            qrr = _non_negative("qrr_c", qrr_c)
        elif trr_s is not None:
            qrr = qrr_from_trr(trr_s, di_dt)
        else:
            qrr = qrr_from_trr(DEFAULT_TRR_S[sub], di_dt)
        i_rr = reverse_recovery_current(qrr, di_dt)
    return rectifier_ring(v_step, v_final, l_sec, c, i_initial_a=i_rr, r_loop_ohm=r_loop_ohm,
                          snubber_r_ohm=snubber_r_ohm, snubber_c_f=snubber_c_f)
