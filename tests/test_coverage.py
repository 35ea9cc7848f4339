"""Every stress the engine computes reaches the reviewer, and what no model covers says so.

Built on the invented demo scenarios (sample_boms/README.md); each regression test changes one
thing in a copy of a demo and asserts the new finding and its numbers.
"""

from __future__ import annotations

import datetime as dt
import shutil
from pathlib import Path

import pytest

from partcheck import partstress
from partcheck.catalog.seed import demo_catalog
from partcheck.errors import DesignError
from partcheck.pipeline import check
from partcheck.rules.evaluate import StressItem, evaluate
from partcheck.rules.policy import loads_policy
from partcheck.stress import semiconductors as semi

REPO = Path(__file__).resolve().parents[1]
SAMPLES = REPO / "sample_boms"
TODAY = dt.date(2026, 12, 1)
SCENARIOS = ("remote_io_24v", "battery_monitor_48v", "sic_gate_drive")


@pytest.fixture(scope="module")
def catalog(tmp_path_factory):
    cat = demo_catalog(tmp_path_factory.mktemp("catalog"))
    yield cat
    cat.close()


def _variant(tmp_path: Path, scenario: str, edit=None, policy_edit=None) -> Path:
    work = tmp_path / scenario
    shutil.copytree(SAMPLES / scenario, work)
    design = work / "design.toml"
    if edit:
        design.write_text(edit(design.read_text(encoding="utf-8")), encoding="utf-8")
    if policy_edit:
        policy = work / "policy.toml"
        policy.write_text(policy_edit(policy.read_text(encoding="utf-8")), encoding="utf-8")
    return design


def _finding(result, ref: str, parameter: str) -> dict:
    hits = [f for f in result.findings if ref in f["refs"] and f["parameter"] == parameter]
    assert len(hits) == 1, hits
    return hits[0]


@pytest.mark.parametrize("scenario", SCENARIOS)
def test_no_computed_stress_is_missing_from_the_result(scenario, catalog, monkeypatch):
    """Walk every stress item the part models produce and find each among the findings."""
    seen: list[StressItem] = []
    role_items, extra_items = partstress.role_items, partstress.extra_items

    def recording_role(*args, **kwargs):
        items = role_items(*args, **kwargs)
        seen.extend(items)
        return items

    def recording_extra(*args, **kwargs):
        items = extra_items(*args, **kwargs)
        seen.extend(items)
        return items

    monkeypatch.setattr(partstress, "role_items", recording_role)
    monkeypatch.setattr(partstress, "extra_items", recording_extra)
    result = check(SAMPLES / scenario / "design.toml", catalog=catalog, today=TODAY)
    keys = {(tuple(f["refs"]), f["part_number"], f["role"], f["parameter"]) for f in result.findings}
    fitted = {(r, row["part_number"]) for row in result.parts for r in row["refs"]}
    # Alternatives re-run the models with candidate parts: only the BOM's own parts count here.
    computed = {(tuple(i.refs), i.part_number, i.role, i.parameter) for i in seen
                if all((r, i.part_number) in fitted for r in i.refs)}
    assert computed, "the models produced no stress items"
    missing = computed - keys
    # A stress the model could not compute, replaced by the designer's [[extra_stress]] figure, is the
    # one allowed gap: the extra item carries the same ref and parameter.
    extra = {(r, p) for (refs, _pn, role, p) in keys if role == "extra" for r in refs}
    missing = {k for k in missing if not any((r, k[3]) in extra for r in k[0])}
    assert not missing, sorted(missing)


def test_unlimited_stress_is_an_info_finding_with_numbers(catalog, tmp_path):
    """A policy without an electrolytic temperature rule: the hot spot is still shown, as info.

    Battery monitor C10 at the vin_min-ilim corner carries 0.486 A; with the consistent frequency
    reference the rise is ΔT0·(I/(I0·Kf))² = 5 K·(0.486/(0.12·1.5))² = 36.4 K over 60 °C: 96.4 °C.
    """
    design = _variant(tmp_path, "battery_monitor_48v", policy_edit=lambda s: s + (
        "\n[rules.electrolytic-temperature]\nenabled = false\n[rules.capacitor-temperature]\nenabled = false\n"))
    result = check(design, catalog=catalog, today=TODAY)
    f = _finding(result, "C10", "temperature")
    assert f["status"] == "info"
    i_rms = next(row for row in result.part_stresses if row["refs"] == ["C10"])["stresses"]["ripple_current"]
    assert 0.47 < i_rms < 0.5
    assert f["stress"] == pytest.approx(60 + 5 * (i_rms / 0.18) ** 2, abs=0.05)
    assert f["corner"] == "vin_min-ilim"  # the worst corner of an unlimited stress is its largest value
    assert result.counts()["info"] >= 1


def test_lifecycle_is_a_finding_with_alternatives_and_can_warn(catalog, tmp_path):
    from tests.test_silent_pass import _catalog_with  # the CLI-imported edited seed

    db = _catalog_with(tmp_path, "CEH-470-63-8x11.5", status="obsolete")
    from partcheck.catalog.store import open_catalog

    edited = open_catalog(db)
    try:
        result = check(SAMPLES / "remote_io_24v" / "design.toml", catalog=edited, today=TODAY)
        f = _finding(result, "C1", "lifecycle")
        assert f["status"] == "fail" and "obsolete" in f["detail"]
        assert f["alternatives"], "an obsolete part is offered approved alternatives"
        assert all(a["part_number"] != "CEH-470-63-8x11.5" for a in f["alternatives"])
        assert result.verdict == "fail"
        warn = _variant(tmp_path, "remote_io_24v", policy_edit=lambda s: s + '\n[lifecycle]\nobsolete = "warn"\n')
        relaxed = check(warn, catalog=edited, today=TODAY)
        assert _finding(relaxed, "C1", "lifecycle")["status"] == "warn"
    finally:
        edited.close()


def test_role_without_a_model_is_not_assessed_not_absent():
    """Every role of the design file has a model today; the rule still holds for one that has none."""
    from types import SimpleNamespace

    from partcheck import coverage

    part = SimpleNamespace(part_number="X-1", category="resistor")
    assignment = coverage.Assignment(roles={"future_role": ("R9",), "switch": ("Q1",)},
                                     records={"R9": part, "Q1": part}, line_of={}, findings=[])
    (f,) = coverage.unmodelled_role_findings(assignment, partstress.modelled_roles())
    assert (f.refs, f.status, f.role) == (("R9",), "not_assessed", "future_role")
    assert "no stress model" in f.detail


def test_incomplete_snubber_is_not_assessed(catalog, tmp_path):
    design = _variant(tmp_path, "remote_io_24v", lambda s: s.replace('snubber = ["R8", "C10"]', 'snubber = ["R8"]'))
    result = check(design, catalog=catalog, today=TODAY)
    (f,) = [f for f in result.findings if f["refs"] == ["R8"] and f["role"] == "snubber"]
    assert f["status"] == "not_assessed" and "one resistor" in f["detail"]


def test_category_that_does_not_fit_the_role_is_an_error(catalog, tmp_path):
    design = _variant(tmp_path, "remote_io_24v", lambda s: s.replace('current_sense = "R1"', 'current_sense = "C8"'))
    with pytest.raises(DesignError, match=r"C8 is .*a capacitor in the catalog, but role current_sense takes resistor"):
        check(design, catalog=catalog, today=TODAY)


def test_transformer_flux_density_against_saturation(catalog):
    """Remote I/O T1: B = Lm·Ipk/(Np·Ae) = 27 µH × Ipk / (14 × 31 mm²) at the current-limit corner."""
    result = check(SAMPLES / "remote_io_24v" / "design.toml", catalog=catalog, today=TODAY)
    f = _finding(result, "T1", "flux_density")
    ipk = max(c["roles"]["transformer"]["i_peak"] for c in result.corners if "transformer" in c["roles"])
    assert f["stress"] == pytest.approx(27e-6 * ipk / (14 * 31e-6), rel=1e-6)
    assert f["rating"] is not None and f["status"] in ("pass", "warn")
    insulation = _finding(result, "T1", "insulation")
    assert insulation["status"] == "waived"  # the demo records who reviewed it


def test_extra_stress_above_rating_fails(catalog, tmp_path):
    design = _variant(tmp_path, "remote_io_24v", lambda s: s.replace('power = "15 mW"\nnote = "gate pull-down"',
                                                                     'power = "5 W"\nnote = "gate pull-down"'))
    result = check(design, catalog=catalog, today=TODAY)
    f = _finding(result, "R7", "power")
    assert f["status"] == "fail" and f["stress"] == pytest.approx(5.0)


def test_stress_not_computed_is_not_assessed_even_without_a_rule():
    policy = loads_policy('name = "empty"\n')
    item = StressItem(refs=("T1",), part_number="X", role="transformer", category="magnetic", subtype="transformer",
                      dielectric=None, parameter="temperature", stress=None, rating=None, corner="c",
                      detail="transformer temperature not modelled yet")
    (f,) = evaluate([item], policy, today=TODAY)
    assert f.status == "not_assessed" and "not modelled" in f.detail


def test_gate_resistor_power_energy_split():
    """Qg·Vgs·fs split by resistance: 10 nC × 10 V × 100 kHz = 10 mW, of which 10/(10 + 5) in Rg.

    References: energy to charge a capacitance through a resistance is ½CV², the same again on
    discharge, all of it in the loop resistances in proportion (circuit theory, common practice).
    """
    assert semi.gate_resistor_power(10e-9, 10.0, 100e3, 10.0, 5.0) == pytest.approx(10e-3 * 10 / 15)
    assert semi.gate_resistor_power(10e-9, 10.0, 100e3, 0.0, 5.0) == 0.0


def test_gate_drive_from_mapped_resistor_is_weaker_than_the_driver():
    on, off, vgs, how = partstress.gate_drive({}, 22.0)
    assert vgs == partstress.DEFAULT_GATE_VOLTAGE_V
    assert on == pytest.approx((10.0 - 4.5) / 27.0) and off == pytest.approx(4.5 / 27.0)
    assert "22 Ω" in how
    on, off, _, how = partstress.gate_drive({}, None)
    assert on == off == partstress.DEFAULT_GATE_CURRENT_A and "no gate resistor" in how


def test_efficiency_used_is_never_above_the_modelled_one(catalog):
    """Remote I/O: the modelled losses give a lower efficiency than the design's 85 % at low line;
    the primary currents at those corners are solved at the modelled figure (higher Ipk)."""
    from partcheck.stress import flyback

    design_path = SAMPLES / "remote_io_24v" / "design.toml"
    result = check(design_path, catalog=catalog, today=TODAY)
    ideal = {c.id: c for c in flyback.evaluate(design_path).corners}
    used = {c["id"]: c for c in result.corners}
    note = next(n for n in result.notes if n.startswith("primary currents solved at the modelled efficiency"))
    assert "vin_min-full" in note
    assert used["vin_min-full"]["roles"]["switch"]["i_peak"] > ideal["vin_min-full"].roles["switch"]["i_peak"]
    eff = next(n for n in result.notes if n.startswith("estimated efficiency"))
    assert "left out:" in eff and "core loss" in eff


def test_rule_naming_another_rating_column_is_honoured():
    """A capacitor temperature rule rated on life_temp (85 °C) instead of t_max (105 °C): the
    model's own rating (t_max) gives way to the column the rule names."""
    from types import SimpleNamespace

    policy = loads_policy('extends = "industrial"\n[rules.electrolytic-temperature]\noffset = "0 K"\n'
                          'rating = "life_temp"\nsource = "test"\nconfidence = "common practice"\n')
    part = SimpleNamespace(part_number="X", category="capacitor", subtype="aluminium_electrolytic",
                           dielectric=None, t_max=105.0, life_temp=85.0, tj_max=None, t_knee=None)
    out = partstress._Items(["C1"], part, "output_cap", policy)
    out.add("temperature", 90.0, "c", rating=part.t_max)
    (item,) = out.items
    assert item.rating == 85.0
    (f,) = evaluate(out.items, policy, today=TODAY)
    assert f.status == "fail" and f.limit == 85.0


def test_bom_reader_warnings_reach_the_terminal_and_the_report(catalog, tmp_path):
    from partcheck.report.html import render_html

    work = tmp_path / "bm"
    shutil.copytree(SAMPLES / "battery_monitor_48v", work)
    bom = work / "bom.csv"
    bom.write_text(bom.read_text(encoding="utf-8-sig").replace("R9;1;10R;", "R9;2;10R;"), encoding="utf-8")
    result = check(work / "design.toml", catalog=catalog, today=TODAY)
    (warning,) = [w for w in result.bom_warnings if "R9" in w]
    assert warning.startswith("BOM line ") and "quantity says 2" in warning
    assert "quantity says 2" in render_html(result)


def test_out_of_scope_parts_are_listed_apart_never_passed(catalog, tmp_path):
    """A real BOM carries a controller IC and connectors: unmatched (FAIL) until the design declares
    them out of scope with a reason; then they are counted as out_of_scope, not as passes."""
    work = tmp_path / "rio"
    shutil.copytree(SAMPLES / "remote_io_24v", work)
    bom = work / "bom.csv"
    bom.write_text(bom.read_text(encoding="utf-8") + "U1,1,,Flyback controller IC primary-side,CTRL-PSR-6,SOT-23-6\n"
                   "J1,1,,Terminal block 2-pole 5.08 mm,,TB2\n", encoding="utf-8")
    before = check(work / "design.toml", catalog=catalog, today=TODAY)
    assert before.verdict == "fail"
    assert {tuple(f["refs"]) for f in before.findings if f["status"] == "unmatched"} == {("U1",), ("J1",)}
    design = work / "design.toml"
    design.write_text(design.read_text(encoding="utf-8") + (
        '\n[[out_of_scope]]\nrefs = ["U1"]\nreason = "controller: supply and pin voltages reviewed on its data sheet"\n'
        '\n[[out_of_scope]]\nrefs = ["J1"]\nreason = "field connector: rated by the mechanical design review"\n'),
        encoding="utf-8")
    after = check(design, catalog=catalog, today=TODAY)
    assert after.verdict == "pass"
    scoped = [f for f in after.findings if f["status"] == "out_of_scope"]
    assert {tuple(f["refs"]) for f in scoped} == {("U1",), ("J1",)}
    assert after.counts()["out_of_scope"] == 2 and after.counts()["pass"] == before.counts()["pass"]
    assert "controller: supply and pin voltages" in next(f["detail"] for f in scoped if f["refs"] == ["U1"])


def test_out_of_scope_contradictions_and_typos(catalog, tmp_path):
    design = _variant(tmp_path, "remote_io_24v", lambda s: s + (
        '\n[[out_of_scope]]\nrefs = ["Q1"]\nreason = "x"\n'))
    with pytest.raises(DesignError, match="Q1 is mapped to role switch and declared out of scope"):
        check(design, catalog=catalog, today=TODAY)
    typo = _variant(tmp_path / "b", "remote_io_24v", lambda s: s + (
        '\n[[out_of_scope]]\nrefs = ["U9"]\nreason = "controller"\n'))
    result = check(typo, catalog=catalog, today=TODAY)
    (f,) = [f for f in result.findings if f["refs"] == ["U9"]]
    assert f["status"] == "unmatched" and "declared out of scope but is not on the BOM" in f["detail"]
