"""End-to-end: the demo scenarios through the whole check, pinned finding by finding.

The scenarios, their BOMs and the seed catalog are invented demo data (sample_boms/README.md,
db/README.md).  What is pinned here is which parts fail and why; the numbers are checked by hand
in :func:`test_hand_worked_rectifier_voltage`.
"""

from __future__ import annotations

import datetime as dt
import json
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from partcheck.catalog.seed import SEED_DIR, demo_catalog
from partcheck.catalog.store import open_catalog
from partcheck.pipeline import check
from partcheck.result import CheckResult

REPO = Path(__file__).resolve().parents[1]
SAMPLES = REPO / "sample_boms"
TODAY = dt.date(2026, 12, 1)


@pytest.fixture(scope="module")
def catalog(tmp_path_factory):
    cat = demo_catalog(tmp_path_factory.mktemp("catalog"))
    yield cat
    cat.close()


def _run(name: str, catalog, **kwargs) -> CheckResult:
    return check(SAMPLES / name / "design.toml", catalog=catalog, today=TODAY, **kwargs)


def _failing(result: CheckResult) -> set[tuple[str, str]]:
    return {(",".join(f["refs"]), f["parameter"]) for f in result.findings if f["status"] == "fail"}


def test_remote_io_passes(catalog):
    result = _run("remote_io_24v", catalog)
    assert result.verdict == "pass"
    # Stresses no rule limits are shown as info; the transformer's insulation, which partcheck never
    # assesses, is waived in the design file with who reviewed it.
    assert [f for f in result.findings if f["status"] not in ("pass", "warn", "info")] == [
        f for f in result.findings if f["refs"] == ["T1"] and f["parameter"] == "insulation"]
    assert all(f["status"] == "waived" for f in result.findings if f["parameter"] == "insulation")
    # every fitted BOM line was matched and is covered by a finding
    fitted = [p for p in result.parts if p["status"] != "not_fitted"]
    assert fitted and all(p["status"] in ("pass", "warn", "info", "waived") for p in fitted)


def test_battery_monitor_fails_for_the_three_intended_reasons(catalog):
    result = _run("battery_monitor_48v", catalog)
    assert result.verdict == "fail"
    assert _failing(result) == {
        ("D1", "voltage"),  # 50 V ultrafast at Vin_max/n + Vout = 45 V
        ("C10", "ripple_current"),  # general-purpose electrolytic beyond its ripple rating at 200 kHz, 60 °C
        ("C11", "voltage"),  # 25 V X7R on 15 V against the scenario's 50 % rule
        ("C11", "capacitance"),  # ... and it keeps less than half its capacitance at that bias
        # 2000 h / 105 °C part, hot spot 76 °C at full load and 60 °C all the time (the stated default
        # mission): 2000·2^(29/10) ≈ 15 000 h against the industrial default requirement of 50 000 h
        ("C10", "life"),
    }
    parts = {p.part_number: p for p in catalog.parts()}
    for f in result.findings:
        if f["status"] != "fail":
            continue
        assert f["alternatives"], f"no alternative offered for {f['refs']}"
        failing_part = parts[f["part_number"]]
        for alt in f["alternatives"]:
            candidate = parts[alt["part_number"]]
            assert (candidate.category, candidate.subtype) == (failing_part.category, failing_part.subtype)
            assert candidate.status in (None, "approved")
            assert alt["min_margin"] >= 0.0


def test_alternatives_pass_when_pinned(catalog, tmp_path):
    """Ordering the first suggested alternative for each failing part clears those failures."""
    first = _run("battery_monitor_48v", catalog)
    pins = {}
    for f in first.findings:
        if f["status"] == "fail":
            pins[f["refs"][0]] = f["alternatives"][0]["part_number"]
    second = _run("battery_monitor_48v", catalog, pins=pins)
    assert _failing(second) == set()
    for ref, part in pins.items():
        assert {f["part_number"] for f in second.findings if f["refs"] == [ref]} == {part}


def test_hand_worked_rectifier_voltage(catalog):
    """D1 of the battery monitor, by hand.

    1. Rectifier reverse voltage V_R = Vin_max/n + Vout (flyback-equations.md §2.2; the same
       structure as Rashid, *Power Electronics*, Ex. 2.9, read in a transcription):
       60 V / 2 + 15 V = 45 V.
    2. Its catalog part DU-050-2A-SMB is an ultrafast diode rated VRRM = 50 V (db/parts.csv).
    3. The industrial preset limits diode reverse voltage to 0.8 × VRRM (rule diode-voltage,
       common practice): limit = 40 V.
    4. Steady utilisation = 45 / 40 = 1.125 → fail already; the policy sees the peak of the
       turn-on ring (issue 12), which is higher still: utilisation = peak / 40.
    """
    result = _run("battery_monitor_48v", catalog)
    (d1,) = [f for f in result.findings if f["refs"] == ["D1"] and f["parameter"] == "voltage"]
    assert d1["part_number"] == "DU-050-2A-SMB"
    assert d1["steady"] == pytest.approx(45.0, rel=1e-9)
    assert d1["rating"] == pytest.approx(50.0)
    assert d1["limit"] == pytest.approx(40.0)
    assert d1["stress"] > 45.0 and d1["dominant"] in ("reverse recovery", "snubbed ring")
    assert d1["utilization"] == pytest.approx(d1["stress"] / 40.0, rel=1e-9)
    assert d1["margin"] == pytest.approx(1 - d1["stress"] / 40.0, rel=1e-9)
    assert d1["corner"].startswith("vin_max-")
    assert d1["rule"] == "diode-voltage"


def _catalog_with(tmp_path: Path, part_number: str, column: str, value: str):
    """A seed catalog in which one rating of one part is changed."""
    import csv

    with (SEED_DIR / "parts.csv").open(encoding="utf-8", newline="") as fh:
        rows = list(csv.DictReader(fh))
    header = list(rows[0])
    hit = [r for r in rows if r["part_number"] == part_number]
    assert len(hit) == 1
    hit[0][column] = value
    target = tmp_path / "parts.csv"
    with target.open("w", encoding="utf-8", newline="") as fh:
        writer = csv.DictWriter(fh, header, lineterminator="\n")
        writer.writeheader()
        writer.writerows(rows)
    shutil.copy(SEED_DIR / "parts.curves.csv", tmp_path / "parts.curves.csv")
    cat = open_catalog(tmp_path / "nudged.sqlite")
    cat.import_file(target)
    return cat


def test_nudging_one_rating_flips_exactly_that_finding(catalog, tmp_path):
    """VRRM 50 V → 120 V: D1's voltage finding (its snubbed ring peaks near 79 V) becomes a pass
    against 0.8 × 120 = 96 V; nothing else moves."""
    before = _run("battery_monitor_48v", catalog)
    cat = _catalog_with(tmp_path, "DU-050-2A-SMB", "vrrm", "120")
    try:
        after = _run("battery_monitor_48v", cat)
    finally:
        cat.close()
    key = lambda f: (tuple(f["refs"]), f["parameter"])  # noqa: E731
    b = {key(f): f["status"] for f in before.findings}
    a = {key(f): f["status"] for f in after.findings}
    assert b.keys() == a.keys()
    changed = {k for k in b if a[k] != b[k]}
    assert changed == {(("D1",), "voltage")}
    assert b[(("D1",), "voltage")] == "fail" and a[(("D1",), "voltage")] == "pass"


def test_waivers_waive_and_expire(catalog, tmp_path):
    design = (SAMPLES / "battery_monitor_48v" / "design.toml").read_text(encoding="utf-8")
    for name in ("bom.csv", "policy.toml"):
        shutil.copy(SAMPLES / "battery_monitor_48v" / name, tmp_path / name)
    waiver = ('\n[[waiver]]\nref = "D1"\nparameter = "voltage"\nreason = "bench-measured ringing below 42 V"\n'
              'approved_by = "design review board"\ndate = 2026-11-20\nexpires = {expires}\n')
    (tmp_path / "ok.toml").write_text(design + waiver.format(expires="2027-06-30"), encoding="utf-8")
    (tmp_path / "old.toml").write_text(design + waiver.format(expires="2026-11-30"), encoding="utf-8")

    ok = check(tmp_path / "ok.toml", catalog=catalog, today=TODAY)
    (d1,) = [f for f in ok.findings if f["refs"] == ["D1"] and f["parameter"] == "voltage"]
    assert d1["status"] == "waived"
    assert d1["utilization"] == pytest.approx(d1["stress"] / 40.0)  # a waived finding keeps its numbers
    assert d1["utilization"] > 1.125

    old = check(tmp_path / "old.toml", catalog=catalog, today=TODAY)
    (d1,) = [f for f in old.findings if f["refs"] == ["D1"] and f["parameter"] == "voltage"]
    assert d1["status"] == "fail"
    assert "expired" in d1["detail"]


def test_result_json_round_trip(catalog, tmp_path):
    result = _run("battery_monitor_48v", catalog)
    path = tmp_path / "result.json"
    path.write_text(result.to_json(), encoding="utf-8")
    again = CheckResult.load(path)
    assert again.to_dict() == json.loads(result.to_json())
    assert {"design", "policy", "verdict", "findings"} <= set(json.loads(path.read_text()))
    f = again.findings[0]
    assert {"refs", "part_number", "role", "parameter", "stress", "rating", "limit", "utilization", "margin",
            "corner", "status", "rule", "source"} <= set(f)


def _cli(*args, cwd=None, env=None):
    return subprocess.run([sys.executable, "-m", "partcheck", *args], capture_output=True, text=True, cwd=cwd,
                          timeout=300, env=env)


def test_cli_check_exit_codes_and_policy_origin(tmp_path):
    db = tmp_path / "db.sqlite"
    demo_catalog(tmp_path).close()
    shutil.move(tmp_path / "demo-catalog.sqlite", db)
    passing = _cli("check", str(SAMPLES / "remote_io_24v" / "design.toml"), "--db", str(db), "--policy", "industrial")
    assert passing.returncode == 0, passing.stderr
    assert "PASS" in passing.stdout and "from --policy" in passing.stdout
    failing = _cli("check", str(SAMPLES / "battery_monitor_48v" / "design.toml"), "--db", str(db),
                   "--format", "json", "--report", str(tmp_path / "r.html"), "--annotate", str(tmp_path / "a.csv"))
    assert failing.returncode == 1, failing.stderr
    data = json.loads(failing.stdout)
    assert data["verdict"] == "fail"
    assert (tmp_path / "r.html").stat().st_size > 10_000
    annotated = (tmp_path / "a.csv").read_text(encoding="utf-8")
    assert "partcheck_status" in annotated and "DU-150-2A-SMB" in annotated
    bad = _cli("check", str(tmp_path / "missing.toml"), "--db", str(db))
    assert bad.returncode == 2 and "Traceback" not in bad.stderr and "missing.toml" in bad.stderr


def test_cli_report_from_saved_json(catalog, tmp_path):
    result = _run("remote_io_24v", catalog)
    (tmp_path / "r.json").write_text(result.to_json(), encoding="utf-8")
    done = _cli("report", str(tmp_path / "r.json"), "--out", str(tmp_path / "r.html"))
    assert done.returncode == 0, done.stderr
    assert "PASS" in (tmp_path / "r.html").read_text(encoding="utf-8")
    (tmp_path / "junk.json").write_text("{not json", encoding="utf-8")
    bad = _cli("report", str(tmp_path / "junk.json"))
    assert bad.returncode == 2 and "junk.json" in bad.stderr and "Traceback" not in bad.stderr


def test_cli_demo_writes_every_report(tmp_path):
    done = _cli("demo", "--out", str(tmp_path / "out"))
    assert done.returncode == 0, done.stderr
    for name in ("remote_io_24v", "battery_monitor_48v", "sic_gate_drive"):
        assert str(tmp_path / "out" / f"{name}.html") in done.stdout
        assert (tmp_path / "out" / f"{name}.html").is_file()
    assert "PASS" in done.stdout and "FAIL" in done.stdout


def test_stress_report_parts_and_tolerances(catalog):
    """`partcheck stress --bom --samples`: every mapped part has stresses; a bank of identical
    capacitors shares the bank current equally, each carrying I_bank/N (identity check: equal
    impedances in parallel), to within the harmonics captured; the Monte Carlo run is
    reproducible and never exceeds the extremes for a monotone stress."""
    from partcheck.pipeline import stress_report

    design = SAMPLES / "sic_gate_drive" / "design.toml"
    data = stress_report(design, bom=SAMPLES / "sic_gate_drive" / "bom.xlsx", catalog=catalog, samples=500, seed=7)
    assert {c["id"] for c in data["corners"]} >= {"vin_min-full", "vin_max-full"}
    parts = {p["refs"][0]: p for p in data["parts"]}
    assert {"voltage", "current_peak", "temperature"} <= set(parts["Q1"]["stresses"])
    checked = 0
    for role, split in data["bank_split"].items():
        bank_rms = split["i_bank_rms"]  # exact AC RMS of the bank current, from its waveform
        corner = next((c for c in data["corners"] if c["id"] == split["corner"]), None)
        if corner is not None:  # a nominal corner: the engine's own role figure agrees
            assert corner["roles"][role]["i_rms"] == pytest.approx(bank_rms, rel=1e-6)
        if len({c["part_number"] for c in split["caps"]}) == 1:
            n = len(split["caps"])
            for cap in split["caps"]:
                assert cap["i_rms"] == pytest.approx(bank_rms / n, rel=2e-3)
            checked += 1
    assert checked >= 2
    wc = data["tolerances"]["worst_case"]["stresses"]["switch.i_peak"]
    mc = data["tolerances"]["monte_carlo"]["stresses"]["switch.i_peak"]
    assert wc["worst"] >= wc["nominal"]
    assert mc["worst"] <= wc["worst"] * (1 + 1e-9)  # DCM peak current falls monotonically with Lm
    again = stress_report(design, samples=500, seed=7)["tolerances"]["monte_carlo"]["stresses"]["switch.i_peak"]
    assert again == mc


def test_tolerance_extremes_enter_the_check(catalog):
    """With [tolerances], every corner is also evaluated at the extremes of the tolerance box
    (worst case by the extremes, common practice).

    The gate-drive demo's switch RMS current is decided at the current-limit corner, where the
    peak is held at the limit: in DCM, D = Lm·Ipk·fs/Vin and Ip_rms = Ipk·sqrt(D/3)
    (flyback-equations.md §1.3, [M]), so the RMS rises with Lm·fs and is worst at Lm +10 %,
    fs +5 %, by at most sqrt(1.10 × 1.05) = 1.0747 over nominal.
    """
    import dataclasses

    from partcheck.design import load_design

    result = _run("sic_gate_drive", catalog)
    assert any(n.startswith("tolerances: every corner also evaluated at the 16 extremes") for n in result.notes)
    (rms,) = [f for f in result.findings if f["refs"] == ["Q1"] and f["parameter"] == "current_rms"]
    assert rms["corner"].startswith("vin_min-ilim@lm+10%,fsw+5%")
    design = load_design(SAMPLES / "sic_gate_drive" / "design.toml")
    nominal = check(dataclasses.replace(design, tolerances={}), catalog=catalog, today=TODAY)
    (rms_nominal,) = [f for f in nominal.findings if f["refs"] == ["Q1"] and f["parameter"] == "current_rms"]
    assert rms_nominal["corner"] == "vin_min-ilim"
    assert 1.03 < rms["stress"] / rms_nominal["stress"] <= (1.10 * 1.05) ** 0.5 + 1e-9
