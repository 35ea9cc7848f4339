"""Role stresses to part stresses: what each BOM part sees at each corner, beside its rating.

The engine (:mod:`partcheck.stress.flyback`) answers per *role* (the switch, the rectifier of
the 5 V output, the output bank...).  This module turns that into per-*part* stress items using
the catalog record of each part: a capacitor bank's current is split by the parts' own
impedances, a ceramic's capacitance is taken at its DC bias, a switch's loss at its own junction
temperature.  The output is a list of :class:`~partcheck.rules.evaluate.StressItem` (one per
part × parameter × corner) that the rules compare with the policy.

It wires stress models to catalog records; it reads no files and knows no policy except which
catalog column a rule compares with (:func:`rating_column`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Callable, Iterable, Sequence

from .rules.evaluate import StressItem
from .rules.policy import DEFAULT_RATINGS
from .stress import capacitors as caps_model
from .stress import feedback as fb_model
from .stress import ringing
from .stress import semiconductors as semi
from .stress.waveform import PiecewiseLinear
from .units import format_quantity

#: Gate drive assumed when the design file gives none: the driver's peak sink/source current [A]
#: and drive voltage [V].  A small flyback controller's driver is commonly rated 0.3-1 A (common
#: practice, from memory); the low end is taken, since a weaker drive means slower edges and more
#: switching loss.
DEFAULT_GATE_CURRENT_A = 0.3
DEFAULT_GATE_VOLTAGE_V = 10.0
#: With a gate resistor mapped in ``[roles] gate_resistor``, the gate current through the Miller
#: plateau is limited by it: Ig_on = (Vgs − Vpl)/(Rg + Rdrv), Ig_off = Vpl/(Rg + Rdrv).  Plateau and
#: driver output resistance when not given (common practice, from memory: standard-level
#: MOSFETs plateau near 4-5 V; a controller's driver output is a few ohms).
DEFAULT_MILLER_PLATEAU_V = 4.5
DEFAULT_DRIVER_RESISTANCE_OHM = 5.0
#: Optocoupler LED forward drop [V] and shunt-reference cathode voltage [V] when not given.
DEFAULT_LED_VF_V = 1.2
DEFAULT_SHUNT_VKA_V = 2.5


@dataclass
class Corner:
    """What the part models need of one engine corner."""

    id: str
    load: str
    vin: float
    mode: str
    fsw: float
    t_amb: float
    roles: dict[str, dict[str, float | None]]
    waves: dict[str, PiecewiseLinear] | None = None  # None at voltage-only corners


@dataclass
class PartContext:
    """Everything the part models need besides the parts themselves."""

    design: Any
    corners: list[Corner]
    assumptions: set[str] = field(default_factory=set)
    bank_splits: dict[str, dict] = field(default_factory=dict)  # role → worst-corner split, for the report
    losses: dict[str, dict[str, float]] = field(default_factory=dict)  # corner → part → W
    mission: list[tuple[float, Corner]] = field(default_factory=list)  # (fraction of time, corner) for life
    efficiency_factors: dict[str, float] = field(default_factory=dict)  # corner → efficiency used / design
    gate_resistance: float | None = None  # the mapped gate resistor's resistance [Ω]
    snubbers: dict[str, tuple[float | None, float | None]] = field(default_factory=dict)  # output → (Rs [Ω], Cs [F])
    switch_part: Any = None  # the switch's catalog record (for the gate resistor)
    rectifier_parts: dict[str, Any] = field(default_factory=dict)  # output name → rectifier record
    snubber_hints: dict[str, str] = field(default_factory=dict)  # rectifier ref → classic sizing note
    notes: list[str] = field(default_factory=list)  # operating remarks for the reviewer

    @property
    def current_corners(self) -> list[Corner]:
        return [c for c in self.corners if c.waves is not None]

    def add_loss(self, corner: str, ref: str, watts: float | None) -> None:
        if watts is not None and math.isfinite(watts):
            self.losses.setdefault(corner, {})[ref] = watts


def rating_column(category: str, parameter: str, policy: Any, part: Any) -> str | None:
    """The catalog column a policy rule compares ``parameter`` with for ``part``."""
    rule = policy.rule_for(category, parameter, getattr(part, "subtype", None), getattr(part, "dielectric", None)) \
        if policy is not None else None
    if rule is not None and rule.rating_name:
        return rule.rating_name
    return DEFAULT_RATINGS.get((category, parameter))


class _Items:
    """Collects stress items for one part."""

    def __init__(self, refs: Sequence[str], part: Any, role: str, policy: Any) -> None:
        self.refs, self.part, self.role, self.policy = tuple(refs), part, role, policy
        self.items: list[StressItem] = []

    def add(self, parameter: str, stress: float | None, corner: str, *, rating: float | None | str = "column",
            temperature: float | None = None, detail: str = "", required: float | None = None,
            steady: float | None = None, dominant: str = "") -> None:
        p = self.part
        if rating == "column":
            column = rating_column(p.category, parameter, self.policy, p)
            rating = getattr(p, column, None) if column else None
        else:
            # A model passes its own (corrected) rating, unless the rule names another column.
            column = rating_column(p.category, parameter, self.policy, p)
            if column and column != DEFAULT_RATINGS.get((p.category, parameter)):
                rating = getattr(p, column, None)
        if stress is not None and not math.isfinite(stress):
            stress = None
        self.items.append(StressItem(
            refs=self.refs, part_number=p.part_number, role=self.role, category=p.category, subtype=p.subtype,
            dielectric=getattr(p, "dielectric", None), parameter=parameter,
            stress=abs(stress) if stress is not None else None, rating=rating, corner=corner,
            temperature=temperature, t_max=getattr(p, "tj_max", None) or getattr(p, "t_max", None), detail=detail,
            t_knee=getattr(p, "t_knee", None), rating_min=self._rating_min(parameter), required=required,
            steady=steady, dominant=dominant))

    def _rating_min(self, parameter: str) -> float | None:
        """The part's minimum operating value from the column the rule's ``min_rating`` names."""
        p = self.part
        rule = self.policy.rule_for(p.category, parameter, getattr(p, "subtype", None),
                                    getattr(p, "dielectric", None)) if self.policy is not None else None
        column = getattr(rule, "min_rating", None) if rule is not None else None
        return getattr(p, column, None) if column else None


def _r(corner: Corner, role: str, key: str) -> float | None:
    value = corner.roles.get(role, {}).get(key)
    return None if value is None or not math.isfinite(value) else float(value)


# --------------------------------------------------------------------------------------------
# Semiconductors
# --------------------------------------------------------------------------------------------

def switch_items(refs, part, role, ctx: PartContext, policy) -> list[StressItem]:
    """Drain voltage, peak and RMS current, and junction temperature of the primary switch."""
    out = _Items(refs, part, role, policy)
    d = ctx.design
    ig_on, ig_off, vgs, how = gate_drive(d.feedback, ctx.gate_resistance)
    ctx.assumptions.add(f"switch gate drive: {how}")
    for c in ctx.corners:
        _drain_voltage(out, part, c, role, ctx)
        if c.waves is None:
            continue
        i_pk, i_rms = _r(c, role, "i_peak"), _r(c, role, "i_rms")
        out.add("current_peak", i_pk, c.id)
        out.add("current_rms", i_rms, c.id)
        if part.rds_on is None or part.rth_ja is None:
            missing = ", ".join(n for n in ("rds_on", "rth_ja") if getattr(part, n) is None)
            out.add("temperature", None, c.id, detail=f"no {missing} in the catalog: junction temperature not computed")
            continue
        wave = c.waves["switch"]
        i_valley = float(wave.y[0])
        vr = _reflected(d)
        notes = []
        if part.qg is None:
            notes.append("no gate charge in the catalog: switching overlap loss not modelled")
        th = semi.mosfet_losses(
            i_rms, i_pk, i_valley, _r(c, role, "v_clamp_level") or _r(c, role, "v_peak") or c.vin + vr, c.fsw,
            c.mode.lower(),
            rds25=part.rds_on, rds125=part.rds_on_125, coss=part.coss or 0.0, qg=part.qg or 0.0,
            gate_drive_current_a=ig_off, gate_drive_current_on_a=ig_on, vgs=vgs, t_amb_c=c.t_amb, rth_ja=part.rth_ja,
            valley_v=max(0.0, c.vin - vr) if c.mode == "BCM" else None, v_in=c.vin,
            v_on=c.vin + vr if c.mode == "CCM" else None,  # turn-on against the reflected plateau, not the spike
            tj_max_c=part.tj_max or 150.0)
        ctx.add_loss(c.id, out.refs[0], th.p_total)
        detail = "; ".join([*notes, *th.notes] + (["thermal runaway: no junction temperature fixed point"]
                                                   if th.runaway else []))
        out.add("temperature", th.tj, c.id,
                detail=detail or f"P = {th.p_total:.3g} W (conduction {th.p_cond:.3g} W at Rds {th.rds_at_tj:.3g} Ω)")
        out.add("power", th.p_total, c.id, rating=None)
    return out.items


def _drain_voltage(out: _Items, part, c: Corner, role: str, ctx: PartContext) -> None:
    """The drain peak: the clamp level plus the forward-recovery and clamp-loop overshoots, with
    the steady level and the largest contribution named; above the rating, avalanche energy."""
    from .stress.clamp import avalanche_energy

    v_peak = _r(c, role, "v_peak")
    steady = _r(c, role, "v_clamp_level") or _r(c, role, "v_plateau")
    parts = {"clamp level": steady or 0.0, "forward recovery": _r(c, role, "v_overshoot_fr") or 0.0,
             "clamp-loop inductance": _r(c, role, "v_overshoot_loop") or 0.0}
    extra = {k: v for k, v in parts.items() if k != "clamp level" and v > 0}
    dominant = max(extra, key=extra.get) if extra else "clamp level"
    detail = (f"Vin + clamp level {steady:.4g} V" + "".join(f" + {k} {v:.3g} V" for k, v in extra.items())
              if steady is not None and v_peak is not None else "")
    vds = getattr(part, "vds_max", None)
    if v_peak is not None and vds and v_peak > vds:
        d = ctx.design
        ipk = _r(c, role, "i_peak") or _r(c, "transformer", "i_peak")
        vr = _r(c, role, "v_reflected") or _reflected(d)
        if ipk and d.transformer.llk > 0:
            energy = float(avalanche_energy(d.transformer.llk, ipk, vds - c.vin, vr))
            rating = part.e_ar if part.e_ar is not None else part.e_as
            which = "repetitive e_ar" if part.e_ar is not None else "single-pulse e_as" if part.e_as is not None else None
            detail += (f"; AVALANCHE: the drain would break down at {vds:g} V every cycle, "
                       + (f"{format_quantity(energy, 'J')} per event" if math.isfinite(energy)
                          else "without end (V_BR ≤ Vin + Vr)")
                       + (f" against the {which} rating {format_quantity(rating, 'J')}" if which else
                          " (no avalanche rating in the catalog)"))
    out.add("voltage", v_peak, c.id, steady=steady if extra else None, dominant=dominant if extra else "",
            detail=detail)


def _number(value: Any) -> float | None:
    return float(value) if isinstance(value, (int, float)) and not isinstance(value, bool) else None


def gate_drive(feedback: dict, r_gate: float | None) -> tuple[float, float, float, str]:
    """Turn-on and turn-off gate current [A], drive voltage [V] and a sentence saying where they came from."""
    vgs = _number(feedback.get("gate_voltage")) or DEFAULT_GATE_VOLTAGE_V
    i_drv = _number(feedback.get("gate_current"))
    src = f"[feedback] gate_current {i_drv:g} A" if i_drv else \
        f"driver {DEFAULT_GATE_CURRENT_A:g} A (assumed, low end of small controllers' drivers)"
    i_drv = i_drv or DEFAULT_GATE_CURRENT_A
    if r_gate is None:
        return i_drv, i_drv, vgs, f"{src} at {vgs:g} V; no gate resistor mapped ([roles] gate_resistor)"
    r = r_gate + DEFAULT_DRIVER_RESISTANCE_OHM
    vpl = min(DEFAULT_MILLER_PLATEAU_V, 0.9 * vgs)
    ig_on, ig_off = min(i_drv, (vgs - vpl) / r), min(i_drv, vpl / r)
    return ig_on, ig_off, vgs, (f"gate resistor {r_gate:g} Ω + driver {DEFAULT_DRIVER_RESISTANCE_OHM:g} Ω, plateau "
                                f"{vpl:g} V (assumed): {ig_on:.3g} A on, {ig_off:.3g} A off, capped by the {src}")


def gate_resistor_items(refs, part, role, ctx: PartContext, policy) -> list[StressItem]:
    """Gate resistor: its share Rg/(Rg + Rdrv) of the gate-charge energy Qg·Vgs·fs."""
    out = _Items(refs, part, role, policy)
    switch = ctx.switch_part
    for c in ctx.current_corners:
        if part.resistance is None or switch is None or switch.qg is None:
            missing = "resistance" if part.resistance is None else "switch gate charge (qg)"
            out.add("power", None, c.id, detail=f"no {missing} in the catalog: gate resistor power not computed")
            continue
        _on, _off, vgs, _how = gate_drive(ctx.design.feedback, part.resistance)
        p = semi.gate_resistor_power(switch.qg, vgs, c.fsw, part.resistance, DEFAULT_DRIVER_RESISTANCE_OHM)
        ctx.add_loss(c.id, out.refs[0], p)
        out.add("power", p, c.id, temperature=c.t_amb, detail=f"Qg·Vgs·fs·Rg/(Rg + Rdrv), Qg = {switch.qg:.3g} C")
    return out.items


def _reflected(design) -> float:
    o = design.outputs[0]
    return o.turns_ratio * (o.vout + o.vf)


def diode_items(refs, part, role, ctx: PartContext, policy, *, engine_role: str | None = None) -> list[StressItem]:
    """Reverse voltage, average/peak current and junction temperature of a rectifier or clamp diode."""
    role_key = engine_role or role
    out = _Items(refs, part, role, policy)
    for c in ctx.corners:
        out.add("voltage", _r(c, role_key, "v_reverse"), c.id)
        if c.waves is None:
            continue
        i_avg, i_rms, i_pk = _r(c, role_key, "i_avg"), _r(c, role_key, "i_rms"), _r(c, role_key, "i_peak")
        out.add("current_avg", i_avg, c.id)
        out.add("current_peak", i_pk, c.id)
        if part.vf is None or part.rth_ja is None or i_avg is None:
            missing = ", ".join(n for n in ("vf", "rth_ja") if getattr(part, n) is None) or "current"
            out.add("temperature", None, c.id, detail=f"no {missing} in the catalog: junction temperature not computed")
            continue
        # The clamp diode's current falls to zero softly at the end of the leakage reset (role
        # stress i_off = 0): no reverse-recovery loss, whatever the converter's mode.
        soft_off = role_key == "clamp_diode" and (_r(c, role_key, "i_off") or 0.0) == 0.0
        th = semi.rectifier_loss(
            i_avg, i_rms or i_avg, part.vf, part.vf_current, part.subtype or "standard",
            qrr=part.qrr, trr=part.trr,
            v_reverse=_r(c, role_key, "v_reverse") or 0.0, fsw=c.fsw, mode="dcm" if soft_off else c.mode.lower(), t_amb_c=c.t_amb,
            rth_ja=part.rth_ja)
        ctx.add_loss(c.id, out.refs[0], th.p_total)
        out.add("temperature", th.tj, c.id, detail=f"P = {th.p_total:.3g} W")
        out.add("power", th.p_total, c.id, rating=None)
    return out.items


def _output_index(design, role: str) -> int:
    name = role.split(":")[1] if ":" in role else design.outputs[0].name
    return next((j for j, o in enumerate(design.outputs) if o.name == name), 0)


def rectifier_ring(ctx: PartContext, c: Corner, j: int, part, *, snubber: bool = True,
                   valley_a: float | None = None) -> ringing.RingResult:
    """The reverse-voltage ring of output ``j``'s rectifier at corner ``c`` (stated defaults for
    what the design and catalog leave out, recorded in the assumptions)."""
    d = ctx.design
    o = d.outputs[j]
    l_sec = o.leakage
    if l_sec is None:
        l_sec = ringing.default_secondary_leakage(d.transformer.llk, o.turns_ratio) if d.transformer.llk > 0 \
            else 1e-9
        ctx.assumptions.add(f"output {o.name}: secondary leakage {l_sec * 1e9:.3g} nH = primary leakage / n² "
                            "(the whole measured leakage referred to the secondary; give [[output]] leakage)")
    subtype = part.subtype or "standard"
    c_j = part.cj
    if c_j is None:
        c_j = ringing.DEFAULT_CJ_F.get(subtype, ringing.DEFAULT_CJ_F["standard"])
        ctx.assumptions.add(f"{part.part_number}: junction capacitance {c_j * 1e12:g} pF assumed for a {subtype} "
                            "diode (no cj in the catalog)")
    c_w = o.winding_capacitance
    if c_w is None:
        c_w = ringing.DEFAULT_WINDING_CAPACITANCE_F
        ctx.assumptions.add(f"output {o.name}: winding capacitance {c_w * 1e12:g} pF across the rectifier "
                            "(give [[output]] winding_capacitance)")
    if valley_a is None:
        valley_a = _secondary_valley(ctx, c, o.name)
    rs, cs = ctx.snubbers.get(o.name, (None, None)) if snubber else (None, None)
    if rs is None or cs is None:  # an incomplete snubber damps nothing (its parts say why)
        rs = cs = None
    qrr = part.qrr
    i_test = part.vf_current or part.if_avg
    if qrr is not None and i_test and valley_a < i_test:
        # Stored charge is proportional to the forward current (charge-control model): the catalog's
        # Qrr, quoted at about the rated current, scaled down to the current this diode turns off.
        qrr = qrr * valley_a / i_test
    return ringing.rectifier_peak(c.vin, o.turns_ratio, o.vout, o.vf, c.mode.lower(), l_sec_h=l_sec, c_j_f=c_j,
                                  c_w_f=c_w, i_sec_valley_a=valley_a, qrr_c=qrr, trr_s=part.trr,
                                  subtype=subtype, r_loop_ohm=o.dcr or 0.0, snubber_r_ohm=rs, snubber_c_f=cs)


def _secondary_valley(ctx: PartContext, c: Corner, name: str) -> float:
    """Rectifier current when the switch turns on [A]: the end of its conduction in CCM.  At a
    voltage-only (surge) corner, the largest of the current corners' (conservative)."""
    def valley(corner):
        waves = corner.waves or {}
        wave = waves.get(f"rectifier:{name}") or waves.get("rectifier")
        return float(wave.y[-1]) if wave is not None and corner.mode == "CCM" else 0.0
    if c.waves is not None:
        return valley(c)
    return max((valley(k) for k in ctx.current_corners), default=0.0)


def rectifier_items(refs, part, role, ctx: PartContext, policy) -> list[StressItem]:
    """The output rectifier: as any diode, with the reverse voltage at the peak of its turn-on ring."""
    items = diode_items(refs, part, role, ctx, policy)
    j = _output_index(ctx.design, role)
    out = _Items(refs, part, role, policy)
    for c in ctx.corners:
        steady = _r(c, role, "v_reverse")
        if steady is None:
            continue
        ring = rectifier_ring(ctx, c, j, part)
        out.add("voltage", max(ring.v_peak, steady), c.id, steady=steady, dominant=ring.dominant,
                detail=f"steady {steady:.4g} V; turn-on ring to {ring.v_peak:.4g} V ({ring.dominant}: "
                       f"{ring.f_ring_hz / 1e6:.3g} MHz, Z0 {ring.z0_ohm:.3g} Ω, ζ {ring.zeta:.2g}"
                       + (f", reverse recovery {ring.i_initial_a:.3g} A" if ring.i_initial_a > 0 else "") + ")")
    if not ctx.snubbers.get(ctx.design.outputs[j].name) and any(i.stress for i in out.items):
        worst = max(out.items, key=lambda i: i.stress or 0.0)
        c = next(k for k in ctx.corners if k.id == worst.corner)
        ring = rectifier_ring(ctx, c, j, part)
        l_loop = (ring.z0_ohm / (2 * math.pi * ring.f_ring_hz)) if ring.f_ring_hz > 0 else 0.0
        c_par = 1.0 / (ring.z0_ohm * 2 * math.pi * ring.f_ring_hz) if ring.f_ring_hz > 0 else 0.0
        if l_loop > 0 and c_par > 0:
            r_s, c_s = ringing.classic_rc_snubber(l_loop, c_par)
            note = (f"{refs[0]}: no RC snubber across the rectifier; the classic sizing for its {ring.f_ring_hz / 1e6:.3g} "
                    f"MHz ring is Rs ≈ {r_s:.3g} Ω, Cs ≈ {c_s * 1e12:.3g} pF (R = √(L/C), Cs = 4·C)")
            ctx.snubber_hints[refs[0]] = note
    return [i for i in items if i.parameter != "voltage"] + out.items


def snubber_items(refs, parts: dict[str, Any], role, ctx: PartContext, policy) -> list[StressItem]:
    """RC snubber across an output rectifier: resistor power Cs·V²·fs + ring energy·fs and voltage,
    capacitor voltage and RMS current (RC charging pulses at both edges)."""
    d = ctx.design
    j = _output_index(d, role)
    o = d.outputs[j]
    rect = ctx.rectifier_parts.get(o.name)
    rs, cs = ctx.snubbers.get(o.name, (None, None))
    items: list[StressItem] = []
    for ref in refs:
        part = parts[ref]
        out = _Items([ref], part, role, policy)
        for c in ctx.corners:
            if rect is None or rs is None or cs is None:
                why = ("no rectifier mapped for output " + o.name) if rect is None else \
                    "the snubber needs one resistor with a resistance and one capacitor with a capacitance"
                out.add("power" if part.category == "resistor" else "voltage", None, c.id, detail=why)
                break
            ring = rectifier_ring(ctx, c, j, rect)
            swing = ring.v_steady + o.vf
            if part.category == "capacitor":
                # RMS current of the RC charging pulses at both edges, ΔV·√(fs·Cs/Rs); ceramics carry no
                # ripple rating, so it is checked only when the catalog has one and stated otherwise.
                i_rms = swing * math.sqrt(c.fsw * cs / rs) if c.waves is not None else None
                out.add("voltage", ring.v_peak, c.id, steady=ring.v_steady, dominant=ring.dominant,
                        detail="the rectifier's peak reverse voltage"
                        + (f"; RMS current {i_rms * 1e3:.3g} mA (RC charging at both edges)" if i_rms else ""))
                if i_rms is not None and part.ripple_current is not None:
                    out.add("ripple_current", i_rms, c.id, rating=part.ripple_current,
                            detail="RC charging at both edges: ΔV·√(fs·Cs/Rs)")
            elif part.category == "resistor":
                out.add("voltage", ring.v_peak, c.id, detail="at most the rectifier's peak (capacitor discharged)")
                if c.waves is not None:
                    p = ringing.snubber_resistor_power(cs, swing, c.fsw, ring.ring_energy_j)
                    ctx.add_loss(c.id, ref, p)
                    out.add("power", p, c.id, temperature=c.t_amb,
                            detail=f"Cs·V²·fs + ring energy·fs = {cs * swing ** 2 * c.fsw:.3g} W + "
                                   f"{ring.ring_energy_j * c.fsw:.3g} W")
        items += out.items
    return items


def clamp_items(refs, parts: dict[str, Any], role, ctx: PartContext, policy) -> list[StressItem]:
    """The primary clamp: Zener/TVS power and temperature, blocking diode, RCD resistor and capacitor."""
    items: list[StressItem] = []
    absorbers = [r for r in refs if parts[r].category == "clamp"]
    resistors = [r for r in refs if parts[r].category == "resistor"]
    for ref in refs:
        part = parts[ref]
        if part.category == "diode":
            items += diode_items([ref], part, role, ctx, policy, engine_role="clamp_diode")
            continue
        out = _Items([ref], part, role, policy)
        for c in ctx.corners:
            v = _r(c, "clamp", "v")
            if part.category == "capacitor":
                out.add("voltage", v, c.id)
                continue
            if part.category == "resistor":
                out.add("voltage", v, c.id)
            if c.waves is None:
                continue
            p_total = _r(c, "clamp", "p_loss")
            if p_total is None:
                continue
            if part.category == "clamp":
                # Series absorbers share the clamp voltage, hence the power, by breakdown voltage.
                vb = [parts[r].v_breakdown or 1.0 for r in absorbers]
                share = (part.v_breakdown or 1.0) / sum(vb)
                p = p_total * share
                out.add("power", p, c.id)
                tj = semi.zener_temperature(p, c.t_amb, part.rth_ja) if part.rth_ja is not None else None
                out.add("temperature", tj, c.id, detail="" if tj is not None else "no rth_ja in the catalog")
            elif part.category == "resistor":
                p = p_total / max(len(resistors), 1)
                out.add("power", p, c.id, temperature=c.t_amb)
            else:
                continue
            ctx.add_loss(c.id, ref, p)
        items += out.items
    return items


# --------------------------------------------------------------------------------------------
# Capacitor banks
# --------------------------------------------------------------------------------------------

#: ESR assumed for a capacitor whose catalog row has none, in the split where it takes the most
#: current (a very low ESR); the split where it takes none is also run and each part keeps the
#: larger of its two currents (conservative for every part of the bank).
MISSING_ESR_LOW_OHM = 1e-3


def _bank_wave(role: str, corner: Corner):
    if corner.waves is None:
        return None
    key = "input_cap" if role == "input_cap" else role if role in corner.waves else \
        f"output_cap:{role.split(':')[1]}" if ":" in role else "output_cap"
    return corner.waves.get(key)


def _bank_currents(wave, caps: list[str], parts: dict[str, Any], eff: dict[str, float]):
    """Each capacitor's RMS current [A] (None when it cannot be computed) and the split used.

    Parts without a catalog capacitance are left out of the split (the others carry their share);
    parts without an ESR are run at a very low ESR and left out, each part keeping its larger
    current, so a blank rating never flatters any part of the bank.
    """
    known = [r for r in caps if parts[r].capacitance]
    if not known:
        return {r: None for r in caps}, None
    no_esr = [r for r in known if parts[r].esr is None]

    def run(members, esr_of_missing):
        models = [caps_model.CapacitorModel(r, max(eff[r], 1e-15), parts[r].esr if parts[r].esr is not None
                                            else esr_of_missing, parts[r].esl or 0.0) for r in members]
        return caps_model.split_bank_current(wave, models)

    split = run(known, MISSING_ESR_LOW_OHM)
    currents = {r: float(i) for r, i in zip(known, split.i_rms)}
    rest = [r for r in known if r not in no_esr]
    if no_esr and rest:
        other = run(rest, MISSING_ESR_LOW_OHM)
        for r, i in zip(rest, other.i_rms):
            currents[r] = max(currents[r], float(i))
    return {r: currents.get(r) for r in caps}, split


def bank_items(refs, parts: dict[str, Any], role, ctx: PartContext, policy, *, requirement_h=None) -> list[StressItem]:
    """Every capacitor of a parallel bank: voltage, ripple share, capacitance after bias, hot-spot
    temperature at the worst corner and life over the mission profile."""
    caps = [r for r in refs if parts[r].category == "capacitor"]
    collectors = {r: _Items([r], parts[r], role, policy) for r in caps}
    worst_ripple = -1.0

    def effective(c_v_dc: float) -> dict[str, float]:
        eff = {}
        for r in caps:
            p = parts[r]
            if not p.capacitance:
                continue
            c_eff, note, approx = caps_model.effective_capacitance(
                p.capacitance, c_v_dc, p.v_rated or math.inf, p.dielectric if p.subtype == "ceramic" else None,
                p.curves.get("dc_bias") or None)
            if approx and p.subtype == "ceramic":
                ctx.assumptions.add(f"{r}: {note}")
            eff[r] = c_eff
        return eff

    for c in ctx.corners:
        v_dc = _r(c, role, "v_dc")
        if v_dc is None:
            continue
        eff = effective(v_dc)
        wave = _bank_wave(role, c)
        currents, split = _bank_currents(wave, caps, parts, eff) if wave is not None else ({}, None)
        if split is not None and float(split.i_bank_ac_rms) > worst_ripple:
            worst_ripple = float(split.i_bank_ac_rms)
            ctx.bank_splits[role] = {
                "corner": c.id, "harmonics": split.n_harmonics, "captured": split.captured,
                "i_bank_rms": float(split.i_bank_ac_rms), "v_pp": split.v_pp,
                "caps": [{"ref": r, "part_number": parts[r].part_number, "i_rms": currents.get(r),
                          "c_eff": eff.get(r), "esr": parts[r].esr} for r in caps]}
        for r in caps:
            p, out = parts[r], collectors[r]
            v_pp = split.v_pp if split is not None else (_r(c, role, "v_ripple_pp") or 0.0)
            out.add("voltage", v_dc + 0.5 * v_pp, c.id, detail=f"DC {v_dc:.4g} V + half the ripple")
            if p.subtype == "ceramic":
                if p.capacitance:
                    out.add("capacitance", eff[r], c.id, rating=p.capacitance,
                            detail=f"{p.dielectric or 'ceramic'} at {v_dc:.3g} V DC bias")
                else:
                    out.add("capacitance", None, c.id, rating=None, detail="no capacitance in the catalog")
            if wave is None:
                continue
            i_rms = currents.get(r)
            if i_rms is None:
                why = "no capacitance in the catalog: its share of the bank's ripple current is not computed"
                out.add("ripple_current", None, c.id, rating=p.ripple_current, detail=why)
                out.add("temperature", None, c.id, rating=p.t_max, detail=why)
                continue
            if p.esr is None:
                ctx.assumptions.add(f"{r}: no ESR in the catalog: the bank is split with it at "
                                    f"{MISSING_ESR_LOW_OHM * 1e3:g} mΩ and without it, each part keeping the larger current")
            ctx.add_loss(c.id, r, i_rms * i_rms * (p.esr or 0.0))
            if p.subtype == "ceramic":
                out.add("temperature", c.t_amb, c.id, rating=p.t_max, detail="ambient; self-heating neglected")
                if p.ripple_current is not None:
                    out.add("ripple_current", i_rms, c.id, rating=p.ripple_current)
                continue
            rating, detail, kf = None, "", 1.0
            if p.ripple_current is not None:
                rr = _ripple_rating(p, c)
                rating, kf = rr.i_allowed, rr.freq_multiplier
                detail = f"rating ×{rr.freq_multiplier:.3g} (frequency) ×{rr.temp_multiplier:.3g} (temperature)"
                for note in rr.notes:
                    ctx.assumptions.add(f"{r}: {note}")
            else:
                detail = "no ripple_current rating in the catalog"
            out.add("ripple_current", i_rms, c.id, rating=rating, detail=detail)
            t_hot, why = _hot_spot(p, c.t_amb, i_rms, kf, ctx, r)
            out.add("temperature", t_hot, c.id, rating=p.t_max,
                    detail=why or "hot spot (ambient + ripple self-heating) at the worst corner")
    for r in caps:
        p = parts[r]
        if p.subtype in ("aluminium_electrolytic", "polymer"):
            _life_item(collectors[r], r, p, role, caps, parts, ctx, requirement_h)
    items: list[StressItem] = []
    for r in refs:
        if r in collectors:
            items += collectors[r].items
    return items


def _ripple_rating(p, c: Corner):
    return caps_model.ripple_rating(p.ripple_current, c.fsw, c.t_amb, p.curves.get("ripple_freq") or None,
                                    p.curves.get("ripple_temp") or None,
                                    f_rated=p.ripple_freq or 100e3, t_rated=p.ripple_temp or p.t_max or 105.0)


def _hot_spot(p, t_amb: float, i_rms: float, kf: float, ctx: PartContext, ref: str) -> tuple[float | None, str]:
    """Hot-spot temperature [°C] of an electrolytic or polymer part, or None and the reason."""
    if not (p.ripple_rise is not None and p.ripple_current) and p.esr is None:
        return None, "no ripple_rise and no esr in the catalog: self-heating not computed"
    t_hot = caps_model.hot_spot_temperature(t_amb, i_rms, p.esr or 0.0, ripple_rise_k=p.ripple_rise,
                                            i_rated=p.ripple_current, freq_multiplier=kf)
    model = caps_model.hot_spot_model(p.ripple_rise, p.ripple_current, None, freq_multiplier=kf)
    ctx.assumptions.add(f"{ref}: hot spot by {model}")
    return t_hot, ""


def _life_item(out: _Items, ref: str, p, role: str, caps, parts, ctx: PartContext, requirement_h) -> None:
    """Life over the mission profile (Palmgren-Miner over the points' hot spots)."""
    if p.life_hours is None or (p.life_temp or p.t_max) is None:
        missing = "life_hours" if p.life_hours is None else "life_temp or t_max"
        out.add("life", None, "mission", required=requirement_h, detail=f"no {missing} in the catalog: life not computed")
        return
    t0 = p.life_temp or p.t_max
    law = caps_model.polymer_life if p.subtype == "polymer" else caps_model.electrolytic_life
    lives, fractions, texts = [], [], []
    for fraction, c in ctx.mission:
        v_dc = _r(c, role, "v_dc")
        wave = _bank_wave(role, c)
        if v_dc is None or wave is None:
            continue
        eff = {r: caps_model.effective_capacitance(parts[r].capacitance, v_dc, parts[r].v_rated or math.inf,
                                                   parts[r].dielectric if parts[r].subtype == "ceramic" else None,
                                                   parts[r].curves.get("dc_bias") or None)[0]
               for r in caps if parts[r].capacitance}
        currents, _split = _bank_currents(wave, caps, parts, eff)
        i_rms = currents.get(ref)
        if i_rms is None:
            out.add("life", None, "mission", required=requirement_h,
                    detail="no capacitance in the catalog: ripple share and life not computed")
            return
        kf = _ripple_rating(p, c).freq_multiplier if p.ripple_current is not None else 1.0
        t_hot, why = _hot_spot(p, c.t_amb, i_rms, kf, ctx, ref)
        if t_hot is None:
            out.add("life", None, "mission", required=requirement_h, detail=why)
            return
        life = law(p.life_hours, t0, t_hot)
        lives.append(life)
        fractions.append(fraction)
        texts.append(f"{fraction:.0%} at {c.id}: hot spot {t_hot:.1f} °C → {life:,.0f} h")
    if not lives:
        out.add("life", None, "mission", required=requirement_h, detail="no mission point could be solved")
        return
    total = caps_model.miner_life(lives, fractions)
    rule_name = "20-degree rule (polymer)" if p.subtype == "polymer" else "10-degree rule"
    out.add("life", total, "mission", required=requirement_h,
            detail=f"{rule_name} from {p.life_hours:g} h at {t0:g} °C, Miner's rule over the mission profile: "
                   + "; ".join(texts))


# --------------------------------------------------------------------------------------------
# Resistors, magnetics and feedback parts
# --------------------------------------------------------------------------------------------

def sense_items(refs, part, role, ctx: PartContext, policy) -> list[StressItem]:
    """Current-sense resistor: I_rms²·R of the switch current."""
    out = _Items(refs, part, role, policy)
    for c in ctx.current_corners:
        i_rms = _r(c, "switch", "i_rms")
        if part.resistance is None or i_rms is None:
            out.add("power", None, c.id, detail="no resistance in the catalog")
            continue
        p = semi.sense_resistor_power(i_rms, part.resistance)
        ctx.add_loss(c.id, out.refs[0], p)
        out.add("power", p, c.id, temperature=c.t_amb)
    return out.items


def transformer_items(refs, part, role, ctx: PartContext, policy) -> list[StressItem]:
    """Peak current against the saturation current, peak flux density against the core's
    saturation flux density, winding copper loss; temperature and insulation not yet modelled.

    The copper loss uses the DC winding resistances (catalog ``dcr_pri``/``dcr_sec``, else the
    design's ``[transformer] dcr_pri`` and the output's ``dcr``): skin and proximity effects
    raise the real loss above it, so it counts in the efficiency budget as a floor.
    """
    out = _Items(refs, part, role, policy)
    d = ctx.design
    dcr_pri = part.dcr_pri if part.dcr_pri is not None else d.transformer.dcr_pri
    dcr_sec = part.dcr_sec if part.dcr_sec is not None else d.outputs[0].dcr
    for c in ctx.current_corners:
        out.add("saturation", _r(c, "transformer", "i_peak"), c.id)
        b_peak = _r(c, "transformer", "b_peak")
        if b_peak is None:
            out.add("flux_density", None, c.id,
                    detail="peak flux density not computed: give [transformer] turns_primary and ae")
        else:
            out.add("flux_density", b_peak, c.id,
                    detail=f"B = Lm·Ipk/(Np·Ae) at Ipk = {_r(c, 'transformer', 'i_peak') or 0:.3g} A")
        i_pri, i_sec = _r(c, "transformer", "i_rms_pri"), _r(c, "transformer", "i_rms_sec")
        if dcr_pri is not None and i_pri is not None:
            p_cu = i_pri * i_pri * dcr_pri + (i_sec * i_sec * dcr_sec if dcr_sec is not None and i_sec else 0.0)
            ctx.add_loss(c.id, out.refs[0], p_cu)
        out.add("temperature", None, c.id, rating=part.t_max,
                detail="transformer temperature not modelled yet (core and AC winding losses, thermal resistance): "
                       "measure the hot spot on the bench or give it in [[extra_stress]] temperature")
    ctx.assumptions.add("transformer copper loss from the DC winding resistances only (AC resistance and core loss "
                        "not in the efficiency estimate)")
    out.add("insulation", None, "", rating=None,
            detail="insulation (class, working voltage, creepage and clearance) is not checked by partcheck: "
                   "it follows the safety standard of the end product")
    return out.items


def divider_items(refs, parts: dict[str, Any], role, ctx: PartContext, policy) -> list[StressItem]:
    """The output-sensing divider: voltage and power of each resistor across the sensed voltage."""
    d = ctx.design
    o = d.outputs[0]
    if d.converter.control == "primary-side":
        v_aux = d.feedback.get("v_aux")
        if not isinstance(v_aux, (int, float)):
            na_ns = d.feedback.get("aux_turns_ratio")  # Na/Ns
            v_aux = (o.vout + o.vf) * float(na_ns) if isinstance(na_ns, (int, float)) else None
        v_sense, what = v_aux, "auxiliary winding plateau"
    else:
        v_sense, what = o.vout, f"output {o.name}"
    resistors = [r for r in refs if parts[r].category == "resistor" and parts[r].resistance]
    total_r = sum(parts[r].resistance for r in resistors)
    items: list[StressItem] = []
    for r in refs:
        out = _Items([r], parts[r], role, policy)
        if v_sense is None or r not in resistors:
            out.add("power", None, "vin_nom-full",
                    detail="divider voltage unknown: give [feedback] v_aux or aux_turns_ratio" if v_sense is None
                    else "not a resistor with a resistance")
        else:
            i = v_sense / total_r
            res = parts[r].resistance
            out.add("power", i * i * res, "vin_nom-full", temperature=d.environment.ambient_max,
                    detail=f"across the {what}, {v_sense:.3g} V")
            out.add("voltage", i * res, "vin_nom-full")
        items += out.items
    return items


def feedback_items(refs, parts: dict[str, Any], role, ctx: PartContext, policy) -> list[StressItem]:
    """Optocoupler LED current and shunt-reference cathode current/voltage from the loop's resistors."""
    d = ctx.design
    fb = d.feedback
    o = d.outputs[0]
    items: list[StressItem] = []
    r_led = fb.get("r_led")
    if not isinstance(r_led, (int, float)):
        for r in refs:
            out = _Items([r], parts[r], role, policy)
            out.add("current_avg", None, "vin_nom-full", detail="give [feedback] r_led (and r_bias) to assess the loop")
            items += out.items
        return items
    v_led = fb.get("v_led_f", fb.get("v_led", DEFAULT_LED_VF_V))
    v_led = float(v_led) if isinstance(v_led, (int, float)) else DEFAULT_LED_VF_V
    v_ka = float(fb.get("v_ka", DEFAULT_SHUNT_VKA_V)) if isinstance(fb.get("v_ka", 0), (int, float)) else DEFAULT_SHUNT_VKA_V
    r_bias = fb.get("r_bias") if isinstance(fb.get("r_bias"), (int, float)) else None
    opto = next((parts[r] for r in parts if parts[r].category == "optocoupler"), None)
    ctr = (opto.ctr_min if opto is not None and opto.ctr_min else 1.0)
    life = d.requirements.get("life_hours", 0.0)
    loop = fb_model.opto_loop(o.vout, float(r_led), v_led, v_ka, r_bias, ctr_min=ctr, life_h=life or 0.0,
                              i_c_needed=fb.get("i_c_needed") if isinstance(fb.get("i_c_needed"), (int, float)) else None)
    ctx.assumptions.add(f"optocoupler loop: LED Vf {v_led:g} V, shunt cathode {v_ka:g} V (defaults unless given in "
                        "[feedback]); CTR degradation model is an assumption the user must confirm")
    life_text = f"after {life:,.0f} h" if life else "at the start of life"
    note = (f"optocoupler loop: LED {loop.i_led * 1e3:.3g} mA, shunt cathode {loop.i_k * 1e3:.3g} mA; minimum CTR "
            f"{life_text} {loop.ctr_eol:.0%} gives {loop.i_c_available * 1e3:.3g} mA collector current"
            + (f" against {fb['i_c_needed'] * 1e3:.3g} mA needed (margin {loop.ctr_margin:+.0%})"
               if loop.ctr_margin is not None else "")
            + ("" if loop.loop_ok else " — the loop does NOT keep the current it needs"))
    if note not in ctx.notes:
        ctx.notes.append(note)
    for r in refs:
        p = parts[r]
        out = _Items([r], p, role, policy)
        if p.category == "optocoupler":
            out.add("current_avg", loop.i_led, "vin_nom-full", detail="LED forward current")
        elif p.category == "reference":
            out.add("current_avg", loop.i_k, "vin_nom-full", detail="cathode current (LED + bias resistor)")
            out.add("voltage", o.vout, "vin_nom-full", detail="cathode can rise to the output voltage")
        items += out.items
    return items


#: Stresses a ``[[extra_stress]]`` table may give (attributes of :class:`partcheck.design.ExtraStress`).
EXTRA_PARAMETERS = ("voltage", "current_rms", "current_peak", "power", "temperature")


def apply_measured(items: list[StressItem], measured) -> list[StressItem]:
    """Bench figures (``[[measured]]``) replace the model's items of that reference and parameter.

    The measured item keeps the model's rating, temperature and worst-corner peak for comparison
    in its detail; a measured figure for a reference with no model item is kept as it stands.
    """
    import dataclasses

    out = list(items)
    for m in measured:
        mine = [i for i in out if m.ref in i.refs and i.parameter == m.parameter and len(i.refs) == 1]
        if not mine:
            continue
        worst = max((i for i in mine if i.stress is not None), key=lambda i: i.stress, default=mine[0])
        model = f"; the model gave {worst.stress:.4g} at {worst.corner}" if worst.stress is not None else ""
        out = [i for i in out if i not in mine]
        out.append(dataclasses.replace(worst, stress=m.value, corner="measured", measured=True, dominant="measured",
                                       steady=worst.steady, detail=f"measured: {m.note or 'bench figure'}{model}"))
    return out


def extra_items(extra, parts: dict[str, Any], ctx: PartContext, policy) -> list[StressItem]:
    """User-given stresses (``[[extra_stress]]``) for parts outside the modelled power stage."""
    items: list[StressItem] = []
    for ref in extra.refs:
        if ref not in parts:
            continue
        out = _Items([ref], parts[ref], "extra", policy)
        for parameter in EXTRA_PARAMETERS:
            value = getattr(extra, parameter)
            if value is not None:
                out.add(parameter, value, "user", temperature=ctx.design.environment.ambient_max,
                        detail=extra.note or "given in [[extra_stress]]")
                if parameter == "current_peak" and parts[ref].category == "magnetic":
                    # A magnetic part's peak current is what its core must carry: the saturation check.
                    out.add("saturation", value, "user", detail=extra.note or "given in [[extra_stress]]")
        items += out.items
    return items


#: Role name (before any ":output") → builder.  Builders taking a parts dict handle groups.
SINGLE: dict[str, Callable] = {"switch": switch_items, "rectifier": rectifier_items, "clamp_diode": diode_items,
                               "current_sense": sense_items, "transformer": transformer_items,
                               "gate_resistor": gate_resistor_items}
GROUP: dict[str, Callable] = {"clamp": clamp_items, "input_cap": bank_items, "output_cap": bank_items,
                              "feedback_divider": divider_items, "optocoupler": feedback_items,
                              "shunt_reference": feedback_items, "snubber": snubber_items}


def role_items(role: str, refs: Sequence[str], parts: dict[str, Any], ctx: PartContext, policy) -> list[StressItem]:
    """Stress items of every part that fills ``role`` (``parts``: ref → catalog record)."""
    base = role.split(":")[0]
    engine_role = _engine_role(role, ctx)
    if base in GROUP:
        if base in ("input_cap", "output_cap"):
            return bank_items(refs, parts, engine_role, ctx, policy,
                              requirement_h=ctx.design.requirements.get("life_hours"))
        return GROUP[base](refs, parts, role, ctx, policy)
    if base in SINGLE:
        items: list[StressItem] = []
        for ref in refs:
            fn = SINGLE[base]
            if fn is diode_items:
                items += diode_items([ref], parts[ref], engine_role, ctx, policy)
            else:
                items += fn([ref], parts[ref], engine_role, ctx, policy)
        return items
    return []


def _engine_role(role: str, ctx: PartContext) -> str:
    """The engine's name for a design role: ``rectifier`` ↔ ``rectifier:<name>`` for one output."""
    names = set(ctx.corners[0].roles) if ctx.corners else set()
    if role in names:
        return role
    base = role.split(":")[0]
    if base in names:
        return base
    if ":" not in role and base in ("rectifier", "output_cap") and len(ctx.design.outputs) >= 1:
        return f"{base}:{ctx.design.outputs[0].name}"
    return role


def modelled_roles() -> Iterable[str]:
    return (*SINGLE, *GROUP)
