"""The flyback stress engine: per-corner currents and voltages of the power stage, vectorised.

:func:`solve` takes an :class:`OperatingPoints` (one numpy array per quantity, one element per
corner; per-output quantities are ``(corners, outputs)`` arrays) and returns one array per
result, with no Python loop over corners.  :func:`evaluate` builds a design's corners
(:mod:`partcheck.stress.corners`), solves them, checks them (:mod:`partcheck.stress.validity`)
and returns a :class:`StressResult`; :func:`corner_waveforms` gives one corner's waveforms as
:class:`~partcheck.stress.waveform.PiecewiseLinear` for bank sharing and plots.

The model (every formula below names its section of the flyback reference note, which tags it as
read [R], from memory [M], derived [D] or common practice [CP]):

* Primary quantities come from the input power Pin = Po/eta, secondary ones from the output
  currents by charge balance (note sec. 0).  The rectifier peak reported is the larger of the
  secondary-side value and the primary peak reflected (conservative, note sec. 0).
* Fixed frequency: CCM when Pin exceeds the critical power (Lm above the critical inductance),
  otherwise DCM (sec. 1.1-1.3).  Boundary mode: per-corner frequency with the valley delay
  (sec. 1.4); a frequency above the stated maximum runs DCM at the maximum ([CP]).
* Leakage Llk is in series with Lm on the primary: the current ramps in Lm + Llk during the
  on-time.  At turn-off the clamp holds the drain at Vin + Vc; the leakage current falls to zero
  in ts = Llk·Ipk/(Vc − Vr) while Lm is held at Vr by the secondary.  The secondary current is
  therefore n·(im − ilk): it rises linearly from zero to a reduced peak n·(Ipk − Vr·ts/Lm) at ts
  and then falls with im [D].  The clamp takes 0.5·Llk·Ipk²·Vc/(Vc − Vr) per cycle (sec. 2.1).
  In CCM the switch turns on into the conducting secondary: for tc = Llk·Iv/(Vin + Vr) the primary
  current rises at (Vin + Vr)/Llk while the secondary current falls to zero, which lengthens the
  duty by tc·fs [D].  The diode's reverse recovery and any ringing are not modelled.
* Several outputs share the secondary current in proportion to their power (sec. 7).
"""

from __future__ import annotations

from dataclasses import dataclass, fields

import numpy as np

from .clamp import clamp_ripple, loop_overshoot, rcd_clamp_voltage
from .magnetics import core_peak_current
from .waveform import PiecewiseLinear

CCM, DCM, BCM = 0, 1, 2
MODE_NAMES = ("CCM", "DCM", "BCM")


@dataclass
class OperatingPoints:
    """A struct of arrays: one element per corner (``N``), per-output arrays ``(N, m)``.

    Attributes (SI units)
    ---------------------
    vin: DC input [V].  vout, iout, vf, n: output voltage [V], load current [A], rectifier drop [V],
    turns ratio Np/Ns [-] per output.  rsec: secondary winding resistance [Ω].  cout, esr: output bank
    capacitance [F] and ESR [Ω] (NaN when unknown).  lm, llk: magnetizing and leakage inductance
    referred to the primary [H].  fsw: fixed frequency, or the maximum frequency in boundary mode
    (inf = none) [Hz].  eta: efficiency Po/Pin [-].  vclamp: clamp voltage (inf = no clamp) [V].
    boundary: boundary (valley) mode [bool].  cd: drain-node capacitance for the valley delay [F].
    valley: valley number [-].  ilim: switch current limit (NaN = none) [A].  t_pd: current-limit
    propagation delay [s].  at_limit: the load is raised until the switch peak reaches the limit.
    rclamp: RCD clamp resistance; finite, the clamp voltage follows from it at every corner and
    ``vclamp`` is ignored (inf/NaN = the fixed ``vclamp``) [Ω].  cclamp: RCD clamp capacitance for
    the ripple estimate (NaN/inf = none) [F].  clamp_factor: highest Zener/TVS level per volt of
    ``vclamp`` over tolerance and temperature, used for the drain peak only (1 = the nominal) [-].
    v_fr: clamp-diode forward-recovery overshoot [V].  l_loop: clamp-loop stray inductance [H].
    c_node: drain-node capacitance for the drain rise time of the loop overshoot [F].  The defaults
    of :meth:`create` (inf, NaN, 1, 0, 0, 100 pF) add nothing to the drain peak.
    """

    vin: np.ndarray
    vout: np.ndarray
    iout: np.ndarray
    vf: np.ndarray
    n: np.ndarray
    rsec: np.ndarray
    cout: np.ndarray
    esr: np.ndarray
    lm: np.ndarray
    llk: np.ndarray
    fsw: np.ndarray
    eta: np.ndarray
    vclamp: np.ndarray
    boundary: np.ndarray
    cd: np.ndarray
    valley: np.ndarray
    ilim: np.ndarray
    t_pd: np.ndarray
    at_limit: np.ndarray
    rclamp: np.ndarray
    cclamp: np.ndarray
    clamp_factor: np.ndarray
    v_fr: np.ndarray
    l_loop: np.ndarray
    c_node: np.ndarray

    _PER_OUTPUT = ("vout", "iout", "vf", "n", "rsec", "cout", "esr")

    @classmethod
    def create(cls, *, vin, vout, iout, n, lm, fsw, eta, vf=0.0, rsec=0.0, cout=np.nan, esr=np.nan, llk=0.0,
               vclamp=np.inf, boundary=False, cd=0.0, valley=1, ilim=np.nan, t_pd=0.0, at_limit=False,
               rclamp=np.inf, cclamp=np.nan, clamp_factor=1.0, v_fr=0.0, l_loop=0.0, c_node=100e-12):
        """Broadcast scalars and arrays to ``(N,)`` and ``(N, m)`` shapes."""
        vin = np.atleast_1d(np.asarray(vin, dtype=float))
        per = {k: np.asarray(v, dtype=float) for k, v in
               {"vout": vout, "iout": iout, "vf": vf, "n": n, "rsec": rsec, "cout": cout, "esr": esr}.items()}
        m = max(np.atleast_1d(per["vout"]).shape[-1], np.atleast_1d(per["iout"]).shape[-1])
        scal = {"lm": lm, "llk": llk, "fsw": fsw, "eta": eta, "vclamp": vclamp, "cd": cd, "ilim": ilim, "t_pd": t_pd,
                "rclamp": rclamp, "cclamp": cclamp, "clamp_factor": clamp_factor, "v_fr": v_fr, "l_loop": l_loop,
                "c_node": c_node}
        n_corners = max([vin.size] + [np.size(v) for v in scal.values()] +
                        [np.atleast_2d(v).shape[0] if np.ndim(v) == 2 else 1 for v in per.values()])
        shape1, shape2 = (n_corners,), (n_corners, m)
        out = {"vin": np.broadcast_to(vin, shape1).astype(float)}
        for k, v in scal.items():
            out[k] = np.broadcast_to(np.asarray(v, dtype=float), shape1).astype(float)
        for k, v in per.items():
            v = v if v.ndim == 2 else np.broadcast_to(np.atleast_1d(v), (m,))
            out[k] = np.broadcast_to(v, shape2).astype(float)
        out["boundary"] = np.broadcast_to(np.asarray(boundary, dtype=bool), shape1).copy()
        out["valley"] = np.broadcast_to(np.asarray(valley, dtype=float), shape1).astype(float)
        out["at_limit"] = np.broadcast_to(np.asarray(at_limit, dtype=bool), shape1).copy()
        return cls(**out)

    def __len__(self) -> int:
        return int(self.vin.shape[0])

    def window(self, start: int, stop: int) -> OperatingPoints:
        """Corners ``start:stop`` as views (no copy)."""
        return OperatingPoints(**{f.name: getattr(self, f.name)[start:stop] for f in fields(self)})

    def take(self, index) -> OperatingPoints:
        """The corners at ``index`` (an int, slice or index array)."""
        index = np.atleast_1d(np.arange(len(self))[index])
        return OperatingPoints(**{f.name: getattr(self, f.name)[index] for f in fields(self)})


def _positive_area(a, b, dt):
    """∫ max(y, 0) dt for y linear from ``a`` to ``b`` over ``dt``: dt·(b⁺² − a⁺²)/(2(b − a)) [D]."""
    p, q = np.maximum(a, 0.0), np.maximum(b, 0.0)
    span = b - a
    flat = np.abs(span) < 1e-12 * (np.abs(a) + np.abs(b) + 1e-300)
    return dt * np.where(flat, 0.5 * (p + q), (q * q - p * p) / (2.0 * np.where(flat, 1.0, span)))


def solve(op: OperatingPoints, chunk: int = 32768) -> dict[str, np.ndarray]:
    """Currents, voltages, timing and losses at every operating point, as arrays.

    Returns a dict of arrays (``(N,)``, or ``(N, m)`` for per-output keys ending in ``_j``):
    mode (0 CCM, 1 DCM, 2 BCM), fs [Hz], duty, d2 (secondary conduction incl. ts) [-], ton, ts, t2 [s],
    vr [V], pin, psec, po, p_clamp [W], iin, ipk, iv, sw_rms, sw_avg, clamp_avg, clamp_rms,
    pri_rms [A], sec_pk_ref, sec_v_ref (secondary current referred to the primary at ts and at the
    end of conduction) [A], sw_vpk, clamp_v, clamp_diode_vr [V], fs_clamped [bool], iout_j, is_pk_j,
    is_rms_j, is_avg_j, icout_j [A], vrect_j, vripple_j [V], scale_j (secondary = scale·referred) [-],
    icin [A], secondary_fit (the secondary charge fits the off-time) [bool].

    Clamp and drain peak [V]: clamp_vc (mean clamp voltage: the fixed vclamp, or the RCD
    resistor's energy balance), clamp_ripple (ΔVc ≈ P_clamp/(Vc·Cc·fs), NaN without a capacitor),
    clamp_level (the clamp voltage the drain sees: Vc + ΔVc/2, or vclamp·clamp_factor for a
    Zener/TVS), sw_v_plateau (Vin + reflected plateau), sw_vpk_steady (Vin + clamp_level; Vin +
    plateau without a clamp), sw_vpk_fr (forward recovery), sw_vpk_loop (the clamp-loop ring,
    Ipk·√(L_loop/C_node)), sw_vpk = steady + fr + loop; clamp_v = clamp_vc + ΔVc/2 (the voltage on
    the clamp parts); clamp_diode_i_off (the clamp diode's current when it turns off: 0, the
    leakage current falls softly to zero) [A].

    References
    ----------
    Flyback reference note secs. 0, 1.1-1.4, 2.1, 2.2, 3.1, 3.2, 5, 7 (Erickson & Maksimovic ch. 6,
    Mohan/Undeland/Robbins ch. 10, Hart ch. 7 treatment, from memory; leakage interval derived);
    the clamp formulas in :mod:`partcheck.stress.clamp`.
    """
    with np.errstate(all="ignore"):
        if len(op) <= chunk:
            return _solve(op)
        # Blocks that stay in cache: the same arithmetic, several times faster on large arrays
        # than one pass whose every temporary is a fresh multi-megabyte allocation.
        out: dict[str, np.ndarray] = {}
        for start in range(0, len(op), chunk):
            part = _solve(op.window(start, start + chunk))
            if not out:
                out = {k: np.empty((len(op),) + np.shape(v)[1:], dtype=np.asarray(v).dtype) for k, v in part.items()}
            for k, v in part.items():
                out[k][start:start + chunk] = v
        return out


def _solve(op: OperatingPoints) -> dict[str, np.ndarray]:
    # Per-corner quantities are (N,) arrays; per-output ones are handled as (m, N) so that every
    # operation runs along contiguous rows (the results are handed back as (N, m) views).
    vin, lm, llk, eta, vc_fixed = op.vin, op.lm, op.llk, op.eta, op.vclamp
    by_r = np.isfinite(op.rclamp)  # RCD clamp: the voltage follows from its resistor (sec. 2.1) [D]
    any_r = bool(by_r.any())
    vc = vc_fixed
    vout, vf, n_j, rsec, esr = op.vout.T, op.vf.T, op.n.T, op.rsec.T, np.nan_to_num(op.esr.T)
    lp = lm + llk  # the on-time ramp inductance [H]
    has_lk = llk > 0
    any_bcm, any_limit = bool(op.boundary.any()), bool(op.at_limit.any())
    fixed = ~op.boundary
    if any_bcm:
        td = (2.0 * op.valley - 1.0) * np.pi * np.sqrt(lp * op.cd)  # valley delay (sec. 1.4) [M]
        fmax = np.where(op.boundary, op.fsw, np.inf)
    vf_eff = vf
    iout = op.iout.T
    passes = 2 if np.any(rsec > 0) else 1
    for _ in range(passes):
        vr = n_j[0] * (vout[0] + vf_eff[0])  # reflected voltage (sec. 0) [M]
        vin_m = vin * lm / lp  # the part of Vin across Lm during the on-time [V]
        d_ccm = vr / (vin_m + vr)  # volt-second balance on Lm (sec. 1.2 with Llk) [D]
        a_bcm = lp / vin + lm / vr  # BCM: T = a·Ipk + td (sec. 1.4) [D]
        lam = llk / (vin + vr)  # CCM turn-on commutation: tc = λ·Iv, the leakage current rises at (Vin + Vr)/Llk [D]

        iout = op.iout.T
        if any_limit:  # overload corners: the load that brings the switch peak to the limit (sec. 5) [D]
            ipk_lim = core_peak_current(op.ilim, vin, lp, op.t_pd)
            dip_lim = vin * d_ccm / (lp * op.fsw)
            iv_lim = ipk_lim - dip_lim
            pin_lim = np.where(iv_lim > 0, vin * (0.5 * lam * op.fsw * iv_lim**2 + 0.5 * (iv_lim + ipk_lim) * d_ccm),
                               0.5 * lp * ipk_lim**2 * op.fsw)
            if any_bcm:
                f_b = 1.0 / (a_bcm * ipk_lim + td)
                pin_lim = np.where(fixed, pin_lim, 0.5 * lp * ipk_lim**2 * np.minimum(f_b, fmax))
            load = np.where(op.at_limit, pin_lim * eta / np.sum(vout * iout, axis=0), 1.0)
            iout = iout * load

        po = np.sum(vout * iout, axis=0)
        psec = np.sum((vout + vf_eff) * iout, axis=0)  # power through Lm (sec. 0) [D]
        pin = po / eta
        iin = pin / vin

        # Primary side from Pin.
        fs = op.fsw
        ccm = fixed & (pin > (vin * d_ccm) ** 2 / (2.0 * lp * fs))  # above the critical load (sec. 1.1) [D]
        ipk = np.sqrt(2.0 * pin / (lp * fs))  # DCM (sec. 1.3) [M]
        if any_bcm:
            ipk_b = (pin * a_bcm + np.sqrt((pin * a_bcm) ** 2 + 2.0 * lp * pin * td)) / lp  # (sec. 1.4) [D]
            f_bcm = 1.0 / (a_bcm * ipk_b + td)
            fs_clamped = op.boundary & (f_bcm > fmax)
            bcm = op.boundary & ~fs_clamped
            fs = np.where(fixed, fs, np.minimum(f_bcm, fmax))
            ipk = np.where(bcm, ipk_b, np.sqrt(2.0 * pin / (lp * fs)))
        else:
            fs_clamped = bcm = np.zeros(vin.shape, dtype=bool)
        period = 1.0 / fs
        dip = vin_m * d_ccm * period / lm  # = Vin·D/(Lp·fs)
        # CCM valley from the switch charge per cycle Iin·T = tc·Iv/2 + (Iv + dIp/2)·D_ccm·T (sec. 1.2 with tc) [D]
        r_ccm = (iin - 0.5 * dip * d_ccm) * period
        dt_ccm = d_ccm * period
        iv = np.where(ccm, 2.0 * r_ccm / (dt_ccm + np.sqrt(dt_ccm * dt_ccm + 2.0 * lam * r_ccm)), 0.0)
        ipk = np.where(ccm, iv + dip, ipk)
        if any_r:  # Vc²/Rc = ½·Llk·Ipk²·fs·Vc/(Vc − Vr) (sec. 2.1) [D]
            vc = np.where(by_r, rcd_clamp_voltage(op.rclamp, llk, ipk, fs, vr), vc_fixed)
        gamma = np.where(has_lk, llk / (vc - vr), 0.0)  # ts per ampere of Ipk [s/A]
        beta = 1.0 - vr * gamma / lm  # share of the magnetizing current left after ts [-]
        tc = lam * iv
        ton = np.where(ccm, dt_ccm + tc, lp * ipk / vin)
        duty = ton * fs
        toff = period - ton
        d_ramp = (ton - tc) * fs
        sw_ms = d_ramp * (ipk * ipk + ipk * iv + iv * iv) / 3.0 + tc * fs * iv * iv / 3.0  # trapezoid RMS² (sec. 1.2) [M]
        sw_avg = 0.5 * d_ramp * (ipk + iv) + 0.5 * tc * fs * iv

        # Leakage reset through the clamp (sec. 2.1) [M].
        ts_p = gamma * ipk
        p_clamp = np.where(has_lk, 0.5 * llk * ipk * ipk * fs * vc / (vc - vr), 0.0)
        clamp_avg = 0.5 * ipk * ts_p * fs
        clamp_ms = ipk * ipk * ts_p * fs / 3.0

        # Secondary side from the output currents: referred charge per cycle q = Psec/(Vr·fs) [D].
        q_ref = psec * period / vr
        dim = vr * toff / lm
        # charge: ts rise + ramp to the valley over toff − ts + the commutation tail tc; quadratic in x [D]
        b = (beta + 1.0) * toff + gamma * dim + tc
        c = dim * (toff + tc) + 2.0 * q_ref
        x_ccm = 2.0 * c / (b + np.sqrt(np.maximum(b * b - 4.0 * gamma * c, 0.0)))  # stable root, = c/b at γ = 0
        sec_ccm = ccm & (x_ccm > dim)
        x = np.where(sec_ccm, x_ccm, np.sqrt(2.0 * psec * period / (lm * beta)))  # DCM: 0.5·Lm·β·x² per cycle [D]
        isv = np.where(sec_ccm, x_ccm - dim, 0.0)
        ts = gamma * x
        im_ts = beta * x
        t2 = np.where(sec_ccm, toff - ts, lm * im_ts / vr)
        tc_s = np.where(sec_ccm, tc, 0.0)
        avg_ref = 0.5 * fs * (im_ts * ts + (im_ts + isv) * t2 + isv * tc_s)
        ms_ref = fs * (ts * im_ts**2 + t2 * (im_ts**2 + im_ts * isv + isv**2) + tc_s * isv**2) / 3.0
        scale = iout / avg_ref  # charge balance per output; = k_j·n_j with proportional sharing (sec. 7)
        is_rms = scale * np.sqrt(ms_ref)
        if passes == 2:  # winding loss passes through Lm: fold it into an effective drop (sec. 0) [D]
            vf_eff = vf + rsec * is_rms**2 / iout

    is_pk_sec = scale * im_ts
    is_pk = scale * np.maximum(im_ts, beta * ipk)  # conservative peak (sec. 0) [D]
    icout = np.sqrt(np.maximum(is_rms**2 - iout**2, 0.0))  # (sec. 3.1) [M]
    icin = np.sqrt(np.maximum(sw_ms - sw_avg**2, 0.0))  # (sec. 3.1) [M]

    # Output ripple: charge above Io on C plus the ESR step (sec. 3.2) [M]/[D].
    sv = scale * isv
    a0, a1, a2 = -iout, is_pk_sec - iout, sv - iout
    q_plus = _positive_area(a0, a1, ts) + _positive_area(a1, a2, t2)
    if np.any(tc_s > 0):
        q_plus = q_plus + _positive_area(a2, a0, tc_s)
    vripple = q_plus / op.cout.T + esr * is_pk_sec

    clamped = has_lk & np.isfinite(vc)
    # Reflected plateau just after turn-off: the peak secondary current adds its drop in the winding
    # resistance and the bank's ESR (sec. 2.1, n·(Vo + Vf + Ispk·Rsec)) [M]/[D].
    vr_pk = np.max(n_j * (vout + vf_eff + (rsec + esr) * is_pk_sec), axis=0)
    mode = np.where(ccm, CCM, np.where(bcm, BCM, DCM))
    # Clamp voltage the drain sees: RCD capacitor peak Vc + ΔVc/2, or the Zener/TVS at its highest
    # level over tolerance and temperature; then the forward-recovery and loop overshoots (sec. 2.1).
    has_c = np.isfinite(op.cclamp) & (op.cclamp > 0)
    ripple = np.where(has_c & clamped, clamp_ripple(p_clamp, vc, op.cclamp, fs), np.nan)
    half = np.where(np.isfinite(ripple), 0.5 * ripple, 0.0)
    level = np.where(by_r | has_c, vc + half, vc * op.clamp_factor)
    v_plateau = vin + vr_pk
    steady = np.where(clamped, vin + level, v_plateau)
    v_fr = np.where(clamped, op.v_fr, 0.0)
    v_loop = np.where(clamped & (op.l_loop > 0), loop_overshoot(op.l_loop, ipk, op.c_node, steady), 0.0)
    return {
        "mode": mode, "fs": fs, "fs_clamped": fs_clamped, "duty": duty, "d2": (ts + t2) * fs,
        "ton": ton, "tc": tc_s, "ts": ts, "t2": t2, "vr": vr, "pin": pin, "po": po, "psec": psec, "p_clamp": p_clamp,
        "iin": iin, "ipk": ipk, "iv": iv, "sw_rms": np.sqrt(sw_ms), "sw_avg": sw_avg, "icin": icin,
        "clamp_avg": clamp_avg, "clamp_rms": np.sqrt(clamp_ms), "ts_primary": ts_p,
        "pri_rms": np.sqrt(sw_ms + clamp_ms), "sec_pk_ref": im_ts, "sec_v_ref": isv, "lp": lp,
        "sw_vpk": steady + v_fr + v_loop,  # (sec. 2.1) [M]/[CP]
        "sw_vpk_steady": steady, "sw_vpk_fr": v_fr, "sw_vpk_loop": v_loop, "sw_v_plateau": v_plateau,
        "clamp_vc": np.where(clamped, vc, np.nan), "clamp_ripple": ripple,
        "clamp_level": np.where(clamped, level, np.nan), "clamp_diode_i_off": np.zeros(vin.shape),
        "clamp_v": np.where(clamped, vc + half, vr), "clamp_diode_vr": vin + np.where(np.isfinite(vc), vc + half, vr),
        "secondary_fit": (ts <= toff * (1 + 1e-9)) & (beta > 0), "beta": beta,
        "vin_dc": vin, "iout_j": iout.T, "vout_j": op.vout, "scale_j": scale.T, "is_pk_j": is_pk.T,
        "is_rms_j": is_rms.T, "is_avg_j": (scale * avg_ref).T, "icout_j": icout.T, "vripple_j": vripple.T,
        "vrect_j": (vin / n_j + vout).T,  # (sec. 2.2) [M]
    }


def waveforms_at(op: OperatingPoints, sol: dict[str, np.ndarray], i: int,
                 names: tuple[str, ...]) -> dict[str, PiecewiseLinear]:
    """One corner's current waveforms over a period, t = 0 at switch turn-on. [s], [A]

    Keys: ``switch``, ``clamp``, ``primary`` (winding), ``magnetizing``, ``input_cap`` (switch
    current minus its average), and per output ``rectifier:<name>`` and ``output_cap:<name>``
    (rectifier current minus Iout).
    """
    g = {k: float(np.asarray(v)[i]) if np.ndim(v) == 1 else v[i] for k, v in sol.items()}
    period = 1.0 / g["fs"]
    ton, tc, ts, t2, tsp = g["ton"], g["tc"], g["ts"], g["t2"], g["ts_primary"]
    ipk, iv = g["ipk"], g["iv"]
    switch = PiecewiseLinear(np.array([0.0, tc, ton, ton, period]), np.array([0.0 if tc > 0 else iv, iv, ipk, 0.0, 0.0]))
    clamp = PiecewiseLinear(np.array([0.0, ton, ton, ton + tsp, period]), np.array([0.0, 0.0, ipk, 0.0, 0.0]))
    # Switch and clamp conduct one after the other: the winding carries switch then clamp current.
    primary = PiecewiseLinear(np.array([0.0, tc, ton, ton, ton + tsp, period]),
                              np.array([switch.y[0], iv, ipk, ipk, 0.0, 0.0]))
    if g["mode"] == CCM:
        iv_m = ipk - g["vr"] * (period - ton) / float(op.lm[i])
        mag = PiecewiseLinear(np.array([0.0, tc, ton, period]), np.array([iv_m, iv, ipk, iv_m]))
    else:
        t_demag = min(ton + float(op.lm[i]) * ipk / g["vr"], period)
        mag = PiecewiseLinear(np.array([0.0, ton, t_demag, period]), np.array([0.0, ipk, 0.0, 0.0]))
    end = min(ton + ts + t2, period)
    sv = g["sec_v_ref"]
    ref_t = np.array([0.0, tc, ton, ton + ts, end, period])
    ref_y = np.array([sv, 0.0, 0.0, g["sec_pk_ref"], sv, sv if end >= period else 0.0])
    waves = {"switch": switch, "clamp": clamp, "primary": primary, "magnetizing": mag,
             "input_cap": PiecewiseLinear(switch.t, switch.y - g["sw_avg"])}
    for j, name in enumerate(names):
        rect = PiecewiseLinear(ref_t, ref_y * g["scale_j"][j])
        waves[f"rectifier:{name}"] = rect
        waves[f"output_cap:{name}"] = PiecewiseLinear(ref_t, rect.y - g["iout_j"][j])
    return waves



# --------------------------------------------------------------------------------------------
# Design level: corners → role stresses
# --------------------------------------------------------------------------------------------

#: Stresses kept at a voltage-only (surge) corner.
VOLTAGE_KEYS = frozenset({"v_peak", "v_reverse", "v", "v_dc", "v_plateau", "v_clamp_level", "v_overshoot_fr",
                          "v_overshoot_loop", "v_reflected", "v_mean"})

#: Unit kind of each stress key (for tables).
STRESS_KINDS = {"v_peak": "V", "v_reverse": "V", "v": "V", "v_dc": "V", "v_ripple_pp": "V", "i_peak": "A",
                "i_rms": "A", "i_avg": "A", "i_rms_pri": "A", "i_rms_sec": "A", "p_loss": "W", "b_peak": "T",
                "v_plateau": "V", "v_clamp_level": "V", "v_overshoot_fr": "V", "v_overshoot_loop": "V",
                "v_reflected": "V", "v_mean": "V", "i_off": "A"}


@dataclass
class CornerResult:
    """One corner's role stresses: ``roles[role][stress]`` in SI units (None when unknown)."""

    id: str
    vin: float
    load: str
    mode: str
    duty: float
    fsw: float
    t_amb: float
    roles: dict[str, dict[str, float | None]]
    worst_for: list[str]
    iout: dict[str, float]

    def to_dict(self) -> dict:
        return {"id": self.id, "vin": self.vin, "load": self.load, "mode": self.mode, "duty": self.duty,
                "fsw": self.fsw, "t_amb": self.t_amb, "iout": dict(self.iout), "roles": self.roles,
                "worst_for": list(self.worst_for)}


@dataclass
class StressResult:
    """The engine's answer for one design (``to_dict()`` is the ``partcheck stress --format json`` shape)."""

    design_name: str
    corners: list[CornerResult]
    notes: list[str]

    def to_dict(self) -> dict:
        return {"design": self.design_name, "corners": [c.to_dict() for c in self.corners], "notes": list(self.notes)}

    def corner(self, corner_id: str) -> CornerResult:
        for c in self.corners:
            if c.id == corner_id:
                return c
        raise KeyError(corner_id)

    def worst(self) -> list[dict]:
        """Each role's stresses at their worst (largest) corner, in role order:
        ``[{"role", "stress", "value", "corner", "kind"}]``."""
        rows: dict[tuple[str, str], dict] = {}
        for c in self.corners:
            for role, stresses in c.roles.items():
                for key, value in stresses.items():
                    row = rows.get((role, key))
                    if value is not None and (row is None or row["value"] is None or value > row["value"]):
                        rows[(role, key)] = {"role": role, "stress": key, "value": value, "corner": c.id,
                                             "kind": STRESS_KINDS.get(key.split(":")[0])}
                    elif row is None:
                        rows[(role, key)] = {"role": role, "stress": key, "value": None, "corner": None,
                                             "kind": STRESS_KINDS.get(key.split(":")[0])}
        return list(rows.values())


def output_role(role: str, design, j: int) -> str:
    """``rectifier`` for a single output, ``rectifier:<name>`` with several."""
    return role if len(design.outputs) == 1 else f"{role}:{design.outputs[j].name}"


def role_stresses(design, sol: dict[str, np.ndarray], i: int, voltage_only: bool = False) -> dict[str, dict]:
    """Role → stress → value at corner ``i`` of a solved design (SI units; None when unknown).

    switch: ``v_peak`` [V] the drain peak, the sum of ``v_clamp_level`` (Vin + the clamp voltage the
    drain sees: RCD capacitor peak Vc + ΔVc/2, or the Zener/TVS at its highest level; Vin + the
    reflected plateau without leakage), ``v_overshoot_fr`` (clamp-diode forward recovery) and
    ``v_overshoot_loop`` (clamp-loop ring Ipk·√(L_loop/C_node)); ``v_plateau`` [V] Vin + the reflected plateau (the
    drain after the leakage reset); ``v_reflected`` [V] Vr = n·(Vout + Vf), for the avalanche energy
    (:func:`partcheck.stress.clamp.avalanche_energy`); ``i_peak``, ``i_rms``, ``i_avg`` [A].
    clamp (with a ``[clamp]``): ``v`` [V] the voltage on the clamp parts (RCD: Vc + ΔVc/2),
    ``v_mean`` [V] the mean clamp voltage (fixed, or from the resistor), ``v_ripple_pp`` [V] (RCD
    with a capacitor only), ``p_loss`` [W], ``i_peak``, ``i_avg``, ``i_rms`` [A].  clamp_diode:
    ``v_reverse`` [V], ``i_peak``, ``i_avg``, ``i_rms`` [A] and ``i_off`` [A], the current it turns
    off from: 0, the leakage current falls softly to zero at the end of the reset, so its reverse
    recovery loss is about 0.

    References
    ----------
    flyback-equations.md §2.1 (drain peak, clamp), common practice for the overshoots.
    """
    from .magnetics import flux_density_peak

    def f(key, j=None):
        v = sol[key][i] if j is None else sol[key][i, j]
        return float(v) if np.isfinite(v) else None

    roles: dict[str, dict] = {
        "switch": {"v_peak": f("sw_vpk"), "i_peak": f("ipk"), "i_rms": f("sw_rms"), "i_avg": f("sw_avg"),
                   "v_plateau": f("sw_v_plateau"), "v_clamp_level": f("sw_vpk_steady"),
                   "v_overshoot_fr": f("sw_vpk_fr"), "v_overshoot_loop": f("sw_vpk_loop"), "v_reflected": f("vr")}}
    for j in range(len(design.outputs)):
        roles[output_role("rectifier", design, j)] = {
            "v_reverse": f("vrect_j", j), "i_peak": f("is_pk_j", j), "i_rms": f("is_rms_j", j),
            "i_avg": f("is_avg_j", j)}
    if design.clamp is not None:
        lk = design.transformer.llk > 0
        roles["clamp"] = {"v": f("clamp_v"), "p_loss": f("p_clamp"), "i_peak": f("ipk") if lk else 0.0,
                          "i_avg": f("clamp_avg"), "i_rms": f("clamp_rms"), "v_mean": f("clamp_vc")}
        if design.clamp.kind == "rcd" and design.clamp.capacitor is not None:
            roles["clamp"]["v_ripple_pp"] = f("clamp_ripple")
        roles["clamp_diode"] = {"v_reverse": f("clamp_diode_vr"), "i_peak": f("ipk") if lk else 0.0,
                                "i_avg": f("clamp_avg"), "i_rms": f("clamp_rms"), "i_off": f("clamp_diode_i_off")}
    roles["input_cap"] = {"v_dc": f("vin_dc"), "i_rms": f("icin")}
    for j in range(len(design.outputs)):
        roles[output_role("output_cap", design, j)] = {"v_dc": f("vout_j", j), "i_rms": f("icout_j", j),
                                                       "v_ripple_pp": f("vripple_j", j)}
    tr = {"i_peak": f("ipk"), "i_rms_pri": f("pri_rms"), "i_rms_sec": f("is_rms_j", 0)}
    if len(design.outputs) > 1:
        for j, out in enumerate(design.outputs):
            tr[f"i_rms_sec:{out.name}"] = f("is_rms_j", j)
    t = design.transformer
    if t.turns_primary and t.ae:
        tr["b_peak"] = float(flux_density_peak(t.lm, sol["ipk"][i], t.turns_primary, t.ae))
    roles["transformer"] = tr
    if voltage_only:
        roles = {r: {k: v for k, v in s.items() if k in VOLTAGE_KEYS} for r, s in roles.items()}
        roles = {r: s for r, s in roles.items() if s}
    return roles


def _prepare(design, specs=None):
    from ..design import Design, load_design
    from . import clamp as _clamp
    from . import corners as _corners
    from . import validity

    if not isinstance(design, Design):
        design = load_design(design)
    specs = _corners.build_corners(design) if specs is None else list(specs)
    op = _corners.operating_points(design, specs)
    sol = solve(op)
    _clamp.check(design, specs, op, sol)
    keep, notes = validity.check(design, specs, op, sol)
    notes = notes + _clamp.notes(design, specs, sol)
    return design, specs, op, sol, keep, notes


def evaluate(design, specs=None) -> StressResult:
    """Solve every corner of ``design`` (a :class:`~partcheck.design.Design` or a path to one).

    ``specs`` (a list of :class:`~partcheck.stress.corners.CornerSpec`) replaces the design's own
    corners, for operating points such as a mission profile's.

    Raises
    ------
    DesignError
        The design describes an impossible operating point (see :mod:`partcheck.stress.validity`).
    """
    from .corners import SURGE

    design, specs, op, sol, keep, notes = _prepare(design, specs)
    corners = []
    for i, spec in enumerate(specs):
        if not keep[i]:
            continue
        names = [o.name for o in design.outputs]
        corners.append(CornerResult(
            id=spec.id, vin=float(op.vin[i]), load=spec.load, mode=MODE_NAMES[int(sol["mode"][i])],
            duty=float(sol["duty"][i]), fsw=float(sol["fs"][i]), t_amb=spec.t_amb,
            roles=role_stresses(design, sol, i, voltage_only=spec.load == SURGE), worst_for=[],
            iout={n: float(sol["iout_j"][i, j]) for j, n in enumerate(names)}))
    result = StressResult(design.name, corners, notes)
    for row in result.worst():
        if row["corner"] is not None:
            result.corner(row["corner"]).worst_for.append(f"{row['role']}.{row['stress']}")
    return result


def corner_waveforms(design, corner_id: str, specs=None) -> dict[str, PiecewiseLinear]:
    """The waveforms of one corner (see :func:`waveforms_at`), keys with output names as in the roles."""
    design, specs, op, sol, _keep, _notes = _prepare(design, specs)
    ids = [s.id for s in specs]
    if corner_id not in ids:
        raise KeyError(f"no corner {corner_id!r}; corners are {', '.join(ids)}")
    i = ids.index(corner_id)
    waves = waveforms_at(op, sol, i, tuple(o.name for o in design.outputs))
    if len(design.outputs) == 1:  # single output: also under the plain role names
        name = design.outputs[0].name
        waves["rectifier"] = waves[f"rectifier:{name}"]
        waves["output_cap"] = waves[f"output_cap:{name}"]
    return waves


def sweep(design, vin) -> dict[str, np.ndarray]:
    """Role stresses at full load over an array of input voltages ``vin`` [V], for plots.

    Returns ``{"<role>.<stress>": array}`` plus ``"mode"`` and ``"fsw"``.
    """
    from ..design import Design, load_design
    from . import corners as _corners

    if not isinstance(design, Design):
        design = load_design(design)
    vin = np.asarray(vin, dtype=float)
    specs = [_corners.CornerSpec("sweep", float(v), _corners.FULL, design.environment.ambient_max) for v in vin]
    op = _corners.operating_points(design, specs)
    sol = solve(op)
    out: dict[str, list] = {}
    for i in range(len(vin)):
        for role, stresses in role_stresses(design, sol, i).items():
            for key, value in stresses.items():
                out.setdefault(f"{role}.{key}", []).append(np.nan if value is None else value)
    result = {k: np.array(v) for k, v in out.items()}
    result["mode"] = np.array([MODE_NAMES[int(m)] for m in sol["mode"]])
    result["fsw"] = sol["fs"]
    return result
