"""The inline SVG generators: geometry, escaping, markers that do not rely on colour."""

from __future__ import annotations

import xml.etree.ElementTree as ET

import pytest

from partcheck.report import plots


def tree(svg: str) -> ET.Element:
    return ET.fromstring(svg)


@pytest.mark.parametrize(("lo", "hi", "count", "expected"), [
    (0.0, 1.0, 5, [0.0, 0.2, 0.4, 0.6, 0.8, 1.0]),
    (9.0, 16.0, 4, [8.0, 10.0, 12.0, 14.0, 16.0]),
    (0.0, 57.75, 4, [0.0, 20.0, 40.0, 60.0]),
    (0.0, 1.05, 5, [0.0, 0.25, 0.5, 0.75, 1.0, 1.25]),
])
def test_nice_ticks(lo, hi, count, expected):
    assert plots.nice_ticks(lo, hi, count) == pytest.approx(expected)


def test_axis_unit_picks_the_prefix():
    assert plots.axis_unit(8e-6, "s") == (pytest.approx(1e6), "µs")
    assert plots.axis_unit(0.41, "A") == (pytest.approx(1e3), "mA")
    assert plots.axis_unit(50.0, "V") == (1.0, "V")
    assert plots.axis_unit(2.35e-6, "F") == (pytest.approx(1e6), "µF")
    assert plots.axis_unit(0.9, "%") == (100.0, "%")
    assert plots.axis_unit(104.0, "degC") == (1.0, "°C")


def test_svg_writer_escapes_text_and_attributes():
    svg = plots.Svg(10, 10, label='a "label" <b>')
    svg.text(1, 2, "<script>alert(1)</script> & \"'")
    svg.el("rect", data_x='"><script>')
    out = str(svg)
    root = tree(out)
    assert root.attrib["aria-label"] == 'a "label" <b>'
    assert root.find("text").text == "<script>alert(1)</script> & \"'"
    assert root.find("rect").attrib["data-x"] == '"><script>'
    assert "<script>" not in out


def test_utilisation_bar_geometry():
    root = tree(plots.utilisation_bar(0.75, "pass", 0.9, width=152.0, height=22.0))
    rects = root.findall("rect")
    # background, warn band, bar: scale 0..150 % over 150 px starting at x = 1
    assert [r.attrib.get("fill") for r in rects] == ["#ffffff", "url(#pc-band)", "url(#pc-pass)"]
    band, bar = rects[1], rects[2]
    assert float(band.attrib["x"]) == pytest.approx(1 + 90) and float(band.attrib["width"]) == pytest.approx(10)
    assert float(bar.attrib["width"]) == pytest.approx(75)
    limit = [ln for ln in root.findall("line") if ln.attrib["stroke-width"] == "2"]
    assert len(limit) == 1 and float(limit[0].attrib["x1"]) == pytest.approx(101)
    assert root.find("path") is None  # not clipped
    assert "limit" in [t.text for t in root.findall("text")]
    assert root.attrib["aria-label"] == "utilisation 75 % of limit, PASS"


def test_utilisation_bar_clips_with_an_arrow_and_keeps_the_status_pattern():
    root = tree(plots.utilisation_bar(2.4, "fail", None, width=152.0))
    bar = root.findall("rect")[1]
    assert bar.attrib["fill"] == "url(#pc-fail)" and float(bar.attrib["width"]) == pytest.approx(150)
    assert root.find("path") is not None
    assert root.attrib["aria-label"] == "utilisation 240 % of limit, FAIL"


def test_every_status_has_its_own_pattern():
    fills = {plots.STATUS_FILL[s] for s in ("pass", "warn", "fail", "waived")}
    assert len(fills) == 4
    defs = tree(plots.pattern_defs())
    ids = {p.attrib["id"] for p in defs.iter("pattern")}
    assert {f[5:-1] for f in plots.STATUS_FILL.values()} | {"pc-band"} == ids


def test_sweep_panel_marks_points_beyond_the_limit_as_filled_squares():
    series = {"key": "rectifier.v_reverse", "label": "D1 reverse voltage", "unit": "V",
              "values": [40.0, 50.0, 56.0, 60.0], "limit": 55.0, "limit_label": "55 % of 100 V"}
    root = tree(plots.sweep_panel([9.0, 12.0, 14.0, 16.0], series))
    squares = [r for r in root.findall("rect") if r.attrib.get("width") == "6"]
    circles = root.findall("circle")
    assert (len(squares), len(circles)) == (2, 2)
    dashed = [ln for ln in root.findall("line") if ln.attrib.get("stroke-dasharray")]
    assert len(dashed) == 1
    texts = [t.text for t in root.findall("text")]
    assert "55 % of 100 V 55 V" in texts
    assert "highest in the sweep 60 V at 16 V; beyond limit at 2 of 4 points" in texts


def test_sweep_panel_for_a_minimum_limit():
    series = {"key": "c.capacitance", "label": "C5 capacitance", "unit": "F", "values": [3e-6, 2e-6, 1e-6],
              "limit": 2.35e-6, "larger_is_better": True}
    root = tree(plots.sweep_panel([9.0, 12.0, 16.0], series))
    assert len([r for r in root.findall("rect") if r.attrib.get("width") == "6"]) == 2
    assert "lowest in the sweep 1 µF at 16 V; beyond limit at 2 of 3 points" in [t.text for t in root.findall("text")]


def test_waveform_panel_draws_every_breakpoint():
    wave = {"label": "Q1 drain current", "corner": "vin_min-full", "t": [0, 0, 2e-6, 2e-6, 4e-6],
            "y": [0, 0.2, 1.0, 0, 0]}
    root = tree(plots.waveform_panel(wave))
    points = root.find("polyline").attrib["points"].split()
    assert len(points) == 5
    texts = [t.text for t in root.findall("text")]
    assert "time [µs]" in texts and "[A]" in texts and "at corner vin_min-full" in texts
    assert "peak 1 A; 5 breakpoints, 4 µs shown" in texts


def test_bank_split_shares_are_of_the_squared_current():
    bank = {"corner": "vin_min-full", "caps": [{"ref": "C6", "part_number": "P", "i_rms": 0.3, "i_rms_rating": 1.0},
                                               {"ref": "C5", "part_number": "Q", "i_rms": 0.4}]}
    texts = [t.text for t in tree(plots.bank_split_chart("output_cap:5V", bank)).findall("text")]
    assert "300 mA (36 % of I²) | rated 1 A" in texts
    assert "400 mA (64 % of I²)" in texts


def test_empty_inputs_do_not_break():
    assert "no values" in plots.sweep_panel([], {"label": "x", "values": []})
    assert "no waveform" in plots.waveform_panel({"label": "x", "t": [0.0], "y": [1.0]})
    assert "no part has an assessed utilisation" in plots.utilisation_chart([])
    tree(plots.bank_split_chart("b", {"caps": [{"ref": "C1", "i_rms": None}]}))
