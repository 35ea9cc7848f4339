"""`partcheck stress DESIGN [--format table|json]`: exit codes, the JSON shape, the table."""

from __future__ import annotations

import json

import pytest
from typer.testing import CliRunner

from partcheck.cli import app

DESIGN = """\
name = "io-module"
[converter]
switching = "boundary"
fsw = "250 kHz"
efficiency = 0.85
current_limit = "2.5 A"
max_duty = 0.75
[input]
vin_min = "18 V"
vin_nom = "24 V"
vin_max = "32 V"
vin_surge = "40 V"
[[output]]
name = "5V"
vout = "5 V"
iout = "2 A"
vf = "0.45 V"
cout = "220 uF"
esr = "15 mOhm"
[transformer]
lm = "40 uH"
turns_ratio = 4.0
llk = "0.8 uH"
[clamp]
kind = "zener"
vclamp = "60 V"
[switch_node]
capacitance = "150 pF"
[environment]
ambient_max = "70 degC"
"""


@pytest.fixture
def design(tmp_path):
    path = tmp_path / "design.toml"
    path.write_text(DESIGN, encoding="utf-8")
    return path


def test_json_shape(design):
    result = CliRunner().invoke(app, ["stress", str(design), "--format", "json"])
    assert result.exit_code == 0, result.output
    data = json.loads(result.output)
    assert data["design"] == "io-module"
    ids = [c["id"] for c in data["corners"]]
    assert ids == ["vin_min-full", "vin_nom-full", "vin_max-full", "vin_surge", "vin_max-ilim", "vin_min-ilim"]
    first = data["corners"][0]
    assert first["vin"] == 18.0 and first["load"] == "full" and first["mode"] == "BCM"
    assert set(first["roles"]) == {"switch", "rectifier", "clamp", "clamp_diode", "input_cap", "output_cap",
                                   "transformer"}
    assert set(first["roles"]["switch"]) == {"v_peak", "i_peak", "i_rms", "i_avg"}
    assert {"v_reverse", "i_peak", "i_rms", "i_avg"} <= set(first["roles"]["rectifier"])
    assert {"v", "p_loss"} <= set(first["roles"]["clamp"])
    assert set(first["roles"]["input_cap"]) == {"v_dc", "i_rms"}
    assert set(first["roles"]["output_cap"]) == {"v_dc", "i_rms", "v_ripple_pp"}
    assert {"i_peak", "i_rms_pri", "i_rms_sec"} <= set(first["roles"]["transformer"])
    surge = data["corners"][3]
    assert surge["load"] == "surge" and surge["roles"]["switch"] == {"v_peak": 100.0}  # 40 V + 60 V clamp
    limit = data["corners"][4]
    # The limit plus the overshoot during the default 150 ns current-limit delay (no delay given):
    # 2.5 A + Vin/(Lm + Llk)·t_pd = 2.5 + 32 V / 40.8 µH × 150 ns (flyback-equations.md §5).
    assert limit["load"] == "current_limit"
    assert limit["roles"]["transformer"]["i_peak"] == pytest.approx(2.5 + 32 / 40.8e-6 * 150e-9)
    worst = {w for c in data["corners"] for w in c["worst_for"]}
    assert {"switch.v_peak", "switch.i_rms", "rectifier.v_reverse", "clamp.p_loss"} <= worst


def test_table_shows_each_stress_at_its_worst_corner(design):
    result = CliRunner().invoke(app, ["stress", str(design)])
    assert result.exit_code == 0, result.output
    row = next(line for line in result.output.splitlines() if "switch" in line and "v_peak" in line)
    assert "100 V" in row and "vin_surge" in row
    row = next(line for line in result.output.splitlines() if "clamp " in line and "p_loss" in line)
    assert "vin_max-ilim" in row and "mW" in row


def test_bad_design_exits_2_with_the_key(tmp_path):
    path = tmp_path / "bad.toml"
    path.write_text(DESIGN.replace('lm = "40 uH"', 'lm = "40 uF"'), encoding="utf-8")
    result = CliRunner().invoke(app, ["stress", str(path)])
    assert result.exit_code == 2
    assert "key 'transformer.lm'" in result.output and "'40 uF'" in result.output
    assert "Traceback" not in result.output


def test_unknown_format_is_refused(design):
    result = CliRunner().invoke(app, ["stress", str(design), "--format", "xml"])
    assert result.exit_code == 2
