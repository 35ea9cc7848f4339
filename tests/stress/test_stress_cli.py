"""`partcheck stress DESIGN [--format table|json]`: exit codes, the JSON shape, the table."""

from __future__ import annotations

import json
import math

import pytest
from typer.testing import CliRunner

from partcheck.cli import app
from partcheck.units import format_quantity

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


def surge_drain_peak() -> dict[str, float]:
    """The switch's drain peak at vin_surge by hand, from the fixture and the documented clamp defaults.

    Zener level: 60 V · (1 + 5 % tolerance) · (1 + 0.1 %/K · (Tj − 25 °C)), Tj = ambient_max + 50 K = 120 °C
    (the default tempco applies above 7 V): 60 · 1.05 · 1.095 = 68.985 V.  Forward recovery: 5 V (ultrafast,
    the default diode_type).  Loop: Ipk · √(10 nH / 150 pF) = Ipk · 8.165 Ω ([switch_node] 150 pF; docs of
    partcheck/stress/clamp.py).  Ipk at 40 V in boundary mode (flyback-equations.md §1.4): Pin = ½·Lp·Ipk²/T
    with T = a·Ipk + td, a = Lp/Vin + Lm/Vr, td = π·√(Lp·Cd) (first valley), so
    Ipk = (Pin·a + √((Pin·a)² + 2·Lp·Pin·td))/Lp; Pin = 5 V · 2 A / 0.85 = 11.765 W, Vr = 4 · 5.45 V = 21.8 V,
    Lp = 40.8 µH: a = 2.8549 µs/A, td = 245.8 ns, Ipk = 1.7285 A (f = 193 kHz, below the 250 kHz maximum),
    loop 14.11 V.  Drain peak 40 + 68.985 + 5 + 14.11 = 128.10 V.
    """
    vin, lm, lp, vr, pin = 40.0, 40e-6, 40.8e-6, 4 * (5.0 + 0.45), 5.0 * 2.0 / 0.85
    a = lp / vin + lm / vr
    td = math.pi * math.sqrt(lp * 150e-12)
    ipk = (pin * a + math.sqrt((pin * a) ** 2 + 2 * lp * pin * td)) / lp
    assert 1 / (a * ipk + td) < 250e3  # boundary mode, not held at the maximum frequency
    level = 60.0 * 1.05 * (1 + 0.001 * (70 + 50 - 25))
    loop = ipk * math.sqrt(10e-9 / 150e-12)
    return {"v_peak": vin + level + 5.0 + loop, "v_clamp_level": vin + level, "v_overshoot_fr": 5.0,
            "v_overshoot_loop": loop, "v_reflected": vr}


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
    assert set(first["roles"]["switch"]) == {"v_peak", "i_peak", "i_rms", "i_avg", "v_plateau", "v_clamp_level",
                                             "v_overshoot_fr", "v_overshoot_loop", "v_reflected"}
    assert {"v_reverse", "i_peak", "i_rms", "i_avg"} <= set(first["roles"]["rectifier"])
    assert {"v", "p_loss"} <= set(first["roles"]["clamp"])
    assert set(first["roles"]["input_cap"]) == {"v_dc", "i_rms"}
    assert set(first["roles"]["output_cap"]) == {"v_dc", "i_rms", "v_ripple_pp"}
    assert {"i_peak", "i_rms_pri", "i_rms_sec"} <= set(first["roles"]["transformer"])
    surge = data["corners"][3]
    assert surge["load"] == "surge"
    # Voltages only at the surge corner; the drain peak is the zener level at tolerance and temperature plus
    # forward recovery and the loop overshoot (by hand: surge_drain_peak).
    switch = surge["roles"]["switch"]
    assert set(switch) == {"v_peak", "v_plateau", "v_clamp_level", "v_overshoot_fr", "v_overshoot_loop",
                           "v_reflected"}
    expected = surge_drain_peak()
    for key, value in expected.items():
        assert switch[key] == pytest.approx(value, rel=1e-9), key
    assert switch["v_peak"] == pytest.approx(128.10, abs=0.01)
    assert 40.0 + expected["v_reflected"] <= switch["v_plateau"] < switch["v_clamp_level"]
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
    # 128.10 V by hand (surge_drain_peak): 40 V + 60 V Zener at +5 % and 120 °C + 5 V recovery + 14.11 V loop.
    assert format_quantity(surge_drain_peak()["v_peak"], "V") == "128 V"
    assert "128 V" in row and "vin_surge" in row
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
