"""Design-file loading and validation: every error names the file, the dotted key and the value."""

from __future__ import annotations

import copy
import datetime as dt
from pathlib import Path

import pytest

from partcheck.design import design_from_dict, load_design
from partcheck.errors import DesignError
from partcheck.stress.flyback import evaluate

BASE = {
    "name": "io-module",
    "bom": "bom.csv",
    "converter": {"topology": "flyback", "control": "primary-side", "switching": "fixed", "fsw": "100 kHz",
                  "efficiency": 0.85, "current_limit": "3 A", "max_duty": 0.75},
    "input": {"vin_min": "18 V", "vin_nom": "24 V", "vin_max": "32 V", "vin_surge": "40 V"},
    "output": [{"name": "5V", "vout": "5 V", "iout": "1 A", "vf": "0.45 V", "cout": "220 uF", "esr": "15 mOhm",
                "turns_ratio": 4.0}],
    "transformer": {"lm": "40 uH", "llk": "0.8 uH"},
    "clamp": {"kind": "zener", "vclamp": "60 V"},
    "environment": {"ambient_max": "70 degC"},
}


def make(**changes):
    """BASE with tables merged (None deletes a key)."""
    data = copy.deepcopy(BASE)
    for table, value in changes.items():
        if value is None:
            data.pop(table, None)
        elif isinstance(value, dict) and isinstance(data.get(table), dict):
            for k, v in value.items():
                if v is None:
                    data[table].pop(k, None)
                else:
                    data[table][k] = v
        else:
            data[table] = value
    return data


def error_of(data) -> DesignError:
    with pytest.raises(DesignError) as info:
        evaluate(design_from_dict(data, file="d.toml"))
    return info.value


def test_quantities_become_si_floats(tmp_path):
    path = tmp_path / "design.toml"
    path.write_text(
        'name = "x"\nbom = "b.csv"\n[converter]\nfsw = "250 kHz"\nefficiency = 0.85\n'
        '[input]\nvin_min = 18\nvin_max = "32 V"\n[[output]]\nvout = "5 V"\niout = "2 A"\nvf = "450 mV"\n'
        'turns_ratio = 4\n[transformer]\nlm = "40 uH"\n[environment]\nambient_max = "70 degC"\n', encoding="utf-8")
    d = load_design(path)
    assert d.converter.fsw == 250e3 and d.transformer.lm == pytest.approx(40e-6)
    assert d.outputs[0].vf == pytest.approx(0.45) and d.input.vin_nom == 25.0  # midpoint when not given
    assert d.converter.max_duty == 0.9 and d.clamp is None and d.bom == tmp_path / "b.csv"


def test_unknown_key_suggests_the_closest():
    err = error_of(make(transformer={"lmm": "40 uH"}))
    assert err.file == "d.toml" and err.key == "transformer.lmm"
    assert "did you mean 'lm'?" in err.message


def test_wrong_unit_names_key_and_value():
    err = error_of(make(transformer={"lm": "40 uF"}))
    assert err.key == "transformer.lm" and "'40 uF'" in err.message and "inductance" in err.message


@pytest.mark.parametrize("table,key,value,words", [
    ("input", "vin_min", "40 V", "above vin_max"),
    ("input", "vin_nom", "35 V", "outside vin_min..vin_max"),
    ("transformer", "lm", "0 uH", "greater than zero"),
    ("converter", "fsw", "-5 kHz", "greater than zero"),
    ("converter", "efficiency", 1.2, "outside (0, 1]"),
    ("converter", "efficiency", 0, "outside (0, 1]"),
    ("clamp", "vclamp", "20 V", "at or below the reflected voltage"),
    ("converter", "switching", "bondary", "did you mean 'boundary'"),
])
def test_out_of_range_values(table, key, value, words):
    err = error_of(make(**{table: {key: value}}))
    assert err.key == f"{table}.{key}" and words in err.message


def test_clamp_required_with_leakage():
    err = error_of(make(clamp=None))
    assert err.key == "clamp" and "needs a [clamp]" in err.message
    evaluate(design_from_dict(make(clamp=None, transformer={"llk": 0})))  # fine without leakage


def test_duty_at_max_duty_is_an_error():
    # CCM at 18 V with n = 10: D = Vr/(Vin·Lm/Lp + Vr) ≈ 0.76 > 0.75.
    err = error_of(make(output=[{**BASE["output"][0], "turns_ratio": 10.0}], converter={"current_limit": None},
                        transformer={"lm": "400 uH"}, clamp={"vclamp": "120 V"}))
    assert err.key == "converter.max_duty" and "vin_min-full" in err.message and "0.75" in err.message


def test_efficiency_above_what_the_rectifier_allows():
    err = error_of(make(converter={"efficiency": 1.0}))
    assert err.key == "converter.efficiency" and "Po/Psec = 0.917" in err.message  # 5/(5 + 0.45)


def test_current_limit_below_full_load_peak():
    err = error_of(make(converter={"current_limit": "0.5 A"}))
    assert err.key == "converter.current_limit" and "cannot deliver full load" in err.message


def test_dcm_d_plus_d2_above_one_is_an_error():
    from partcheck.stress import corners, validity
    from partcheck.stress.flyback import solve

    design = design_from_dict(make(), file="d.toml")
    specs = corners.build_corners(design)
    op = corners.operating_points(design, specs)
    sol = solve(op)
    sol["mode"][:] = 1
    sol["d2"] = 1.0 - sol["duty"] + 0.01  # a solution that cannot demagnetize in time
    with pytest.raises(DesignError, match=r"D \+ D2 = 1.010 > 1"):
        validity.check(design, specs, op, sol)


def test_boundary_mode_above_fmax_runs_clamped_in_dcm():
    # Light load: the boundary-mode frequency would be far above 100 kHz.
    data = make(converter={"switching": "boundary", "fsw": "100 kHz", "current_limit": None},
                output=[{**BASE["output"][0], "iout": "0.1 A"}])
    result = evaluate(design_from_dict(data))
    c = result.corner("vin_max-full")
    assert c.mode == "DCM" and c.fsw == 100e3
    assert any("vin_max-full" in n and "clamped" in n for n in result.notes)
    pin = 5 * 0.1 / 0.85
    assert c.roles["switch"]["i_peak"] == pytest.approx((2 * pin / (40.8e-6 * 100e3)) ** 0.5)  # note sec. 1.3 at fs_max


def test_turns_ratio_of_further_outputs_is_derived_or_checked():
    two = [{"name": "p18", "vout": "18 V", "iout": "0.1 A", "vf": "0.6 V", "turns_ratio": 1.0},
           {"name": "n4", "vout": "-4 V", "iout": "0.1 A", "vf": "0.5 V"}]
    d = design_from_dict(make(output=two, transformer={"llk": 0}, clamp=None))
    assert d.outputs[1].turns_ratio == pytest.approx(18.6 / 4.5)  # same volts per turn (note sec. 7)
    bad = [two[0], {**two[1], "turns_ratio": 2.0}]
    with pytest.raises(DesignError, match="same volts per turn") as info:
        design_from_dict(make(output=bad, transformer={"llk": 0}, clamp=None))
    assert info.value.key == "output[1].turns_ratio"


def test_other_tables_load():
    data = make(
        roles={"switch": "Q1", "rectifier:5V": "D1", "clamp": ["D2", "D3"], "output_cap": ["C5", "C6"]},
        pins={"Q1": "SW-N60-030-D8"},
        extra_stress=[{"refs": ["R9"], "power": "0.1 W", "voltage": "30 V", "note": "bleeder"}],
        tolerances={"lm": "±10%", "fsw": 0.05},
        requirements={"life_hours": "60000 h", "regulation": "2%"},
        waiver=[{"ref": "C5", "parameter": "voltage", "reason": "r", "approved_by": "x", "date": dt.date(2026, 1, 5),
                 "expires": "2027-01-05"}],
        feedback={"r_led": "1k", "vref": "2.5 V", "ctr_min": "50%", "opto": "generic"},
        switch_node={"capacitance": "150 pF"},
    )
    d = design_from_dict(data)
    assert d.roles["clamp"] == ("D2", "D3") and d.roles["switch"] == ("Q1",)
    assert d.extra_stress[0].power == pytest.approx(0.1) and d.extra_stress[0].refs == ("R9",)
    assert d.tolerances == {"lm": pytest.approx(0.1), "fsw": 0.05}
    assert d.requirements == {"life_hours": 60000.0, "regulation": pytest.approx(0.02)}
    assert d.waivers[0]["expires"] == dt.date(2027, 1, 5)
    assert d.feedback == {"r_led": 1000.0, "vref": 2.5, "ctr_min": pytest.approx(0.5), "opto": "generic"}
    assert d.switch_node_capacitance == pytest.approx(150e-12)


@pytest.mark.parametrize("table,value,key,words", [
    ("roles", {"swich": "Q1"}, "roles.swich", "did you mean 'switch'"),
    ("roles", {"rectifier:12V": "D1"}, "roles.rectifier:12V", "no output named '12V'"),
    ("roles", {"switch": "Q 1"}, "roles.switch", "not a reference designator"),
    ("extra_stress", [{"refs": "R1"}], "extra_stress[0].refs", "no stress given"),
    ("tolerances", {"lm": "150%"}, "tolerances.lm", "100 % or more"),
    ("waiver", [{"ref": "C5", "parameter": "v", "reason": "r", "approved_by": "x", "date": "5 Jan"}],
     "waiver[0].date", "YYYY-MM-DD"),
])
def test_other_tables_are_validated(table, value, key, words):
    with pytest.raises(DesignError) as info:
        design_from_dict(make(**{table: value}), file="d.toml")
    assert info.value.key == key and words in info.value.message


def test_missing_file_and_bad_toml(tmp_path):
    with pytest.raises(DesignError, match="does not exist"):
        load_design(tmp_path / "nope.toml")
    bad = tmp_path / "bad.toml"
    bad.write_text("name = \n", encoding="utf-8")
    with pytest.raises(DesignError, match="not valid TOML"):
        load_design(bad)


DEMOS = sorted((Path(__file__).resolve().parents[1] / "sample_boms").glob("*/design.toml"))


@pytest.mark.parametrize("path", DEMOS, ids=[p.parent.name for p in DEMOS])
def test_demo_designs_load_and_evaluate(path):
    design = load_design(path)
    result = evaluate(design)
    assert result.corners and all(c.mode in ("CCM", "DCM", "BCM") for c in result.corners)


# ---------------------------------------------------------------- current-limit delay default


def test_current_limit_delay_defaults_to_a_typical_controller_with_a_current_limit():
    # DEFAULT_CURRENT_LIMIT_DELAY_S: controller data sheets commonly state 100-250 ns from current
    # sense to gate off (common practice, from memory); 150 ns is assumed when none is given.
    from partcheck.design import DEFAULT_CURRENT_LIMIT_DELAY_S

    assert DEFAULT_CURRENT_LIMIT_DELAY_S == 150e-9
    conv = design_from_dict(make()).converter
    assert conv.current_limit_delay == 150e-9 and conv.current_limit_delay_given is False
    conv = design_from_dict(make(converter={"current_limit_delay": "80 ns"})).converter
    assert conv.current_limit_delay == pytest.approx(80e-9) and conv.current_limit_delay_given is True
    conv = design_from_dict(make(converter={"current_limit_delay": 0})).converter
    assert conv.current_limit_delay == 0.0 and conv.current_limit_delay_given is True  # an ideal limit, stated
    conv = design_from_dict(make(converter={"current_limit": None})).converter
    assert conv.current_limit_delay == 0.0 and conv.current_limit_delay_given is False  # no limit: no delay


def test_default_delay_overshoots_the_limit_at_the_limit_corner():
    # Overshoot Vin·t/(Lm + Llk) (flyback reference note sec. 5): 32 V · 150 ns / 40.8 µH = 0.1176 A
    # over the 3 A limit at vin_max-ilim.  Before the default was 150 ns this corner sat at exactly 3 A.
    c = evaluate(design_from_dict(make())).corner("vin_max-ilim")
    assert c.roles["transformer"]["i_peak"] == pytest.approx(3.0 + 32.0 * 150e-9 / 40.8e-6, rel=1e-9)


# ---------------------------------------------------------------- mission profile


MISSION = [{"time": 0.7, "load": 0.5, "ambient": "40 degC", "vin": "24 V"},
           {"time": "20 %", "load": "100%", "ambient": "70 degC"},
           {"time": 0.1, "load": 0.25, "ambient": 25}]


def test_mission_loads_as_points():
    from partcheck.design import MissionPoint, mission_points

    d = design_from_dict(make(mission=MISSION))
    assert d.mission == (MissionPoint(0.7, 0.5, 40.0, 24.0), MissionPoint(pytest.approx(0.2), 1.0, 70.0, None),
                         MissionPoint(0.1, 0.25, 25.0, None))
    assert mission_points(d) == d.mission
    single = design_from_dict(make(mission={"time": 1, "load": 1, "ambient": "55 degC"}))  # a lone [mission]
    assert single.mission == (MissionPoint(1.0, 1.0, 55.0, None),)


def test_mission_default_is_full_load_nominal_input_at_ambient_max():
    from partcheck.design import DEFAULT_MISSION_TEXT, MissionPoint, mission_points

    d = design_from_dict(make())
    assert d.mission == ()
    assert mission_points(d) == (MissionPoint(time=1.0, load=1.0, ambient_c=70.0, vin=None),)
    assert "100 %" in DEFAULT_MISSION_TEXT and "full load" in DEFAULT_MISSION_TEXT
    assert "ambient_max" in DEFAULT_MISSION_TEXT and "vin_nom" in DEFAULT_MISSION_TEXT


def test_mission_from_a_toml_file(tmp_path):
    path = tmp_path / "design.toml"
    path.write_text(
        'name = "x"\n[converter]\nfsw = "250 kHz"\nefficiency = 0.85\n'
        '[input]\nvin_min = 18\nvin_max = "32 V"\n[[output]]\nvout = "5 V"\niout = "2 A"\n'
        'turns_ratio = 4\n[transformer]\nlm = "40 uH"\n[environment]\nambient_max = "70 degC"\n'
        '[[mission]]\ntime = "70 %"\nload = 0.5\nambient = "40 degC"\nvin = "24 V"\n'
        '[[mission]]\ntime = 0.3\nload = 1\nambient = "70 degC"\n', encoding="utf-8")
    d = load_design(path)
    assert [(p.time, p.load, p.ambient_c, p.vin) for p in d.mission] == [(0.7, 0.5, 40.0, 24.0), (0.3, 1.0, 70.0, None)]


def _bad(i, **changes):
    points = copy.deepcopy(MISSION)
    for k, v in changes.items():
        if v is None:
            points[i].pop(k)
        else:
            points[i][k] = v
    return points


@pytest.mark.parametrize("points,key,words", [
    (_bad(1, tmie=0.2), "mission[1].tmie", "did you mean 'time'"),
    (_bad(0, time=0), "mission[0].time", "outside (0, 1]"),
    (_bad(0, time=1.5), "mission[0].time", "outside (0, 1]"),
    (_bad(2, load=0), "mission[2].load", "outside (0, 1]"),
    (_bad(2, load="120 %"), "mission[2].load", "outside (0, 1]"),
    (_bad(2, load=None), "mission[2].load", "missing"),
    (_bad(0, ambient="40 V"), "mission[0].ambient", "temperature"),
    (_bad(0, ambient="85 degC"), "mission[0].ambient", "ambient_max"),
    (_bad(0, vin="40 V"), "mission[0].vin", "outside vin_min..vin_max"),
    (_bad(0, vin="12 V"), "mission[0].vin", "outside vin_min..vin_max"),
    (_bad(0, time=0.6), "mission", "sum to 0.9"),
    ([], "mission", "one or more [[mission]]"),
    ("often", "mission", "one or more [[mission]]"),
])
def test_mission_is_validated(points, key, words):
    with pytest.raises(DesignError) as info:
        design_from_dict(make(mission=points), file="d.toml")
    assert info.value.file == "d.toml" and info.value.key == key and words in info.value.message


def test_mission_ambient_below_ambient_min_is_refused():
    with pytest.raises(DesignError) as info:
        design_from_dict(make(environment={"ambient_min": "0 degC"}, mission=_bad(2, ambient="-10 degC")))
    assert info.value.key == "mission[2].ambient" and "ambient_min" in info.value.message


def test_mission_times_sum_within_tolerance():
    # 1/3 three times sums to 1 within rounding; 1e-6 is the stated tolerance.
    third = [{"time": 1 / 3, "load": 1, "ambient": 60}] * 3
    assert len(design_from_dict(make(mission=third)).mission) == 3
    off = [{"time": 0.5, "load": 1, "ambient": 60}, {"time": 0.5 + 2e-6, "load": 1, "ambient": 60}]
    with pytest.raises(DesignError, match=r"sum to 1\.000002"):
        design_from_dict(make(mission=off))


# ---------------------------------------------------------------- the key reference stays complete


def test_every_key_is_documented():
    from partcheck.design import _MISSION_KEYS, _TOP

    doc = (Path(__file__).resolve().parents[1] / "docs" / "design-file.md").read_text(encoding="utf-8")
    for key in _TOP:
        assert f"`{key}" in doc or f"[{key}]" in doc or f"[[{key}]]" in doc, key
    for key in _MISSION_KEYS:
        assert f"`mission[i].{key}`" in doc, key
    assert "`converter.current_limit_delay` | s | 150 ns" in doc
