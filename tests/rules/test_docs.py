"""docs/policy-format.md stays true: its example loads and its preset table matches."""

from __future__ import annotations

import re
from pathlib import Path

from partcheck.rules.policy import list_presets, load_preset, loads_policy

DOC = Path(__file__).resolve().parents[2] / "docs" / "policy-format.md"


def test_example_is_a_valid_policy():
    blocks = re.findall(r"```toml\n(.*?)```", DOC.read_text(encoding="utf-8"), re.DOTALL)
    example = blocks[1]  # the first block is the commented grammar
    policy = loads_policy(example, file="example.toml")
    assert policy.rule("electrolytic-life").min == 60000.0
    assert policy.rule_for("capacitor", "capacitance", "ceramic", "X5R").id == "ceramic-x5r-capacitance"
    assert policy.rule_for("switch", "current_peak", "mosfet") is None
    assert policy.rule("switch-temperature").describe() == "≤ tj_max − 25 K and ≤ 125 °C"


def test_grammar_block_is_all_comments():
    grammar = re.findall(r"```toml\n(.*?)```", DOC.read_text(encoding="utf-8"), re.DOTALL)[0]
    assert all(line.startswith("#") for line in grammar.strip().splitlines())


def test_preset_table_lists_every_preset_with_its_rule_count():
    text = DOC.read_text(encoding="utf-8")
    for name in list_presets():
        m = re.search(rf"^\| `{re.escape(name)}`[^|]*\| (\d+) \|", text, re.MULTILINE)
        assert m, name
        assert int(m.group(1)) == len(load_preset(name).rules), name
