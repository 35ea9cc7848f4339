"""Voltage findings at the transient peak, through the whole check (issue 12).

Built on the invented demo scenarios (sample_boms/README.md).  The ring model itself is checked
against ngspice in tests/stress/test_ringing_ngspice.py; these tests check that its peak, not the
steady value, is what the policy sees, that a bench figure replaces it, and that the snubber
role has numbers.
"""

from __future__ import annotations

import datetime as dt
import shutil
from pathlib import Path

import pytest

from partcheck.catalog.seed import demo_catalog
from partcheck.pipeline import check
from partcheck.stress import ringing

REPO = Path(__file__).resolve().parents[1]
SAMPLES = REPO / "sample_boms"
TODAY = dt.date(2026, 12, 1)


@pytest.fixture(scope="module")
def catalog(tmp_path_factory):
    cat = demo_catalog(tmp_path_factory.mktemp("catalog"))
    yield cat
    cat.close()


def _variant(tmp_path: Path, scenario: str, edit) -> Path:
    work = tmp_path / scenario
    shutil.copytree(SAMPLES / scenario, work)
    design = work / "design.toml"
    design.write_text(edit(design.read_text(encoding="utf-8")), encoding="utf-8")
    return design


def _finding(result, ref: str, parameter: str) -> dict:
    (hit,) = [f for f in result.findings if ref in f["refs"] and f["parameter"] == parameter]
    return hit


def _unsnubbed(text: str) -> str:
    return "\n".join(line for line in text.splitlines() if not line.startswith(('"snubber', "snubber")))


def test_unsnubbed_gate_drive_rectifier_fails_on_its_ring(catalog, tmp_path):
    """sic_gate_drive D1 without its RC: the ring doubles the step (undamped leakage ring; the
    DS-100-1A-SOD123F Schottky has no recovery charge), so the peak is 2·V_R + Vf = 2 × 39.93 +
    0.75 — against 0.75 × 100 V it fails, and the classic snubber sizing is offered."""
    design = _variant(tmp_path, "sic_gate_drive", _unsnubbed)
    result = check(design, catalog=catalog, today=TODAY)
    d1 = _finding(result, "D1", "voltage")
    assert d1["steady"] == pytest.approx(16 / 0.7297 * 1 + 18.0, rel=0.02)  # Vin_max/n + Vout (§2.2)
    assert d1["stress"] == pytest.approx(2 * d1["steady"] + 0.75, rel=0.01)  # undamped: the full step again
    assert d1["dominant"] == "leakage ring" and d1["status"] == "fail"
    assert "classic sizing" in d1["detail"] and "Rs ≈" in d1["detail"]


def test_snubbed_gate_drive_rectifier_and_its_snubber(catalog):
    result = check(SAMPLES / "sic_gate_drive" / "design.toml", catalog=catalog, today=TODAY)
    d1 = _finding(result, "D1", "voltage")
    assert d1["dominant"] == "snubbed ring" and d1["status"] in ("pass", "warn")
    assert d1["steady"] < d1["stress"] < 2 * d1["steady"]
    r7 = _finding(result, "R7", "power")
    # Cs·V²·fs is the floor of the resistor's power (the ring energy comes on top): 220 pF, V_R + Vf.
    fs = next(c["fsw"] for c in result.corners if c["id"] == r7["corner"].split("@")[0])
    floor = 220e-12 * (d1["steady"] + 0.75) ** 2 * fs
    assert floor < r7["stress"] < 1.5 * floor
    c10 = _finding(result, "C10", "voltage")
    assert c10["stress"] == pytest.approx(d1["stress"], rel=0.05)


def test_measured_peak_replaces_the_model(catalog, tmp_path):
    design = _variant(tmp_path, "sic_gate_drive", lambda s: s + (
        '\n[[measured]]\nref = "D1"\nparameter = "voltage"\nvalue = "58 V"\n'
        'note = "bench, 16 V input, current limit, 500 MHz probe at the diode (demo)"\n'))
    result = check(design, catalog=catalog, today=TODAY)
    d1 = _finding(result, "D1", "voltage")
    assert (d1["stress"], d1["measured"], d1["corner"]) == (58.0, True, "measured")
    assert "500 MHz probe" in d1["detail"] and "the model gave" in d1["detail"]
    assert d1["utilization"] == pytest.approx(58.0 / 75.0)


def test_alternatives_are_rechecked_against_the_peak(catalog):
    """Battery monitor D1 (50 V) fails on its steady 45 V already; the 100 V part that the steady
    value would endorse rings to about 80 V against its 80 V limit, so only 150 V and 200 V parts
    are offered."""
    result = check(SAMPLES / "battery_monitor_48v" / "design.toml", catalog=catalog, today=TODAY)
    d1 = _finding(result, "D1", "voltage")
    offered = {a["part_number"] for a in d1["alternatives"]}
    assert offered and "DU-100-2A-SMB" not in offered
    assert offered <= {"DU-150-2A-SMB", "DU-200-2A-SMB"}


def test_report_shows_steady_and_peak(catalog):
    from partcheck.report.html import render_html

    result = check(SAMPLES / "sic_gate_drive" / "design.toml", catalog=catalog, today=TODAY)
    html = render_html(result)
    assert "snubbed ring" in html and "steady" in html
    ring = result.waveforms["rectifier_ring:+18V"]
    assert ring["unit"] == "V" and max(ring["y"]) == pytest.approx(_finding(result, "D1", "voltage")["stress"], rel=0.01)
    assert "D1 reverse voltage after turn-on" in html


def test_default_secondary_leakage_is_stated(catalog):
    result = check(SAMPLES / "battery_monitor_48v" / "design.toml", catalog=catalog, today=TODAY)
    (text,) = [a for a in result.assumptions if a.startswith("output 15V: secondary leakage")]
    assert f"{ringing.default_secondary_leakage(3e-6, 2.0) * 1e9:.3g} nH" in text


def test_drain_peak_parts_and_avalanche(catalog):
    """sic_gate_drive with its former 60 V switch pinned: the drain peak (Vin + Zener level at
    tolerance and temperature + forward recovery + clamp-loop ring) passes 60 V, so the finding
    says avalanche, with E = ½·Llk·Ipk²·V_BR/(V_BR − Vr) per event against the catalog's e_ar."""
    from partcheck.stress.clamp import avalanche_energy

    result = check(SAMPLES / "sic_gate_drive" / "design.toml", catalog=catalog, today=TODAY,
                   pins={"Q1": "SW-N060-R030-D33"})
    q1 = _finding(result, "Q1", "voltage")
    assert q1["status"] == "fail" and q1["stress"] > 60.0
    assert q1["steady"] < q1["stress"] and q1["dominant"] in ("clamp-loop inductance", "forward recovery")
    assert "AVALANCHE" in q1["detail"] and "repetitive e_ar rating 3.6 mJ" in q1["detail"]
    corner = next(c for c in result.corners if c["id"] == q1["corner"].split("@")[0])
    energy = avalanche_energy(0.8e-6, corner["roles"]["switch"]["i_peak"], 60.0 - corner["vin"],
                              corner["roles"]["switch"]["v_reflected"])
    assert energy > 0 and " per event" in q1["detail"]
