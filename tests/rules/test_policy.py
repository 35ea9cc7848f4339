"""The rules file: settings, extends and overrides, precedence, and every error path."""

from __future__ import annotations

from pathlib import Path

import pytest

from partcheck.errors import NotFoundError, PolicyError
from partcheck.rules.policy import load_policy, load_policy_file, load_preset, loads_policy

RULE = """
[rules.{id}]
category = "{category}"
parameter = "{parameter}"
{limit}
source = "test"
confidence = "common practice"
"""


def _error(path: Path) -> str:
    with pytest.raises(PolicyError) as info:
        load_policy_file(path)
    return str(info.value)


# --------------------------------------------------------------------------------------------
# settings, extends, override


def test_minimal_policy(write):
    path = write("p.toml", RULE.format(id="sw", category="switch", parameter="voltage", limit="fraction = 0.7"))
    policy = load_policy_file(path)
    assert policy.name == "p"  # file stem when no name is given
    assert [r.id for r in policy.rules] == ["sw"]
    rule = policy.rules[0]
    assert (rule.fraction, rule.rating_name, rule.kind) == (0.7, "vds_max", "V")
    assert policy.warn is None and policy.fail_unassessed and policy.fail_unmatched


def test_extends_preset_and_overrides_one_rule(write):
    path = write("p.toml", """
        name = "remote-io"
        extends = "industrial"
        warn = 0.85
        fail_unmatched = false

        [rules.electrolytic-life]
        min = "60000 h"
        source = "remote I/O module requirement: 60 000 h at 70 °C ambient"
        confidence = "read"

        [rules.switch-voltage]
        warn = 0.8
    """)
    policy = load_policy_file(path)
    base = load_preset("industrial")
    assert policy.name == "remote-io"
    assert len(policy.rules) == len(base.rules)
    assert [r.id for r in policy.rules] == [r.id for r in base.rules]  # order kept
    life = policy.rule("electrolytic-life")
    # a limit in the override replaces the parent's limit keys (design_requirement dropped)
    assert (life.min, life.design_requirement, life.confidence) == (60000.0, False, "read")
    assert life.origin == str(path)
    sw = policy.rule("switch-voltage")
    # an override of the warn band only keeps the parent's limit and source
    assert (sw.fraction, sw.warn, sw.source) == (0.8, 0.8, base.rule("switch-voltage").source)
    assert sw.origin == str(path)  # the file that last set it
    assert (policy.warn, policy.fail_unassessed, policy.fail_unmatched) == (0.85, True, False)
    assert policy.chain == (str(path.resolve()), "preset industrial")
    assert policy.warn_for(policy.rule("diode-voltage")) == 0.85


def test_extends_a_file_relative_to_the_extending_file(write, tmp_path):
    (tmp_path / "sub").mkdir()
    write("base.toml", 'name = "base"\nwarn = 0.8\n' + RULE.format(id="d", category="diode", parameter="voltage",
                                                                   limit="fraction = 0.7"))
    child = write("sub/child.toml", 'extends = "../base.toml"\n' + RULE.format(
        id="r", category="resistor", parameter="power", limit="fraction = 0.5"))
    policy = load_policy_file(child)
    assert [r.id for r in policy.rules] == ["d", "r"]
    assert policy.warn == 0.8 and policy.name == "child"


def test_enabled_false_removes_an_inherited_rule(write):
    path = write("p.toml", 'extends = "industrial"\n[rules.switch-current-peak]\nenabled = false\n')
    policy = load_policy_file(path)
    assert "switch-current-peak" not in [r.id for r in policy.rules]
    assert policy.rule_for("switch", "current_peak", "mosfet") is None


def test_load_policy_by_name_or_path(write):
    assert load_policy(None).name == "industrial"
    assert load_policy("riac-severe").name == "riac-severe"
    path = write("mine.toml", 'extends = "riac-severe"\n')
    assert load_policy(str(path)).name == "mine"
    with pytest.raises(NotFoundError) as info:
        load_policy("nasa")
    assert str(info.value).startswith("no shipped policy preset 'nasa' (did you mean 'nasa-eee-inst-002'?)")


def test_loads_policy_from_text():
    policy = loads_policy(RULE.format(id="x", category="magnetic", parameter="saturation", limit="fraction = 0.7"),
                          file="inline.toml")
    assert policy.rule("x").rating_name == "isat"


# --------------------------------------------------------------------------------------------
# precedence


PRECEDENCE = """
[rules.cap]
category = "capacitor"
parameter = "voltage"
fraction = 0.9
source = "t"
confidence = "common practice"

[rules.cap-x7r]
category = "capacitor"
dielectric = "x7r"
parameter = "voltage"
fraction = 0.8
source = "t"
confidence = "common practice"

[rules.cap-ceramic]
category = "capacitor"
subtype = "ceramic"
parameter = "voltage"
fraction = 0.7
source = "t"
confidence = "common practice"

[rules.cap-ceramic-x7r]
category = "capacitor"
subtype = "ceramic"
dielectric = "X7R"
parameter = "voltage"
fraction = 0.6
source = "t"
confidence = "common practice"
"""


@pytest.mark.parametrize(
    "subtype, dielectric, expected",
    [
        ("ceramic", "X7R", "cap-ceramic-x7r"),  # category + subtype + dielectric
        ("ceramic", "x7r", "cap-ceramic-x7r"),  # dielectric compared case-insensitively
        ("ceramic", "C0G", "cap-ceramic"),  # category + subtype
        ("film", "X7R", "cap-x7r"),  # category + dielectric
        ("film", None, "cap"),  # category only
        (None, None, "cap"),
    ],
)
def test_most_specific_rule_wins(subtype, dielectric, expected):
    policy = loads_policy(PRECEDENCE)
    assert policy.rule_for("capacitor", "voltage", subtype, dielectric).id == expected


def test_precedence_does_not_depend_on_file_order():
    blocks = PRECEDENCE.strip().split("\n\n")
    policy = loads_policy("\n\n".join(reversed(blocks)))
    assert policy.rule_for("capacitor", "voltage", "ceramic", "X7R").id == "cap-ceramic-x7r"
    assert policy.rule_for("capacitor", "voltage", "ceramic", "X5R").id == "cap-ceramic"


def test_no_rule_for_other_parameters():
    assert loads_policy(PRECEDENCE).rule_for("capacitor", "ripple_current", "ceramic") is None


# --------------------------------------------------------------------------------------------
# errors: the exact message with file, line and key


def test_unknown_rule_key_with_suggestion(write):
    path = write("p.toml", """
        [rules.sw]
        category = "switch"
        parameter = "voltage"
        fracton = 0.8
    """)
    assert _error(path) == (
        f"{path}, line 4, key 'rules.sw.fracton': unknown rule key 'fracton' (did you mean 'fraction'?); "
        "expected one of category, subtype, dielectric, parameter, fraction, max, offset, derate_above, min, "
        "min_fraction, design_requirement, default_requirement, min_rating, rating, warn, source, confidence, note, "
        "enabled"
    )


def test_unknown_policy_setting(write):
    path = write("p.toml", 'name = "x"\nextend = "industrial"\n')
    assert _error(path) == (
        f"{path}, line 2, key 'extend': unknown policy setting 'extend' (did you mean 'extends'?); expected one "
        "of name, description, extends, warn, fail_unassessed, fail_unmatched, lifecycle, rules"
    )


def test_fraction_out_of_range(write):
    path = write("p.toml", RULE.format(id="sw", category="switch", parameter="voltage", limit="fraction = 1.2"))
    assert _error(path) == (
        f"{path}, line 4, key 'rules.sw.fraction': fraction must be > 0 and ≤ 1 (a fraction of the rating), got 1.2"
    )


@pytest.mark.parametrize("value", ["0", "-0.1"])
def test_fraction_zero_or_negative(write, value):
    path = write("p.toml", RULE.format(id="sw", category="switch", parameter="voltage", limit=f"fraction = {value}"))
    assert "line 4, key 'rules.sw.fraction': fraction must be > 0 and ≤ 1" in _error(path)


def test_fraction_as_percent_text(write):
    path = write("p.toml", RULE.format(id="sw", category="switch", parameter="voltage", limit='fraction = "75 %"'))
    assert load_policy_file(path).rule("sw").fraction == pytest.approx(0.75)


@pytest.mark.parametrize("value", ["1.0", "0", "1.5"])
def test_warn_out_of_range(write, value):
    path = write("p.toml", f"warn = {value}\n")
    assert _error(path) == (
        f"{path}, line 1, key 'warn': warn must be > 0 and < 1 (a fraction of the limit), got {value}"
    )


def test_rule_warn_out_of_range(write):
    path = write("p.toml", RULE.format(id="sw", category="switch", parameter="voltage",
                                       limit="fraction = 0.8\nwarn = 1"))
    assert _error(path) == (
        f"{path}, line 5, key 'rules.sw.warn': warn must be > 0 and < 1 (a fraction of the limit), got 1"
    )


def test_wrong_unit(write):
    path = write("p.toml", RULE.format(id="t", category="diode", parameter="temperature", limit='max = "125 V"'))
    assert _error(path) == (
        f"{path}, line 4, key 'rules.t.max': '125 V' is not a temperature (°C) (the unit says a voltage (V)); "
        'max expects such as "125 degC"'
    )


def test_quantity_without_unit(write):
    path = write("p.toml", RULE.format(id="t", category="diode", parameter="temperature", limit="max = 125"))
    assert _error(path) == (
        f"{path}, line 4, key 'rules.t.max': max must be a quantity with its unit as a string, such as "
        '"125 degC"; got 125'
    )


def test_offset_in_kelvin_not_celsius(write):
    path = write("p.toml", RULE.format(id="t", category="switch", parameter="temperature", limit='offset = "25 V"'))
    assert _error(path) == (
        f"{path}, line 4, key 'rules.t.offset': '25 V' is not a temperature difference (K) (the unit says a "
        'voltage (V)); offset expects such as "25 K"'
    )


def test_unknown_category_and_parameter(write):
    path = write("p.toml", RULE.format(id="x", category="diodes", parameter="voltage", limit="fraction = 0.8"))
    assert _error(path) == (
        f"{path}, line 2, key 'rules.x.category': unknown category 'diodes' (did you mean 'diode'?); expected one "
        "of switch, diode, clamp, capacitor, resistor, magnetic, optocoupler, reference"
    )
    path = write("q.toml", RULE.format(id="x", category="diode", parameter="volts", limit="fraction = 0.8"))
    assert _error(path) == (
        f"{path}, line 3, key 'rules.x.parameter': unknown parameter 'volts' (did you mean 'voltage'?); expected "
        "one of voltage, current_rms, current_peak, current_avg, power, temperature, ripple_current, "
        "capacitance, life, saturation, flux_density"
    )


def test_unknown_subtype(write):
    path = write("p.toml", '[rules.x]\ncategory = "diode"\nsubtype = "shottky"\nparameter = "voltage"\n'
                           'fraction = 0.7\nsource = "t"\nconfidence = "read"\n')
    assert _error(path) == (
        f"{path}, line 3, key 'rules.x.subtype': unknown diode subtype 'shottky' (did you mean 'schottky'?); "
        "expected one of schottky, ultrafast, standard, sic"
    )


def test_missing_source(write):
    path = write("p.toml", '[rules.x]\ncategory = "diode"\nparameter = "voltage"\nfraction = 0.7\n')
    assert _error(path) == (
        f"{path}, line 1, key 'rules.x': rule 'x' sets a limit but no 'source'; every number says where it comes "
        "from (source = document, table or section; confidence = one of read, from memory (high), from memory "
        "(medium), from memory (low), common practice)"
    )


def test_bad_confidence(write):
    path = write("p.toml", '[rules.x]\ncategory = "diode"\nparameter = "voltage"\nfraction = 0.7\n'
                           'source = "t"\nconfidence = "from memory"\n')
    assert _error(path) == (
        f"{path}, line 6, key 'rules.x.confidence': confidence 'from memory' is not one of: read, from memory "
        "(high), from memory (medium), from memory (low), common practice (did you mean 'from memory (low)'?)"
    )


def test_rule_without_limit(write):
    path = write("p.toml", '[rules.x]\ncategory = "diode"\nparameter = "voltage"\nsource = "t"\n'
                           'confidence = "read"\n')
    assert _error(path) == (
        f"{path}, line 1, key 'rules.x': rule 'x' sets no limit; give fraction, max, offset or min_rating"
    )


def test_limit_key_of_the_wrong_direction(write):
    path = write("p.toml", RULE.format(id="c", category="capacitor", parameter="capacitance", limit="fraction = 0.5"))
    assert _error(path) == (
        f"{path}, line 4, key 'rules.c.fraction': 'fraction' does not apply here; a capacitance rule sets a "
        "minimum: use min / min_fraction / design_requirement / default_requirement"
    )


def test_fraction_on_a_temperature(write):
    path = write("p.toml", RULE.format(id="t", category="switch", parameter="temperature", limit="fraction = 0.8"))
    assert _error(path) == (
        f"{path}, line 4, key 'rules.t.fraction': a temperature limit is not a fraction of °C: use offset = "
        '"25 K" (rating minus an offset) or max = "125 degC"'
    )


def test_no_default_rating(write):
    path = write("p.toml", RULE.format(id="c", category="clamp", parameter="voltage", limit="fraction = 0.8"))
    assert _error(path) == (
        f"{path}, line 1, key 'rules.c': no default rating for clamp voltage; name the catalog column with "
        'rating = "..."'
    )
    ok = write("q.toml", RULE.format(id="c", category="clamp", parameter="voltage",
                                     limit='fraction = 0.8\nrating = "v_clamp"'))
    assert load_policy_file(ok).rule("c").rating_name == "v_clamp"


def test_override_cannot_change_selector(write):
    path = write("p.toml", 'extends = "industrial"\n\n[rules.switch-voltage]\ncategory = "diode"\n')
    assert _error(path) == (
        f"{path}, line 4, key 'rules.switch-voltage.category': rule 'switch-voltage' is inherited with category = "
        "'switch'; an override cannot change it (give the rule a new id)"
    )


def test_two_rules_for_the_same_stress(write):
    path = write("p.toml", 'extends = "industrial"\n' + RULE.format(id="my-switch", category="switch",
                                                                    parameter="voltage", limit="fraction = 0.7"))
    assert _error(path) == (
        f"{path}, line 3, key 'rules.my-switch': rules 'switch-voltage' and 'my-switch' both apply to switch "
        "voltage; override 'switch-voltage' by its id instead"
    )


def test_extends_unknown_preset(write):
    path = write("p.toml", 'extends = "industrail"\n')
    assert _error(path) == (
        f"{path}, line 1, key 'extends': extends 'industrail': no such preset (did you mean 'industrial'?); "
        "presets: ecss-q-st-30-11, industrial, nasa-eee-inst-002, riac-severe (a file path needs '/' or '.toml')"
    )


def test_extends_missing_file(write, tmp_path):
    path = write("p.toml", 'extends = "base.toml"\n')
    assert _error(path) == (
        f"{path}, line 1, key 'extends': extends 'base.toml': no such policy file ({tmp_path / 'base.toml'})"
    )


def test_cyclic_extends(write):
    write("a.toml", 'extends = "b.toml"\n')
    b = write("b.toml", 'name = "b"\nextends = "a.toml"\n')
    a = Path(b).with_name("a.toml")
    assert _error(a) == f"{b}, line 2, key 'extends': cyclic extends: a.toml → b.toml → a.toml"


def test_self_extends(write):
    path = write("self.toml", 'extends = "self.toml"\n')
    assert _error(path) == f"{path}, line 1, key 'extends': cyclic extends: self.toml → self.toml"


def test_invalid_toml_reports_the_line(write):
    path = write("p.toml", '[rules.x]\ncategory = "diode"\nparameter = \n')
    assert _error(path) == f"{path}, line 3: not valid TOML: Invalid value"


def test_missing_file(tmp_path):
    path = tmp_path / "none.toml"
    assert _error(path) == f"{path}: no such policy file"


def test_derate_above_needs_fraction(write):
    path = write("p.toml", RULE.format(id="r", category="resistor", parameter="power",
                                       limit='max = "1 W"\nderate_above = "70 degC"'))
    assert _error(path) == f"{path}, line 5, key 'rules.r.derate_above': 'derate_above' needs a 'fraction' to derate"


def test_enabled_false_without_a_parent_rule(write):
    path = write("p.toml", "[rules.ghost]\nenabled = false\n")
    assert _error(path) == (
        f"{path}, line 2, key 'rules.ghost.enabled': 'enabled = false' but no inherited rule 'ghost' to switch off"
    )


def test_error_in_a_parent_names_the_parent_file(write):
    base = write("base.toml", RULE.format(id="sw", category="switch", parameter="voltage", limit="fraction = 2"))
    child = write("child.toml", 'extends = "base.toml"\n')
    assert _error(child).startswith(f"{base}, line 4, key 'rules.sw.fraction': ")


def test_line_found_for_quoted_table_header(write):
    path = write("p.toml", '# header\n\n[rules."sw"]\ncategory = "switch"\nparameter = "voltage"\nfraction = 3\n'
                           'source = "t"\nconfidence = "read"\n')
    assert _error(path).startswith(f"{path}, line 6, key 'rules.sw.fraction'")


def test_min_fraction_out_of_range(write):
    path = write("p.toml", RULE.format(id="c", category="capacitor", parameter="capacitance",
                                       limit="min_fraction = 1.5"))
    assert _error(path) == (
        f"{path}, line 4, key 'rules.c.min_fraction': min_fraction must be > 0 and ≤ 1 (a fraction of the rating), "
        "got 1.5"
    )


def test_offset_only_on_temperatures(write):
    path = write("p.toml", RULE.format(id="v", category="switch", parameter="voltage", limit='offset = "5 K"'))
    assert _error(path) == f"{path}, line 4, key 'rules.v.offset': 'offset' applies to temperature rules only"


def test_dielectric_only_on_capacitors(write):
    path = write("p.toml", '[rules.x]\ncategory = "diode"\ndielectric = "X7R"\nparameter = "voltage"\n'
                           'fraction = 0.7\nsource = "t"\nconfidence = "read"\n')
    assert _error(path) == f"{path}, line 3, key 'rules.x.dielectric': 'dielectric' applies to capacitors only"


def test_life_minimum_in_hours(write):
    path = write("p.toml", RULE.format(id="l", category="capacitor", parameter="life", limit='min = "60000 V"'))
    assert _error(path) == (
        f"{path}, line 4, key 'rules.l.min': '60000 V' is not a duration in hours (h) (the unit says a voltage "
        '(V)); min expects such as "60000 h"'
    )


# --------------------------------------------------------------------------------------------
# default_requirement: the life required when the design file states none


LIFE = 'design_requirement = true\ndefault_requirement = "20000 h"'


def test_default_requirement_parsed_described_and_serialised(write):
    path = write("p.toml", RULE.format(id="l", category="capacitor", parameter="life", limit=LIFE))
    rule = load_policy_file(path).rule("l")
    assert (rule.design_requirement, rule.default_requirement) == (True, 20000.0)
    assert rule.describe() == "≥ the design's requirement, else ≥ 20 000 h"
    data = rule.to_dict()
    assert (data["design_requirement"], data["default_requirement"], data["limit"]) == (
        True, 20000.0, "≥ the design's requirement, else ≥ 20 000 h")


def test_requirement_is_the_designs_else_the_default(write):
    path = write("p.toml", RULE.format(id="l", category="capacitor", parameter="life", limit=LIFE)
                 + RULE.format(id="m", category="resistor", parameter="power", limit="fraction = 0.5"))
    rule = load_policy_file(path).rule("l")
    assert rule.requirement(None) == 20000.0
    assert rule.requirement(60000.0) == 60000.0  # the design's own figure replaces the default
    assert rule.requirement(10000.0) == 10000.0  # even a shorter one: the design file is the requirement
    only_design = load_preset("industrial").rule("electrolytic-life")
    assert only_design.requirement(60000.0) == 60000.0
    assert load_policy_file(path).rule("m").requirement(60000.0) is None


def test_default_requirement_with_a_minimum(write):
    path = write("p.toml", RULE.format(id="l", category="capacitor", parameter="life",
                                       limit=LIFE + '\nmin = "8000 h"'))
    assert load_policy_file(path).rule("l").describe() == "≥ 8 000 h and ≥ the design's requirement, else ≥ 20 000 h"


def test_default_requirement_needs_design_requirement(write):
    path = write("p.toml", RULE.format(id="l", category="capacitor", parameter="life",
                                       limit='default_requirement = "20000 h"'))
    assert _error(path) == (
        f"{path}, line 4, key 'rules.l.default_requirement': 'default_requirement' is the life required when the "
        "design states none, so it needs design_requirement = true; for a fixed minimum whatever the design "
        'says, use min = "..."'
    )


def test_default_requirement_only_on_life_rules(write):
    path = write("p.toml", RULE.format(id="c", category="capacitor", parameter="capacitance",
                                       limit='min_fraction = 0.5\ndefault_requirement = "20000 h"'))
    assert _error(path) == (f"{path}, line 5, key 'rules.c.default_requirement': 'default_requirement' applies to "
                            "life rules only")
    path = write("q.toml", RULE.format(id="v", category="capacitor", parameter="voltage",
                                       limit='fraction = 0.5\ndefault_requirement = "20000 h"'))
    assert "'default_requirement' does not apply here; a voltage rule sets a maximum" in _error(path)


@pytest.mark.parametrize("value, message", [
    ('"0 h"', "default_requirement must be a life above 0 h, got '0 h'"),
    ('"20000 V"', "'20000 V' is not a duration in hours (h) (the unit says a voltage (V)); default_requirement "
                  'expects such as "60000 h"'),
    ("20000", "default_requirement must be a quantity with its unit as a string, such as \"60000 h\"; got 20000"),
])
def test_default_requirement_value(write, value, message):
    path = write("p.toml", RULE.format(id="l", category="capacitor", parameter="life",
                                       limit=f"design_requirement = true\ndefault_requirement = {value}"))
    assert _error(path) == f"{path}, line 5, key 'rules.l.default_requirement': {message}"


def test_override_with_a_minimum_drops_the_inherited_default(write):
    path = write("p.toml", 'extends = "industrial"\n[rules.electrolytic-life]\nmin = "60000 h"\n'
                           'source = "module requirement"\nconfidence = "read"\n')
    life = load_policy_file(path).rule("electrolytic-life")
    assert (life.min, life.design_requirement, life.default_requirement) == (60000.0, False, None)
    warn_only = write("q.toml", 'extends = "industrial"\n[rules.electrolytic-life]\nwarn = 0.8\n')
    kept = load_policy_file(warn_only).rule("electrolytic-life")
    assert (kept.design_requirement, kept.default_requirement) == (True, 50000.0)


def test_subtype_compared_case_insensitively():
    policy = load_preset("industrial")
    assert policy.rule_for("diode", "voltage", "Schottky").id == "diode-schottky-voltage"


def test_zero_offset_reads_as_the_rating(write):
    path = write("p.toml", RULE.format(id="t", category="capacitor", parameter="temperature", limit='offset = "0 K"'))
    rule = load_policy_file(path).rule("t")
    assert (rule.offset, rule.describe()) == (0.0, "≤ t_max")
