"""Waivers: parsing the design file's [[waiver]] tables and applying them to findings."""

from __future__ import annotations

import datetime as dt
import tomllib

import pytest

from partcheck.errors import PolicyError
from partcheck.rules.evaluate import StressItem, evaluate, unused_waivers, verdict
from partcheck.rules.policy import load_preset
from partcheck.rules.waivers import Waiver, parse_waivers

TODAY = dt.date(2026, 12, 1)
POLICY = load_preset("industrial")

DESIGN = """
[[waiver]]
ref = "D1"
parameter = "voltage"
reason = "82 % of VRRM only during the 40 V surge, < 100 ms"
approved_by = "reliability board"
date = 2026-03-02
expires = 2027-03-02

[[waiver]]
ref = "C5"
parameter = "capacitance"
reason = "bank has 3x the needed capacitance"
approved_by = "A. Reviewer"
date = "2025-01-10"
expires = "2026-01-10"
"""


def rectifier(**kw) -> StressItem:
    base = dict(refs=("D1",), part_number="DS-60V", role="rectifier", category="diode", subtype="schottky",
                dielectric=None, parameter="voltage", stress=49.5, rating=60.0, corner="surge")
    base.update(kw)
    return StressItem(**base)


def test_parse_from_toml_dates_and_iso_strings():
    waivers = parse_waivers(tomllib.loads(DESIGN)["waiver"], file="design.toml")
    assert waivers[0] == Waiver("D1", "voltage", "82 % of VRRM only during the 40 V surge, < 100 ms",
                                "reliability board", dt.date(2026, 3, 2), dt.date(2027, 3, 2))
    assert waivers[1].date == dt.date(2025, 1, 10) and waivers[1].expires == dt.date(2026, 1, 10)
    assert waivers[1].expired(TODAY) and not waivers[0].expired(TODAY)
    assert not Waiver("X", "power", "r", "a", dt.date(2026, 1, 1), TODAY).expired(TODAY)  # valid on its last day
    assert parse_waivers(None) == []


def test_valid_waiver_keeps_the_numbers():
    waivers = parse_waivers(tomllib.loads(DESIGN)["waiver"])
    (f,) = evaluate([rectifier()], POLICY, waivers=waivers, today=TODAY)
    assert f.status == "waived"
    assert (f.limit, f.utilization) == (pytest.approx(45.0), pytest.approx(1.1))
    assert f.waiver is waivers[0]
    assert f.detail == ("was fail; waived by reliability board on 2026-03-02: "
                        "82 % of VRRM only during the 40 V surge, < 100 ms")
    assert f.to_dict()["waiver"]["approved_by"] == "reliability board"
    assert verdict([f], POLICY) == "pass"


def test_expired_waiver_fails():
    waivers = parse_waivers(tomllib.loads(DESIGN)["waiver"])
    cap = StressItem(refs=("C5",), part_number="CC-10U", role="output_cap", category="capacitor", subtype="ceramic",
                     dielectric="X7R", parameter="capacitance", stress=4e-6, rating=10e-6, corner="vin_max-full")
    (f,) = evaluate([cap], POLICY, waivers=waivers, today=TODAY)
    assert f.status == "fail"
    assert f.utilization == pytest.approx(1.25)
    assert f.detail == ("waiver for C5 capacitance approved by A. Reviewer expired on 2026-01-10 "
                        "(was: bank has 3x the needed capacitance)")
    # the same waiver the day before it expired
    (f,) = evaluate([cap], POLICY, waivers=waivers, today=dt.date(2026, 1, 10))
    assert f.status == "waived"


def test_waiver_for_another_parameter_or_a_passing_finding_changes_nothing():
    waivers = [Waiver("D1", "temperature", "r", "a", dt.date(2026, 1, 1))]
    (f,) = evaluate([rectifier()], POLICY, waivers=waivers, today=TODAY)
    assert f.status == "fail" and f.waiver is None
    ok = [Waiver("D1", "voltage", "r", "a", dt.date(2026, 1, 1), dt.date(2026, 2, 1))]  # expired
    (f,) = evaluate([rectifier(stress=30.0)], POLICY, waivers=ok, today=TODAY)
    assert f.status == "pass"


def test_waiver_must_cover_every_ref_of_a_finding():
    waivers = [Waiver("D1", "voltage", "r", "a", dt.date(2026, 1, 1))]
    (f,) = evaluate([rectifier(refs=("D1", "D2"))], POLICY, waivers=waivers, today=TODAY)
    assert f.status == "fail"
    assert f.detail == "waiver does not cover D2"
    both = waivers + [Waiver("d2", "voltage", "r", "a", dt.date(2026, 1, 1))]  # refs compared case-insensitively
    (f,) = evaluate([rectifier(refs=("D1", "D2"))], POLICY, waivers=both, today=TODAY)
    assert f.status == "waived"


def test_unused_waivers_are_reported():
    waivers = [Waiver("D1", "voltage", "r", "a", dt.date(2026, 1, 1)), Waiver("D7", "voltage", "r", "a",
                                                                              dt.date(2026, 1, 1))]
    findings = evaluate([rectifier()], POLICY, waivers=waivers, today=TODAY)
    assert unused_waivers(findings, waivers) == [waivers[1]]


GOOD = {"ref": "D1", "parameter": "voltage", "reason": "r", "approved_by": "a", "date": "2026-01-01"}


@pytest.mark.parametrize(
    "change, message",
    [
        ({"parameter": "volts"}, ("design.toml, key 'waiver[0].parameter': unknown parameter 'volts' (did you mean "
         "'voltage'?); expected one of voltage, current_rms, current_peak, current_avg, power, temperature, "
         "ripple_current, capacitance, life, saturation, flux_density, lifecycle, insulation")),
        ({"approved": "x"}, ("design.toml, key 'waiver[0].approved': unknown waiver key 'approved' (did you mean "
         "'approved_by'?); expected ref, parameter, reason, approved_by, date, expires")),
        ({"reason": None}, ("design.toml, key 'waiver[0].reason': a waiver needs 'reason' (ref, parameter, reason, "
         "approved_by, date are required; expires is optional)")),
        ({"date": "1 March 2026"}, ("design.toml, key 'waiver[0].date': '1 March 2026' is not an ISO date; expected "
         "YYYY-MM-DD such as 2026-03-02")),
        ({"expires": "2025-12-31"}, ("design.toml, key 'waiver[0].expires': expires 2025-12-31 is before the "
         "approval date 2026-01-01")),
        ({"ref": 5}, "design.toml, key 'waiver[0].ref': 'ref' must be a non-empty string, got 5"),
    ],
)
def test_waiver_errors_name_the_key(change, message):
    entry = {**GOOD, **change}
    entry = {k: v for k, v in entry.items() if v is not None}
    with pytest.raises(PolicyError) as info:
        parse_waivers([entry], file="design.toml")
    assert str(info.value) == message


def test_second_waiver_is_counted_in_the_key():
    with pytest.raises(PolicyError) as info:
        parse_waivers([GOOD, {**GOOD, "parameter": "ripple"}], file="d.toml")
    assert info.value.key == "waiver[1].parameter"


# --------------------------------------------------------------------------------------------
# dates: a waiver cannot be approved after the check's date, nor expire before it was approved


def test_waiver_dated_in_the_future_is_refused():
    future = {"ref": "R5", "parameter": "voltage", "reason": "r", "approved_by": "a", "date": dt.date(2027, 1, 5)}
    with pytest.raises(PolicyError) as info:
        parse_waivers([GOOD, future], file="design.toml", today=TODAY)
    assert str(info.value) == ("design.toml, key 'waiver[1].date': waiver for R5 voltage is dated 2027-01-05, after "
                               "the check's date 2026-12-01: a waiver cannot be approved in the future")
    assert (info.value.file, info.value.key) == ("design.toml", "waiver[1].date")


def test_waiver_dated_on_the_checks_date_is_valid():
    (w,) = parse_waivers([{**GOOD, "date": "2026-12-01"}], today=TODAY)
    assert w.date == TODAY
    with pytest.raises(PolicyError):
        parse_waivers([{**GOOD, "date": "2026-12-02"}], today=TODAY)


def test_waiver_date_judged_against_today_by_default():
    tomorrow = dt.date.today() + dt.timedelta(days=1)
    with pytest.raises(PolicyError) as info:
        parse_waivers([{**GOOD, "date": tomorrow.isoformat()}], file="d.toml")
    assert f"after the check's date {dt.date.today().isoformat()}" in str(info.value)
    assert parse_waivers([{**GOOD, "date": dt.date.today().isoformat()}])[0].date == dt.date.today()


def test_expires_before_date_is_refused():
    with pytest.raises(PolicyError) as info:
        parse_waivers([{**GOOD, "date": "2026-06-01", "expires": "2026-05-31"}], file="d.toml", today=TODAY)
    assert str(info.value) == ("d.toml, key 'waiver[0].expires': expires 2026-05-31 is before the approval date "
                               "2026-06-01")
    # the same day is a one-day waiver
    (w,) = parse_waivers([{**GOOD, "date": "2026-06-01", "expires": "2026-06-01"}], today=TODAY)
    assert w.expires == w.date


def test_a_waiver_may_cover_the_lifecycle_finding():
    (w,) = parse_waivers([{**GOOD, "parameter": "lifecycle", "reason": "last-time buy of 5 000 pieces"}], today=TODAY)
    assert w.covers("d1", "lifecycle")
