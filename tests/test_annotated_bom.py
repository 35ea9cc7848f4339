"""The annotated BOM: numbers stay numbers (XLSX read back with openpyxl), the deciding
parameter is a column, one spelling of utilization, and an unknown extension is an input error."""

from __future__ import annotations

import csv
from pathlib import Path

import pytest
from openpyxl import load_workbook

from partcheck.bom.export import EXTENSIONS, percent_format
from partcheck.bom.read import read_bom
from partcheck.catalog.seed import demo_catalog
from partcheck.errors import BomError, InputError
from partcheck.pipeline import check, write_annotated_bom

SAMPLES = Path(__file__).resolve().parents[1] / "sample_boms"


@pytest.fixture(scope="module")
def result(tmp_path_factory):
    """The failing demo scenario (it has alternatives), checked against the seeded demo catalog."""
    catalog = demo_catalog(tmp_path_factory.mktemp("catalog"))
    try:
        return check(SAMPLES / "battery_monitor_48v" / "design.toml", catalog=catalog)
    finally:
        catalog.close()


def _by_line(result):
    return {p["bom_line"]: p for p in result.parts}


def test_xlsx_holds_numbers_with_a_percent_format(result, tmp_path):
    path = write_annotated_bom(result, tmp_path / "annotated.xlsx")
    sheet = load_workbook(path).active
    header = [c.value for c in sheet[1]]
    assert header[0] == "line"
    assert header[-5:] == ["partcheck_part", "partcheck_status", "partcheck_utilization", "partcheck_worst_parameter",
                           "partcheck_alternative"]
    col = {name: i for i, name in enumerate(header)}
    parts = _by_line(result)
    seen = 0
    for row in sheet.iter_rows(min_row=2):
        line = row[col["line"]].value
        assert isinstance(line, int)
        part = parts.get(line)
        util = row[col["partcheck_utilization"]]
        if part is None or part.get("worst_utilization") is None:
            assert util.value is None
            continue
        assert util.data_type == "n" and isinstance(util.value, float)
        assert util.value == pytest.approx(part["worst_utilization"], rel=1e-12)  # the JSON's number itself
        assert util.number_format.endswith("%") and util.number_format.startswith("0.")
        assert row[col["partcheck_worst_parameter"]].value == part["worst_parameter"]
        assert row[col["partcheck_status"]].value == part["status"]
        seen += 1
    assert seen >= 10
    # the failing electrolytic: its worst parameter and its first approved alternative
    c10 = next(p for p in result.parts if p["refs"] == ["C10"])
    row = next(r for r in sheet.iter_rows(min_row=2) if r[col["line"]].value == c10["bom_line"])
    assert row[col["partcheck_status"]].value == "fail"
    assert row[col["partcheck_worst_parameter"]].value == c10["worst_parameter"]
    assert row[col["partcheck_alternative"]].value


def test_original_cells_stay_text_as_read(result, tmp_path):
    path = write_annotated_bom(result, tmp_path / "annotated.xlsx")
    sheet = load_workbook(path).active
    bom = read_bom(result.trace["bom_path"])
    header = [c.value for c in sheet[1]]
    for line, row in zip(bom.lines, sheet.iter_rows(min_row=2)):
        for h in bom.headers:
            cell = row[header.index(h)]
            assert (cell.value or "") == line.raw.get(h, "")
            assert cell.value is None or (isinstance(cell.value, str) and cell.data_type == "s")  # "1" stays text


def test_csv_writes_the_fraction(result, tmp_path):
    path = write_annotated_bom(result, tmp_path / "annotated.csv")
    with path.open(encoding="utf-8-sig", newline="") as fh:
        rows = list(csv.DictReader(fh))
    parts = _by_line(result)
    for row in rows:
        part = parts.get(int(row["line"]))
        if part and part.get("worst_utilization") is not None:
            assert float(row["partcheck_utilization"]) == part["worst_utilization"]  # repr round-trips exactly
            assert row["partcheck_worst_parameter"] == part["worst_parameter"]
    assert not any("%" in row["partcheck_utilization"] for row in rows)


@pytest.mark.parametrize("name", ["annotated.ods", "annotated.txt", "annotated", "annotated.xls"])
def test_unknown_extension_is_an_input_error(result, tmp_path, name):
    target = tmp_path / name
    with pytest.raises(BomError) as info:
        write_annotated_bom(result, target)
    err = info.value
    assert isinstance(err, InputError) and err.exit_code == 2
    assert str(target) in str(err)
    for ext in EXTENSIONS:
        assert ext in str(err)
    assert not target.exists()


def test_percent_format_never_rounds_across_100():
    assert percent_format(0.5) == "0.0%"
    assert percent_format(1.0) == "0.0%"
    for value in (1.0004, 1.00004, 0.9996, 0.99996):
        fmt = percent_format(value)
        decimals = len(fmt) - len("0.%")
        shown = round(value * 100, decimals)
        assert (shown > 100) == (value > 1) and (shown < 100) == (value < 1), (value, fmt)


def test_one_spelling_of_utilization_in_json_and_annotation(result, tmp_path):
    data = result.to_dict()
    assert all("utilization" in f for f in data["findings"])
    assert not any("utilisation" in k for f in data["findings"] for k in f)
    path = write_annotated_bom(result, tmp_path / "a.csv")
    with path.open(encoding="utf-8-sig", newline="") as fh:
        header = next(csv.reader(fh))
    assert "partcheck_utilization" in header and not any("utilisation" in h for h in header)
