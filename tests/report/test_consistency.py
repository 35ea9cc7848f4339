"""The report agrees with itself and with the result: every value the page shows twice (bank
totals, ratings, peaks, utilisations, the headline counts) is compared with the result's data,
on the three demo scenarios (the ``demo_results`` fixture) and on edited copies of them."""

from __future__ import annotations

import copy
import re

import pytest

from partcheck.report import render_html
from partcheck.report.plots import format_utilisation
from partcheck.units import format_quantity

SCENARIOS = ("remote_io_24v", "battery_monitor_48v", "sic_gate_drive")


def _section(page, ident):
    return next(n for n in page.root.iter("section") if n.attrs.get("id") == ident)


def _table(node):
    """(headings, rows of cell texts) of a table node."""
    heads = [th.text() for th in node.iter("th")]
    rows = [[td.text() for td in tr.iter("td")] for tr in node.iter("tr")]
    return heads, [r for r in rows if r]


def _svg_texts(svg):
    return [t.text() for t in svg.iter("text")]


@pytest.fixture(params=SCENARIOS)
def demo(request, demo_results, html_parse):
    result, html = demo_results[request.param]
    return result, html_parse(html)


def test_bank_caption_total_is_the_bank_current(demo):
    result, page = demo
    figures = [f for f in _section(page, "plots").iter("figure") if f.find_all("span", class_="bank-total")]
    assert len(figures) == len(result.bank_split) > 0
    for (name, bank), fig in zip(result.bank_split.items(), figures):
        caption = next(fig.iter("figcaption")).text()
        assert caption.startswith(f"{name} at corner {bank['corner']},")
        total = fig.find_all("span", class_="bank-total")[0].text()
        assert total == format_quantity(bank["i_bank_rms"], "A")


def test_bank_table_currents_and_ratings_are_the_findings(demo):
    result, page = demo
    plots = _section(page, "plots")
    tables = [t for t in plots.iter("table") if "rated ripple (as checked)" in _table(t)[0]]
    assert len(tables) == len(result.bank_split)
    ripple = {f["refs"][0]: f for f in result.findings if f["parameter"] == "ripple_current"}
    checked = 0
    for bank, table in zip(result.bank_split.values(), tables):
        heads, rows = _table(table)
        col = {h: i for i, h in enumerate(heads)}
        for cap, row in zip(bank["caps"], rows):
            assert row[col["ref"]] == cap["ref"]
            assert row[col["ripple RMS"]] == format_quantity(cap["i_rms"], "A")
            f = ripple.get(cap["ref"])
            if f is None:
                assert row[col["rated ripple (as checked)"]] == "—"
            elif f["corner"] == bank["corner"]:
                # the rating the finding used (after its corrections), and the stress it checked
                assert row[col["rated ripple (as checked)"]] == format_quantity(f["rating"], "A")
                assert row[col["ripple RMS"]] == format_quantity(f["stress"], "A")
                checked += 1
            else:
                assert row[col["rated ripple (as checked)"]] == f"— (finding at {f['corner']})"
    assert checked == sum(1 for f in ripple.values()
                          if any(f["refs"][0] in {c["ref"] for c in b["caps"]} and f["corner"] == b["corner"]
                                 for b in result.bank_split.values()))


def test_waveform_peaks_agree_with_the_corner_table(demo):
    result, page = demo
    heads, rows = _table(next(_section(page, "corners").iter("table")))
    by_corner = {r[0]: dict(zip(heads, r)) for r in rows}
    panels = [s for s in _section(page, "plots").iter("svg") if "at corner" in (s.attrs.get("aria-label") or "")
              and any(t.startswith(("peak ", "waveform peak ")) for t in _svg_texts(s))]
    current = {k: w for k, w in result.waveforms.items() if w.get("unit", "A") == "A"}
    assert current
    compared = 0
    for name, wave in current.items():
        panel = next(p for p in panels if p.attrs["aria-label"] == f"{wave['label']} at corner {wave['corner']}")
        texts = _svg_texts(panel)
        role = name if f"{name} I peak" in heads else name.split(":")[0]
        table_peak = by_corner[wave["corner"]][f"{role} I peak"]
        drawn = format_quantity(max(wave["y"], key=abs), "A")
        if any(t.startswith(f"peak {drawn};") for t in texts):
            assert drawn == table_peak, (name, drawn, table_peak)  # one peak, the table's
        else:
            # the sketch stays below the bound the corner table checks: both are stated, the table's dashed
            assert any(t.startswith(f"waveform peak {drawn};") for t in texts)
            assert f"checked peak {table_peak}" in texts
        compared += 1
    assert compared == len(current)


def test_switch_waveform_peak_is_the_finding_and_table_peak(demo):
    result, page = demo
    wave = result.waveforms["switch"]
    corner = next(c for c in result.corners if c["id"] == wave["corner"])
    assert max(wave["y"]) == pytest.approx(corner["roles"]["switch"]["i_peak"], rel=1e-9)


def test_cards_tables_and_chart_show_one_utilisation_and_rating(demo):
    result, page = demo
    heads, rows = _table(next(_section(page, "findings").iter("table")))
    col = {h: i for i, h in enumerate(heads)}
    table = {(r[col["refs"]], r[col["parameter"]], r[col["corner"]]): r for r in rows}
    for card in _section(page, "attention").iter("article"):
        nums = {dt.text(): dd.text() for div in card.iter("div") for dt, dd in zip(div.iter("dt"), div.iter("dd"))}
        if "utilisation" not in nums:
            continue
        head = next(card.iter("header"))
        what = head.find_all("span", class_="what")
        refs, parameter = what[0].text(), what[1].text()
        row = table[(refs, parameter, nums["worst corner"])]
        assert row[col["utilisation"]] == nums["utilisation"]
        assert row[col["rating"]] == nums["rating"]
        assert row[col["limit"]] == nums["limit (at most)" if "limit (at most)" in nums else "limit (at least)"]
    for f in result.findings:
        if f.get("utilization") is None:
            continue
        text = format_utilisation(f["utilization"])
        assert any(r[col["utilisation"]] == text for r in rows)
        if f["status"] == "fail" and f["utilization"] > 1:
            assert float(text.split()[0].lstrip("> ")) > 100 or text == "> 100 %"


def test_headline_counts_parts_and_findings(demo):
    result, page = demo
    tally = next(n for n in page.root.iter("dd") if n.attrs.get("class") == "tally").text()
    parts_text, findings_text = tally.split("; ")
    assert parts_text.startswith(f"{len(result.parts)} parts")
    assert findings_text.startswith(f"{len(result.findings)} findings")
    for text, rows in ((parts_text, result.parts), (findings_text, result.findings)):
        for n, word in re.findall(r"(\d+) ([a-z][a-z ()]*?)(?=,|$)", text.split(": ", 1)[1]):
            status = {"not assessed": "not_assessed", "info (no limit)": "info", "not fitted": "not_fitted",
                      "out of scope": "out_of_scope"}.get(word, word)
            assert int(n) == sum(1 for r in rows if r["status"] == status), (text, word)


def test_sweep_says_checked_not_worst(demo):
    result, page = demo
    for series in result.sweep["series"]:
        panel = next(s for s in _section(page, "plots").iter("svg")
                     if s.attrs.get("aria-label") == f"{series['label']} against input voltage")
        texts = _svg_texts(panel)
        assert not any("worst" in t for t in texts)
        assert any(t.startswith("highest in the sweep ") for t in texts)
        if series.get("limit") and series["limit"] > 3 * max(series["values"]):
            assert not any(ln.attrs.get("stroke-dasharray") for ln in panel.iter("line"))
            assert any("off scale" in t for t in texts)


# --------------------------------------------------------------------------------------------
# Edited copies: the cases the demos do not reach
# --------------------------------------------------------------------------------------------


def test_bank_corner_other_than_the_worst_finding_is_said(demo_results, html_parse):
    result = copy.deepcopy(demo_results["battery_monitor_48v"][0])
    bank = result.bank_split["output_cap"]
    f = next(f for f in result.findings if f["parameter"] == "ripple_current" and f["refs"] == ["C10"])
    bank["corner"] = "vin_max-full"  # the split recorded elsewhere than C10's finding
    page = html_parse(render_html(result))
    fig = [fig for fig in _section(page, "plots").iter("figure") if fig.find_all("span", class_="bank-total")][1]
    caption = next(fig.iter("figcaption")).text()
    assert f"is at corner {f['corner']}, where the split is not recorded" in caption
    table = [t for t in _section(page, "plots").iter("table") if "rated ripple (as checked)" in _table(t)[0]][1]
    heads, rows = _table(table)
    c10 = next(r for r in rows if r[0] == "C10")
    assert c10[heads.index("rated ripple (as checked)")] == f"— (finding at {f['corner']})"
    assert format_quantity(f["rating"], "A") not in " ".join(c10)


def test_fail_just_over_the_limit_never_reads_like_a_warn_at_it(demo_results, html_parse):
    result = copy.deepcopy(demo_results["battery_monitor_48v"][0])
    fail = next(f for f in result.findings if f["status"] == "fail" and f["parameter"] == "voltage")
    warn = next(f for f in result.findings if f["status"] == "warn")
    fail["utilization"], warn["utilization"] = 1.0004, 1.0
    html = render_html(result)
    heads, rows = _table(next(_section(html_parse(html), "findings").iter("table")))
    col = {h: i for i, h in enumerate(heads)}
    shown = {r[col["status"]].split()[-1]: r[col["utilisation"]] for r in rows
             if r[col["refs"]] in (", ".join(fail["refs"]), ", ".join(warn["refs"]))
             and r[col["utilisation"]].startswith("100")}
    assert shown["FAIL"] == "100.04 %" and shown["WARN"] == "100 %"


def test_one_spelling_in_the_page(demo_results):
    """Prose says "utilisation" (DEVELOPERS.md, Report); "utilization" is the JSON key only."""
    for _, html in demo_results.values():
        assert "utilisation" in html and not re.search(r"utiliz", html, re.IGNORECASE)
