"""Compare stresses with a policy's limits: :class:`StressItem` in, :class:`Finding` out.

Pure numbers, no I/O.  The pipeline turns every part's computed stresses into
:class:`StressItem` s (one per part × parameter × corner, or only the worst corner) with the
rating the matching rule names (:attr:`partcheck.rules.policy.Rule.rating_name`), and
:func:`evaluate` returns one :class:`Finding` per part × parameter at its worst corner.

Statuses
--------
``pass``          utilisation ≤ the warn band (or no band) — within the limit.
``warn``          warn band < utilisation ≤ 1.
``fail``          utilisation > 1, a limit of zero, a stress below the part's minimum, or an
                  expired waiver.
``waived``        would warn or fail, but every reference has a valid waiver; numbers kept.
``not_assessed``  the part cannot be assessed: no rating in the catalog, no stress, no
                  temperature where the rule derates with temperature.
``unmatched``     the BOM line matched no catalog part (made by the pipeline with
                  :func:`unmatched_finding`).
``out_of_scope``  the design file declares the part outside the check, with a reason (made by
                  the pipeline); listed apart, never a pass, and it does not affect the verdict.
``info``          the policy has no rule for this category × parameter (or a life rule with no
                  requirement to meet).  The stress and its numbers are kept and shown, never as a
                  pass claim; it does not affect the verdict.

Utilisation is stress / limit, and limit / stress for ``capacitance`` and ``life`` (where a
larger stress is better); margin is 1 − utilisation (DEVELOPERS.md, "Stress items and findings").
Temperatures are compared in °C as the contract says: 110 °C against a 125 °C limit is 0.88.
"""

from __future__ import annotations

import datetime as _dt
import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field, replace
from typing import Any

from ..units import format_quantity
from .policy import LARGER_IS_BETTER, PARAMETERS, Policy, Rule
from .waivers import Waiver, find_waivers

STATUSES = ("pass", "warn", "fail", "waived", "not_assessed", "unmatched", "info", "out_of_scope")

#: Parameters the tool names for the reviewer but never limits: a stress item for one of them is
#: always ``not_assessed`` with its detail (a waiver may cover it, as for any not-assessed finding).
OPEN_PARAMETERS = ("insulation",)

#: Utilisation above 1 by less than this is rounding, not a failure.
_EPS = 1e-12

# order for picking a part's worst corner: higher is worse
_SEVERITY = {"info": 0, "pass": 1, "warn": 2, "not_assessed": 3, "fail": 4}


@dataclass(frozen=True)
class StressItem:
    """One computed stress of one part at one corner, with the rating it is compared with.

    ``stress`` and ``rating`` are SI (°C, hours); magnitudes, so a −4 V rail gives 4.0.
    ``temperature`` is the part's temperature at this corner [°C] and ``t_max`` its maximum
    [°C], used by rules that derate above a knee; ``t_knee`` is the part's own knee [°C] (for
    ``derate_above = "part"``).  ``rating_min`` is the part's minimum operating value for rules
    with ``min_rating`` (a shunt reference's ``ika_min``) and ``required`` the design's own
    requirement for life rules with ``design_requirement`` [h].
    """

    refs: tuple[str, ...] | list[str]
    part_number: str
    role: str
    category: str
    subtype: str | None
    dielectric: str | None
    parameter: str
    stress: float | None
    rating: float | None
    corner: str
    temperature: float | None = None
    t_max: float | None = None
    detail: str = ""
    t_knee: float | None = None
    rating_min: float | None = None
    required: float | None = None
    steady: float | None = None  # the steady-state value when ``stress`` is a transient peak (SI)
    dominant: str = ""  # which effect sets the peak ("leakage ring", "clamp", "measured" ...)
    measured: bool = False  # ``stress`` is a bench figure from the design file, not the model's


@dataclass
class Finding:
    """The verdict on one part × parameter.  ``to_dict()`` gives the JSON keys of the report."""

    refs: tuple[str, ...]
    part_number: str
    role: str
    parameter: str
    stress: float | None
    rating: float | None
    limit: float | None
    utilization: float | None
    margin: float | None
    corner: str
    status: str
    rule: str
    source: str
    unit: str | None = None
    detail: str = ""
    waiver: Waiver | None = None
    alternatives: list[Any] = field(default_factory=list)
    category: str = ""
    confidence: str = ""
    steady: float | None = None
    dominant: str = ""
    measured: bool = False

    def to_dict(self) -> dict[str, Any]:
        return {
            "refs": list(self.refs), "part_number": self.part_number, "role": self.role,
            "category": self.category, "parameter": self.parameter, "unit": self.unit,
            "stress": _finite(self.stress), "rating": _finite(self.rating), "limit": _finite(self.limit),
            "utilization": _finite(self.utilization), "margin": _finite(self.margin), "corner": self.corner,
            "status": self.status, "rule": self.rule, "source": self.source, "confidence": self.confidence,
            "detail": self.detail, "waiver": self.waiver.to_dict() if self.waiver else None,
            "alternatives": [a.to_dict() if hasattr(a, "to_dict") else a for a in self.alternatives],
            "steady": _finite(self.steady), "dominant": self.dominant, "measured": self.measured,
        }


def _finite(value: float | None) -> float | None:
    return value if value is not None and math.isfinite(value) else None


# --------------------------------------------------------------------------------------------


def evaluate(items: Iterable[StressItem], policy: Policy, *, waivers: Sequence[Waiver] = (),
             today: _dt.date, worst_only: bool = True) -> list[Finding]:
    """Findings for ``items`` under ``policy``, waivers applied.

    With ``worst_only`` (the default) items of the same refs, part number, role and parameter
    (the corners of one stress) are reduced to the worst: the highest status (fail >
    not_assessed > warn > pass > info), then the highest utilisation.  Order follows the
    first appearance of each group.
    """
    groups: dict[tuple, Finding] = {}
    order: list[Finding] = []
    for item in items:
        finding = assess(item, policy)
        if not worst_only:
            order.append(finding)
            continue
        key = (tuple(item.refs), item.part_number, item.role, item.parameter)
        current = groups.get(key)
        if current is None or _worse(finding, current):
            groups[key] = finding
    findings = order if not worst_only else list(groups.values())
    return [apply_waivers(f, waivers, today=today) for f in findings]


def _worse(a: Finding, b: Finding) -> bool:
    sa, sb = _SEVERITY.get(a.status, 0), _SEVERITY.get(b.status, 0)
    if sa != sb:
        return sa > sb
    if a.utilization is None and b.utilization is None and a.stress is not None and b.stress is not None:
        # No limit (info): the worst corner is the largest stress (the smallest for capacitance, life).
        if a.parameter in LARGER_IS_BETTER:
            return a.stress < b.stress and not math.isclose(a.stress, b.stress, rel_tol=1e-9)
        return a.stress > b.stress and not math.isclose(a.stress, b.stress, rel_tol=1e-9)
    ua = a.utilization if a.utilization is not None else math.inf
    ub = b.utilization if b.utilization is not None else math.inf
    # Equal within rounding (the same current limit reached at several tolerance settings): the
    # corner seen first (the nominal one) stays, so the reported corner is not a rounding artefact.
    return ua > ub and not math.isclose(ua, ub, rel_tol=1e-9)


def assess(item: StressItem, policy: Policy) -> Finding:
    """The finding for one stress item (no waivers)."""
    if item.parameter in OPEN_PARAMETERS:
        return Finding(refs=tuple(item.refs), part_number=item.part_number, role=item.role, parameter=item.parameter,
                       stress=None, rating=None, limit=None, utilization=None, margin=None, corner=item.corner,
                       status="not_assessed", rule="none", source="", detail=item.detail, category=item.category)
    if item.parameter not in PARAMETERS:
        raise ValueError(f"unknown stress parameter {item.parameter!r}; expected one of {', '.join(PARAMETERS)}")
    rule = policy.rule_for(item.category, item.parameter, item.subtype, item.dielectric)
    base = dict(refs=tuple(item.refs), part_number=item.part_number, role=item.role, parameter=item.parameter,
                stress=item.stress, rating=item.rating, corner=item.corner, unit=PARAMETERS[item.parameter],
                category=item.category, steady=item.steady, dominant=item.dominant, measured=item.measured)
    if rule is None and (item.stress is None or not math.isfinite(item.stress)):
        # Nothing computed and nothing to compare with: still a stress the reviewer must know is open.
        return Finding(**base, limit=None, utilization=None, margin=None, status="not_assessed", rule="none",
                       source="", detail=_join(item.detail or f"no {item.parameter} stress was computed",
                                               f"policy {policy.name!r} sets no {item.parameter} limit"))
    if rule is None:
        return Finding(**base, limit=None, utilization=None, margin=None, status="info", rule="none",
                       source="", detail=_join(item.detail, f"policy {policy.name!r} sets no {item.parameter} limit "
                                               f"for {item.category}" + (f"/{item.subtype}" if item.subtype else "")))
    base.update(rule=rule.id, source=rule.source, confidence=rule.confidence)
    if item.stress is None or not math.isfinite(item.stress):
        return Finding(**base, limit=None, utilization=None, margin=None, status="not_assessed",
                       detail=_join(item.detail, f"no {item.parameter} stress was computed"))
    try:
        limit, why = limit_for(rule, item)
    except _NotAssessed as exc:
        return Finding(**base, limit=None, utilization=None, margin=None, status="not_assessed",
                       detail=_join(item.detail, str(exc)))
    if limit is None:
        return Finding(**base, limit=None, utilization=None, margin=None, status="info",
                       detail=_join(item.detail, why))

    kind = PARAMETERS[item.parameter]
    if item.parameter in LARGER_IS_BETTER:
        if item.stress <= 0:
            return Finding(**base, limit=limit, utilization=None, margin=None, status="fail",
                           detail=_join(item.detail, why, f"the part delivers {format_quantity(item.stress, kind)}"))
        utilization = limit / item.stress
    else:
        if limit <= 0:
            status = "fail" if item.stress > 0 else "pass"
            return Finding(**base, limit=limit, utilization=None, margin=None, status=status,
                           detail=_join(item.detail, why, "the limit is zero at this temperature"))
        utilization = item.stress / limit
    status = _status(utilization, policy.warn_for(rule))
    detail = _join(item.detail, why)

    if rule.min_rating is not None:
        if item.rating_min is None:
            return Finding(**base, limit=limit, utilization=utilization, margin=1.0 - utilization,
                           status="not_assessed",
                           detail=_join(detail, f"no {rule.min_rating} in the catalog for the lower bound"))
        if item.stress < item.rating_min:
            floor_util = item.rating_min / item.stress if item.stress > 0 else math.inf
            return Finding(**base, limit=item.rating_min, utilization=floor_util, margin=1.0 - floor_util,
                           status="fail",
                           detail=_join(detail, f"below the part's minimum {rule.min_rating} = "
                                        f"{format_quantity(item.rating_min, kind)}"))
    return Finding(**base, limit=limit, utilization=utilization, margin=1.0 - utilization, status=status,
                   detail=detail)


def _status(utilization: float, warn: float | None) -> str:
    if utilization > 1.0 + _EPS:
        return "fail"
    if warn is not None and utilization > warn:
        return "warn"
    return "pass"


class _NotAssessed(Exception):
    pass


def limit_for(rule: Rule, item: StressItem) -> tuple[float | None, str]:
    """The limit ``rule`` sets for ``item`` [SI] and a note on how (derating factor used).

    ``None`` when the rule has nothing to require here (a life rule that only asks for the
    design's requirement, and the design states none).  Raises ``_NotAssessed`` when a needed
    rating or temperature is missing.
    """
    kind = rule.kind
    rating_name = rule.rating_name or "rating"

    def need_rating() -> float:
        if item.rating is None or not math.isfinite(item.rating):
            raise _NotAssessed(f"no {rating_name} rating in the catalog for {item.part_number}")
        return item.rating

    if rule.larger_is_better:
        candidates: list[float] = []
        if rule.min_fraction is not None:
            candidates.append(rule.min_fraction * need_rating())
        if rule.min is not None:
            candidates.append(rule.min)
        if rule.design_requirement:
            required = rule.requirement(item.required)  # the design's figure, else the rule's default
            if required is not None:
                candidates.append(required)
        if not candidates:
            return None, f"the design states no required {rule.parameter}"
        return max(candidates), ""

    candidates = []
    notes: list[str] = []
    if rule.fraction is not None:
        fraction = rule.fraction
        if rule.derate_above is not None:
            knee = item.t_knee if rule.derate_above == "part" else rule.derate_above
            if knee is None:
                raise _NotAssessed(f"no knee temperature (t_knee) in the catalog for {item.part_number}")
            if item.temperature is None:
                raise _NotAssessed(f"no part temperature for the derating above {format_quantity(knee, 'degC')}")
            if item.temperature > knee:
                if item.t_max is None:
                    raise _NotAssessed(f"no maximum temperature in the catalog for {item.part_number} "
                                       f"(needed to derate above {format_quantity(knee, 'degC')})")
                factor = derating_factor(item.temperature, knee, item.t_max)
                fraction *= factor
                notes.append(f"derated ×{factor:.3g} at {format_quantity(item.temperature, 'degC')} "
                             f"(linear from {format_quantity(knee, 'degC')} to zero at "
                             f"{format_quantity(item.t_max, 'degC')})")
        candidates.append(fraction * need_rating())
    if rule.offset is not None:
        candidates.append(need_rating() - rule.offset)
    if rule.max is not None:
        candidates.append(rule.max)
    if not candidates:  # only a lower bound (min_rating): no upper limit but the rating itself
        candidates.append(need_rating())
    limit = min(candidates)
    if len(candidates) > 1:
        notes.append(f"the lowest of {', '.join(format_quantity(c, kind) for c in candidates)}")
    return limit, "; ".join(notes)


def derating_factor(temperature: float, knee: float, t_max: float) -> float:
    """Linear derating above a knee: 1 at or below ``knee``, 0 at ``t_max`` and above [-].

    ``(t_max − T) / (t_max − knee)`` between them; all temperatures in °C.

    References: common practice (resistor and semiconductor power-derating curves, flat to a
    knee and linear to zero at the maximum temperature; NASA EEE-INST-002 §R1 describes the
    same shape for resistors, from memory).
    """
    if temperature <= knee:
        return 1.0
    if temperature >= t_max or t_max <= knee:
        return 0.0
    return (t_max - temperature) / (t_max - knee)


# --------------------------------------------------------------------------------------------
# Waivers
# --------------------------------------------------------------------------------------------


def apply_waivers(finding: Finding, waivers: Sequence[Waiver], *, today: _dt.date) -> Finding:
    """``finding`` with waivers applied (unchanged when none covers it).

    Only findings that need a waiver (warn, fail, not_assessed) are affected.  The finding is
    ``waived`` when every one of its refs has a valid waiver for the parameter; an expired
    covering waiver makes it ``fail``.  A waiver covering only some refs changes nothing but
    says so in the detail.
    """
    if not waivers or finding.status not in ("warn", "fail", "not_assessed"):
        return finding
    covering = find_waivers(waivers, finding.refs, finding.parameter)
    present = [w for w in covering if w is not None]
    if not present:
        return finding
    expired = [w for w in present if w.expired(today)]
    if expired:
        w = expired[0]
        return replace(finding, status="fail", waiver=w,
                       detail=_join(finding.detail, f"waiver for {w.ref} {w.parameter} approved by {w.approved_by} "
                                    f"expired on {w.expires.isoformat()} (was: {w.reason})"))
    if len(present) < len(covering):
        missing = [r for r, w in zip(finding.refs, covering) if w is None]
        return replace(finding, detail=_join(finding.detail, f"waiver does not cover {', '.join(missing)}"))
    w = present[0]
    return replace(finding, status="waived", waiver=w,
                   detail=_join(finding.detail, f"was {finding.status}; waived by {w.approved_by} on "
                                f"{w.date.isoformat()}: {w.reason}"))


def unused_waivers(findings: Iterable[Finding], waivers: Sequence[Waiver]) -> list[Waiver]:
    """Waivers that match no finding's ref and parameter (probably a typo or a stale waiver)."""
    used = {(r.upper(), f.parameter) for f in findings for r in f.refs}
    return [w for w in waivers if (w.ref.upper(), w.parameter) not in used]


# --------------------------------------------------------------------------------------------
# Helpers for the pipeline and the verdict
# --------------------------------------------------------------------------------------------


def not_assessed_finding(refs: Iterable[str], part_number: str, role: str, reason: str, *,
                         parameter: str = "", category: str = "", corner: str = "") -> Finding:
    """A fitted part that cannot be assessed (no stress model and no ``extra_stress``)."""
    return Finding(refs=tuple(refs), part_number=part_number, role=role, parameter=parameter, stress=None,
                   rating=None, limit=None, utilization=None, margin=None, corner=corner, status="not_assessed",
                   rule="none", source="", unit=PARAMETERS.get(parameter), detail=reason, category=category)


def unmatched_finding(refs: Iterable[str], part_number: str = "", role: str = "", reason: str = "", *,
                      category: str = "") -> Finding:
    """A BOM line that matched no catalog part."""
    return Finding(refs=tuple(refs), part_number=part_number, role=role, parameter="", stress=None, rating=None,
                   limit=None, utilization=None, margin=None, corner="", status="unmatched", rule="none",
                   source="", detail=reason or "the BOM line matched no catalog part", category=category)


def verdict(findings: Iterable[Finding | dict], policy: Policy | None = None) -> str:
    """``"fail"`` when any finding fails, or is not_assessed/unmatched and the policy says those
    fail the design (the default); ``"pass"`` otherwise (warn, waived, info pass)."""
    fail_unassessed = policy.fail_unassessed if policy is not None else True
    fail_unmatched = policy.fail_unmatched if policy is not None else True
    for f in findings:
        status = f["status"] if isinstance(f, dict) else f.status
        if status == "fail":
            return "fail"
        if status == "not_assessed" and fail_unassessed:
            return "fail"
        if status == "unmatched" and fail_unmatched:
            return "fail"
    return "pass"


def _join(*texts: str) -> str:
    return "; ".join(t for t in texts if t)


__all__ = [
    "OPEN_PARAMETERS",
    "STATUSES",
    "Finding",
    "StressItem",
    "apply_waivers",
    "assess",
    "derating_factor",
    "evaluate",
    "limit_for",
    "not_assessed_finding",
    "unmatched_finding",
    "unused_waivers",
    "verdict",
]
