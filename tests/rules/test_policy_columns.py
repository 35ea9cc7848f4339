"""``rating`` and ``min_rating`` name a catalog column of the rule's category and the parameter's kind."""

from __future__ import annotations

import pytest

from partcheck.catalog.models import FIELDS
from partcheck.errors import PolicyError
from partcheck.rules.policy import DEFAULT_RATINGS, PARAMETERS, list_presets, load_policy_file, load_preset

RULE = """
[rules.{id}]
category = "{category}"
parameter = "{parameter}"
{limit}
source = "test"
confidence = "common practice"
"""


def _error(path) -> str:
    with pytest.raises(PolicyError) as info:
        load_policy_file(path)
    return str(info.value)


def test_rating_of_the_wrong_kind(write):
    path = write("p.toml", RULE.format(id="d", category="diode", parameter="voltage",
                                       limit='fraction = 0.8\nrating = "if_avg"'))
    assert _error(path) == (
        f"{path}, line 5, key 'rules.d.rating': rating 'if_avg' is a current (A) column; a voltage rule needs "
        "a voltage (V) column such as vrrm"
    )


def test_unknown_rating_column_with_suggestion(write):
    path = write("p.toml", RULE.format(id="d", category="diode", parameter="voltage",
                                       limit='fraction = 0.8\nrating = "vrm"'))
    assert _error(path) == (
        f"{path}, line 5, key 'rules.d.rating': rating names an unknown catalog column 'vrm' (did you mean "
        "'vrrm'?); a diode voltage rule needs a voltage (V) column such as vrrm"
    )


def test_rating_of_another_category(write):
    path = write("p.toml", RULE.format(id="d", category="diode", parameter="voltage",
                                       limit='fraction = 0.8\nrating = "vds_max"'))
    assert _error(path) == (
        f"{path}, line 5, key 'rules.d.rating': rating 'vds_max' is a column of switch parts, not of diode "
        "parts; a diode voltage rule needs a voltage (V) column such as vrrm"
    )


def test_rating_that_is_a_text_column(write):
    path = write("p.toml", RULE.format(id="d", category="diode", parameter="voltage",
                                       limit='fraction = 0.8\nrating = "description"'))
    assert _error(path) == (
        f"{path}, line 5, key 'rules.d.rating': rating 'description' is a text column of the catalog, not a "
        "rating; a diode voltage rule needs a voltage (V) column such as vrrm"
    )


def test_min_rating_checked_the_same_way(write):
    path = write("p.toml", RULE.format(id="k", category="reference", parameter="current_avg",
                                       limit='fraction = 0.8\nmin_rating = "v_ref"'))
    assert _error(path) == (
        f"{path}, line 5, key 'rules.k.min_rating': min_rating 'v_ref' is a voltage (V) column; a current_avg "
        "rule needs a current (A) column such as ika_max"
    )
    path = write("q.toml", RULE.format(id="k", category="reference", parameter="current_avg",
                                       limit='fraction = 0.8\nmin_rating = "ika_mn"'))
    assert "unknown catalog column 'ika_mn' (did you mean 'ika_min'?)" in _error(path)


def test_category_without_a_column_of_that_kind(write):
    path = write("p.toml", RULE.format(id="c", category="clamp", parameter="current_avg",
                                       limit='fraction = 0.8\nrating = "p_max"'))
    assert _error(path) == (
        f"{path}, line 5, key 'rules.c.rating': rating 'p_max' is a power (W) column; a current_avg rule needs "
        "a current (A) column (the catalog has no clamp column of that kind)"
    )


def test_rating_that_no_limit_uses_is_refused(write):
    """``rating`` only feeds fraction, offset and min_fraction (or a min_rating-only rule's ceiling)."""
    path = write("p.toml", RULE.format(id="d", category="diode", parameter="voltage",
                                       limit='max = "40 V"\nrating = "vrrm"'))
    assert _error(path) == (
        f"{path}, line 5, key 'rules.d.rating': rating 'vrrm' is the column a fraction or offset applies to, "
        "and this rule gives none; drop 'rating' or give fraction or offset"
    )
    path = write("q.toml", RULE.format(id="l", category="capacitor", parameter="life",
                                       limit='min = "20000 h"\nrating = "life_hours"'))
    assert "rating 'life_hours' is the column a min_fraction applies to" in _error(path)


def test_good_columns_load(write):
    path = write("p.toml", RULE.format(id="tvs", category="clamp", parameter="power",
                                       limit='fraction = 0.5\nrating = "p_pulse"')
                 + RULE.format(id="k", category="reference", parameter="current_avg",
                               limit='fraction = 0.8\nmin_rating = "ika_min"')
                 + RULE.format(id="floor", category="reference", parameter="voltage",
                               limit='min_rating = "v_ref"\nrating = "vka_max"')
                 + RULE.format(id="t", category="capacitor", parameter="temperature",
                               limit='offset = "10 K"\nrating = "t_max"'))
    policy = load_policy_file(path)
    assert [r.rating_name for r in policy.rules] == ["p_pulse", "ika_max", "vka_max", "t_max"]
    assert policy.rule("k").min_rating == "ika_min"


@pytest.mark.parametrize("name", list_presets())
def test_every_preset_column_fits_its_rules(name):
    for rule in load_preset(name).rules:
        for column in (rule.rating, rule.min_rating):
            if column is not None:
                assert rule.category in FIELDS[column].categories, (rule.id, column)
                assert FIELDS[column].kind == PARAMETERS[rule.parameter], (rule.id, column)


@pytest.mark.parametrize("key", sorted(DEFAULT_RATINGS), ids="/".join)
def test_every_default_rating_is_a_catalog_column_of_the_right_kind(key):
    """Includes diode current_peak → i_frm and magnetic flux_density → b_sat (catalog columns added
    with this change's catalog work)."""
    category, parameter = key
    column = DEFAULT_RATINGS[key]
    assert column in FIELDS, column
    assert category in FIELDS[column].categories and not FIELDS[column].text
    assert FIELDS[column].kind == PARAMETERS[parameter]


def test_flux_density_and_repetitive_peak_defaults():
    assert PARAMETERS["flux_density"] == "T"
    assert DEFAULT_RATINGS[("magnetic", "flux_density")] == "b_sat"
    # ifsm is the non-repetitive surge rating (inrush, start-up); every cycle's peak is i_frm
    assert DEFAULT_RATINGS[("diode", "current_peak")] == "i_frm"
    assert "lifecycle" not in PARAMETERS


def test_flux_density_rule_in_tesla(write):
    path = write("p.toml", RULE.format(id="b", category="magnetic", parameter="flux_density",
                                       limit='fraction = 0.8\nmax = "390 mT"'))
    rule = load_policy_file(path).rule("b")
    assert (rule.kind, rule.max, rule.rating_name) == ("T", pytest.approx(0.39), "b_sat")
    assert rule.describe() == "≤ 0.8 × b_sat and ≤ 390 mT"
    bad = write("q.toml", RULE.format(id="b", category="magnetic", parameter="flux_density", limit='max = "0.3 A"'))
    assert _error(bad) == (
        f"{bad}, line 4, key 'rules.b.max': '0.3 A' is not a flux density (T) (the unit says a current (A)); "
        'max expects such as "0.3 T"'
    )
