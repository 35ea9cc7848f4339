"""docs/policy-format.md stays true: its example loads and its preset table matches."""

from __future__ import annotations

import re
from pathlib import Path

from partcheck.rules.policy import (
    CATEGORIES,
    DEFAULT_RATINGS,
    LIFECYCLE_STATUSES,
    PARAMETERS,
    POLICY_KEYS,
    RULE_KEYS,
    list_presets,
    load_preset,
    loads_policy,
)

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


def _grammar_sections() -> dict[str, set[str]]:
    """Keys the grammar block names, by section: "" (policy level), "lifecycle", "rules"."""
    grammar = re.findall(r"```toml\n(.*?)```", DOC.read_text(encoding="utf-8"), re.DOTALL)[0]
    sections: dict[str, set[str]] = {"": set()}
    current = ""
    for line in grammar.splitlines():
        header = re.match(r"^#\s+\[([a-z_]+)(\.ID)?\]", line)
        if header:
            current = header.group(1)
            sections[current] = set()
            continue
        key = re.match(r"^#\s+([a-z_]+)\s+=\s", line)
        if key:
            sections[current].add(key.group(1))
    return sections


def test_grammar_names_exactly_the_keys_the_loader_accepts():
    """Every documented key is one the loader knows (and so honours or refuses), and every key
    the loader accepts is documented."""
    sections = _grammar_sections()
    assert set(sections) == {"", "lifecycle", "rules"}
    assert sections[""] | {"lifecycle", "rules"} == set(POLICY_KEYS)
    assert sections["rules"] == set(RULE_KEYS)
    assert sections["lifecycle"] == set(LIFECYCLE_STATUSES)


def test_grammar_lists_every_parameter_and_category():
    grammar = re.findall(r"```toml\n(.*?)```", DOC.read_text(encoding="utf-8"), re.DOTALL)[0]
    words = set(re.findall(r"[a-z_]+", grammar))
    assert set(PARAMETERS) <= words
    assert set(CATEGORIES) <= words


def test_default_rating_table_matches_the_code():
    text = DOC.read_text(encoding="utf-8")
    columns = ("voltage", "current_rms", "current_avg", "current_peak", "power", "temperature")
    for category in CATEGORIES:
        row = re.search(rf"^\| {category} \|(.*)\|$", text, re.MULTILINE)
        assert row, category
        cells = [c.strip() for c in row.group(1).split("|")]
        for parameter, cell in zip(columns, cells):
            assert (cell if cell != "—" else None) == DEFAULT_RATINGS.get((category, parameter)), (category, parameter)
        for parameter in set(PARAMETERS) - set(columns) - {"current_rms"}:
            if (category, parameter) in DEFAULT_RATINGS:
                assert f"{parameter} → {DEFAULT_RATINGS[(category, parameter)]}" in cells[-1], (category, parameter)


def test_lifecycle_example_is_valid():
    blocks = re.findall(r"```toml\n(.*?)```", DOC.read_text(encoding="utf-8"), re.DOTALL)
    (block,) = [b for b in blocks if b.startswith("[lifecycle]")]
    assert loads_policy(block).lifecycle == {"obsolete": "fail", "restricted": "warn"}
