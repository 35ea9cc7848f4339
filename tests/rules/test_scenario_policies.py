"""The demo scenarios' policy files load and change only what they say they change."""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import pytest

from partcheck.rules.policy import load_policy_file, load_preset

SAMPLES = Path(__file__).resolve().parents[2] / "sample_boms"
BASE = load_preset("industrial")


def _changed(policy) -> dict[str, object]:
    """Rules that differ from the industrial preset's (ignoring which file last set them)."""
    base = {r.id: replace(r, origin="") for r in BASE.rules}
    return {r.id: r for r in policy.rules if base.get(r.id) != replace(r, origin="")}


def test_remote_io_requires_60000_h():
    policy = load_policy_file(SAMPLES / "remote_io_24v" / "policy.toml")
    changed = _changed(policy)
    assert sorted(changed) == ["electrolytic-life", "polymer-life"]
    assert (changed["electrolytic-life"].min, changed["electrolytic-life"].design_requirement) == (60000.0, True)
    assert changed["polymer-life"].min == 60000.0


def test_battery_monitor_ceramics_at_half_rated_voltage():
    """demo-scenarios.md: a 25 V X7R on the 15 V output breaks a 50 % voltage rule (15/25 = 0.6)."""
    policy = load_policy_file(SAMPLES / "battery_monitor_48v" / "policy.toml")
    assert sorted(_changed(policy)) == ["ceramic-voltage"]
    rule = policy.rule_for("capacitor", "voltage", "ceramic", "X7R")
    assert rule.fraction == 0.5
    assert 15.0 / (rule.fraction * 25.0) == pytest.approx(1.2)


def test_sic_gate_drive_only_widens_the_warn_band():
    policy = load_policy_file(SAMPLES / "sic_gate_drive" / "policy.toml")
    assert _changed(policy) == {}
    assert (policy.warn, BASE.warn) == (0.85, 0.9)
