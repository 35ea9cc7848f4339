"""The check: design + BOM + catalog + policy → one :class:`~partcheck.result.CheckResult`.

This is the one module that wires the catalog, the BOM matcher, the stress engine and the rules
together.  Every step is a library call:

1. load the design and the policy (the command line's, else the design file's, else the shipped
   default ``industrial``, and the result says which);
2. read the BOM and match each line to a catalog record (pins from the design and the command
   line win);
3. solve the engine's corners and turn role stresses into part stresses
   (:mod:`partcheck.partstress`);
4. compare every part × parameter with the policy at its worst corner; fitted parts without a
   model and lines without a match become findings of their own, never silent passes;
5. for each failing part, re-run its role's part stresses with each approved neighbour from the
   catalog and keep up to three that pass everything.
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import hashlib
import itertools
import math
from pathlib import Path
from typing import Any, Sequence

import numpy as np

from . import __version__, coverage, partstress
from .bom.match import match_bom
from .bom.read import Bom, read_bom
from .design import Design, load_design
from .errors import DesignError, InputError
from .result import CheckResult
from .rules.alternatives import rank_alternatives
from .rules.evaluate import Finding, apply_waivers, evaluate, verdict
from .rules.policy import DEFAULT_POLICY, Policy, effective_rules_table, load_policy
from .rules.waivers import parse_waivers
from .stress import flyback
from .stress import semiconductors as semi


def _sha256(path: Path | None) -> str | None:
    if path is None or not path.is_file():
        return None
    return hashlib.sha256(path.read_bytes()).hexdigest()


def resolve_policy(spec: str | None, design: Design) -> tuple[Policy, str, Path | None]:
    """The policy in force and where its name came from: ``option``, ``design`` or ``default``."""
    if spec:
        origin, name = "option", spec
    elif design.policy:
        origin, name = "design", design.policy
        base = design.path.parent if design.path is not None else Path(".")
        candidate = base / design.policy
        if candidate.suffix == ".toml" or candidate.exists():
            name = str(candidate)
    else:
        origin, name = "default", DEFAULT_POLICY
    policy = load_policy(name)
    path = Path(name) if Path(name).suffix == ".toml" and Path(name).exists() else None
    return policy, origin, path


def _with_catalog_vf(design: Design, rectifier_parts: dict[str, Any]) -> tuple[Design, list[str]]:
    """Take each output's rectifier drop from its catalog record when the design gives none."""
    notes = []
    outputs = []
    for out in design.outputs:
        part = rectifier_parts.get(out.name)
        if not out.vf_given and part is not None and getattr(part, "vf", None):
            outputs.append(dataclasses.replace(out, vf=part.vf, vf_given=True))
            notes.append(f"output {out.name}: rectifier drop {part.vf:g} V taken from {part.part_number}")
        else:
            outputs.append(out)
    return dataclasses.replace(design, outputs=tuple(outputs)), notes


def _corners(design: Design, suffix: str = "", eta_at: dict[str, float] | None = None
             ) -> tuple[flyback.StressResult, list[partstress.Corner]]:
    """The engine's corners as part-model corners; ``eta_at`` (corner id → efficiency factor
    relative to the design's) re-solves those corners at a lower efficiency."""
    result = flyback.evaluate(design)
    if eta_at:
        for factor in sorted({f for f in eta_at.values() if f < 1.0}):
            lower = _scaled(design, "efficiency", factor)
            redone = {c.id: c for c in flyback.evaluate(lower).corners}
            for k, c in enumerate(result.corners):
                if eta_at.get(c.id) == factor and c.id in redone:
                    result.corners[k] = redone[c.id]
                    result.corners[k].design_for_waves = lower  # type: ignore[attr-defined]
    corners = []
    for c in result.corners:
        source = getattr(c, "design_for_waves", design)
        waves = None if c.load == "surge" else flyback.corner_waveforms(source, c.id)
        corners.append(partstress.Corner(c.id + suffix, c.load, c.vin, c.mode, c.fsw, c.t_amb, c.roles, waves))
    return result, corners


def _mission_corners(design: Design) -> tuple[list[tuple[float, partstress.Corner]], list[str]]:
    """One solved corner per mission-profile point (the stated default when the design has none)."""
    from .design import mission_points
    from .stress.corners import FULL, CornerSpec

    out: list[tuple[float, partstress.Corner]] = []
    notes: list[str] = []
    points = mission_points(design)
    for k, pt in enumerate(points, 1):
        variant = dataclasses.replace(design, outputs=tuple(dataclasses.replace(o, iout=o.iout * pt.load)
                                                            for o in design.outputs))
        vin = pt.vin if pt.vin is not None else design.input.vin_nom
        spec = CornerSpec(f"mission{k}-{pt.load:.0%}-{pt.ambient_c:g}C", vin, FULL, pt.ambient_c)
        try:
            result = flyback.evaluate(variant, [spec])
        except DesignError as exc:
            notes.append(f"mission point {k}: no valid operating point ({exc.message})")
            continue
        if not result.corners:
            notes.append(f"mission point {k}: no valid operating point")
            continue
        c = result.corners[0]
        waves = flyback.corner_waveforms(variant, c.id, [spec])
        out.append((pt.time, partstress.Corner(c.id, c.load, c.vin, c.mode, c.fsw, c.t_amb, c.roles, waves)))
    return out, notes


#: Tolerances the check applies to the design itself (the others are analysed by `partcheck stress`).
_CHECK_TOLERANCES = ("lm", "llk", "fsw", "vf", "efficiency", "vclamp", "current_limit")


def _scaled(design: Design, key: str, factor: float) -> Design:
    """``design`` with one toleranced quantity multiplied by ``factor``."""
    r = dataclasses.replace
    if key in ("lm", "llk"):
        return r(design, transformer=r(design.transformer, **{key: getattr(design.transformer, key) * factor}))
    if key == "fsw" and design.converter.fsw is not None:
        return r(design, converter=r(design.converter, fsw=design.converter.fsw * factor))
    if key == "efficiency":
        return r(design, converter=r(design.converter, efficiency=min(design.converter.efficiency * factor, 1.0)))
    if key == "current_limit" and design.converter.current_limit is not None:
        return r(design, converter=r(design.converter, current_limit=design.converter.current_limit * factor))
    if key == "vclamp" and design.clamp is not None:
        return r(design, clamp=r(design.clamp, vclamp=design.clamp.vclamp * factor))
    if key == "vf":
        return r(design, outputs=tuple(r(o, vf=o.vf * factor) for o in design.outputs))
    return design


def _tolerance_corners(design: Design, eta_at: dict[str, float] | None = None
                       ) -> tuple[list[partstress.Corner], list[str]]:
    """Every corner again at each extreme of the design's [tolerances] box (2^k settings).

    Worst-case analysis by the extremes (common practice): for a stress monotone in each
    toleranced quantity the worst setting is a vertex of the box.  Corner ids carry the setting,
    e.g. ``vin_min-full@lm-10%,fsw+5%``.  A setting with no valid operating point is a note.
    """
    keys = [k for k in _CHECK_TOLERANCES if design.tolerances.get(k)]
    if not keys:
        return [], []
    corners: list[partstress.Corner] = []
    notes: list[str] = []
    for signs in itertools.product((-1.0, 1.0), repeat=len(keys)):
        variant = design
        for key, sign in zip(keys, signs):
            variant = _scaled(variant, key, 1.0 + sign * design.tolerances[key])
        label = ",".join(f"{k}{'+' if sg > 0 else '-'}{design.tolerances[k]:.0%}" for k, sg in zip(keys, signs))
        try:
            corners += _corners(variant, f"@{label}", eta_at)[1]
        except DesignError as exc:
            notes.append(f"tolerance extreme {label}: {exc.message}")
    notes.insert(0, f"tolerances: every corner also evaluated at the {2 ** len(keys)} extremes of "
                    f"{', '.join(f'{k} ±{design.tolerances[k]:.0%}' for k in keys)} (worst case by the extremes)")
    return corners, notes


def _part_items(design, assignment, ctx, policy, *, override: dict[str, Any] | None = None):
    """Stress items of every mapped part; with ``override`` (ref → candidate record) only the
    roles that hold one of those refs, with the candidate in their place."""
    items = []
    for role, refs in assignment.roles.items():
        parts = dict(assignment.records)
        if override is not None:
            if not set(override) & set(refs):
                continue
            parts.update(override)
        items += partstress.role_items(role, refs, parts, ctx, policy)
    records = {**assignment.records, **(override or {})}
    given: set[tuple[str, str]] = set()
    for extra in design.extra_stress:
        given |= {(ref, p) for ref in extra.refs for p in partstress.EXTRA_PARAMETERS if getattr(extra, p) is not None}
        if override is None or set(extra.refs) & set(override):
            items += partstress.extra_items(extra, records, ctx, policy)
    # A stress the model could not compute but the designer measured or worked out replaces the gap.
    items = [i for i in items if not (i.stress is None and i.role != "extra"
                                      and any((r, i.parameter) in given for r in i.refs))]
    # A candidate in a measured part's place keeps the measured voltage (the circuit's ring), not
    # the measured currents or temperatures, which belong to the fitted part.
    measured = [m for m in design.measured if override is None or m.ref not in override or m.parameter == "voltage"]
    return partstress.apply_measured(items, measured)


@dataclasses.dataclass
class _Prepared:
    design: Design
    matches: list
    assignment: coverage.Assignment
    stress_result: flyback.StressResult
    ctx: partstress.PartContext
    items: list
    records_by_pn: dict[str, Any]
    notes: list[str]


#: Passes of the efficiency refinement (the primary currents at the modelled efficiency raise
#: the losses a little; two passes settle it within a tenth of a point for the demos).
EFFICIENCY_PASSES = 3


def _prepare(design: Design, bom_data: Bom, cat, pins: dict[str, str], policy: Policy | None) -> _Prepared:
    """Match the BOM, solve the corners and compute every mapped part's stress items.

    The primary currents are solved at the lower of the design's efficiency and the one the
    modelled losses give at each corner, so an optimistic efficiency never lowers them.
    """
    records = cat.parts()
    records_by_pn = {p.part_number: p for p in records}
    matches = match_bom(bom_data, records, pins)
    assignment = coverage.assign(design, matches, records_by_pn)
    rect_parts = {}
    for role, refs in assignment.roles.items():
        if role.split(":")[0] == "rectifier" and refs:
            name = role.split(":")[1] if ":" in role else design.outputs[0].name
            rect_parts[name] = assignment.records[refs[0]]
    design, vf_notes = _with_catalog_vf(design, rect_parts)
    mission, mission_notes = _mission_corners(design)
    gate, switch = assignment.roles.get("gate_resistor"), assignment.roles.get("switch")
    r_gate = assignment.records[gate[0]].resistance if gate else None
    switch_part = assignment.records[switch[0]] if switch else None
    rectifiers, snubbers = _rectifiers_and_snubbers(design, assignment)
    eta_at: dict[str, float] = {}
    for n_pass in range(1, EFFICIENCY_PASSES + 1):
        stress_result, corners = _corners(design, eta_at=eta_at)
        extra_corners, tolerance_notes = _tolerance_corners(design, eta_at)
        ctx = partstress.PartContext(design, corners + extra_corners, mission=mission, efficiency_factors=eta_at,
                                     gate_resistance=r_gate, switch_part=switch_part, rectifier_parts=rectifiers,
                                     snubbers=snubbers)
        items = _part_items(design, assignment, ctx, policy)
        lower = _efficiency_factors(design, stress_result, ctx)
        settled = all(abs(lower.get(k, 1.0) - eta_at.get(k, 1.0)) < 1e-3 for k in set(lower) | set(eta_at))
        if settled or n_pass == EFFICIENCY_PASSES:
            break
        eta_at = lower
    ctx.assumptions |= _stated_defaults(design)
    return _Prepared(design, matches, assignment, stress_result, ctx, items, records_by_pn,
                     vf_notes + tolerance_notes + mission_notes)


def _stated_defaults(design: Design) -> set[str]:
    """The engine defaults this design relies on, for the report's assumptions."""
    from .design import DEFAULT_CURRENT_LIMIT_DELAY_S, DEFAULT_MISSION_TEXT

    out = set()
    conv = design.converter
    if conv.current_limit is not None and not conv.current_limit_delay_given:
        out.add(f"current-limit propagation delay {DEFAULT_CURRENT_LIMIT_DELAY_S * 1e9:g} ns (a typical controller's; "
                "give [converter] current_limit_delay): the switch peak overshoots the limit by Vin/Lp·t_pd")
    if not design.mission:
        out.add(f"mission profile: {DEFAULT_MISSION_TEXT}")
    out.add("diode peak current checked against the repetitive peak rating i_frm; the surge rating ifsm is for "
            "inrush and start-up only")
    return out


def _rectifiers_and_snubbers(design: Design, assignment) -> tuple[dict[str, Any], dict[str, tuple]]:
    """Output name → rectifier record, and → (Rs [Ω], Cs [F]) of the RC snubber across it."""
    def output_of(role: str) -> str:
        return role.split(":")[1] if ":" in role else design.outputs[0].name

    rectifiers, snubbers = {}, {}
    for role, refs in assignment.roles.items():
        base = role.split(":")[0]
        records = [assignment.records[r] for r in refs]
        if base == "rectifier" and records:
            rectifiers[output_of(role)] = records[0]
        elif base == "snubber":
            resistors = [p.resistance for p in records if p.category == "resistor" and p.resistance]
            caps = [p.capacitance for p in records if p.category == "capacitor" and p.capacitance]
            snubbers[output_of(role)] = (sum(resistors) if len(resistors) == 1 else None,
                                         sum(caps) if caps else None)
    return rectifiers, snubbers


def _efficiency_factors(design: Design, stress_result, ctx) -> dict[str, float]:
    """Corner id → (modelled efficiency / design efficiency) where the model is lower."""
    factors = {}
    for c in stress_result.corners:
        losses = ctx.losses.get(c.id)
        if not losses or c.load == "surge":
            continue
        p_out = sum(o.vout * c.iout.get(o.name, o.iout) for o in design.outputs)
        eta = semi.estimated_efficiency(p_out, losses)
        if eta < design.converter.efficiency - 1e-9:
            factors[c.id] = round(eta / design.converter.efficiency, 4)
    return factors


def stress_report(design_path: str | Path | Design, *, bom: str | Path | None = None, db: str | None = None,
                  catalog: Any = None, samples: int | None = None, seed: int = 0) -> dict:
    """``partcheck stress``: role stresses per corner; with a BOM also each part's stresses; with
    tolerances (``[tolerances]``) the worst case by the extremes and, with ``samples``, Monte Carlo.

    The part section compares nothing with a policy; ratings are those the shipped default
    policy would use.
    """
    from .catalog.store import open_catalog
    from .stress import tolerances as tol

    design = design_path if isinstance(design_path, Design) else load_design(design_path)
    bom_path = Path(bom) if bom is not None else None
    if bom_path is None:
        data = flyback.evaluate(design).to_dict()
    else:
        own = catalog is None
        cat = open_catalog(db, create=False) if own else catalog
        try:
            prep = _prepare(design, read_bom(bom_path, defaults=design.bom_read), cat, dict(design.pins),
                            load_policy(DEFAULT_POLICY))
        finally:
            if own:
                cat.close()
        design = prep.design
        data = prep.stress_result.to_dict()
        data["notes"] = list(data["notes"]) + prep.notes
        data["parts"] = _part_stresses(prep.items)
        data["bank_split"] = _clean(prep.ctx.bank_splits)
        data["assumptions"] = sorted(prep.ctx.assumptions)
    if design.tolerances:
        data["tolerances"] = {"worst_case": _clean(tol.worst_case(design))}
        if samples:
            data["tolerances"]["monte_carlo"] = _clean(tol.monte_carlo(design, samples=samples, seed=seed))
    return data


def check(design_path: str | Path | Design, *, bom: str | Path | None = None, policy: str | None = None,
          catalog: Any = None, db: str | None = None, pins: dict[str, str] | None = None,
          today: _dt.date | None = None, command: str | None = None, bom_options: dict[str, Any] | None = None,
          on_bom: Any = None) -> CheckResult:
    """Run the whole check and return its result.

    Parameters
    ----------
    design_path: the design file (or a loaded :class:`Design`).
    bom: the BOM file; default the design file's ``bom``.
    policy: a preset name or a policy file; default the design file's ``policy``, else the
        shipped ``industrial`` preset.
    catalog: an open catalog; else ``db`` (URL or path) is opened.
    pins: reference → part number, winning over the design's ``[pins]`` and the matcher.
    today: the date waivers are judged against (default: today).
    command: the command line, for the traceability section.
    bom_options: how the BOM is read, as :func:`~partcheck.bom.read.read_bom` keywords
        (``columns`` field → header, ``sheet``, ``decimal_comma``; ``None`` values are not given);
        they win over the design file's ``[bom_read]`` table (columns field by field).
    on_bom: called with the :class:`~partcheck.bom.read.Bom` as read, before matching (the
        command line prints its :meth:`~partcheck.bom.read.Bom.column_report`).
    """
    from .catalog.store import open_catalog

    design = design_path if isinstance(design_path, Design) else load_design(design_path)
    today = today or _dt.date.today()
    pol, origin, policy_path = resolve_policy(policy, design)
    waivers = parse_waivers(list(design.waivers), file=design.file, today=today)

    bom_path = Path(bom) if bom is not None else design.bom
    if bom_path is None:
        raise DesignError("no BOM to check: give --bom or `bom = \"...\"` in the design file", file=design.file, key="bom")
    bom_data: Bom = read_bom(bom_path, **(bom_options or {}), defaults=design.bom_read)
    if on_bom is not None:
        on_bom(bom_data)

    own_catalog = catalog is None
    cat = open_catalog(db, create=False) if own_catalog else catalog
    try:
        prep = _prepare(design, bom_data, cat, {**design.pins, **(pins or {})}, pol)
        design, matches, assignment, stress_result, ctx, items, records_by_pn = (
            prep.design, prep.matches, prep.assignment, prep.stress_result, prep.ctx, prep.items, prep.records_by_pn)
        vf_notes = prep.notes
        findings = evaluate(items, pol, waivers=waivers, today=today)
        for f in findings:  # the classic snubber sizing beside a rectifier that fails on its ring
            hint = ctx.snubber_hints.get(f.refs[0]) if f.refs else None
            if hint and f.parameter == "voltage" and f.status in ("fail", "warn"):
                f.detail = f"{f.detail}; {hint}"
        assigned = {r for refs in assignment.roles.values() for r in refs}
        extra_refs = {r for e in design.extra_stress for r in e.refs}
        scope = coverage.out_of_scope_refs(design)
        findings += assignment.findings + coverage.line_findings(matches, assigned, extra_refs, scope)
        findings += coverage.out_of_scope_findings(matches, scope)
        findings += coverage.extra_stress_findings(design, assignment.line_of)
        findings += coverage.unmodelled_role_findings(assignment, partstress.modelled_roles())
        findings += coverage.unlimited_parts(findings, pol.name)
        role_of = {ref: role for role, refs in assignment.roles.items() for ref in refs}
        findings += [apply_waivers(f, waivers, today=today) for f in
                     coverage.lifecycle_findings(matches, records_by_pn, getattr(pol, "lifecycle", None), role_of)]

        _suggest_alternatives(findings, design, assignment, ctx, pol, cat, waivers, today)
        catalog_hash = cat.snapshot_hash()
        catalog_name = str(getattr(cat, "url", db or ""))
    finally:
        if own_catalog:
            cat.close()

    notes = list(stress_result.notes) + vf_notes + _efficiency_notes(design, ctx) + _regulation_notes(design, items) + ctx.notes
    notes += bom_data.column_report()[:1]
    result = CheckResult(
        design=design.name, policy=pol.name, policy_origin=origin, verdict=verdict(findings, pol),
        findings=[_finding_dict(f) for f in findings],
        parts=_parts_table(findings, matches, assignment, records_by_pn),
        bom_lines=[m.to_dict() for m in matches],
        corners=[c.to_dict() for c in stress_result.corners],
        part_stresses=_part_stresses(items),
        waveforms={**_waveforms(design, stress_result), **_ring_waveforms(findings, assignment, ctx)},
        sweep=_sweep(design, findings, assignment),
        bank_split=ctx.bank_splits,
        policy_rules=effective_rules_table(pol),
        waivers=[_waiver_dict(w) for w in waivers],
        assumptions=sorted(ctx.assumptions),
        notes=notes,
        bom_warnings=bom_warnings(bom_data),
        trace={"tool_version": __version__, "date": _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"),
               "command": command or "", "design_path": design.file, "design_sha256": _sha256(design.path),
               "bom_path": str(bom_path), "bom_sha256": _sha256(Path(bom_path)), "policy": pol.name,
               "bom_read": _clean({"options": dict(bom_options or {}), "defaults": dict(design.bom_read)}),
               "policy_origin": origin, "policy_sha256": _sha256(policy_path), "catalog": catalog_name,
               "catalog_sha256": catalog_hash, "waiver_date": today.isoformat()},
    )
    return result


# --------------------------------------------------------------------------------------------
# Alternatives
# --------------------------------------------------------------------------------------------

def _suggest_alternatives(findings, design, assignment, ctx, policy, cat, waivers, today) -> None:
    """Up to three approved catalog neighbours for every failing part that pass everything in
    its place (every reference of the failing finding replaced at once)."""
    failing: dict[tuple[str, ...], list[Finding]] = {}
    for f in findings:
        if f.status != "fail" or not f.refs or not all(r in assignment.records for r in f.refs):
            continue
        if len({assignment.records[r].part_number for r in f.refs}) == 1:
            failing.setdefault(tuple(f.refs), []).append(f)
    cache: dict[tuple[str, ...], list[dict]] = {}
    for refs, fails in failing.items():
        if refs not in cache:
            cache[refs] = _alternatives_for(refs, design, assignment, ctx, policy, cat, today)
        for f in fails:
            f.alternatives = cache[refs]


def _alternatives_for(refs, design, assignment, ctx, policy, cat, today) -> list[dict]:
    part = assignment.records[refs[0]]
    candidates = [p for p in cat.parts(part.category, part.subtype) if p.part_number != part.part_number]
    mapped = list(refs)

    def evaluate_candidate(candidate):
        quiet = dataclasses.replace(ctx, assumptions=set(), bank_splits={}, losses={}, notes=[])
        items = [i for i in _part_items(design, assignment, quiet, policy, override={r: candidate for r in mapped})
                 if set(i.refs) & set(mapped)]
        return [f for f in evaluate(items, policy, waivers=(), today=today) if f.status != "info"]

    alternatives = rank_alternatives(part, candidates, evaluate_candidate)
    return [{"part_number": a.part_number, "description": a.description, "min_margin": a.min_margin,
             "worst_parameter": a.worst_parameter, "package": a.package, "same_package": a.same_package}
            for a in alternatives]


# --------------------------------------------------------------------------------------------
# Result sections
# --------------------------------------------------------------------------------------------

def _clean(value: Any) -> Any:
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if isinstance(value, (np.floating,)):
        return _clean(float(value))
    if isinstance(value, (np.integer,)):
        return int(value)
    if isinstance(value, dict):
        return {k: _clean(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_clean(v) for v in value]
    return value


def _finding_dict(f: Finding) -> dict:
    data = f.to_dict()
    data["alternatives"] = list(f.alternatives)
    return _clean(data)


def _waiver_dict(w) -> dict:
    return {"ref": w.ref, "parameter": w.parameter, "reason": w.reason, "approved_by": w.approved_by,
            "date": w.date.isoformat(), "expires": w.expires.isoformat() if w.expires else None}


_RANK = {"fail": 7, "unmatched": 6, "not_assessed": 5, "warn": 4, "waived": 3, "out_of_scope": 2, "info": 1, "pass": 0}


def _parts_table(findings, matches, assignment, records_by_pn) -> list[dict]:
    """One row per fitted BOM line: its worst status and utilisation."""
    rows = []
    role_of = {ref: role for role, refs in assignment.roles.items() for ref in refs}
    for m in matches:
        mine = [f for f in findings if set(f.refs) & set(m.refs)]
        status = "not_fitted" if m.status == "not_fitted" else max(
            (f.status for f in mine), key=lambda s: _RANK.get(s, 0), default="pass")
        utils = [(f.utilization, f.parameter) for f in mine if f.utilization is not None]
        worst = max(utils, default=(None, None))
        record = records_by_pn.get(m.part_number) if m.part_number else None
        rows.append(_clean({
            "refs": list(m.refs), "part_number": m.part_number, "bom_line": m.line,
            "description": getattr(record, "description", None) or m.text,
            "role": ", ".join(sorted({role_of[r] for r in m.refs if r in role_of})),
            "category": m.category, "status": status, "worst_utilization": worst[0], "worst_parameter": worst[1],
            "match": {"status": m.status, "method": m.method, "score": round(float(m.score), 1), "reason": m.reason}}))
    return rows


def _part_stresses(items) -> list[dict]:
    """Per part: each parameter's largest stress and the corner it occurs at."""
    parts: dict[tuple, dict] = {}
    for it in items:
        key = (tuple(it.refs), it.part_number, it.role)
        row = parts.setdefault(key, {"refs": list(it.refs), "part_number": it.part_number, "role": it.role,
                                     "stresses": {}, "worst_corner": {}})
        if it.stress is None:
            continue
        best = row["stresses"].get(it.parameter)
        worse = best is None or (it.stress < best if it.parameter in ("capacitance", "life") else it.stress > best)
        if worse:
            row["stresses"][it.parameter] = it.stress
            row["worst_corner"][it.parameter] = it.corner
    return [_clean(r) for r in parts.values()]


def _waveforms(design, stress_result) -> dict:
    """Switch and rectifier currents at the corner with the largest switch peak current."""
    current = [c for c in stress_result.corners if c.load != "surge"]
    if not current:
        return {}
    worst = max(current, key=lambda c: c.roles["switch"]["i_peak"] or 0.0)
    waves = flyback.corner_waveforms(design, worst.id)
    out = {}
    keys = ["switch"] + [f"rectifier:{o.name}" for o in design.outputs]
    for key in keys:
        w = waves[key]
        out[key] = {"corner": worst.id, "t": [float(t) for t in w.t], "y": [float(y) for y in w.y],
                    "label": f"{key} current at {worst.id}", "unit": "A"}
    return out


def _ring_waveforms(findings, assignment, ctx) -> dict:
    """Each rectifier's reverse voltage after the switch turns on, at its worst corner (the ring)."""
    out = {}
    by_id = {c.id: c for c in ctx.corners}
    for f in findings:
        if f.parameter != "voltage" or not f.role.startswith("rectifier") or f.measured or len(f.refs) != 1:
            continue
        corner, part = by_id.get(f.corner), assignment.records.get(f.refs[0])
        if corner is None or part is None:
            continue
        j = partstress._output_index(ctx.design, f.role)
        ring = partstress.rectifier_ring(partstress.PartContext(ctx.design, ctx.corners, snubbers=ctx.snubbers), corner,
                                         j, part)
        if not ring.t_s:
            continue
        out[f"rectifier_ring:{ctx.design.outputs[j].name}"] = _clean({
            "corner": f.corner, "t": list(ring.t_s), "y": list(ring.v_t), "unit": "V",
            "label": f"{f.refs[0]} reverse voltage after turn-on: steady {ring.v_steady:.3g} V, peak {ring.v_peak:.3g} V"})
    return out


def _sweep(design, findings, assignment) -> dict:
    """Key stresses against input voltage over the input range, with the limits of the mapped parts."""
    vin = np.linspace(design.input.vin_min, design.input.vin_max, 25)
    try:
        data = flyback.sweep(design, vin)
    except InputError:
        return {}
    limit_of = {}
    for f in findings:
        if f.limit is not None and f.parameter in ("voltage", "current_peak"):
            for ref in f.refs:
                limit_of[(ref, f.parameter)] = min(f.limit, limit_of.get((ref, f.parameter), math.inf))
    series = []
    wanted = [("switch.v_peak", "switch drain voltage", "V", "switch", "voltage"),
              ("switch.i_peak", "switch peak current", "A", "switch", "current_peak")]
    for j, o in enumerate(design.outputs):
        role = flyback.output_role("rectifier", design, j)
        wanted.append((f"{role}.v_reverse", f"rectifier {o.name} reverse voltage", "V", role, "voltage"))
    for key, label, unit, role, parameter in wanted:
        if key not in data:
            continue
        refs = assignment.roles.get(role) or assignment.roles.get(role.split(":")[0]) or ()
        limit = min((limit_of.get((r, parameter), math.inf) for r in refs), default=math.inf)
        series.append({"key": key, "label": label, "unit": unit, "values": [float(v) for v in data[key]],
                       "limit": limit if math.isfinite(limit) else None,
                       "limit_label": f"policy limit of {', '.join(refs)}" if math.isfinite(limit) else None})
    return _clean({"vin": [float(v) for v in vin], "series": series, "mode": [str(m) for m in data["mode"]]})


#: Losses the efficiency estimate leaves out (said in the note, so the figure is read as an upper bound).
UNMODELLED_LOSSES = ("transformer core loss and AC winding resistance", "controller supply and gate drive",
                     "snubbers", "PCB copper and connectors")


def _efficiency_notes(design, ctx) -> list[str]:
    losses = ctx.losses.get("vin_nom-full")
    if not losses:
        return []
    p_out = sum(o.vout * o.iout for o in design.outputs)
    check = semi.compare_efficiency(p_out, losses, design.converter.efficiency)
    text = (f"estimated efficiency from the modelled losses at vin_nom-full: {check.eta_estimated:.1%} "
            f"(design file: {design.converter.efficiency:.1%}; {len(losses)} parts' losses counted; left out: "
            f"{', '.join(UNMODELLED_LOSSES)})")
    if check.warn:
        text += " — the two differ by more than 3 points: revise [converter] efficiency"
    notes = [text]
    factors = getattr(ctx, "efficiency_factors", {}) or {}
    if factors:
        used = ", ".join(f"{cid} {design.converter.efficiency * f:.1%}" for cid, f in sorted(factors.items()))
        notes.append(f"primary currents solved at the modelled efficiency where it is below the design file's "
                     f"{design.converter.efficiency:.1%}: {used}")
    return notes


def _regulation_notes(design, items) -> list[str]:
    """Primary-side control: the output spread the rectifier's Vf change causes; optocoupler
    control: whether the loop keeps its current after the CTR has aged."""
    from .stress import feedback as fb

    notes = []
    o = design.outputs[0]
    if design.converter.control == "primary-side":
        t_lo = design.environment.ambient_min if design.environment.ambient_min is not None else 25.0
        t_hi = max((it.stress for it in items if it.role.startswith("rectifier") and it.parameter == "temperature"
                    and it.stress is not None), default=design.environment.ambient_max)
        target = design.requirements.get("regulation")
        spread = fb.psr_output_spread(o.vout, o.vf, max(t_hi - t_lo, 0.0), 0.1 * o.iout, o.iout,
                                      target_pct=target * 100 if target else None)
        text = (f"primary-side regulation: the rectifier's forward-drop change over {t_lo:.0f}–{t_hi:.0f} °C and "
                f"10–100 % load spreads {o.name} by about ±{spread.spread_pct:.2g} % "
                f"(typical primary-side accuracy ±{spread.typical_pct[0]:g}–{spread.typical_pct[1]:g} %, common practice)")
        if spread.meets_target is not None:
            text += f"; the design's target ±{target * 100:g} % is {'met' if spread.meets_target else 'NOT met'}"
        notes.append(text)
    return notes


def bom_warnings(bom_data: Bom) -> list[str]:
    """The BOM reader's notices and per-line warnings, one sentence each naming the line."""
    out = [f"BOM {bom_data.path}: {n}" for n in bom_data.notices]
    for line in bom_data.lines:
        refs = f" ({', '.join(line.refs[:6])}{', ...' if len(line.refs) > 6 else ''})" if line.refs else ""
        out += [f"BOM line {line.line}{refs}: {w}" for w in line.warnings]
    return out


def affected(findings: Sequence[dict]) -> list[dict]:
    """Findings that need a reviewer's attention, worst first."""
    return sorted((f for f in findings if f["status"] != "pass"), key=lambda f: -_RANK.get(f["status"], 0))


def write_annotated_bom(result: CheckResult, path: str | Path) -> Path:
    """The BOM as read, with columns for matched part, status, worst utilisation, the parameter
    that decides it, and the first approved alternative of a failing part.

    Written as CSV or XLSX by the extension of ``path`` (anything else is a ``BomError``, exit
    code 2, checked before the BOM is read).  ``partcheck_utilization`` is the number the JSON
    calls ``worst_utilization`` (a fraction, 1.0 = at the limit): a numeric cell formatted as a
    percentage in XLSX (one decimal, more where one would round across 100 %), the plain
    fraction in CSV.  ``partcheck_worst_parameter`` is the JSON's ``worst_parameter``.  Cells a
    spreadsheet would execute are neutralised (:mod:`partcheck.bom.export`).
    """
    from .bom.export import check_extension, percent_format
    from .bom.export import write_annotated_bom as _write

    check_extension(path)
    how = result.trace.get("bom_read") or {}  # read the BOM as the check did
    bom = read_bom(result.trace["bom_path"], **(how.get("options") or {}), defaults=how.get("defaults") or None)
    by_line = {row["bom_line"]: row for row in result.parts}
    alternative_of: dict[str, str] = {}
    for f in result.findings:
        if f["status"] == "fail" and f.get("alternatives"):
            for ref in f["refs"]:
                alternative_of.setdefault(ref, f["alternatives"][0]["part_number"])
    columns: dict[str, list] = {"partcheck_part": [], "partcheck_status": [], "partcheck_utilization": [],
                                "partcheck_worst_parameter": [], "partcheck_alternative": []}
    for line in bom.lines:
        row = by_line.get(line.line, {})
        util = row.get("worst_utilization")
        columns["partcheck_part"].append(row.get("part_number") or "")
        columns["partcheck_status"].append(row.get("status", ""))
        columns["partcheck_utilization"].append(float(util) if isinstance(util, (int, float)) else None)
        columns["partcheck_worst_parameter"].append(row.get("worst_parameter") or "")
        columns["partcheck_alternative"].append(
            next((alternative_of[r] for r in line.refs if r in alternative_of), ""))
    return _write(bom, columns, path, number_formats={"partcheck_utilization": percent_format})
