"""The policy's [lifecycle] table: what an obsolete or restricted catalog part does to the design."""

from __future__ import annotations

import json

import pytest
from typer.testing import CliRunner

from partcheck.cli import app
from partcheck.errors import PolicyError
from partcheck.rules.policy import (
    DEFAULT_LIFECYCLE,
    LIFECYCLE_ACTIONS,
    LIFECYCLE_STATUSES,
    POLICY_KEYS,
    list_presets,
    load_policy_file,
    load_preset,
    loads_policy,
)


def _error(path) -> str:
    with pytest.raises(PolicyError) as info:
        load_policy_file(path)
    return str(info.value)


def test_defaults_fail_both():
    assert DEFAULT_LIFECYCLE == {"obsolete": "fail", "restricted": "fail"}
    assert (LIFECYCLE_STATUSES, LIFECYCLE_ACTIONS) == (("obsolete", "restricted"), ("fail", "warn"))
    assert "lifecycle" in POLICY_KEYS
    policy = loads_policy('name = "p"\n')
    assert policy.lifecycle == {"obsolete": "fail", "restricted": "fail"}
    assert policy.to_dict()["lifecycle"] == {"obsolete": "fail", "restricted": "fail"}


@pytest.mark.parametrize("name", list_presets())
def test_every_preset_has_both_keys(name):
    assert set(load_preset(name).lifecycle) == set(LIFECYCLE_STATUSES)


def test_one_key_set_the_other_kept(write):
    policy = load_policy_file(write("p.toml", '[lifecycle]\nrestricted = "warn"\n'))
    assert policy.lifecycle == {"obsolete": "fail", "restricted": "warn"}


def test_inherited_through_extends(write):
    write("base.toml", 'name = "base"\n[lifecycle]\nobsolete = "warn"\n')
    child = write("child.toml", 'extends = "base.toml"\n[lifecycle]\nrestricted = "warn"\n')
    grandchild = write("grandchild.toml", 'extends = "child.toml"\n[lifecycle]\nobsolete = "fail"\n')
    assert load_policy_file(child).lifecycle == {"obsolete": "warn", "restricted": "warn"}
    assert load_policy_file(grandchild).lifecycle == {"obsolete": "fail", "restricted": "warn"}
    plain = write("plain.toml", 'extends = "child.toml"\n')
    assert load_policy_file(plain).lifecycle == {"obsolete": "warn", "restricted": "warn"}


def test_inline_and_dotted_forms(write):
    assert load_policy_file(write("a.toml", 'lifecycle = { obsolete = "warn" }\n')).lifecycle["obsolete"] == "warn"
    assert load_policy_file(write("b.toml", 'lifecycle.restricted = "warn"\n')).lifecycle["restricted"] == "warn"


def test_lifecycle_for_a_catalog_status():
    policy = loads_policy('[lifecycle]\nrestricted = "warn"\n')
    assert policy.lifecycle_for("obsolete") == "fail"
    assert policy.lifecycle_for("Restricted ") == "warn"
    assert policy.lifecycle_for("approved") is None
    assert policy.lifecycle_for("") is None and policy.lifecycle_for(None) is None


def test_unknown_status(write):
    path = write("p.toml", 'name = "x"\n\n[lifecycle]\nobsolete = "warn"\napproved = "warn"\n')
    assert _error(path) == (
        f"{path}, line 5, key 'lifecycle.approved': unknown lifecycle status 'approved'; expected one of obsolete, "
        "restricted (an approved part never makes a lifecycle finding)"
    )
    path = write("q.toml", '[lifecycle]\nobsolet = "warn"\n')
    assert "unknown lifecycle status 'obsolet' (did you mean 'obsolete'?)" in _error(path)


def test_wrong_value(write):
    path = write("p.toml", '[lifecycle]\nobsolete = "fail"\nrestricted = "pass"\n')
    assert _error(path) == (
        f"{path}, line 3, key 'lifecycle.restricted': lifecycle restricted must be \"fail\" or \"warn\", got 'pass'"
    )
    path = write("q.toml", '[lifecycle]\nobsolete = true\n')
    assert _error(path) == f"{path}, line 2, key 'lifecycle.obsolete': lifecycle obsolete must be \"fail\" or \"warn\", got True"
    path = write("r.toml", 'lifecycle.obsolete = "wran"\n')
    assert _error(path) == (
        f"{path}, line 1, key 'lifecycle.obsolete': lifecycle obsolete must be \"fail\" or \"warn\", got 'wran' "
        "(did you mean 'warn'?)"
    )


def test_not_a_table(write):
    path = write("p.toml", 'name = "x"\nlifecycle = "warn"\n')
    assert _error(path) == (
        f"{path}, line 2, key 'lifecycle': 'lifecycle' must be a table: [lifecycle] with obsolete = \"fail\" | "
        "\"warn\" and restricted = \"fail\" | \"warn\""
    )


def test_error_line_ignores_the_word_elsewhere(write):
    """The line is the key's own, not an earlier line that merely mentions the status."""
    path = write("p.toml", 'description = "no restricted parts"\n[lifecycle]\nrestricted = "no"\n')
    assert _error(path).startswith(f"{path}, line 3, key 'lifecycle.restricted'")


def test_policy_show_json_and_validate(write):
    runner = CliRunner()
    path = write("p.toml", 'extends = "industrial"\n[lifecycle]\nrestricted = "warn"\n')
    result = runner.invoke(app, ["policy", "show", str(path), "--format", "json"])
    assert result.exit_code == 0, result.output
    assert json.loads(result.output)["lifecycle"] == {"obsolete": "fail", "restricted": "warn"}
    bad = write("bad.toml", '[lifecycle]\nobsolete = "ignore"\n')
    result = runner.invoke(app, ["policy", "validate", str(bad)])
    assert result.exit_code == 2
    assert (f"{bad}, line 2, key 'lifecycle.obsolete': lifecycle obsolete must be \"fail\" or \"warn\", got "
            "'ignore'") in " ".join(result.output.split())
