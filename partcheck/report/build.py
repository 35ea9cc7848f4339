"""Turn a :class:`~partcheck.result.CheckResult` into the view data the HTML template shows.

Everything a reviewer reads is decided here, not in the template: the order (worst status
first, then highest utilisation), the number formatting (:func:`partcheck.units.format_quantity`),
the status words and symbols, and the inline SVG figures (:mod:`partcheck.report.plots`).  The
template only lays the result out.

The view is plain dicts and lists of strings.  Strings taken from the result stay plain
``str`` and are escaped by the template's autoescaping; only the SVG produced by
:mod:`~partcheck.report.plots` (which escapes its own text) is marked safe with
:class:`markupsafe.Markup`.

The reader is lenient: a section the check did not fill (no sweep, no waveforms, a corner
without a clamp) is left out or shown as "—", never an error, so a result saved by an older
version still renders.  Shapes read, beyond those in :mod:`partcheck.result`:

* a corner is ``{"id", "vin", "load", "mode", "duty", "fs", "roles": {role: {stress: value}}}``;
  ``roles`` may also be spelled ``stresses``, or the role dicts may sit on the corner itself;
  the frequency may be ``fs``, ``f_sw``, ``fsw`` or ``frequency``;
* a finding's warn band comes from ``finding["warn_from"]`` (the utilisation where warning
  starts) or from its rule in ``policy_rules`` (``warn_from``, or ``warn_band`` as a fraction
  below the limit: ``warn_band = 0.1`` warns from 90 % of the limit);
* a bank capacitor's rated ripple current is the ``rating`` of its ``ripple_current`` finding (after
  the frequency and temperature corrections), shown only when that finding is at the bank's
  corner; a capacitor without such a finding may carry ``i_rms_rating`` [A] (a result saved by an
  older version), shown marked as the uncorrected catalog value;
* a bank's total is ``i_bank_rms`` (the bank current), never recomputed from the shares.

Every value the page shows twice (a bank's current, a rating, a waveform's peak beside the corner
table) is read from one place in the result; where two places in the result disagree (a waveform
sketch below the peak bound the corner table checks, a bank split recorded at another corner than
its worst finding), the page says so beside the figure instead of showing two numbers as one.
"""

from __future__ import annotations

import math
import re
from typing import Any

from markupsafe import Markup

from ..result import STATUS_ORDER, CheckResult
from ..units import format_quantity
from . import plots
from .plots import STATUS_LABELS, STATUS_SYMBOLS, format_utilisation

#: Statuses that need a reviewer's attention, shown as cards at the top.
ATTENTION = ("fail", "unmatched", "not_assessed", "warn")

#: Parameters for which a larger stress is better (the limit is a minimum).
LARGER_IS_BETTER = frozenset({"capacitance", "life"})

PARAMETER_LABELS: dict[str, str] = {
    "voltage": "voltage",
    "current_rms": "RMS current",
    "current_peak": "peak current",
    "current_avg": "average current",
    "power": "power",
    "temperature": "temperature",
    "ripple_current": "ripple current",
    "capacitance": "capacitance after DC bias",
    "life": "life",
    "saturation": "saturation",
    "flux_density": "peak flux density",
    "lifecycle": "lifecycle status",
    "insulation": "insulation",
}

#: Default unit kind per parameter when a finding carries no ``unit``.
PARAMETER_UNITS: dict[str, str | None] = {
    "voltage": "V",
    "current_rms": "A",
    "current_peak": "A",
    "current_avg": "A",
    "power": "W",
    "temperature": "degC",
    "ripple_current": "A",
    "capacitance": "F",
    "life": "h",
    "saturation": "A",
    "flux_density": "T",
    "lifecycle": None,
    "insulation": None,
}

ORIGIN_TEXT = {
    "default": "the shipped default policy (no policy was named)",
    "design": "named in the design file",
    "option": "given on the command line",
}

TRACE_LABELS: tuple[tuple[str, str], ...] = (
    ("tool_version", "partcheck version"),
    ("date", "date of the check"),
    ("command", "command line"),
    ("design_path", "design file"),
    ("design_sha256", "design SHA-256"),
    ("bom_path", "BOM file"),
    ("bom_sha256", "BOM SHA-256"),
    ("policy", "policy"),
    ("policy_sha256", "policy SHA-256"),
    ("catalog", "catalog"),
    ("catalog_sha256", "catalog snapshot SHA-256"),
)


#: Statuses that are not findings' verdicts, shown after ``pass``: a BOM line not fitted, a stress
#: that no rule limits.
QUIET = ("not_fitted",)


def _rank(status: Any) -> int:
    if status in STATUS_ORDER:
        return STATUS_ORDER.index(status)
    if status in QUIET:
        return len(STATUS_ORDER) + QUIET.index(status)
    return -1  # a status this report does not know: at the top, to be seen


def _number(value: Any) -> float | None:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return None
    value = float(value)
    return value if math.isfinite(value) else None


def _fraction(value: Any) -> float | None:
    """A number, or a string holding one ("0.9"); else None."""
    if isinstance(value, str):
        try:
            value = float(value)
        except ValueError:
            return None
    return _number(value)


def _text(value: Any) -> str:
    """Any value as display text (lists joined); ``None`` is an empty string."""
    if value is None:
        return ""
    if isinstance(value, (list, tuple)):
        return ", ".join(_text(v) for v in value)
    if isinstance(value, dict):
        return "; ".join(f"{k} = {_text(v)}" for k, v in value.items())
    if isinstance(value, float):
        return format_quantity(value, None)
    return str(value)


def _natural(text: str) -> list[Any]:
    """Sort key that puts C9 before C10."""
    return [int(p) if p.isdigit() else p.lower() for p in re.split(r"(\d+)", text)]


def _refs(value: Any) -> list[str]:
    if value is None:
        return []
    if isinstance(value, (list, tuple)):
        return [str(v) for v in value]
    return [str(value)]


def status_view(status: Any) -> dict[str, str]:
    """``{"status", "label", "symbol", "css"}`` for a status string (unknown ones shown as given)."""
    key = str(status)
    css = key if key in STATUS_LABELS and key not in QUIET else "quiet" if key in QUIET else "unknown"
    return {"status": key, "label": STATUS_LABELS.get(key, key.upper()), "symbol": STATUS_SYMBOLS.get(key, "•"),
            "css": css}


def _warn_from(finding: dict[str, Any], rules: dict[str, dict[str, Any]]) -> float | None:
    direct = _number(finding.get("warn_from"))
    if direct is not None:
        return direct
    rule = rules.get(str(finding.get("rule")))
    if not rule:
        return None
    for key in ("warn_from", "warn"):
        value = _fraction(rule.get(key))
        if value is not None:
            return value
    band = _number(rule.get("warn_band"))
    return 1.0 - band if band is not None and 0.0 < band < 1.0 else None


def _rule_id(rule: dict[str, Any]) -> str:
    return str(rule.get("id") or rule.get("rule") or rule.get("name") or "")


def finding_view(finding: dict[str, Any], rules: dict[str, dict[str, Any]],
                 descriptions: dict[str, str], *, bar: bool = True) -> dict[str, Any]:
    """The display form of one finding (numbers formatted, status word and symbol, bar SVG)."""
    parameter = str(finding.get("parameter") or "")
    kind = finding.get("unit", PARAMETER_UNITS.get(parameter))
    kind = kind if isinstance(kind, str) or kind is None else None
    util = _number(finding.get("utilization"))
    status = status_view(finding.get("status"))
    refs = _refs(finding.get("refs"))
    warn_from = _warn_from(finding, rules)
    larger = parameter in LARGER_IS_BETTER
    alternatives = []
    for alt in finding.get("alternatives") or []:
        if not isinstance(alt, dict):
            continue
        alternatives.append({
            "part_number": _text(alt.get("part_number")),
            "description": _text(alt.get("description")),
            "min_margin": format_quantity(_number(alt.get("min_margin")), "%"),
            "worst_parameter": PARAMETER_LABELS.get(str(alt.get("worst_parameter")), _text(alt.get("worst_parameter"))),
        })
    waiver = finding.get("waiver")
    view = {
        **status,
        "refs": ", ".join(refs),
        "part_number": _text(finding.get("part_number")),
        "description": descriptions.get(refs[0], "") if refs else "",
        "role": _text(finding.get("role")),
        "category": _text(finding.get("category")),
        "parameter": parameter,
        "parameter_label": PARAMETER_LABELS.get(parameter, parameter.replace("_", " "))
        or ("no catalog match" if status["status"] == "unmatched" else ""),
        "has_numbers": any(_number(finding.get(k)) is not None for k in ("stress", "rating", "limit", "utilization")),
        "stress": format_quantity(_number(finding.get("stress")), kind),
        "steady": format_quantity(_number(finding.get("steady")), kind) if _number(finding.get("steady")) is not None
        else "",
        "dominant": _text(finding.get("dominant")),
        "measured": bool(finding.get("measured")),
        "rating": format_quantity(_number(finding.get("rating")), kind),
        "limit": format_quantity(_number(finding.get("limit")), kind),
        "relation": "at least" if larger else "at most",
        "utilization": format_utilisation(util) if util is not None else "—",
        "utilization_value": util,
        "margin": format_quantity(_number(finding.get("margin")), "%"),
        "warn_from": format_quantity(warn_from, "%") if warn_from is not None else "",
        "corner": _text(finding.get("corner")) or "—",
        "rule": _text(finding.get("rule")) or "—",
        "source": _text(finding.get("source")) or "—",
        "confidence": "" if _text(finding.get("confidence")) in _text(finding.get("source"))
        else _text(finding.get("confidence")),
        "detail": _text(finding.get("detail")),
        "waiver": waiver_view(waiver) if isinstance(waiver, dict) else None,
        "alternatives": alternatives,
        "bar": Markup(plots.utilisation_bar(util, status["status"], warn_from)) if bar and util is not None else None,
    }
    return view


def _finding_key(finding: dict[str, Any]) -> tuple[Any, ...]:
    util = _number(finding.get("utilization"))
    refs = _refs(finding.get("refs"))
    return (_rank(finding.get("status")), -(util if util is not None else -1.0),
            _natural(refs[0] if refs else ""), str(finding.get("parameter")))


def sorted_findings(findings: list[dict[str, Any]]) -> list[dict[str, Any]]:
    """Worst status first (fail, unmatched, not assessed, warn, waived, info, pass), then highest utilisation."""
    return sorted((f for f in findings if isinstance(f, dict)), key=_finding_key)


def waiver_view(waiver: dict[str, Any]) -> dict[str, str]:
    expired = waiver.get("expired")
    state = waiver.get("state") or ("expired" if expired else ("active" if expired is False else ""))
    return {
        "refs": _text(waiver.get("refs") if waiver.get("refs") is not None else waiver.get("ref")),
        "parameter": PARAMETER_LABELS.get(str(waiver.get("parameter")), _text(waiver.get("parameter"))),
        "reason": _text(waiver.get("reason")),
        "approved_by": _text(waiver.get("approved_by") or waiver.get("approver")),
        "date": _text(waiver.get("date")),
        "expires": _text(waiver.get("expires")) or "no expiry",
        "state": _text(state),
    }


def part_view(part: dict[str, Any], warn_from: float | None) -> dict[str, Any]:
    util = _number(part.get("worst_utilization"))
    status = status_view(part.get("status"))
    match = part.get("match") if isinstance(part.get("match"), dict) else {}
    score = _number(match.get("score"))
    return {
        **status,
        "refs": ", ".join(_refs(part.get("refs"))),
        "part_number": _text(part.get("part_number")) or "—",
        "description": _text(part.get("description")),
        "role": _text(part.get("role")),
        "category": _text(part.get("category")),
        "utilization": format_utilisation(util) if util is not None else "—",
        "worst_parameter": PARAMETER_LABELS.get(str(part.get("worst_parameter")), _text(part.get("worst_parameter"))),
        "bom_line": _text(part.get("bom_line")),
        "match": " ".join(x for x in (_text(match.get("method")),
                                      f"({score:g})" if score is not None else "") if x),
        "match_reason": _text(match.get("reason")),
        "bar": Markup(plots.utilisation_bar(util, status["status"], warn_from, width=150, height=18))
        if util is not None else None,
    }


# --------------------------------------------------------------------------------------------
# Corners
# --------------------------------------------------------------------------------------------

_FREQ_KEYS = ("fs", "f_sw", "fsw", "frequency")


def _corner_roles(corner: dict[str, Any]) -> dict[str, dict[str, Any]]:
    roles = corner.get("roles", corner.get("stresses"))
    if isinstance(roles, dict):
        return {str(k): v for k, v in roles.items() if isinstance(v, dict)}
    return {str(k): v for k, v in corner.items() if isinstance(v, dict)}


def corner_table(corners: list[dict[str, Any]]) -> dict[str, Any]:
    """Per-corner operating point: mode, duty, frequency and the key currents.

    Columns: switch peak and RMS current (and peak voltage), each rectifier's peak current,
    the clamp's loss.  The largest value of each stress column is marked (``worst``).
    """
    corners = [c for c in corners if isinstance(c, dict)]
    role_names: list[str] = []
    for c in corners:
        for name in _corner_roles(c):
            if name not in role_names:
                role_names.append(name)
    wanted: list[tuple[str, str, str, str]] = []  # (role, key, heading, kind)
    for role in role_names:
        base = role.split(":")[0]
        if base.startswith("switch"):
            wanted += [(role, "v_peak", f"{role} V peak", "V"), (role, "i_peak", f"{role} I peak", "A"),
                       (role, "i_rms", f"{role} I RMS", "A")]
        elif base.startswith("rectifier"):
            wanted += [(role, "i_peak", f"{role} I peak", "A")]
        elif base.startswith("clamp"):
            wanted += [(role, "p_loss", f"{role} loss", "W")]
    present = [w for w in wanted if any(_number(_corner_roles(c).get(w[0], {}).get(w[1])) is not None for c in corners)]
    worst: dict[int, float] = {}
    for i, (role, key, _, _) in enumerate(present):
        values = [_number(_corner_roles(c).get(role, {}).get(key)) for c in corners]
        values = [v for v in values if v is not None]
        if values:
            worst[i] = max(values)
    rows = []
    for c in corners:
        roles = _corner_roles(c)
        freq = next((_number(c.get(k)) for k in _FREQ_KEYS if _number(c.get(k)) is not None), None)
        load = c.get("load")
        load_num = _number(load)
        cells = []
        for i, (role, key, _, kind) in enumerate(present):
            value = _number(roles.get(role, {}).get(key))
            cells.append({"text": format_quantity(value, kind),
                          "worst": value is not None and len(corners) > 1 and value == worst.get(i)})
        rows.append({
            "id": _text(c.get("id") or c.get("name")) or "—",
            "vin": format_quantity(_number(c.get("vin")), "V"),
            "load": format_quantity(load_num, "%") if load_num is not None else (_text(load) or "—"),
            "t_amb": format_quantity(_number(c.get("t_amb_c", c.get("t_amb"))), "degC"),
            "worst_for": _text(c.get("worst_for")),
            "mode": _text(c.get("mode")) or "—",
            "duty": format_quantity(_number(c.get("duty", c.get("d"))), "%"),
            "fs": format_quantity(freq, "Hz"),
            "cells": cells,
        })
    return {"headings": [w[2] for w in present], "rows": rows,
            "has_t_amb": any(_number(c.get("t_amb_c", c.get("t_amb"))) is not None for c in corners),
            "has_worst_for": any(c.get("worst_for") for c in corners)}


# --------------------------------------------------------------------------------------------
# Policy, trace, figures
# --------------------------------------------------------------------------------------------

_RULE_SHOWN = {"id", "rule", "name", "category", "subtype", "dielectric", "parameter", "source", "recalled",
               "warn_band", "warn_from", "warn", "limit", "limit_text", "description", "applies_to", "confidence"}


def rule_view(rule: dict[str, Any]) -> dict[str, str]:
    applies = _text(rule.get("applies_to")) or " / ".join(
        _text(rule.get(k)) for k in ("category", "subtype", "dielectric") if rule.get(k))
    limit = rule.get("limit_text") or rule.get("description") or rule.get("limit")
    extra = {k: v for k, v in rule.items() if k not in _RULE_SHOWN}
    limit_text = _text(limit) if limit is not None else ""
    if extra:
        limit_text = "; ".join(x for x in (limit_text, _text(extra)) if x)
    band = _number(rule.get("warn_band"))
    warn_from = _fraction(rule.get("warn_from", rule.get("warn")))
    if band is not None and band <= 0.0:
        warn = "no warn band"
    elif band is not None:
        warn = f"from {format_quantity(1.0 - band, '%')} of limit"
    elif warn_from is not None:
        warn = f"from {format_quantity(warn_from, '%')} of limit"
    else:
        warn = "—"
    recalled = rule.get("recalled")
    if not recalled and rule.get("confidence") and _text(rule["confidence"]) not in _text(rule.get("source")):
        recalled = rule.get("confidence")
    return {
        "id": _rule_id(rule) or "—",
        "applies": applies or "—",
        "parameter": PARAMETER_LABELS.get(str(rule.get("parameter")), _text(rule.get("parameter"))) or "—",
        "limit": limit_text or "—",
        "warn": warn,
        "source": _text(rule.get("source")) or "—",
        "recalled": "recalled from memory" if recalled is True else ("" if not recalled else _text(recalled)),
    }


_URL_PASSWORD = re.compile(r"(\b[A-Za-z][\w+.-]*://[^:/@\s]+):[^@\s]+@")


def _redact(text: str) -> str:
    """A URL's password replaced by ``***`` (a catalog URL may carry one)."""
    return _URL_PASSWORD.sub(r"\1:***@", text)


def trace_view(trace: dict[str, Any]) -> list[dict[str, Any]]:
    """Traceability rows in a fixed order, then any other keys; passwords in URLs are masked."""
    rows = []
    seen = set()
    for key, label in TRACE_LABELS:
        seen.add(key)
        rows.append({"key": key, "label": label, "value": _redact(_text(trace.get(key))) or "—",
                     "mono": key.endswith("sha256") or key == "command"})
    for key, value in trace.items():
        if key not in seen:
            rows.append({"key": str(key), "label": str(key).replace("_", " "), "value": _redact(_text(value)) or "—",
                         "mono": False})
    return rows


def _waveform_order(name: str) -> tuple[int, str]:
    base = name.split(":")[0]
    return (0 if base.startswith("switch") else 1 if base.startswith("rectifier") else 2, name)


#: Corner-table stress → finding parameter, for the sweep's and the waveforms' cross-references.
_STRESS_PARAMETER = {"v_peak": "voltage", "v_reverse": "voltage", "i_peak": "current_peak"}


def _role_in(roles: dict[str, Any], role: str) -> dict[str, Any]:
    """The stresses of ``role`` in one corner's roles; ``rectifier:5V`` also finds the plain
    ``rectifier`` of a single-output design (and the other way round)."""
    if isinstance(roles.get(role), dict):
        return roles[role]
    base = role.split(":")[0]
    same = [v for k, v in roles.items() if k.split(":")[0] == base and isinstance(v, dict)]
    return same[0] if len(same) == 1 else {}


def _same_role(a: str, b: str, roles: set[str]) -> bool:
    if a == b:
        return True
    base_a, base_b = a.split(":")[0], b.split(":")[0]
    if base_a != base_b:
        return False
    return len({r for r in roles if r.split(":")[0] == base_a}) == 1  # one output: plain and named agree


def checked_peak(corners: list[dict[str, Any]], corner_id: Any, role: str, key: str = "i_peak") -> float | None:
    """The value the corner table shows for ``role``'s ``key`` at ``corner_id`` (None when absent)."""
    for c in corners:
        if isinstance(c, dict) and _text(c.get("id") or c.get("name")) == _text(corner_id):
            return _number(_role_in(_corner_roles(c), role).get(key))
    return None


def _worst_finding(findings: list[dict[str, Any]]) -> dict[str, Any] | None:
    scored = [f for f in findings if _number(f.get("utilization")) is not None]
    return max(scored, key=lambda f: _number(f.get("utilization"))) if scored else None


def bank_view(name: str, bank: dict[str, Any], findings: list[dict[str, Any]]) -> dict[str, Any]:
    """One capacitor bank: caption data, the table rows and the chart.

    The rated ripple current of each capacitor is the rating its ``ripple_current`` finding used,
    shown where that finding sits at the bank's corner (the one corner the split is recorded at).
    The total is the bank current ``i_bank_rms``; the capacitors' currents add harmonic by
    harmonic as phasors, so their root-sum-square is not the bank current and is not shown as it.
    """
    caps = [c for c in bank.get("caps") or [] if isinstance(c, dict)]
    corner = _text(bank.get("corner")) or "—"
    refs = {_text(c.get("ref")) for c in caps}
    ripple = {}
    for f in findings:
        if f.get("parameter") == "ripple_current":
            for ref in _refs(f.get("refs")):
                if ref in refs:
                    ripple.setdefault(ref, f)
    worst = _worst_finding(list({id(f): f for f in ripple.values()}.values()))
    if worst is None:
        corner_note = "where the bank's ripple current is highest; no capacitor of the bank has a ripple-current finding"
    else:
        who = f"{', '.join(_refs(worst.get('refs')))}, {format_utilisation(_number(worst.get('utilization')))}"
        if _text(worst.get("corner")) == corner:
            corner_note = f"the corner of the bank's worst ripple-current finding ({who})"
        else:
            corner_note = (f"where the bank's ripple current is highest; its worst ripple-current finding ({who}) is "
                           f"at corner {_text(worst.get('corner'))}, where the split is not recorded: that finding's "
                           "numbers are in its card and the findings table, not here")
    total_sq = sum((_number(c.get("i_rms")) or 0.0) ** 2 for c in caps)
    table, chart_caps = [], []
    for c in caps:
        ref = _text(c.get("ref"))
        i = _number(c.get("i_rms"))
        f = ripple.get(ref)
        rating: float | None = None
        if f is not None:
            if _text(f.get("corner")) == corner:
                rating = _number(f.get("rating"))
                rating_text = format_quantity(rating, "A")
            else:
                rating_text = f"— (finding at {_text(f.get('corner'))})"
        elif _number(c.get("i_rms_rating")) is not None:
            rating = _number(c.get("i_rms_rating"))
            rating_text = f"{format_quantity(rating, 'A')} (catalog, uncorrected)"
        else:
            rating_text = "—"
        table.append({
            "ref": ref,
            "part_number": _text(c.get("part_number")),
            "i_rms": format_quantity(i, "A"),
            "share": format_quantity(i * i / total_sq, "%") if i is not None and total_sq > 0 else "—",
            "c_eff": format_quantity(_number(c.get("c_eff")), "F"),
            "esr": format_quantity(_number(c.get("esr")), "ohm"),
            "rating": rating_text,
            "rating_value": rating,
        })
        chart_caps.append({**c, "i_rms_rating": rating})
    total = _number(bank.get("i_bank_rms"))
    return {"name": str(name), "corner": corner, "corner_note": corner_note,
            "harmonics": _text(bank.get("harmonics")),
            "captured": format_quantity(_number(bank.get("captured")), "%")
            if _number(bank.get("captured")) is not None else "",
            "v_pp": format_quantity(_number(bank.get("v_pp")), "V") if _number(bank.get("v_pp")) is not None else "",
            "total": format_quantity(total, "A") if total is not None else "—",
            "total_value": total,
            "svg": Markup(plots.bank_split_chart(str(name), {**bank, "caps": chart_caps})), "caps": table}


def _sweep_checked(series: dict[str, Any], findings: list[dict[str, Any]], roles: set[str]) -> dict[str, Any] | None:
    """The finding a sweep series stands for (its role and parameter), as ``{"value", "corner"}``."""
    key = str(series.get("key", ""))
    role, _, stress = key.rpartition(".")
    parameter = _STRESS_PARAMETER.get(stress)
    if not role or parameter is None or "." in role:
        return None
    same = [f for f in findings if f.get("parameter") == parameter and _number(f.get("stress")) is not None
            and _same_role(str(f.get("role") or ""), role, roles | {role})]
    worst = _worst_finding(same)
    return {"value": _number(worst.get("stress")), "corner": _text(worst.get("corner"))} if worst else None


def figures(result: CheckResult, parts: list[dict[str, Any]], part_warn: dict[int, float | None],
            max_rows: int = 40) -> dict[str, Any]:
    """The report's inline SVG figures, each wrapped in :class:`Markup`."""
    rows = []
    for i, part in enumerate(parts):
        util = _number(part.get("worst_utilization"))
        if util is None:
            continue
        label = f"{', '.join(_refs(part.get('refs')))} {_text(part.get('part_number'))}".strip()
        rows.append({"label": label, "utilization": util, "status": str(part.get("status")),
                     "warn_from": part_warn.get(i)})
    rows.sort(key=lambda r: (-r["utilization"], _rank(r["status"])))
    findings = [f for f in result.findings if isinstance(f, dict)]
    corners = [c for c in result.corners if isinstance(c, dict)]
    finding_roles = {str(f.get("role") or "") for f in findings}
    sweep = result.sweep if isinstance(result.sweep, dict) else {}
    sweep_panels = []
    for series in sweep.get("series") or []:
        if not isinstance(series, dict):
            continue
        series = dict(series)
        key = str(series.get("key", ""))
        series.setdefault("larger_is_better", key.split(".")[-1] in LARGER_IS_BETTER)
        series.setdefault("checked", _sweep_checked(series, findings, finding_roles))
        sweep_panels.append(Markup(plots.sweep_panel(sweep.get("vin") or [], series)))
    waves = result.waveforms if isinstance(result.waveforms, dict) else {}
    wave_panels = []
    for name in sorted(waves, key=_waveform_order):
        wave = waves[name]
        if isinstance(wave, dict):
            wave = {"label": wave.get("label") or name, **{k: v for k, v in wave.items() if k != "label"}}
            unit = wave.get("unit") if isinstance(wave.get("unit"), str) else "A"
            if unit == "A" and "checked_peak" not in wave:
                wave["checked_peak"] = checked_peak(corners, wave.get("corner"), str(name))
            wave_panels.append(Markup(plots.waveform_panel(wave, unit=unit)))
    bank_split = result.bank_split if isinstance(result.bank_split, dict) else {}
    banks = [bank_view(str(name), bank, findings) for name, bank in bank_split.items() if isinstance(bank, dict)]
    return {
        "utilisation": Markup(plots.utilisation_chart(rows, max_rows=max_rows)) if rows else None,
        "utilisation_shown": min(len(rows), max_rows),
        "utilisation_total": len(rows),
        "sweep": sweep_panels,
        "sweep_range": (f"{format_quantity(min(_number(v) for v in sweep['vin'] if _number(v) is not None), 'V')}"
                        f" to {format_quantity(max(_number(v) for v in sweep['vin'] if _number(v) is not None), 'V')}")
        if any(_number(v) is not None for v in sweep.get("vin") or []) else "",
        "waveforms": wave_panels,
        "banks": banks,
    }

#: Status words in running text ("2 parts: 1 fail, 1 pass").
STATUS_WORDS: dict[str, str] = {"fail": "fail", "unmatched": "unmatched", "not_assessed": "not assessed",
                                "warn": "warn", "waived": "waived", "info": "info (no limit)", "pass": "pass",
                                "not_fitted": "not fitted"}


def _plural(n: int, noun: str) -> str:
    return f"{n} {noun}" + ("" if n == 1 else "s")


def count_statuses(rows: list[dict[str, Any]]) -> dict[str, int]:
    """Rows (parts or findings) per status, in the report's status order, zeros left out."""
    counts: dict[str, int] = {}
    for row in rows:
        key = str(row.get("status"))
        counts[key] = counts.get(key, 0) + 1
    return dict(sorted(counts.items(), key=lambda kv: _rank(kv[0])))


def _parts_with(parts: list[dict[str, Any]], status: str) -> int:
    """How many parts carry ``status`` as their own (worst) status."""
    return sum(1 for p in parts if p.get("status") == status)


def tally(part_counts: dict[str, int], n_parts: int, finding_counts: dict[str, int], n_findings: int) -> str:
    """``"12 parts: 2 fail, 10 pass; 64 findings: 5 fail, 59 pass"``: parts and findings, each said as such."""
    def side(n: int, noun: str, counts: dict[str, int]) -> str:
        items = [f"{c} {STATUS_WORDS.get(s, s.replace('_', ' '))}" for s, c in counts.items() if c]
        return _plural(n, noun) + (": " + ", ".join(items) if items else "")

    ordered = dict(sorted(finding_counts.items(), key=lambda kv: _rank(kv[0])))
    return f"{side(n_parts, 'part', part_counts)}; {side(n_findings, 'finding', ordered)}"



def build_view(result: CheckResult) -> dict[str, Any]:
    """Everything the template needs, in display order and display form."""
    rules = {_rule_id(r): r for r in result.policy_rules if isinstance(r, dict)}
    parts = [p for p in result.parts if isinstance(p, dict)]
    descriptions: dict[str, str] = {}
    for part in parts:
        for ref in _refs(part.get("refs")):
            descriptions.setdefault(ref, _text(part.get("description")))

    findings = sorted_findings(result.findings)
    # The warn band a part's bar shows is that of its finding for the worst parameter (else its
    # worst finding).
    by_ref_param: dict[tuple[str, str], dict[str, Any]] = {}
    worst_finding: dict[str, dict[str, Any]] = {}
    for f in findings:
        for ref in _refs(f.get("refs")):
            worst_finding.setdefault(ref, f)
            by_ref_param.setdefault((ref, str(f.get("parameter"))), f)
    part_warn: dict[int, float | None] = {}
    for i, part in enumerate(parts):
        refs = _refs(part.get("refs"))
        chosen = None
        if refs:
            chosen = by_ref_param.get((refs[0], str(part.get("worst_parameter")))) or worst_finding.get(refs[0])
        part_warn[i] = _warn_from(chosen, rules) if chosen else None

    finding_views = [finding_view(f, rules, descriptions, bar=f.get("status") in ATTENTION or f.get("status") == "waived")
                     for f in findings]
    order = sorted(range(len(parts)), key=lambda i: (_rank(parts[i].get("status")),
                                                     -(_number(parts[i].get("worst_utilization")) or -1.0),
                                                     _natural(", ".join(_refs(parts[i].get("refs"))))))
    part_views = [part_view(parts[i], part_warn[i]) for i in order]

    counts = result.counts()
    part_counts = count_statuses(parts)
    verdict = str(result.verdict)
    failing = counts.get("fail", 0)
    reasons = []
    for status in ("fail", "unmatched", "not_assessed"):
        n = counts.get(status, 0)
        if n:
            on = _parts_with(parts, status)
            reasons.append(f"{_plural(n, STATUS_WORDS[status] + ' finding')}"
                           + (f" on {_plural(on, 'part')}" if on else ""))
    unmatched_lines = [line for line in result.bom_lines if isinstance(line, dict)
                       and str(line.get("status", line.get("match_status", ""))) == "unmatched"]
    return {
        "title": f"Design review: {result.design}",
        "design": str(result.design),
        "policy": str(result.policy),
        "policy_origin": ORIGIN_TEXT.get(str(result.policy_origin), str(result.policy_origin)),
        "verdict": verdict,
        "verdict_label": "PASS" if verdict == "pass" else "FAIL" if verdict == "fail" else verdict.upper(),
        "verdict_symbol": STATUS_SYMBOLS["pass"] if verdict == "pass" else STATUS_SYMBOLS["fail"],
        "verdict_css": "pass" if verdict == "pass" else "fail",
        "verdict_reasons": ", ".join(reasons),
        "verdict_note": (f"{counts.get('warn', 0)} finding{'s' if counts.get('warn', 0) != 1 else ''} in the warn band"
                         if counts.get("warn", 0) else ""),
        "failing": failing,
        "counts": [{**status_view(s), "n": counts.get(s, 0)} for s in STATUS_ORDER]
        + [{**status_view(s), "n": n} for s, n in counts.items() if s not in STATUS_ORDER],
        "n_findings": len(findings),
        "n_parts": len(parts),
        "tally": tally(part_counts, len(parts), counts, len(findings)),
        "n_bom_lines": len(result.bom_lines),
        "unmatched_lines": [{"line": _text(ln.get("line") or ln.get("bom_line")), "refs": _text(ln.get("refs")),
                             "text": _text(ln.get("text") or ln.get("description") or ln.get("value") or ln.get("part_number")),
                             "reason": _text(ln.get("reason"))} for ln in unmatched_lines],
        "caution": str(result.caution),
        "attention": [f for f in finding_views if f["status"] in ATTENTION or f["css"] == "unknown"],
        "waived": [f for f in finding_views if f["status"] == "waived"],
        "findings": finding_views,
        "parts": part_views,
        "corners": corner_table(result.corners),
        "figures": figures(result, parts, part_warn),
        "policy_rules": [rule_view(r) for r in result.policy_rules if isinstance(r, dict)],
        "waivers": [waiver_view(w) for w in result.waivers if isinstance(w, dict)],
        "assumptions": [_text(a) for a in result.assumptions],
        "notes": [_text(n) for n in result.notes],
        "bom_warnings": [_text(w) for w in getattr(result, "bom_warnings", []) or []],
        "trace": trace_view(result.trace if isinstance(result.trace, dict) else {}),
        "date": _text((result.trace or {}).get("date")) if isinstance(result.trace, dict) else "",
        "tool_version": _text((result.trace or {}).get("tool_version")) if isinstance(result.trace, dict) else "",
        "pattern_defs": Markup(plots.pattern_defs()),
    }
