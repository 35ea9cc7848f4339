"""The shipped presets hold exactly the figures they cite.

Each table below lists every rule of one preset with the cited figure, the place in the source
document (as collected in shared/design/reference/derating-standards.md) and how sure it is:
``read`` (read in a published text), ``from memory (high|medium|low)`` (recalled; the
standard's table itself was not read) or ``common practice``.  The test fails when a preset
gains, loses or changes a rule without this list changing with it.
"""

from __future__ import annotations

import pytest

from partcheck.rules.policy import CONFIDENCES, list_presets, load_preset

MH, MM, ML = "from memory (high)", "from memory (medium)", "from memory (low)"
CP, READ = "common practice", "read"

# id: (category, subtype, dielectric, parameter, limit keys, confidence, text the source must contain)
INDUSTRIAL = {
    "switch-voltage": ("switch", None, None, "voltage", {"fraction": 0.8}, CP, "common practice"),
    "switch-current-rms": ("switch", None, None, "current_rms", {"fraction": 0.8}, CP, "common practice"),
    "switch-current-peak": ("switch", None, None, "current_peak", {"fraction": 0.8}, CP, "common practice"),
    "switch-temperature": ("switch", None, None, "temperature", {"offset": 25.0}, CP, "common practice"),
    "diode-voltage": ("diode", None, None, "voltage", {"fraction": 0.8}, CP, "common practice"),
    "diode-schottky-voltage": ("diode", "schottky", None, "voltage", {"fraction": 0.75}, CP, "common practice"),
    "diode-current-avg": ("diode", None, None, "current_avg", {"fraction": 0.8}, CP, "common practice"),
    # against i_frm (repetitive peak), the default rating; ifsm is the surge rating
    "diode-current-peak": ("diode", None, None, "current_peak", {"fraction": 0.8}, CP, "repetitive peak rating i_frm"),
    "diode-temperature": ("diode", None, None, "temperature", {"offset": 25.0}, CP, "common practice"),
    "clamp-power": ("clamp", None, None, "power", {"fraction": 0.6}, CP, "common practice"),
    "clamp-temperature": ("clamp", None, None, "temperature", {"offset": 25.0}, CP, "common practice"),
    "capacitor-voltage": ("capacitor", None, None, "voltage", {"fraction": 0.8}, CP, "common practice"),
    # IPC-9592 MLCC 80 %, raised to 90 % in the A revision: Cervone APEC 2012 slide 3 (read)
    "ceramic-voltage": ("capacitor", "ceramic", None, "voltage", {"fraction": 0.8}, CP, "APEC 2012, slide 3"),
    "ceramic-capacitance": ("capacitor", "ceramic", None, "capacitance", {"min_fraction": 0.5}, CP,
                            "common practice"),
    # RIAC Part Derating Parameters, fixed ceramic, Tmax − 10 °C (read)
    "ceramic-temperature": ("capacitor", "ceramic", None, "temperature", {"offset": 10.0}, READ,
                            "RIAC Part Derating Parameters, fixed ceramic"),
    "electrolytic-voltage": ("capacitor", "aluminium_electrolytic", None, "voltage", {"fraction": 0.8}, CP,
                             "IPC-9592 Appendix A"),
    # IPC-9592A Al-electrolytic ripple ≤ 80 %: Cervone APEC 2012 slide 3 (read)
    "electrolytic-ripple": ("capacitor", "aluminium_electrolytic", None, "ripple_current", {"fraction": 0.8},
                            READ, "IPC-9592A"),
    # hot spot ≤ t_max (offset 0 K); RIAC's stricter Tmax − 20 °C quoted for comparison
    "electrolytic-temperature": ("capacitor", "aluminium_electrolytic", None, "temperature", {"offset": 0.0}, CP,
                                 "maximum category temperature"),
    # the design's requirement, else 50 000 h for industrial equipment (common practice)
    "electrolytic-life": ("capacitor", "aluminium_electrolytic", None, "life",
                          {"design_requirement": True, "default_requirement": 50000.0}, CP, "50 000 h"),
    "polymer-voltage": ("capacitor", "polymer", None, "voltage", {"fraction": 0.8}, CP, "common practice"),
    "polymer-ripple": ("capacitor", "polymer", None, "ripple_current", {"fraction": 0.8}, CP, "common practice"),
    "polymer-temperature": ("capacitor", "polymer", None, "temperature", {"offset": 0.0}, CP,
                            "maximum category temperature"),
    # every other subtype (tantalum, film): hot spot ≤ t_max, ripple ≤ 80 % of rated
    "capacitor-temperature": ("capacitor", None, None, "temperature", {"offset": 0.0}, CP, "common practice"),
    "capacitor-ripple": ("capacitor", None, None, "ripple_current", {"fraction": 0.8}, CP, "common practice"),
    # NASA EEE-INST-002 §C2 solid tantalum 0.50 (from memory, high) quoted as a cross-check
    "tantalum-voltage": ("capacitor", "tantalum", None, "voltage", {"fraction": 0.5}, CP, "§C2"),
    "resistor-power": ("resistor", None, None, "power", {"fraction": 0.6, "derate_above": 70.0}, CP,
                       "common practice"),
    "resistor-voltage": ("resistor", None, None, "voltage", {"fraction": 0.8}, CP, "common practice"),
    "magnetic-saturation": ("magnetic", None, None, "saturation", {"fraction": 0.8}, CP, "common practice"),
    # b_peak ≤ 0.8 × b_sat at the core's hot temperature
    "magnetic-flux-density": ("magnetic", None, None, "flux_density", {"fraction": 0.8}, CP, "common practice"),
    "magnetic-temperature": ("magnetic", None, None, "temperature", {"offset": 20.0}, CP, "common practice"),
    "optocoupler-led-current": ("optocoupler", None, None, "current_avg", {"fraction": 0.5}, CP,
                                "common practice"),
    "optocoupler-temperature": ("optocoupler", None, None, "temperature", {"offset": 25.0}, CP,
                                "common practice"),
    "reference-cathode-current": ("reference", None, None, "current_avg", {"fraction": 0.8, "min_rating": "ika_min"},
                                  CP, "common practice"),
    "reference-voltage": ("reference", None, None, "voltage", {"fraction": 0.8}, CP, "common practice"),
}

# NASA EEE-INST-002 (2003/2008): no derating table was read; every figure from memory
# (derating-standards.md table 1, with its MEM-H/M/L tag).
NASA = {
    # §C2 ceramic DC + peak AC ≤ 0.60 × rated, MEM-H
    "ceramic-voltage": ("capacitor", "ceramic", None, "voltage", {"fraction": 0.6}, MH, "§C2"),
    # §C2 solid tantalum MnO2 ≤ 0.50, MEM-H
    "tantalum-voltage": ("capacitor", "tantalum", None, "voltage", {"fraction": 0.5}, MH, "§C2"),
    # §C2 film ≤ 0.60, MEM-M
    "film-voltage": ("capacitor", "film", None, "voltage", {"fraction": 0.6}, MM, "§C2"),
    # §S1 diodes: VR ≤ 0.70, IF(avg) ≤ 0.50, MEM-M
    "diode-voltage": ("diode", None, None, "voltage", {"fraction": 0.7}, MM, "§S1"),
    "diode-current-avg": ("diode", None, None, "current_avg", {"fraction": 0.5}, MM, "§S1"),
    # §S1 all discrete semis: Tj ≤ 125 °C or Tj,max − 40 °C, whichever is lower, MEM-M
    "diode-temperature": ("diode", None, None, "temperature", {"max": 125.0, "offset": 40.0}, MM, "§S1"),
    "clamp-temperature": ("clamp", None, None, "temperature", {"max": 125.0, "offset": 40.0}, MM, "§S1"),
    "switch-temperature": ("switch", None, None, "temperature", {"max": 125.0, "offset": 40.0}, MM, "§S1"),
    # §S1 Zener power ≤ 0.50 (MEM-M); TVS peak pulse power ≤ 0.50 (MEM-L)
    "zener-power": ("clamp", "zener", None, "power", {"fraction": 0.5}, MM, "§S1"),
    "tvs-power": ("clamp", "tvs", None, "power", {"fraction": 0.5, "rating": "p_pulse"}, ML, "§S1"),
    # §S1 MOSFET VDS ≤ 0.75, ID ≤ 0.75, MEM-M
    "switch-voltage": ("switch", None, None, "voltage", {"fraction": 0.75}, MM, "§S1"),
    "switch-current-rms": ("switch", None, None, "current_rms", {"fraction": 0.75}, MM, "§S1"),
    # §R1 film power ≤ 0.60 with a knee (MEM-M); thick-film chip 0.50–0.60 (MEM-L, lower taken);
    # wirewound 0.50 (MEM-M); voltage ≤ 0.80 × max working voltage (MEM-M)
    "resistor-power": ("resistor", None, None, "power", {"fraction": 0.6, "derate_above": "part"}, MM, "§R1"),
    "thick-film-power": ("resistor", "thick_film", None, "power", {"fraction": 0.5, "derate_above": "part"}, ML,
                         "§R1"),
    "wirewound-power": ("resistor", "wirewound", None, "power", {"fraction": 0.5, "derate_above": "part"}, MM,
                        "§R1"),
    "resistor-voltage": ("resistor", None, None, "voltage", {"fraction": 0.8}, MM, "§R1"),
    # magnetics: hot spot ≤ class − 20 °C, insulation ≤ 0.50 × DWV, MEM-L
    "magnetic-temperature": ("magnetic", None, None, "temperature", {"offset": 20.0}, ML, "magnetics section"),
    "magnetic-isolation": ("magnetic", None, None, "voltage", {"fraction": 0.5}, ML, "magnetics section"),
    # optocoupler LED IF ≤ 0.50 × rated, MEM-L
    "optocoupler-led-current": ("optocoupler", None, None, "current_avg", {"fraction": 0.5}, ML, "optocouplers"),
}

# ECSS-Q-ST-30-11C Rev 1 (2011) clause 6: no table was read; every figure from memory
# (derating-standards.md table 2).
ECSS = {
    "ceramic-voltage": ("capacitor", "ceramic", None, "voltage", {"fraction": 0.6}, MM, "clause 6"),  # MEM-M
    "ceramic-temperature": ("capacitor", "ceramic", None, "temperature", {"offset": 10.0}, ML, "clause 6"),  # MEM-L
    "tantalum-voltage": ("capacitor", "tantalum", None, "voltage", {"fraction": 0.5}, MM, "clause 6"),  # MEM-M
    "electrolytic-voltage": ("capacitor", "aluminium_electrolytic", None, "voltage", {"fraction": 0.8}, ML,
                             "clause 6"),  # MEM-L
    "film-voltage": ("capacitor", "film", None, "voltage", {"fraction": 0.6}, ML, "clause 6"),  # MEM-L
    "diode-voltage": ("diode", None, None, "voltage", {"fraction": 0.75}, MM, "clause 6"),  # VRRM 0.75 MEM-M
    "diode-current-avg": ("diode", None, None, "current_avg", {"fraction": 0.5}, ML, "clause 6"),  # IF 0.5 MEM-L
    # all semis: Tj ≤ 110 °C or Tj,max − 40 °C, MEM-M
    "diode-temperature": ("diode", None, None, "temperature", {"max": 110.0, "offset": 40.0}, MM, "clause 6"),
    "clamp-temperature": ("clamp", None, None, "temperature", {"max": 110.0, "offset": 40.0}, MM, "clause 6"),
    "switch-temperature": ("switch", None, None, "temperature", {"max": 110.0, "offset": 40.0}, MM, "clause 6"),
    "zener-power": ("clamp", "zener", None, "power", {"fraction": 0.5}, ML, "clause 6"),  # MEM-L
    "tvs-power": ("clamp", "tvs", None, "power", {"fraction": 0.5, "rating": "p_pulse"}, ML, "clause 6"),  # MEM-L
    "switch-voltage": ("switch", None, None, "voltage", {"fraction": 0.75}, MM, "clause 6"),  # VDS MEM-M
    "switch-current-rms": ("switch", None, None, "current_rms", {"fraction": 0.75}, ML, "clause 6"),  # ID MEM-L
    "resistor-power": ("resistor", None, None, "power", {"fraction": 0.5}, MM, "clause 6"),  # MEM-M
    "resistor-voltage": ("resistor", None, None, "voltage", {"fraction": 0.8}, MM, "clause 6"),  # MEM-M
    "magnetic-temperature": ("magnetic", None, None, "temperature", {"offset": 20.0}, ML, "clause 6"),  # MEM-L
    "magnetic-isolation": ("magnetic", None, None, "voltage", {"fraction": 0.5}, ML, "clause 6"),  # MEM-L
    "optocoupler-led-current": ("optocoupler", None, None, "current_avg", {"fraction": 0.5}, ML, "clause 6"),
    "optocoupler-temperature": ("optocoupler", None, None, "temperature", {"max": 110.0, "offset": 40.0}, ML,
                                "clause 6"),
}

# RIAC/SRC "Part Derating Parameters", Severe column (read; derating-standards.md table 4).
RIAC = {
    "electrolytic-voltage": ("capacitor", "aluminium_electrolytic", None, "voltage", {"fraction": 0.7}, READ,
                             "aluminium electrolytic"),  # 70 %
    "electrolytic-temperature": ("capacitor", "aluminium_electrolytic", None, "temperature", {"offset": 20.0}, READ,
                                 "aluminium electrolytic"),  # Tmax − 20 °C
    "ceramic-voltage": ("capacitor", "ceramic", None, "voltage", {"fraction": 0.6}, READ, "fixed ceramic"),  # 60 %
    "ceramic-temperature": ("capacitor", "ceramic", None, "temperature", {"offset": 10.0}, READ, "fixed ceramic"),
    "film-voltage": ("capacitor", "film", None, "voltage", {"fraction": 0.6}, READ, "paper/plastic"),  # 60 %
    "film-temperature": ("capacitor", "film", None, "temperature", {"offset": 10.0}, READ, "paper/plastic"),
    "tantalum-voltage": ("capacitor", "tantalum", None, "voltage", {"fraction": 0.7}, READ, "tantalum"),  # 70 %
    "tantalum-temperature": ("capacitor", "tantalum", None, "temperature", {"offset": 20.0}, READ, "tantalum"),
    "diode-voltage": ("diode", None, None, "voltage", {"fraction": 0.7}, READ, "diodes"),  # VR 70 %
    "diode-current-avg": ("diode", None, None, "current_avg", {"fraction": 0.9}, READ, "diodes"),  # IF 90 %
    "diode-temperature": ("diode", None, None, "temperature", {"max": 95.0}, READ, "diodes"),  # Tj 95 °C
    "clamp-temperature": ("clamp", None, None, "temperature", {"max": 95.0}, READ, "TVS"),  # Tj 95 °C
    "reference-temperature": ("reference", None, None, "temperature", {"max": 95.0}, READ, "reference"),  # 95 °C
}

PRESETS = {"industrial": INDUSTRIAL, "nasa-eee-inst-002": NASA, "ecss-q-st-30-11": ECSS, "riac-severe": RIAC}

LIMIT_KEYS = ("fraction", "max", "offset", "derate_above", "min", "min_fraction", "default_requirement", "min_rating")


def _limits(rule) -> dict:
    limits = {key: getattr(rule, key) for key in LIMIT_KEYS if getattr(rule, key) is not None}
    if rule.design_requirement:
        limits["design_requirement"] = True
    if rule.rating is not None:
        limits["rating"] = rule.rating
    return limits


def test_every_preset_is_listed_here():
    assert list_presets() == sorted(PRESETS)


@pytest.mark.parametrize("name", sorted(PRESETS))
def test_preset_holds_exactly_the_cited_figures(name):
    preset = load_preset(name)
    found = {r.id: (r.category, r.subtype, r.dielectric, r.parameter, _limits(r), r.confidence) for r in preset.rules}
    expected = {rid: row[:6] for rid, row in PRESETS[name].items()}
    assert found == expected


@pytest.mark.parametrize("name", sorted(PRESETS))
def test_preset_sources_name_the_cited_place(name):
    preset = load_preset(name)
    for rule_id, row in PRESETS[name].items():
        source = preset.rule(rule_id).source
        assert row[6] in source, (rule_id, source)
        assert preset.rule(rule_id).confidence in CONFIDENCES


@pytest.mark.parametrize("name", ["nasa-eee-inst-002", "ecss-q-st-30-11"])
def test_standard_presets_say_their_figures_were_not_read(name):
    """derating-standards.md: none of the EEE-INST-002 or ECSS tables was read."""
    preset = load_preset(name)
    assert "from memory" in preset.description
    assert all(rule.confidence.startswith("from memory") for rule in preset.rules)
    assert name.split("-")[0].upper() in preset.rules[0].source.upper()


def test_riac_severe_check_values():
    """derating-standards.md best check value 9 (RIAC severe, read): a 50 V ceramic → 30 V max,
    a 125 °C-rated ceramic → 115 °C; value 10: severe diode Tj ≤ 95 °C, VR ≤ 70 %."""
    preset = load_preset("riac-severe")
    ceramic = preset.rule_for("capacitor", "voltage", "ceramic", "X7R")
    assert ceramic.fraction * 50.0 == pytest.approx(30.0)
    assert 125.0 - preset.rule_for("capacitor", "temperature", "ceramic").offset == pytest.approx(115.0)
    assert preset.rule_for("diode", "temperature", "schottky").max == 95.0
    assert preset.rule_for("diode", "voltage", "ultrafast").fraction == 0.7


def test_default_preset_settings():
    preset = load_preset("industrial")
    assert (preset.warn, preset.fail_unassessed, preset.fail_unmatched) == (0.9, True, True)
    assert preset.lifecycle == {"obsolete": "fail", "restricted": "fail"}


@pytest.mark.parametrize("name", ["nasa-eee-inst-002", "ecss-q-st-30-11", "riac-severe"])
def test_standard_presets_keep_the_default_lifecycle(name):
    """The standards' derating tables say nothing about obsolete parts: the defaults apply."""
    assert load_preset(name).lifecycle == {"obsolete": "fail", "restricted": "fail"}


# What partstress computes, per category (switch and diode power are losses with no rating to
# compare: reported, never limited).
ENGINE_STRESSES = {
    ("switch", None): ("voltage", "current_peak", "current_rms", "temperature"),
    ("diode", None): ("voltage", "current_avg", "current_peak", "temperature"),
    ("clamp", None): ("power", "temperature"),
    ("capacitor", "ceramic"): ("voltage", "capacitance", "temperature", "ripple_current"),
    ("capacitor", "aluminium_electrolytic"): ("voltage", "ripple_current", "temperature", "life"),
    ("capacitor", "polymer"): ("voltage", "ripple_current", "temperature"),
    ("capacitor", "tantalum"): ("voltage", "ripple_current", "temperature"),
    ("capacitor", "film"): ("voltage", "ripple_current", "temperature"),
    ("resistor", None): ("power", "voltage"),
    ("magnetic", None): ("saturation", "flux_density"),
    ("optocoupler", None): ("current_avg",),
    ("reference", None): ("current_avg", "voltage"),
}


@pytest.mark.parametrize("selector", sorted(ENGINE_STRESSES, key=str), ids=lambda s: "/".join(p for p in s if p))
def test_industrial_limits_every_stress_the_engine_computes(selector):
    preset = load_preset("industrial")
    category, subtype = selector
    for parameter in ENGINE_STRESSES[selector]:
        assert preset.rule_for(category, parameter, subtype) is not None, (category, subtype, parameter)


def test_industrial_hot_spot_and_life_figures():
    preset = load_preset("industrial")
    for subtype in ("aluminium_electrolytic", "polymer", "tantalum", "film"):
        rule = preset.rule_for("capacitor", "temperature", subtype)
        assert (rule.offset, rule.describe()) == (0.0, "≤ t_max"), subtype
    life = preset.rule_for("capacitor", "life", "aluminium_electrolytic")
    assert (life.requirement(None), life.requirement(60000.0)) == (50000.0, 60000.0)
    assert life.describe() == "≥ the design's requirement, else ≥ 50 000 h"
    assert preset.rule_for("diode", "current_peak", "ultrafast").rating_name == "i_frm"
    assert preset.rule_for("magnetic", "flux_density", "transformer").rating_name == "b_sat"
