"""partcheck policy list / show / validate: exit codes and exact messages."""

from __future__ import annotations

import json

from typer.testing import CliRunner

from partcheck.cli import app

runner = CliRunner()


def test_policy_list():
    result = runner.invoke(app, ["policy", "list"], env={"COLUMNS": "200"})
    assert result.exit_code == 0, result.output
    for name in ("industrial (default)", "nasa-eee-inst-002", "ecss-q-st-30-11", "riac-severe"):
        assert name in result.output


def test_policy_show_default_table():
    result = runner.invoke(app, ["policy", "show"], env={"COLUMNS": "250"})
    assert result.exit_code == 0, result.output
    assert "policy industrial: 34 rules (preset industrial)" in result.output
    assert "electrolytic-ripple" in result.output and "IPC-9592A" in result.output
    assert "≤ 0.8 × vds_max" in result.output


def test_policy_show_json_after_extends(write):
    path = write("p.toml", 'name = "remote-io"\nextends = "industrial"\n[rules.electrolytic-life]\n'
                           'min = "60000 h"\nsource = "module requirement"\nconfidence = "read"\n')
    result = runner.invoke(app, ["policy", "show", str(path), "--format", "json"])
    assert result.exit_code == 0, result.output
    data = json.loads(result.output)
    assert data["name"] == "remote-io" and data["extends"] == ["preset industrial"]
    life = next(r for r in data["rules"] if r["id"] == "electrolytic-life")
    assert (life["min"], life["limit"], life["source"]) == (60000.0, "≥ 60 000 h", "module requirement")
    assert len(data["rules"]) == 34


def test_policy_validate_ok_and_error(write):
    good = write("good.toml", 'extends = "riac-severe"\n')
    result = runner.invoke(app, ["policy", "validate", str(good)])
    assert (result.exit_code, result.output.strip()) == (0, "valid: 13 rules (policy good)")
    bad = write("bad.toml", 'warn = 1.5\n')
    result = runner.invoke(app, ["policy", "validate", str(bad)])
    assert result.exit_code == 2
    assert f"{bad}, line 1, key 'warn': warn must be > 0 and < 1 (a fraction of the limit), got 1.5" in " ".join(
        result.output.split())


def test_policy_show_unknown_preset_exits_2():
    result = runner.invoke(app, ["policy", "show", "nasa"])
    assert result.exit_code == 2
    assert "no shipped policy preset 'nasa' (did you mean 'nasa-eee-inst-002'?)" in result.output


def test_policy_show_bad_format():
    result = runner.invoke(app, ["policy", "show", "--format", "xml"])
    assert result.exit_code == 2
    assert "--format 'xml': expected table or json" in result.output


def test_policy_validate_refuses_a_rating_of_the_wrong_kind(write):
    bad = write("bad.toml", 'extends = "industrial"\n\n[rules.diode-voltage]\nfraction = 0.8\nrating = "if_avg"\n'
                            'source = "ours"\nconfidence = "common practice"\n')
    result = runner.invoke(app, ["policy", "validate", str(bad)])
    assert result.exit_code == 2
    assert (f"{bad}, line 5, key 'rules.diode-voltage.rating': rating 'if_avg' is a current (A) column; a voltage "
            "rule needs a voltage (V) column such as vrrm") in " ".join(result.output.split())


def test_policy_validate_refuses_an_unknown_or_foreign_column(write):
    unknown = write("u.toml", '[rules.d]\ncategory = "diode"\nparameter = "current_peak"\nfraction = 0.8\n'
                              'rating = "ifrm"\nsource = "ours"\nconfidence = "common practice"\n')
    result = runner.invoke(app, ["policy", "validate", str(unknown)])
    assert result.exit_code == 2
    assert (f"{unknown}, line 5, key 'rules.d.rating': rating names an unknown catalog column 'ifrm' (did you mean "
            "'i_frm'?); a diode current_peak rule needs a current (A) column such as i_frm") in " ".join(
        result.output.split())
    foreign = write("f.toml", '[rules.r]\ncategory = "reference"\nparameter = "current_avg"\nfraction = 0.8\n'
                              'min_rating = "id_max"\nsource = "ours"\nconfidence = "common practice"\n')
    result = runner.invoke(app, ["policy", "validate", str(foreign)])
    assert result.exit_code == 2
    assert (f"{foreign}, line 5, key 'rules.r.min_rating': min_rating 'id_max' is a column of switch parts, not of "
            "reference parts; a reference current_avg rule needs a current (A) column such as ika_max") in " ".join(
        result.output.split())


def test_policy_validate_accepts_a_surge_rule_on_ifsm(write):
    ok = write("ok.toml", '[rules.d]\ncategory = "diode"\nparameter = "current_peak"\nfraction = 0.8\n'
                          'rating = "ifsm"\nsource = "ours"\nconfidence = "common practice"\n')
    result = runner.invoke(app, ["policy", "validate", str(ok)])
    assert (result.exit_code, result.output.strip()) == (0, "valid: 1 rules (policy ok)")


def test_policy_validate_refuses_default_requirement_without_design_requirement(write):
    bad = write("bad.toml", 'extends = "industrial"\n[rules.electrolytic-life]\ndefault_requirement = "60000 h"\n'
                            'source = "ours"\nconfidence = "common practice"\n')
    result = runner.invoke(app, ["policy", "validate", str(bad)])
    assert result.exit_code == 2
    assert (f"{bad}, line 3, key 'rules.electrolytic-life.default_requirement': 'default_requirement' is the life "
            "required when the design states none, so it needs design_requirement = true") in " ".join(
        result.output.split())
