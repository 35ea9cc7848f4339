"""What to order instead: filtering and ranking candidates with a fake stress re-run."""

from __future__ import annotations

from dataclasses import dataclass

import pytest

from partcheck.rules.alternatives import compatible_value, is_approved, rank_alternatives
from partcheck.rules.evaluate import Finding


@dataclass(frozen=True)
class Part:
    part_number: str
    category: str = "capacitor"
    subtype: str | None = "ceramic"
    status: str | None = None
    package: str | None = "1206"
    capacitance: float | None = 10e-6
    tolerance: float | None = 0.10
    resistance: float | None = None
    v_rated: float | None = 25.0
    description: str = ""


def finding(parameter: str, utilization: float, status: str | None = None) -> Finding:
    if status is None:
        status = "fail" if utilization > 1 else ("warn" if utilization > 0.9 else "pass")
    return Finding(refs=("C5",), part_number="x", role="output_cap", parameter=parameter, stress=1.0, rating=1.0,
                   limit=1.0, utilization=utilization, margin=1 - utilization, corner="c", status=status, rule="r",
                   source="s")


FAILING = Part("CC-10U-25V-1206", v_rated=25.0)

# the fake stress re-run: utilisation of voltage and capacitance per candidate
RESULTS = {
    "CC-10U-50V-1206": [finding("voltage", 0.375), finding("capacitance", 0.80)],  # min margin 0.20 (capacitance)
    "CC-10U-100V-1206": [finding("voltage", 0.19), finding("capacitance", 0.70)],  # 0.30
    "CC-10U-35V-1206": [finding("voltage", 0.54), finding("capacitance", 1.05)],  # fails after DC bias
    "CC-10U-63V-1206": [finding("voltage", 0.30), finding("capacitance", 0.92)],  # warn: 0.08, kept
    "CC-10U-50V-1210": [finding("voltage", 0.375), finding("capacitance", 0.50)],  # other package, 0.50
    "CC-11U-50V-1206": [finding("voltage", 0.375), finding("capacitance", 0.75)],  # 11 µF: within ±10 %
}


def run(part):
    run.calls.append(part.part_number)
    return RESULTS[part.part_number]


CANDIDATES = [
    Part("CC-10U-50V-1206", v_rated=50.0, description="10 µF 50 V X7R 1206"),
    Part("CC-10U-100V-1206", v_rated=100.0),
    Part("CC-10U-35V-1206", v_rated=35.0),
    Part("CC-10U-63V-1206", v_rated=63.0),
    Part("CC-10U-50V-1210", v_rated=50.0, package="1210"),
    Part("CC-11U-50V-1206", v_rated=50.0, capacitance=11e-6),
    Part("CC-22U-50V-1206", v_rated=50.0, capacitance=22e-6),  # outside tolerance
    Part("CC-10U-16V-1206", v_rated=16.0),  # lower voltage rating
    Part("CC-10U-50V-OBS", v_rated=50.0, status="obsolete"),  # not approved
    Part("CF-10U-50V", subtype="film", v_rated=50.0),  # other subtype
    Part("CC-10U-25V-1206", v_rated=25.0),  # the failing part itself
]


def test_ranked_by_smallest_margin_same_package_first():
    run.calls = []
    alts = rank_alternatives(FAILING, CANDIDATES, run)
    assert [(a.part_number, round(a.min_margin, 3), a.worst_parameter) for a in alts] == [
        ("CC-10U-100V-1206", 0.30, "capacitance"),
        ("CC-11U-50V-1206", 0.25, "capacitance"),
        ("CC-10U-50V-1206", 0.20, "capacitance"),
    ]
    # only the filtered candidates were re-run
    assert sorted(run.calls) == sorted(["CC-10U-50V-1206", "CC-10U-100V-1206", "CC-10U-35V-1206",
                                        "CC-10U-63V-1206", "CC-10U-50V-1210", "CC-11U-50V-1206"])
    assert alts[2].description == "10 µF 50 V X7R 1206"
    assert alts[0].to_dict() == {"part_number": "CC-10U-100V-1206", "description": "", "min_margin": pytest.approx(0.3),
                                 "worst_parameter": "capacitance", "package": "1206", "same_package": True}


def test_limit_and_warn_candidates():
    run.calls = []
    alts = rank_alternatives(FAILING, CANDIDATES, run, limit=10)
    assert [a.part_number for a in alts] == ["CC-10U-100V-1206", "CC-11U-50V-1206", "CC-10U-50V-1206",
                                             "CC-10U-63V-1206"]


def test_other_package_only_when_no_same_package_part_passes():
    run.calls = []
    only_other = [c for c in CANDIDATES if c.part_number in ("CC-10U-35V-1206", "CC-10U-50V-1210")]
    alts = rank_alternatives(FAILING, only_other, run)
    assert [(a.part_number, a.same_package, a.package) for a in alts] == [("CC-10U-50V-1210", False, "1210")]


def test_candidates_with_unassessed_or_no_findings_are_dropped():
    parts = [Part("A", v_rated=50.0), Part("B", v_rated=50.0)]
    results = {"A": [finding("voltage", 0.3), finding("capacitance", 0.0, status="not_assessed")], "B": []}
    assert rank_alternatives(FAILING, parts, lambda p: results[p.part_number]) == []


def test_switches_and_diodes_need_no_value_match():
    fail = Part("DS-60V", category="diode", subtype="schottky", capacitance=None, tolerance=None)
    cands = [Part("DS-100V", category="diode", subtype="schottky", capacitance=None),
             Part("DU-100V", category="diode", subtype="ultrafast", capacitance=None)]
    alts = rank_alternatives(fail, cands, lambda p: [finding("voltage", 0.6)])
    assert [a.part_number for a in alts] == ["DS-100V"]


def test_value_compatibility_rules():
    r = Part("R", category="resistor", subtype="thick_film", capacitance=None, resistance=10e3, tolerance=0.01)
    assert compatible_value(r, Part("R2", category="resistor", resistance=10.1e3, capacitance=None))
    assert not compatible_value(r, Part("R3", category="resistor", resistance=10.2e3, capacitance=None))
    no_tol = Part("C", tolerance=None)  # ±20 % assumed for capacitors
    assert compatible_value(no_tol, Part("C2", capacitance=12e-6))
    assert not compatible_value(no_tol, Part("C3", capacitance=12.1e-6))
    assert is_approved(Part("x", status=None)) and is_approved(Part("x", status="Approved"))
    assert not is_approved(Part("x", status="restricted"))
