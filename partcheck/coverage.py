"""What the stress models cannot see: BOM lines, role mappings and lifecycle status.

A stress check can only endorse the parts it computed a stress for.  This module makes sure
every other fitted part says why it was not assessed, and refuses mappings that would make a
model silently compute the wrong thing:

* a BOM line that matched no catalog part, or has no reference designator (merged spreadsheet
  cells), a reference on two BOM lines, a part named in ``[roles]`` but not fitted, a reference
  named in ``[roles]`` or ``[[extra_stress]]`` that the BOM does not have → a finding;
* a reference repeated in one role, used in two roles, or mapped to a role its catalog category
  cannot fill (a resistor as an output capacitor) → :class:`~partcheck.errors.DesignError`;
* a role the engine has no model for (``snubber`` today) → ``not_assessed`` for its parts;
* an ``obsolete`` or ``restricted`` catalog part → a ``lifecycle`` finding, failing unless the
  policy's ``[lifecycle]`` says warn.

Plain functions of matches, records and the design; no I/O.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Iterable
from typing import Any

from .errors import DesignError
from .rules.evaluate import Finding, not_assessed_finding, unmatched_finding

#: BOM line statuses whose part is checked.
USABLE = ("matched",)

#: Catalog categories each role accepts (the role name before any ``:output``).  A role the
#: engine has no model for still lists what it accepts, so the mapping is checked.
ROLE_CATEGORIES: dict[str, tuple[str, ...]] = {
    "switch": ("switch",),
    "rectifier": ("diode",),
    "clamp_diode": ("diode",),
    "clamp": ("clamp", "diode", "resistor", "capacitor"),
    "input_cap": ("capacitor",),
    "output_cap": ("capacitor",),
    "current_sense": ("resistor",),
    "feedback_divider": ("resistor",),
    "optocoupler": ("optocoupler",),
    "shunt_reference": ("reference",),
    "transformer": ("magnetic",),
    "snubber": ("resistor", "capacitor"),
    "gate_resistor": ("resistor",),
}

#: Lifecycle statuses that are findings, and the policy's default verdict for each.
LIFECYCLE_DEFAULT = {"obsolete": "fail", "restricted": "fail"}


@dataclasses.dataclass
class Assignment:
    """Which BOM references fill which role, and the catalog record of each reference."""

    roles: dict[str, tuple[str, ...]]
    records: dict[str, Any]  # ref → PartRecord (matched lines only)
    line_of: dict[str, Any]  # ref → LineMatch (the first line that lists it)
    findings: list[Finding]  # references that cannot be assessed

    def role_of(self, ref: str) -> str | None:
        return next((role for role, refs in self.roles.items() if ref in refs), None)


def check_role_mapping(design: Any) -> None:
    """Refuse a reference repeated in one role or mapped to two roles (``DesignError``)."""
    seen: dict[str, str] = {}
    for role, refs in design.roles.items():
        upper = [r.upper() for r in refs]
        for ref, key in zip(refs, upper):
            if upper.count(key) > 1:
                raise DesignError(f"{ref} is listed more than once in role {role}", file=design.file,
                                  key=f"roles.{role}")
            if key in seen and seen[key] != role:
                raise DesignError(f"{ref} is mapped to two roles, {seen[key]} and {role}: a part fills one role",
                                  file=design.file, key=f"roles.{role}")
            seen[key] = role


def check_role_categories(design: Any, roles: dict[str, tuple[str, ...]], records: dict[str, Any]) -> None:
    """Refuse a catalog part whose category cannot fill its role (``DesignError`` naming both)."""
    for role, refs in roles.items():
        accepted = ROLE_CATEGORIES.get(role.split(":")[0])
        if accepted is None:
            continue
        for ref in refs:
            part = records.get(ref)
            if part is not None and part.category not in accepted:
                raise DesignError(
                    f"{ref} is {part.part_number}, a {part.category} in the catalog, but role {role} takes "
                    f"{' or '.join(accepted)}: fix the mapping or the BOM line", file=design.file, key=f"roles.{role}")


def assign(design: Any, matches: list, records_by_pn: dict[str, Any]) -> Assignment:
    """Map ``[roles]`` onto the matched BOM lines; findings for what cannot be mapped."""
    check_role_mapping(design)
    line_of: dict[str, Any] = {}
    for m in matches:
        for ref in m.refs:
            line_of.setdefault(ref, m)
    records = {ref: records_by_pn[m.part_number] for ref, m in line_of.items()
               if m.status in USABLE and m.part_number in records_by_pn}
    findings: list[Finding] = []
    roles: dict[str, tuple[str, ...]] = {}
    for role, refs in design.roles.items():
        usable = []
        for ref in refs:
            m = line_of.get(ref)
            if m is None:
                findings.append(unmatched_finding([ref], role=role, reason=f"{ref} is named in [roles] as {role} "
                                                  "but is not on the BOM"))
            elif m.status == "not_fitted":
                findings.append(not_assessed_finding(
                    [ref], m.part_number or "", role, f"{ref} is named in [roles] as {role} but BOM line {m.line} "
                    "marks it not fitted: the stress model assumes it is there; fit it or take it out of [roles]",
                    category=m.category or ""))
            elif ref not in records:
                continue  # reported once per BOM line by line_findings
            else:
                usable.append(ref)
        if usable:
            roles[role] = tuple(usable)
    check_role_categories(design, roles, records)
    return Assignment(roles, records, line_of, findings)


def out_of_scope_refs(design: Any) -> dict[str, str]:
    """Reference (upper case) → the reason it is declared outside the check; refuses a reference
    that is also mapped to a role or given stresses (the design would contradict itself)."""
    scope = {ref.upper(): o.reason for o in design.out_of_scope for ref in o.refs}
    for role, refs in design.roles.items():
        for ref in refs:
            if ref.upper() in scope:
                raise DesignError(f"{ref} is mapped to role {role} and declared out of scope: choose one",
                                  file=design.file, key="out_of_scope")
    for extra in design.extra_stress:
        for ref in extra.refs:
            if ref.upper() in scope:
                raise DesignError(f"{ref} has an [[extra_stress]] and is declared out of scope: choose one",
                                  file=design.file, key="out_of_scope")
    return scope


def out_of_scope_findings(matches: list, scope: dict[str, str]) -> list[Finding]:
    """One ``out_of_scope`` finding per BOM line whose references the design declares outside the
    check (counted and listed apart, never a pass); a declared reference the BOM lacks is unmatched."""
    findings, seen = [], set()
    for m in matches:
        mine = [r for r in m.refs if r.upper() in scope]
        if not mine or m.status == "not_fitted":
            seen |= {r.upper() for r in mine}
            continue
        seen |= {r.upper() for r in mine}
        reasons = sorted({scope[r.upper()] for r in mine})
        findings.append(Finding(
            refs=tuple(mine), part_number=m.part_number or "", role="", parameter="", stress=None, rating=None,
            limit=None, utilization=None, margin=None, corner="", status="out_of_scope", rule="none", source="",
            detail=f"declared out of scope in the design file: {'; '.join(reasons)} (BOM line {m.line}: {m.text})",
            category=m.category or ""))
    for ref in sorted(set(scope) - seen):
        findings.append(unmatched_finding([ref], reason=f"{ref} is declared out of scope but is not on the BOM"))
    return findings


def line_findings(matches: list, assigned_refs: set[str], extra_refs: set[str],
                  scope: dict[str, str] | None = None) -> list[Finding]:
    """Unmatched lines, lines without references, references on two lines, and fitted matched
    parts that neither a role nor ``[[extra_stress]]`` covers (references declared out of scope
    are left to :func:`out_of_scope_findings`)."""
    findings = []
    first_line: dict[str, int] = {}
    scope = scope or {}
    for m in matches:
        if m.status == "not_fitted":
            continue
        if m.refs and all(r.upper() in scope for r in m.refs):
            continue
        for ref in m.refs:
            key = ref.upper()
            if key in first_line and first_line[key] != m.line:
                findings.append(not_assessed_finding(
                    [ref], m.part_number or "", "", f"{ref} appears on BOM lines {first_line[key]} and {m.line}: "
                    "which part is fitted is ambiguous, so neither is endorsed", category=m.category or ""))
            first_line.setdefault(key, m.line)
        if not m.refs:
            findings.append(not_assessed_finding(
                [f"line {m.line}"], m.part_number or "", "", f"BOM line {m.line} has no reference designator "
                "(merged spreadsheet cells leave the cell empty): the part cannot be mapped or assessed",
                category=m.category or ""))
            continue
        if m.status not in USABLE:
            reason = f"BOM line {m.line} is {m.status}: {m.reason}"
            findings.append(unmatched_finding(m.refs, part_number=m.part_number or "", reason=reason,
                                              category=m.category or ""))
            continue
        left = [r for r in m.refs if r not in assigned_refs and r not in extra_refs and r.upper() not in scope]
        if left:
            findings.append(not_assessed_finding(
                left, m.part_number or "", "", "no stress model covers this part and no [[extra_stress]] gives one: "
                "map it in [roles] or describe its stress in [[extra_stress]]", category=m.category or ""))
    return findings


def extra_stress_findings(design: Any, line_of: dict[str, Any]) -> list[Finding]:
    """A reference in ``[[extra_stress]]`` that the BOM does not have (a typo would hide a stress)."""
    findings = []
    for extra in design.extra_stress:
        for ref in extra.refs:
            if ref not in line_of:
                findings.append(unmatched_finding([ref], role="extra", reason=f"{ref} is given a stress in "
                                                  "[[extra_stress]] but is not on the BOM"))
    return findings


def unmodelled_role_findings(assignment: Assignment, modelled: Iterable[str]) -> list[Finding]:
    """``not_assessed`` for every part of a role the engine has no model for."""
    modelled = set(modelled)
    findings = []
    for role, refs in assignment.roles.items():
        if role.split(":")[0] in modelled:
            continue
        for ref in refs:
            part = assignment.records[ref]
            findings.append(not_assessed_finding(
                [ref], part.part_number, role, f"role {role} has no stress model yet: give this part's stresses "
                "in [[extra_stress]] to assess it", category=part.category))
    return findings


def unlimited_parts(findings: list[Finding], policy_name: str) -> list[Finding]:
    """A part whose every stress went unchecked (no rule limits any of them) is not assessed."""
    by_part: dict[tuple, list[Finding]] = {}
    for f in findings:
        by_part.setdefault((f.refs, f.part_number, f.role), []).append(f)
    out = []
    for (refs, part_number, role), group in by_part.items():
        if group and all(f.status == "info" for f in group):
            params = ", ".join(sorted({f.parameter for f in group}))
            out.append(not_assessed_finding(
                refs, part_number, role, f"policy {policy_name} has no rule for any stress computed for this part "
                f"({params}): add a rule or map the part to a role", category=group[0].category))
    return out


def lifecycle_findings(matches: list, records_by_pn: dict[str, Any], lifecycle: dict[str, str] | None,
                       role_of: dict[str, str]) -> list[Finding]:
    """One ``lifecycle`` finding per fitted BOM line whose catalog part is not approved."""
    verdicts = {**LIFECYCLE_DEFAULT, **(lifecycle or {})}
    findings = []
    for m in matches:
        if m.status not in USABLE or not m.refs:
            continue
        part = records_by_pn.get(m.part_number)
        status = getattr(part, "status", None)
        if status not in verdicts:
            continue
        roles = sorted({role_of[r] for r in m.refs if r in role_of})
        findings.append(Finding(
            refs=tuple(m.refs), part_number=part.part_number, role=", ".join(roles), parameter="lifecycle",
            stress=None, rating=None, limit=None, utilization=None, margin=None, corner="",
            status=verdicts[status], rule=f"lifecycle.{status}", source="the team catalog's part status",
            detail=f"catalog status is {status}: purchasing should not buy it for a new build"
            + (f" ({part.notes})" if getattr(part, "notes", None) else ""), category=part.category))
    return findings
