"""The view builder: order, number formatting, status words and symbols, lenient reading."""

from __future__ import annotations

import pytest

from partcheck.report.build import (
    build_view,
    corner_table,
    finding_view,
    rule_view,
    sorted_findings,
    status_view,
)
from partcheck.result import STATUS_ORDER, CheckResult


def test_findings_sorted_worst_status_then_highest_utilisation(sample_result):
    ordered = sorted_findings(sample_result.findings)
    statuses = [f["status"] for f in ordered]
    assert statuses == sorted(statuses, key=STATUS_ORDER.index)
    assert [(f["refs"][0], f["parameter"]) for f in ordered[:4]] == [
        ("C5", "capacitance"), ("C5", "voltage"), ("J1", None), ("U2", "voltage")]
    warns = [f["utilization"] for f in ordered if f["status"] == "warn"]
    assert warns == sorted(warns, reverse=True) == [0.9338, 0.92, 0.9038]


def test_status_words_and_symbols_are_distinct():
    views = [status_view(s) for s in STATUS_ORDER]
    assert len({v["symbol"] for v in views}) == len(STATUS_ORDER)
    assert len({v["label"] for v in views}) == len(STATUS_ORDER)
    assert status_view("fail") == {"status": "fail", "label": "FAIL", "symbol": "✖", "css": "fail"}
    odd = status_view("<b>odd</b>")
    assert odd["css"] == "unknown" and odd["label"] == "<B>ODD</B>"  # shown as text, escaped by the template


def test_attention_and_waived_groups(sample_result):
    view = build_view(sample_result)
    assert [f["status"] for f in view["attention"]] == ["fail", "fail", "unmatched", "not_assessed", "warn", "warn", "warn"]
    assert [f["refs"] for f in view["waived"]] == ["C1"]
    assert view["waived"][0]["waiver"]["approved_by"] == "reliability lead, review RV-0142"
    assert view["verdict_label"] == "FAIL" and view["verdict_reasons"] == (
        "2 fail findings on 1 part, 1 unmatched finding on 1 part, 1 not assessed finding on 1 part")


def test_finding_numbers_are_formatted_with_units(sample_result):
    c5 = next(f for f in sample_result.findings if f["refs"] == ["C5"] and f["parameter"] == "capacitance")
    view = finding_view(c5, {"capacitor.ceramic.capacitance": {"warn_band": 0.1}}, {"C5": "4.7 µF 25 V X7R 0805"})
    assert (view["stress"], view["rating"], view["limit"]) == ("1.41 µF", "4.7 µF", "2.35 µF")
    assert (view["utilization"], view["margin"], view["warn_from"]) == ("167 %", "-66.7 %", "90 %")
    assert view["relation"] == "at least"  # capacitance: larger is better
    assert view["description"] == "4.7 µF 25 V X7R 0805"
    assert [a["min_margin"] for a in view["alternatives"]] == ["19 %", "12 %"]
    assert view["bar"] is not None and 'fill="url(#pc-fail)"' in view["bar"]
    life = next(f for f in sample_result.findings if f["parameter"] == "life")
    life_view = finding_view(life, {}, {})
    assert (life_view["stress"], life_view["limit"]) == ("52 000 h", "60 000 h")


def test_not_assessed_finding_has_no_bar_and_dashes(sample_result):
    u2 = next(f for f in sample_result.findings if f["status"] == "not_assessed")
    view = finding_view(u2, {}, {})
    assert view["bar"] is None
    assert (view["stress"], view["rating"], view["limit"], view["utilization"], view["corner"]) == ("—",) * 5


def test_warn_band_from_the_rule_or_the_finding(sample_result):
    d1 = dict(next(f for f in sample_result.findings if f["refs"] == ["D1"] and f["parameter"] == "voltage"))
    assert finding_view(d1, {"diode.voltage": {"warn_band": 0.15}}, {})["warn_from"] == "85 %"
    assert finding_view(d1, {"diode.voltage": {"warn_from": 0.8}}, {})["warn_from"] == "80 %"
    d1["warn_from"] = 0.95
    assert finding_view(d1, {"diode.voltage": {"warn_band": 0.15}}, {})["warn_from"] == "95 %"
    assert finding_view({**d1, "warn_from": None}, {}, {})["warn_from"] == ""


def test_corner_table_marks_the_largest_value_of_each_column(sample_result):
    table = corner_table(sample_result.corners)
    assert table["headings"] == ["switch V peak", "switch I peak", "switch I RMS", "rectifier:18V I peak",
                                 "rectifier:-4V I peak", "clamp loss"]
    rows = {r["id"]: r for r in table["rows"]}
    assert rows["vin_min-full"]["mode"] == "CCM" and rows["vin_max-light"]["mode"] == "DCM"
    assert rows["vin_min-full"]["duty"] == "50.8 %" and rows["vin_min-full"]["fs"] == "250 kHz"
    worst = {r["id"]: [c["text"] for c in r["cells"] if c["worst"]] for r in table["rows"]}
    assert worst["vin_max-full"] == ["33.3 V"]
    assert worst["vin_min-overload"] == ["1.27 A", "630 mA", "519 mA", "456 mA", "112 mW"]
    assert rows["vin_min-light"]["load"] == "10 %"


@pytest.mark.parametrize("shape", ["roles", "stresses", "flat"])
def test_corner_table_reads_the_role_dicts_wherever_they_sit(shape):
    roles = {"switch": {"i_peak": 1.5, "i_rms": 0.5}, "clamp": {"p_loss": 0.2}}
    corner = {"id": "c1", "vin": 20.0, "load": "full", "mode": "DCM", "d": 0.3, "f_sw": 1.2e5}
    corner.update({"roles": roles} if shape == "roles" else {"stresses": roles} if shape == "stresses" else roles)
    table = corner_table([corner])
    assert table["headings"] == ["switch I peak", "switch I RMS", "clamp loss"]
    row = table["rows"][0]
    assert [c["text"] for c in row["cells"]] == ["1.5 A", "500 mA", "200 mW"]
    assert (row["duty"], row["fs"], row["load"]) == ("30 %", "120 kHz", "full")
    assert not any(c["worst"] for c in row["cells"])  # one corner: nothing to single out


def test_rule_view_reads_recalled_and_warn_band():
    view = rule_view({"id": "x.voltage", "category": "diode", "subtype": "schottky", "parameter": "voltage",
                      "limit_text": "≤ 75 % of V_RRM", "warn_band": 0.1, "source": "a standard", "recalled": True,
                      "knee_c": 70})
    assert view == {"id": "x.voltage", "applies": "diode / schottky", "parameter": "voltage",
                    "limit": "≤ 75 % of V_RRM; knee_c = 70", "warn": "from 90 % of limit", "source": "a standard",
                    "recalled": "recalled from memory"}
    assert rule_view({"id": "y", "warn_band": 0.0})["warn"] == "no warn band"


def test_parts_sorted_and_utilisation_chart_limited():
    parts = [{"refs": [f"R{i}"], "part_number": f"RES-{i}", "status": "pass", "worst_utilization": i / 100,
              "worst_parameter": "power"} for i in range(1, 61)]
    parts.append({"refs": ["R99"], "part_number": "RES-99", "status": "fail", "worst_utilization": 1.2,
                  "worst_parameter": "power"})
    result = CheckResult(design="d", policy="p", policy_origin="default", verdict="fail", parts=parts)
    view = build_view(result)
    assert [p["refs"] for p in view["parts"][:3]] == ["R99", "R60", "R59"]
    figures = view["figures"]
    assert (figures["utilisation_shown"], figures["utilisation_total"]) == (40, 61)
    chart = str(figures["utilisation"])
    assert "R99 RES-99" in chart and "R60 RES-60" in chart and "R22 RES-22" in chart and "R21 RES-21" not in chart


def test_the_shapes_the_check_writes_are_read():
    """Keys as the pipeline writes them: ``fsw``/``t_amb``/``worst_for`` on corners, ``applies_to``,
    ``warn`` (as text) and ``confidence`` on rules, ``text`` on BOM lines, ``not_fitted`` parts."""
    result = CheckResult(
        design="d", policy="p", policy_origin="design", verdict="fail",
        findings=[{"refs": ["D1"], "part_number": "DU-050", "parameter": "voltage", "unit": "V", "stress": 45.0,
                   "rating": 50.0, "limit": 40.0, "utilization": 1.125, "margin": -0.125, "corner": "vin_max-full",
                   "status": "fail", "rule": "diode-voltage", "source": "common practice", "confidence": "read",
                   "detail": "", "waiver": None, "alternatives": []}],
        parts=[{"refs": ["D1"], "part_number": "DU-050", "status": "fail", "worst_utilization": 1.125,
                "worst_parameter": "voltage", "match": {"method": "exact", "score": 100.0}},
               {"refs": ["R9"], "part_number": None, "status": "not_fitted", "worst_utilization": None}],
        bom_lines=[{"line": 9, "refs": ["X1"], "text": "mystery part", "status": "unmatched", "reason": "no match"}],
        corners=[{"id": "vin_max-full", "vin": 60.0, "load": "full", "mode": "CCM", "duty": 0.35, "fsw": 2e5,
                  "t_amb": 60.0, "roles": {"rectifier": {"i_peak": 1.2}}, "worst_for": ["rectifier.v_reverse"]}],
        policy_rules=[{"id": "diode-voltage", "applies_to": "diode", "parameter": "voltage", "limit": "≤ 0.8 × vrrm",
                       "warn": "0.9", "source": "common practice", "confidence": "common practice"}],
        waivers=[{"ref": "C3", "parameter": "life", "reason": "r", "approved_by": "a", "date": "2026-01-01",
                  "expires": None}],
    )
    view = build_view(result)
    row = view["corners"]["rows"][0]
    assert (row["fs"], row["t_amb"], row["worst_for"]) == ("200 kHz", "60 °C", "rectifier.v_reverse")
    rule = view["policy_rules"][0]
    assert (rule["applies"], rule["limit"], rule["warn"], rule["recalled"]) == (
        "diode", "≤ 0.8 × vrrm", "from 90 % of limit", "")  # "common practice" is already the source
    finding = view["attention"][0]
    assert (finding["warn_from"], finding["confidence"]) == ("90 %", "read")
    assert [(p["refs"], p["label"], p["css"]) for p in view["parts"]] == [("D1", "FAIL", "fail"),
                                                                        ("R9", "NOT FITTED", "quiet")]
    assert view["parts"][0]["match"] == "exact (100)"
    assert view["unmatched_lines"] == [{"line": "9", "refs": "X1", "text": "mystery part", "reason": "no match"}]
    assert view["waivers"][0]["refs"] == "C3" and view["waivers"][0]["expires"] == "no expiry"
