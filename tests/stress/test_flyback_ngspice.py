"""The engine against transient simulations of open-loop flybacks (ngspice, batch mode).

Each case fills the netlist template ``tests/reference/flyback/open_loop.cir`` (see
``tests/reference/README.md``): coupled inductors with K = 1, leakage in series with the primary,
a voltage-controlled switch (Ron = 5 mΩ) driven at a fixed duty, the rectifier as a near-ideal
diode plus a DC source for the forward drop, C with ESR, a resistive load, and for the clamp an
ideal diode into a DC source at Vin + Vclamp.  The run lasts until the output has settled (checked:
the average over periods 60..40 before the end equals the last 20 within 0.2 %), and .meas
statements measure Vout, input power and the switch / rectifier currents and voltages over the
last 20 periods.  The engine gets the settled Vout, Iout = Vout/R, the efficiency Pout/Pin and the
effective rectifier drop P_rect/Iout, and must reproduce the rest: currents within 3 % (5 % where
leakage shapes the secondary current), voltages within 2 %, the same mode.  One more case is driven at
the boundary; there the engine runs in boundary mode and must find the driven frequency within 2 %.

The RCD cases fill ``rcd_clamp.cir`` instead: the same power stage with a real RCD clamp (diode with
Rs = 10 mΩ into Cc ∥ Rc returned to Vin), at a rated and a heavier, current-limit-like point in CCM and
DCM.  The engine gets Rc and Cc and must find the settled clamp voltage and the drain peak within 5 %.
"""

from __future__ import annotations

import re
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pytest

from partcheck.stress.flyback import MODE_NAMES, OperatingPoints, solve
from tests.conftest import require_tool

TEMPLATE = Path(__file__).resolve().parents[1] / "reference" / "flyback" / "open_loop.cir"

#: name: (vin [V], n, lm [H], llk [H], vclamp [V] or None, fsw [Hz], duty, rload [Ω], vf [V], cout [F],
#:        esr [Ω], vout initial condition [V], periods simulated, expected mode)
CASES = {
    "deep_ccm": (24.0, 4.0, 400e-6, 0.0, None, 100e3, 0.45, 2.5, 0.5, 100e-6, 0.02, 4.36, 400, "CCM"),
    "dcm": (24.0, 4.0, 20e-6, 0.0, None, 100e3, 0.25, 5.0, 0.5, 47e-6, 0.02, 6.39, 200, "DCM"),
    "near_boundary_ccm": (24.0, 4.0, 115e-6, 0.0, None, 100e3, 0.40, 3.0, 0.5, 100e-6, 0.02, 3.46, 400, "CCM"),
    "near_boundary_dcm": (24.0, 4.0, 85e-6, 0.0, None, 100e3, 0.40, 3.0, 0.5, 100e-6, 0.02, 3.5, 400, "DCM"),
    "leakage_clamp_dcm": (24.0, 4.0, 20e-6, 1.5e-6, 45.0, 100e3, 0.25, 5.0, 0.5, 47e-6, 0.02, 5.65, 200, "DCM"),
    "leakage_clamp_ccm": (24.0, 4.0, 400e-6, 8e-6, 40.0, 100e3, 0.45, 2.5, 0.5, 100e-6, 0.02, 4.05, 400, "CCM"),
    # Driven at the boundary (ton = Lm·Ipk/Vin = 4 us, demagnetization Lm·Ipk/Vr = 6 us for R = 1.215 ohm);
    # the engine runs in boundary mode and must find the driven frequency and duty itself.
    "boundary_bcm": (24.0, 4.0, 40e-6, 0.0, None, 100e3, 0.40, 1.215, 0.5, 100e-6, 0.02, 3.46, 300, "BCM"),
}


def _ngspice() -> str:
    path = shutil.which("ngspice")
    require_tool(path is not None, "ngspice (Debian package ngspice)")  # fails under CI, skips elsewhere
    return path


def simulate(ngspice: str, case: tuple, workdir: Path, steps_per_period: int = 400) -> dict[str, float]:
    """Run one case in ``ngspice -b`` and return its .meas results."""
    vin, n, lm, llk, vclamp, fsw, duty, rload, vf, cout, esr, v_ic, periods, _ = case
    period = 1.0 / fsw
    tstop = periods * period
    t_last = tstop - period
    params = {
        "title": f"Vin={vin} n={n} Lm={lm} Llk={llk} f={fsw} D={duty} R={rload}", "vin": vin, "lm": lm, "ls": lm / n**2, "n": n,
        "ton": duty * period, "period": period, "ron": 5e-3, "vf": vf, "cout": cout, "esr": esr, "rload": rload, "vout_ic": v_ic,
        "vclamp": vclamp if vclamp else 20 * vin,  # no clamp: a clamp level it never reaches
        "llk_line": f"Llk p1 p2 {llk}" if llk > 0 else "Vlk0 p1 p2 DC 0",
        "step": period / steps_per_period, "tstop": tstop, "tstart_save": tstop - 60 * period,
        "t0": tstop - 20 * period, "t0_early": tstop - 60 * period, "t1_early": tstop - 40 * period,
        "t_on0": t_last + 0.5 * duty * period, "t_on1": t_last + 0.95 * duty * period,
    }
    netlist = workdir / "flyback.cir"
    netlist.write_text(TEMPLATE.read_text().format(**params))
    run = subprocess.run([ngspice, "-b", str(netlist)], capture_output=True, text=True, timeout=300, cwd=workdir,
                         check=False)
    meas = {m.group(1): float(m.group(2)) for m in re.finditer(r"^(\w+)\s*=\s*([-+0-9.eE]+)", run.stdout, re.MULTILINE)}
    missing = {"vout", "pin", "sw_rms", "d_rms", "vds_pk", "vrev_pk"} - set(meas)
    assert not missing, f"ngspice did not report {missing}:\n{run.stdout[-2000:]}\n{run.stderr[-2000:]}"
    return meas


@pytest.fixture(scope="module")
def simulated(tmp_path_factory):
    ngspice = _ngspice()
    results = {}
    for name, case in CASES.items():
        results[name] = simulate(ngspice, case, tmp_path_factory.mktemp(name))
    return results


def engine(case: tuple, meas: dict[str, float]) -> dict[str, float]:
    """The engine fed with the simulation's settled Vout, Iout, efficiency and rectifier drop."""
    vin, n, lm, llk, vclamp, fsw, _duty, rload, _vf, cout, esr, *_ = case
    bcm = case[-1] == "BCM"
    vout = meas["vout"]
    iout = vout / rload
    op = OperatingPoints.create(
        vin=vin, vout=[vout], iout=[iout], vf=[meas["p_rect"] / meas["d_avg"]], n=[n], lm=lm, llk=llk,
        fsw=np.inf if bcm else fsw, boundary=bcm, eta=vout * iout / meas["pin"], cout=[cout], esr=[esr],
        vclamp=vclamp if vclamp else np.inf)
    sol = solve(op)
    return {k: float(np.ravel(v)[0]) for k, v in sol.items()}


@pytest.mark.ngspice
@pytest.mark.parametrize("name", list(CASES))
def test_settled(simulated, name):
    meas = simulated[name]
    assert meas["vout"] == pytest.approx(meas["vout_early"], rel=2e-3), "the simulation has not reached steady state"


@pytest.mark.ngspice
@pytest.mark.parametrize("name", list(CASES))
def test_engine_matches_simulation(simulated, name):
    case, meas = CASES[name], simulated[name]
    e = engine(case, meas)
    vin, n, lm, llk = case[:4]
    leak = llk > 0
    # Mode: the simulated magnetizing current (primary + secondary/n, K = 1) never reaches zero in CCM.
    sim_mode = "CCM" if meas["mag_min"] > 1e-3 * meas["sw_pk"] else "DCM"
    if case[-1] == "BCM":  # the magnetizing current just reaches zero, and the engine finds the period
        assert sim_mode == "DCM" and MODE_NAMES[int(e["mode"])] == "BCM"
        assert e["fs"] == pytest.approx(case[5], rel=0.02)
    else:
        assert sim_mode == case[-1], f"the case was meant to be {case[-1]}"
        assert MODE_NAMES[int(e["mode"])] == sim_mode
    assert e["duty"] == pytest.approx(case[6], rel=0.01)  # the duty the simulation was driven with
    i_tol = 0.03
    assert e["ipk"] == pytest.approx(meas["sw_pk"], rel=i_tol)
    assert e["sw_rms"] == pytest.approx(meas["sw_rms"], rel=i_tol)
    assert e["sw_avg"] == pytest.approx(meas["sw_avg"], rel=i_tol)
    s_tol = 0.05 if leak else 0.03
    assert e["is_pk_j"] == pytest.approx(meas["d_pk"], rel=s_tol)
    assert e["is_rms_j"] == pytest.approx(meas["d_rms"], rel=s_tol)
    assert e["is_avg_j"] == pytest.approx(meas["d_avg"], rel=s_tol)
    assert e["sw_vpk"] == pytest.approx(meas["vds_pk"], rel=0.02)
    # Rectifier reverse voltage Vin/n + Vout.  With leakage the simulated on-time winding voltage is
    # Vin·Lm/(Lm + Llk)/n: the engine deliberately ignores that divider (conservative by that much).
    divider = vin / n * llk / (lm + llk)
    assert meas["vrev_pk"] * 0.98 <= e["vrect_j"] <= meas["vrev_pk"] * 1.02 + divider
    if leak:
        assert e["p_clamp"] == pytest.approx(meas["p_clamp"], rel=0.05)
        assert e["ipk"] == pytest.approx(meas["cl_pk"], rel=i_tol)  # the clamp takes the whole peak at turn-off


@pytest.mark.ngspice
def test_near_boundary_cases_are_near_the_boundary(simulated):
    # Guard for the case table: "near" means within 20 % of the critical load on either side.
    for name in ("near_boundary_ccm", "near_boundary_dcm"):
        case, meas = CASES[name], simulated[name]
        vin, n, lm, fsw = case[0], case[1], case[2], case[5]
        vr = n * (meas["vout"] + meas["p_rect"] / meas["d_avg"])
        d = vr / (vin + vr)
        pin_crit = (vin * d) ** 2 / (2 * lm * fsw)  # reference note sec. 1.1 [D]
        assert 0.8 < meas["pin"] / pin_crit < 1.2


# --------------------------------------------------------------------------------------------
# RCD clamp: the clamp voltage follows from Rc (flyback-equations.md §2.1)
# --------------------------------------------------------------------------------------------

RCD_TEMPLATE = TEMPLATE.parent / "rcd_clamp.cir"

#: name: (vin [V], n, lm [H], llk [H], rc [Ω], cc [F], vc initial condition [V], fsw [Hz], duty, rload [Ω],
#:        vf [V], cout [F], esr [Ω], vout initial condition [V], periods simulated, expected mode)
#: "full" is a rated-load point, "heavy" a current-limit-like one (a larger on-time into a lower load,
#: so a higher peak current with the same Rc); rcd_dcm_heavy has a small Cc (ripple ~14 % of Vc).
RCD_CASES = {
    "rcd_ccm_full": (24.0, 4.0, 400e-6, 8e-6, 2.2e3, 470e-9, 40.0, 100e3, 0.45, 2.5, 0.5, 100e-6, 0.02, 4.05, 400, "CCM"),
    "rcd_ccm_heavy": (24.0, 4.0, 400e-6, 8e-6, 2.2e3, 470e-9, 60.0, 100e3, 0.50, 1.6, 0.5, 100e-6, 0.02, 4.6, 400, "CCM"),
    "rcd_dcm_full": (24.0, 4.0, 20e-6, 1.5e-6, 1.5e3, 470e-9, 45.0, 100e3, 0.25, 5.0, 0.5, 47e-6, 0.02, 5.65, 300, "DCM"),
    "rcd_dcm_heavy": (24.0, 4.0, 20e-6, 1.5e-6, 1.5e3, 47e-9, 55.0, 100e3, 0.35, 2.5, 0.5, 47e-6, 0.02, 5.9, 300, "DCM"),
}
RCD_DIODE_RS = 10e-3  # the clamp diode's series resistance in the netlist [Ω]


def simulate_rcd(ngspice: str, case: tuple, workdir: Path, steps_per_period: int = 400) -> dict[str, float]:
    """Run one RCD-clamp case of ``rcd_clamp.cir`` in ``ngspice -b`` and return its .meas results."""
    vin, n, lm, llk, rc, cc, vc_ic, fsw, duty, rload, vf, cout, esr, v_ic, periods, _ = case
    period = 1.0 / fsw
    tstop = periods * period
    t_last = tstop - period
    params = {
        "title": f"Vin={vin} n={n} Lm={lm} Llk={llk} Rc={rc} Cc={cc} f={fsw} D={duty} R={rload}", "vin": vin, "lm": lm,
        "ls": lm / n**2, "n": n, "ton": duty * period, "period": period, "ron": 5e-3, "vf": vf, "cout": cout, "esr": esr,
        "rload": rload, "vout_ic": v_ic, "rs_cl": RCD_DIODE_RS, "cc": cc, "rc": rc, "vc_ic": vc_ic,
        "llk_line": f"Llk p1 p2 {llk}", "step": period / steps_per_period, "tstop": tstop,
        "tstart_save": tstop - 60 * period, "t0": tstop - 20 * period, "t0_early": tstop - 60 * period,
        "t1_early": tstop - 40 * period, "t_on0": t_last + 0.5 * duty * period, "t_on1": t_last + 0.95 * duty * period,
    }
    netlist = workdir / "flyback_rcd.cir"
    netlist.write_text(RCD_TEMPLATE.read_text().format(**params))
    run = subprocess.run([ngspice, "-b", str(netlist)], capture_output=True, text=True, timeout=300, cwd=workdir,
                         check=False)
    meas = {m.group(1): float(m.group(2)) for m in re.finditer(r"^(\w+)\s*=\s*([-+0-9.eE]+)", run.stdout, re.MULTILINE)}
    missing = {"vout", "pin", "vds_pk", "vc", "vc_early", "vc_max", "vc_min", "p_clamp"} - set(meas)
    assert not missing, f"ngspice did not report {missing}:\n{run.stdout[-2000:]}\n{run.stderr[-2000:]}"
    return meas


@pytest.fixture(scope="module")
def simulated_rcd(tmp_path_factory):
    ngspice = _ngspice()
    return {name: simulate_rcd(ngspice, case, tmp_path_factory.mktemp(name)) for name, case in RCD_CASES.items()}


def engine_rcd(case: tuple, meas: dict[str, float]) -> dict[str, float]:
    """The engine with the clamp given by its resistor and capacitor, fed the settled Vout, Iout, eta and Vf.

    No forward recovery and no loop inductance (the netlist has neither: its clamp diode has no charge
    storage and the loop no stray inductance), so the engine's drain peak is Vin + Vc + ΔVc/2.
    """
    vin, n, lm, llk, rc, cc, _vc_ic, fsw, _duty, rload, *_ = case
    vout = meas["vout"]
    iout = vout / rload
    op = OperatingPoints.create(
        vin=vin, vout=[vout], iout=[iout], vf=[meas["p_rect"] / meas["d_avg"]], n=[n], lm=lm, llk=llk, fsw=fsw,
        eta=vout * iout / meas["pin"], rclamp=rc, cclamp=cc)
    return {k: float(np.ravel(v)[0]) for k, v in solve(op).items()}


@pytest.mark.ngspice
@pytest.mark.parametrize("name", list(RCD_CASES))
def test_rcd_clamp_matches_simulation(simulated_rcd, name):
    # Netlist (tests/reference/flyback/rcd_clamp.cir): the open-loop power stage of open_loop.cir with a
    # real RCD clamp, a near-ideal diode with Rs = 10 mΩ from the drain into Cc ∥ Rc returned to Vin.
    case, meas = RCD_CASES[name], simulated_rcd[name]
    assert meas["vout"] == pytest.approx(meas["vout_early"], rel=2e-3), "the output has not settled"
    assert meas["vc"] == pytest.approx(meas["vc_early"], rel=2e-3), "the clamp capacitor has not settled"
    e = engine_rcd(case, meas)
    assert MODE_NAMES[int(e["mode"])] == case[-1]
    assert e["clamp_vc"] == pytest.approx(meas["vc"], rel=0.05)  # settled mean clamp voltage
    assert e["sw_vpk"] == pytest.approx(meas["vds_pk"], rel=0.05)  # drain peak = Vin + Vc + ΔVc/2
    assert e["clamp_ripple"] == pytest.approx(meas["vc_max"] - meas["vc_min"], rel=0.25)  # crude ΔVc
    assert e["p_clamp"] == pytest.approx(meas["p_clamp"], rel=0.05)  # Vc²/Rc


@pytest.mark.ngspice
def test_rcd_clamp_rises_at_the_heavy_point(simulated_rcd):
    # The same Rc settles higher at the heavier point, in the simulation and in the engine (Vc grows with Ipk²·fs).
    for mode in ("ccm", "dcm"):
        full, heavy = f"rcd_{mode}_full", f"rcd_{mode}_heavy"
        assert simulated_rcd[heavy]["vc"] > 1.2 * simulated_rcd[full]["vc"]
        e_full = engine_rcd(RCD_CASES[full], simulated_rcd[full])
        e_heavy = engine_rcd(RCD_CASES[heavy], simulated_rcd[heavy])
        assert e_heavy["clamp_vc"] > 1.2 * e_full["clamp_vc"]
