"""Stress items against limits: utilisation, margin, status, worst corner, verdict."""

from __future__ import annotations

import datetime as dt
import json

import pytest

from partcheck.rules.evaluate import (
    Finding,
    StressItem,
    derating_factor,
    evaluate,
    not_assessed_finding,
    unmatched_finding,
    verdict,
)
from partcheck.rules.policy import load_preset, loads_policy

TODAY = dt.date(2026, 12, 1)
INDUSTRIAL = load_preset("industrial")


def item(**kw) -> StressItem:
    base = dict(refs=("D1",), part_number="DS-60V-SMA", role="rectifier", category="diode", subtype="schottky",
                dielectric=None, parameter="voltage", stress=49.5, rating=60.0, corner="vin_max-full")
    base.update(kw)
    return StressItem(**base)


def one(items, policy=INDUSTRIAL, **kw) -> Finding:
    findings = evaluate(items if isinstance(items, list) else [items], policy, today=TODAY, **kw)
    assert len(findings) == 1
    return findings[0]


def test_hand_worked_rectifier_reverse_voltage():
    """derating-standards.md, best check value 15 (CALC) — a flyback rectifier too close to VRRM.

    Converter: 36–75 V in, 12 V out, turns ratio n = Np/Ns = 2, VF = 0.5 V.

    1. Secondary diode reverse voltage (flyback-equations, textbook relation):
       VR = Vout + Vin,max / n = 12 V + 75 V / 2 = 49.5 V.
    2. Catalog rating of the fitted Schottky: VRRM = 60 V, so VR / VRRM = 49.5 / 60 = 0.825 (82.5 %).
    3. industrial preset, rule diode-schottky-voltage (fraction 0.75, common practice):
       limit = 0.75 × 60 V = 45 V; utilisation = 49.5 / 45 = 1.1; margin = 1 − 1.1 = −0.1 → fail.
       (equivalently 0.825 / 0.75 = 1.1).
    4. nasa-eee-inst-002, rule diode-voltage (fraction 0.70, §S1, from memory (medium)):
       limit = 0.70 × 60 V = 42 V; utilisation = 49.5 / 42 = 1.1786 → fail.
    5. The same converter's switch: VOR = n (Vout + VF) = 25 V, VDS,pk = 75 + 25 = 100 V on a 150 V
       part = 0.667; NASA switch-voltage 0.75 → limit 112.5 V, utilisation 0.889 < warn 0.9 → pass.
    """
    f = one(item())
    assert f.rule == "diode-schottky-voltage"
    assert f.limit == pytest.approx(45.0)
    assert f.utilization == pytest.approx(1.1)
    assert f.margin == pytest.approx(-0.1)
    assert f.status == "fail"
    assert f.unit == "V" and f.corner == "vin_max-full" and f.source.startswith("common practice")

    nasa = load_preset("nasa-eee-inst-002")
    f = one(item(), nasa)
    assert (f.rule, f.limit, f.status) == ("diode-voltage", pytest.approx(42.0), "fail")
    assert f.utilization == pytest.approx(49.5 / 42.0)
    assert f.confidence == "from memory (medium)"

    sw = one(item(refs=("Q1",), part_number="SW-150V", role="switch", category="switch", subtype="mosfet",
                  stress=100.0, rating=150.0), nasa)
    assert (sw.limit, sw.status) == (pytest.approx(112.5), "pass")
    assert sw.utilization == pytest.approx(100 / 112.5)


def test_ultrafast_rectifier_takes_the_category_rule():
    f = one(item(subtype="ultrafast", rating=100.0))
    assert (f.rule, f.limit, f.utilization, f.status) == ("diode-voltage", 80.0, pytest.approx(49.5 / 80), "pass")


@pytest.mark.parametrize(
    "stress, status",
    [(0.80 * 45.0, "pass"), (0.90 * 45.0, "pass"), (0.91 * 45.0, "warn"), (45.0, "warn"), (45.1, "fail")],
)
def test_warn_band(stress, status):
    """warn = 0.9 in industrial: utilisation in (0.9, 1] warns, exactly at the limit is no failure."""
    assert one(item(stress=stress)).status == status


def test_rule_warn_overrides_the_policy_default():
    policy = loads_policy('warn = 0.9\n[rules.d]\ncategory = "diode"\nparameter = "voltage"\nfraction = 0.5\n'
                          'warn = 0.6\nsource = "t"\nconfidence = "read"\n')
    assert one(item(stress=20.0), policy).status == "warn"  # 20 / 30 = 0.667 > 0.6
    nowarn = loads_policy('[rules.d]\ncategory = "diode"\nparameter = "voltage"\nfraction = 0.5\n'
                          'source = "t"\nconfidence = "read"\n')
    assert one(item(stress=29.9), nowarn).status == "pass"  # no band at all


def test_resistor_power_derated_above_the_knee():
    """industrial resistor-power: 0.6 × p_rated, linear from a 70 °C knee to zero at t_max.

    0.25 W thick-film chip, t_max = 155 °C, part at 100 °C:
    factor = (155 − 100) / (155 − 70) = 55 / 85 = 0.64706;
    limit = 0.6 × 0.64706 × 0.25 W = 0.097059 W;
    0.080 W → utilisation 0.8242 → pass; 0.090 W → 0.9273 → warn; 0.100 W → 1.0303 → fail.
    At 60 °C (below the knee) the limit is 0.6 × 0.25 = 0.15 W.
    """
    base = dict(refs=("R7",), part_number="RT-0805-10R", role="snubber_r", category="resistor", subtype="thick_film",
                parameter="power", rating=0.25, temperature=100.0, t_max=155.0)
    f = one(item(**base, stress=0.080))
    assert f.limit == pytest.approx(0.6 * 55 / 85 * 0.25)
    assert f.limit == pytest.approx(0.097059, abs=1e-6)
    assert f.utilization == pytest.approx(0.8242, abs=1e-4)
    assert f.status == "pass"
    assert "derated ×0.647 at 100 °C" in f.detail
    assert one(item(**base, stress=0.090)).status == "warn"
    assert one(item(**base, stress=0.100)).status == "fail"
    assert one(item(**dict(base, temperature=60.0), stress=0.100)).limit == pytest.approx(0.15)
    hot = one(item(**dict(base, temperature=160.0), stress=0.01))
    assert (hot.status, hot.limit, hot.utilization) == ("fail", 0.0, None)
    assert "the limit is zero" in hot.detail


def test_derating_factor_shape():
    assert derating_factor(25.0, 70.0, 155.0) == 1.0
    assert derating_factor(70.0, 70.0, 155.0) == 1.0
    assert derating_factor(112.5, 70.0, 155.0) == pytest.approx(0.5)
    assert derating_factor(155.0, 70.0, 155.0) == 0.0
    assert derating_factor(200.0, 70.0, 155.0) == 0.0


def test_derating_with_the_parts_own_knee():
    nasa = load_preset("nasa-eee-inst-002")  # resistor-power: 0.6, derate_above = "part"
    base = dict(refs=("R1",), part_number="RM-1206", role="sense", category="resistor", subtype="metal_film",
                parameter="power", rating=0.5, stress=0.1, temperature=90.0, t_max=150.0)
    f = one(item(**base, t_knee=70.0), nasa)
    assert f.limit == pytest.approx(0.6 * (150 - 90) / (150 - 70) * 0.5)
    missing = one(item(**base), nasa)
    assert missing.status == "not_assessed"
    assert missing.detail == "no knee temperature (t_knee) in the catalog for RM-1206"


def test_temperature_offset_and_absolute_cap_whichever_is_lower():
    """derating-standards.md check value 13: Ta = 50 °C, P = 1.5 W, RθJA = 40 K/W → Tj = 110 °C.

    ECSS (from memory, medium): Tj ≤ 110 °C or Tj,max − 40 °C → with Tj,max = 175 °C the limit is
    min(110, 135) = 110 °C; utilisation 110/110 = 1.0 → just meets (warn band, not a failure).
    NASA (from memory, medium): min(125, 135) = 125 °C → 0.88 → pass.
    industrial: Tj,max − 25 K = 150 °C → 0.733 → pass.
    """
    tj = 50.0 + 1.5 * 40.0
    assert tj == 110.0
    base = dict(refs=("Q1",), part_number="SW-100V", role="switch", category="switch", subtype="mosfet",
                parameter="temperature", stress=tj, rating=175.0)
    ecss = one(item(**base), load_preset("ecss-q-st-30-11"))
    assert (ecss.limit, ecss.utilization, ecss.status) == (110.0, 1.0, "warn")
    assert ecss.unit == "degC"
    nasa = one(item(**base), load_preset("nasa-eee-inst-002"))
    assert (nasa.limit, nasa.status) == (125.0, "pass")
    ind = one(item(**base))
    assert (ind.limit, ind.utilization, ind.status) == (150.0, pytest.approx(110 / 150), "pass")


def test_ceramic_capacitance_after_dc_bias():
    """A 10 µF X7R keeping 4 µF at its working bias: limit 0.5 × 10 µF = 5 µF ≥ → utilisation
    5/4 = 1.25 → fail (larger is better: utilisation = limit / stress)."""
    base = dict(refs=("C5",), part_number="CC-1206-10U-25V", role="output_cap", category="capacitor",
                subtype="ceramic", dielectric="X7R", parameter="capacitance", rating=10e-6)
    f = one(item(**base, stress=4e-6))
    assert (f.rule, f.limit, f.utilization, f.status) == ("ceramic-capacitance", 5e-6, pytest.approx(1.25), "fail")
    assert f.margin == pytest.approx(-0.25)
    assert one(item(**base, stress=8e-6)).status == "pass"  # 0.625


def test_electrolytic_life_against_the_design_requirement():
    """derating-standards.md check value 1: a 105 °C / 2000 h part lasts 32 000 h at 65 °C (read);
    against 60 000 h required: utilisation 60 000 / 32 000 = 1.875 → fail."""
    base = dict(refs=("C9",), part_number="CE-470U-35V", role="output_cap", category="capacitor",
                subtype="aluminium_electrolytic", parameter="life", stress=32000.0, rating=2000.0)
    f = one(item(**base, required=60000.0))
    assert (f.limit, f.utilization, f.status, f.unit) == (60000.0, 1.875, "fail", "h")
    default = one(item(**base))  # the industrial preset's stated default requirement, 50 000 h
    assert (default.status, default.limit, default.rule) == ("fail", 50000.0, "electrolytic-life")
    bare = loads_policy('extends = "industrial"\n[rules.electrolytic-life]\ndesign_requirement = true\n'
                        'source = "t"\nconfidence = "read"\n')
    none = one(item(**base), bare)
    assert (none.status, none.limit, none.rule) == ("info", None, "electrolytic-life")
    assert none.detail == "the design states no required life"
    policy = loads_policy('extends = "industrial"\n[rules.electrolytic-life]\nmin = "20000 h"\n'
                          'design_requirement = true\nsource = "t"\nconfidence = "read"\n')
    assert one(item(**base), policy).limit == 20000.0
    assert one(item(**base, required=30000.0), policy).limit == 30000.0


def test_shunt_reference_cathode_current_window():
    base = dict(refs=("U3",), part_number="REF-2V5", role="shunt_reference", category="reference", subtype="shunt",
                parameter="current_avg", rating=100e-3, rating_min=1e-3)
    ok = one(item(**base, stress=5e-3))
    assert (ok.status, ok.limit) == ("pass", pytest.approx(80e-3))
    low = one(item(**base, stress=0.5e-3))
    assert (low.status, low.limit, low.utilization) == ("fail", 1e-3, pytest.approx(2.0))
    assert low.detail == "below the part's minimum ika_min = 1 mA"
    missing = one(item(**dict(base, rating_min=None), stress=5e-3))
    assert missing.status == "not_assessed"


def test_missing_rating_is_not_assessed():
    f = one(item(rating=None))
    assert (f.status, f.limit, f.utilization, f.rule) == ("not_assessed", None, None, "diode-schottky-voltage")
    assert f.detail == "no vrrm rating in the catalog for DS-60V-SMA"
    assert one(item(stress=None)).detail == "no voltage stress was computed"


def test_a_stress_the_policy_does_not_limit_is_info_not_pass():
    f = one(item(category="magnetic", subtype="transformer", parameter="current_rms", stress=1.2, rating=None))
    assert (f.status, f.rule, f.limit, f.utilization) == ("info", "none", None, None)
    assert f.detail == "policy 'industrial' sets no current_rms limit for magnetic/transformer"
    assert verdict([f], INDUSTRIAL) == "pass"


def test_worst_corner_is_kept():
    corners = [item(stress=40.0, corner="vin_min-full"), item(stress=44.0, corner="vin_max-light"),
               item(stress=42.0, corner="vin_nom-full")]
    f = one(corners)
    assert (f.corner, f.stress, f.status) == ("vin_max-light", 44.0, "warn")
    # derated limits can make a lower stress the worse corner
    hot = dict(refs=("R7",), part_number="R", role="r", category="resistor", subtype="thick_film",
               parameter="power", rating=0.25, t_max=155.0)
    f = one([item(**hot, stress=0.09, temperature=60.0, corner="cold"),
             item(**hot, stress=0.08, temperature=110.0, corner="hot")])
    assert f.corner == "hot"
    assert len(evaluate(corners, INDUSTRIAL, today=TODAY, worst_only=False)) == 3


def test_separate_parts_and_parameters_give_separate_findings():
    findings = evaluate([item(), item(refs=("D2",)), item(parameter="temperature", stress=100.0, rating=150.0)],
                        INDUSTRIAL, today=TODAY)
    assert [(f.refs, f.parameter) for f in findings] == [(("D1",), "voltage"), (("D2",), "voltage"),
                                                          (("D1",), "temperature")]


def test_to_dict_has_the_report_keys_and_is_json():
    data = one(item()).to_dict()
    for key in ("refs", "part_number", "role", "parameter", "stress", "rating", "limit", "utilization", "margin",
                "corner", "status", "rule", "source"):
        assert key in data
    assert data["refs"] == ["D1"] and data["unit"] == "V" and data["waiver"] is None and data["alternatives"] == []
    json.dumps(data, allow_nan=False)
    hot = one(item(category="resistor", subtype="thick_film", parameter="power", stress=0.1, rating=0.25,
                   temperature=170.0, t_max=155.0)).to_dict()
    assert hot["utilization"] is None and hot["status"] == "fail"
    json.dumps(hot, allow_nan=False)


def test_helpers_and_verdict():
    na = not_assessed_finding(["J1"], "CON-2P", "connector", "no stress model for connectors")
    um = unmatched_finding(["U9"], reason="no catalog part matches 'LDO 3V3'")
    assert (na.status, na.detail, um.status, um.detail) == (
        "not_assessed", "no stress model for connectors", "unmatched", "no catalog part matches 'LDO 3V3'")
    passing = one(item(stress=30.0))
    warn = one(item(stress=44.0))
    failing = one(item())
    assert verdict([passing, warn], INDUSTRIAL) == "pass"
    assert verdict([passing, failing], INDUSTRIAL) == "fail"
    assert verdict([passing, na], INDUSTRIAL) == "fail"
    assert verdict([passing, um], INDUSTRIAL) == "fail"
    lenient = loads_policy('extends = "industrial"\nfail_unassessed = false\nfail_unmatched = false\n')
    assert verdict([passing, na, um], lenient) == "pass"
    assert verdict([passing.to_dict(), failing.to_dict()]) == "fail"
    assert verdict([]) == "pass"
