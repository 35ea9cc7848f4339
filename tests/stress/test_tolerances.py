"""Tests for partcheck.stress.tolerances: extremes worst case and vectorised Monte Carlo."""

from __future__ import annotations

import copy

import numpy as np
import pytest

from partcheck.design import design_from_dict
from partcheck.stress import corners as _corners
from partcheck.stress.flyback import evaluate, role_stresses, solve
from partcheck.stress.tolerances import monte_carlo, role_arrays, worst_case

BASE = {
    "name": "tolerance test",
    "converter": {"switching": "fixed", "fsw": "100 kHz", "efficiency": 0.85},
    "input": {"vin_min": "18 V", "vin_nom": "24 V", "vin_max": "32 V", "vin_surge": "40 V"},
    "output": [
        {"name": "5V", "vout": "5 V", "iout": "1 A", "vf": "0.45 V", "cout": "220 uF", "esr": "20 mOhm"}
    ],
    "transformer": {"lm": "40 uH", "turns_ratio": 4.0, "llk": "0.8 uH", "turns_primary": 20, "ae": "20 mm2"},
    "clamp": {"kind": "zener", "vclamp": "60 V"},
    "environment": {"ambient_max": "70 degC"},
}


def make(**changes):
    data = copy.deepcopy(BASE)
    for section, values in changes.items():
        data[section].update(values)
    return design_from_dict(data)


#: Designs for the mapping guard: every clamp kind, with and without a capacitor, none, two outputs.
MAPPING_DESIGNS = {
    "zener_current_limit": dict(converter={"current_limit": "2.5 A"}),
    "zener_given_loop": dict(clamp={"tolerance": "2%", "v_forward_recovery": "3 V", "loop_inductance": "20 nH"},
                             switch_node={"capacitance": "150 pF"}),
    "rcd_with_capacitor": dict(clamp={"kind": "rcd", "vclamp": None, "resistor": "4.7 kOhm", "capacitor": "10 nF"}),
    "rcd_resistor_only": dict(clamp={"kind": "rcd", "vclamp": None, "resistor": "4.7 kOhm"}),
    "rcd_fixed_vclamp": dict(clamp={"kind": "rcd"}),
    "tvs": dict(clamp={"kind": "tvs", "diode_type": "schottky"}),
    "no_clamp": dict(clamp=None, transformer={"llk": 0}),
    "two_outputs": dict(output=[{"name": "5V", "vout": "5 V", "iout": "1 A", "vf": "0.45 V", "cout": "220 uF",
                                 "esr": "20 mOhm"},
                                {"name": "12V", "vout": "12 V", "iout": "0.1 A", "vf": "0.7 V", "turns_ratio": 1.7}]),
}


def make_mapping_design(name):
    data = copy.deepcopy(BASE)
    for section, values in MAPPING_DESIGNS[name].items():
        if values is None:
            data.pop(section, None)
            continue
        if isinstance(values, list):  # [[output]]: replaced whole
            data[section] = values
            continue
        data.setdefault(section, {}).update(values)
        data[section] = {k: v for k, v in data[section].items() if v is not None}
    return design_from_dict(data)


@pytest.mark.parametrize("name", list(MAPPING_DESIGNS))
def test_role_arrays_match_the_engine_role_stresses_point_by_point(name):
    # Guard: the vectorised mapping must equal flyback.role_stresses at every corner, key for key
    # (the same keys, no more, no fewer, and the same values).
    design = make_mapping_design(name)
    specs = _corners.build_corners(design)
    op = _corners.operating_points(design, specs)
    sol = solve(op)
    sol["vin_dc"] = op.vin
    arrays = role_arrays(design, op, sol)
    # Guard for the case table: the optional keys are there exactly where the design asks for them.
    assert ("clamp.v_ripple_pp" in arrays) == (name == "rcd_with_capacitor")
    assert ("clamp_diode.i_off" in arrays) == (name != "no_clamp")
    assert ("rectifier:12V.v_reverse" in arrays) == (name == "two_outputs")
    for i in range(len(specs)):
        roles = role_stresses(design, sol, i)
        assert set(arrays) == {f"{role}.{key}" for role, stresses in roles.items() for key in stresses}
        for role, stresses in roles.items():
            for key, value in stresses.items():
                got = arrays[f"{role}.{key}"][i]
                assert (value is None and not np.isfinite(got)) or got == pytest.approx(value, rel=1e-12), (
                    role,
                    key,
                )


def test_zero_tolerance_worst_case_is_the_engine_worst_corner():
    design = make(converter={"current_limit": "2.5 A"})
    wc = worst_case(design, {})
    engine = {f"{r['role']}.{r['stress']}": r for r in evaluate(design).worst()}
    for key, entry in wc["stresses"].items():
        assert entry["worst"] == pytest.approx(engine[key]["value"], rel=1e-12), key
        assert entry["corner"] == engine[key]["corner"], key
    assert wc["combinations"] == 1


def test_extremes_bound_the_samples_for_monotone_stresses():
    # All corners DCM at fixed frequency: every stress is a product of powers of Lm, fs, eta and
    # Vout (flyback-equations.md §1.3), hence monotone in each, so the 2^k extremes bound every
    # sample (worst-case analysis by extremes, common practice).
    design = make()
    tol = {"lm": 0.10, "fsw": 0.05, "efficiency": 0.03, "vout": 0.02}
    wc = worst_case(design, tol)
    mc = monte_carlo(design, tol, samples=4000, seed=7)
    assert wc["combinations"] == 16 and wc["infeasible"] == 0 and mc["infeasible"] == 0
    for key, entry in mc["stresses"].items():
        if entry["worst"] is None:
            continue
        assert entry["worst"] <= wc["stresses"][key]["worst"] * (1 + 1e-12), key
        assert entry["p99_7"] <= entry["worst"] and entry["nominal"] <= wc["stresses"][key]["worst"]
    # The peak current rises as Lm, fs and eta fall and Vout rises (sec. 1.3: Ipk = sqrt(2·Pin/(Lp·fs)),
    # Lp = Lm + Llk the on-time inductance, Pin = Vout·Iout/eta).
    ipk = wc["stresses"]["switch.i_peak"]
    assert ipk["setting"] == {"efficiency": -1.0, "fsw": -1.0, "lm": -1.0, "vout": 1.0}
    lp_nom, lp_min = 40.8e-6, 36.8e-6
    expected = ipk["nominal"] * np.sqrt(1.02 / 0.97 * lp_nom / (lp_min * 0.95))
    assert ipk["worst"] == pytest.approx(expected, rel=1e-9)


def test_worst_sample_is_below_the_extremes_only_by_what_sampling_explains_one_quantity():
    # Uniform sampling of one quantity, stress monotone in it: the worst sample is S(u_min) with
    # P(u_min > −1 + x) = (1 − x/2)^N.  With x chosen for a 1e-9 chance, the worst sample must be
    # at least the stress at u = −1 + x, i.e. the extremes figure for a tolerance tol·(1 − x).
    design = make()
    tol, n = 0.10, 5000
    x = 2.0 * (1.0 - 1e-9 ** (1.0 / n))
    mc = monte_carlo(design, {"lm": tol}, samples=n, seed=3)
    wc = worst_case(design, {"lm": tol})
    near = worst_case(design, {"lm": tol * (1.0 - x)})
    for key in ("switch.i_peak", "switch.i_rms", "rectifier.i_peak", "output_cap.i_rms", "clamp.p_loss"):
        assert (
            near["stresses"][key]["worst"] <= mc["stresses"][key]["worst"] <= wc["stresses"][key]["worst"]
        ), key


def test_worst_sample_gap_three_quantities_within_the_sampling_bound():
    # Linearised: S = S_wc − Σ a_i·d_i with d_i ∈ [0, 2] uniform, so P(gap ≤ δ) = δ³/(3!·Π 2a_i) for
    # small δ; δ for a 1e-9 chance of a larger gap, with a factor 1.5 for curvature.
    design = make()
    tol = {"lm": 0.10, "fsw": 0.05, "efficiency": 0.03}
    n = 20000
    mc = monte_carlo(design, tol, samples=n, seed=11)
    wc = worst_case(design, tol)
    key = "switch.i_peak"
    nominal = wc["stresses"][key]["nominal"]
    a = [abs(worst_case(design, {k: v})["stresses"][key]["worst"] - nominal) for k, v in tol.items()]
    p = 1.0 - 1e-9 ** (1.0 / n)
    delta = 1.5 * (p * 6.0 * np.prod([2 * ai for ai in a])) ** (1 / 3)
    gap = wc["stresses"][key]["worst"] - mc["stresses"][key]["worst"]
    assert 0.0 <= gap <= delta


def test_monte_carlo_is_reproducible_with_the_same_seed():
    design = make(converter={"current_limit": "2.5 A"})
    tol = {"lm": 0.1, "fsw": 0.05, "current_limit": 0.05}
    a = monte_carlo(design, tol, samples=500, seed=42)
    b = monte_carlo(design, tol, samples=500, seed=42)
    c = monte_carlo(design, tol, samples=500, seed=43)
    assert a == b
    assert a["stresses"]["switch.i_rms"]["worst"] != c["stresses"]["switch.i_rms"]["worst"]


def test_normal_distribution_stays_inside_the_box():
    design = make()
    tol = {"lm": 0.1, "fsw": 0.05}
    mc = monte_carlo(design, tol, samples=3000, seed=1, distribution="normal")
    wc = worst_case(design, tol)
    for key, entry in mc["stresses"].items():
        if entry["worst"] is not None:
            assert entry["worst"] <= wc["stresses"][key]["worst"] * (1 + 1e-12), key
            assert all(abs(v) <= tol[k] for k, v in entry["setting"].items())


def test_output_voltage_tolerance_raises_the_rectifier_reverse_voltage():
    # flyback-equations.md §2.2 [M]: V_R = Vin_max/n + Vout_max; surge 40 V, n = 4, Vout +2 %.
    wc = worst_case(make(), {"vout": 0.02})
    assert wc["stresses"]["rectifier.v_reverse"]["worst"] == pytest.approx(40.0 / 4 + 5.0 * 1.02)
    assert wc["stresses"]["rectifier.v_reverse"]["corner"] == "vin_surge"


def test_infeasible_settings_are_counted_not_raised():
    # D = sqrt(2·Lm·fs·Pin)/Vin grows with Lm (sec. 1.3): with max_duty just above the nominal
    # low-line duty, +10 % Lm pushes it past the controller maximum.
    design = make(converter={"max_duty": 0.40})
    wc = worst_case(design, {"lm": 0.10})
    assert wc["infeasible"] > 0 and "no valid operating point" in wc["notes"][-1]
    mc = monte_carlo(design, {"lm": 0.10}, samples=400, seed=5)
    assert 0 < mc["infeasible"] < 400
    assert mc["stresses"]["switch.i_peak"]["worst"] is not None


def test_unknown_tolerance_key_is_rejected():
    with pytest.raises(ValueError, match="unknown tolerance key"):
        worst_case(make(), {"lmm": 0.1})
