"""``partcheck check`` reads the BOM as ``partcheck match`` does: --columns, --sheet and
--decimal-comma, the same settings in the design file's ``[bom_read]`` table (the command line
wins), and the column report on standard error.

The end-to-end tests run the real command in a subprocess on a copy of the ``remote_io_24v`` demo
(intended verdict pass, exit 0) whose BOM headers are renamed so that the synonym table no
longer finds the reference and value columns, against a catalog seeded from ``db/parts.csv``.
"""

from __future__ import annotations

import csv
import json
import shutil
import subprocess
import sys
import tomllib
from pathlib import Path

import pytest
from openpyxl import Workbook

from partcheck.design import design_from_dict
from partcheck.errors import DesignError

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "sample_boms" / "remote_io_24v"
RENAMED = ["Label", "Quantity", "Kommentar", "Description", "Mfr P/N", "Footprint"]  # ref and value unknown
REPORT = ("BOM columns: ref ← 'Label', qty ← 'Quantity', value ← 'Kommentar', description ← 'Description', "
          "part_number ← 'Mfr P/N', package ← 'Footprint'; ignored: 'Notes'")


def run(*args: str | Path, cwd: Path = ROOT) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "partcheck", *map(str, args)], capture_output=True, text=True,
                          timeout=300, check=False, cwd=cwd)


@pytest.fixture(scope="module")
def catalog(tmp_path_factory) -> Path:
    db = tmp_path_factory.mktemp("catalog") / "parts.sqlite"
    proc = run("catalog", "import", ROOT / "db" / "parts.csv", "--db", db)
    assert proc.returncode == 0, proc.stderr
    return db


@pytest.fixture
def demo(tmp_path) -> Path:
    """A copy of the demo whose BOM has renamed headers and an extra 'Notes' column."""
    folder = tmp_path / "demo"
    shutil.copytree(DEMO, folder)
    with (DEMO / "bom.csv").open(newline="", encoding="utf-8") as fh:
        rows = list(csv.reader(fh))
    assert len(rows[0]) == len(RENAMED)
    rows = [RENAMED + ["Notes"]] + [row + ["checked"] for row in rows[1:]]
    with (folder / "bom.csv").open("w", newline="", encoding="utf-8") as fh:
        csv.writer(fh).writerows(rows)
    return folder


def with_bom_read(demo: Path, table: str, name: str = "design.toml") -> Path:
    path = demo / name
    path.write_text((demo / "design.toml").read_text(encoding="utf-8") + f"\n[bom_read]\n{table}\n", encoding="utf-8")
    return path


def check_json(design: Path, catalog: Path, *extra: str) -> subprocess.CompletedProcess:
    return run("check", design, "--db", catalog, "--format", "json", *extra)


def test_renamed_headers_are_refused_without_settings(demo, catalog):
    proc = check_json(demo / "design.toml", catalog)
    assert proc.returncode == 2, proc.stderr
    assert "found no reference column" in proc.stderr and "'Label', 'Quantity', 'Kommentar'" in proc.stderr
    assert "Traceback" not in proc.stderr and proc.stdout == ""


def test_column_override_on_the_command_line(demo, catalog):
    proc = check_json(demo / "design.toml", catalog, "--columns", "ref=Label,value=Kommentar")
    assert proc.returncode == 0, proc.stderr
    result = json.loads(proc.stdout)  # the stderr report does not break the JSON: standard output parses whole
    assert result["verdict"] == "pass"
    assert REPORT in proc.stderr.splitlines()
    assert REPORT in result["notes"]  # and the result keeps it, for the report's notes
    assert not any("column" in w for w in result["bom_warnings"])  # bom_warnings keep their meaning


def test_column_report_in_table_output(demo, catalog):
    proc = run("check", demo / "design.toml", "--db", catalog, "--columns", "ref=Label,value=Kommentar")
    assert proc.returncode == 0, proc.stderr
    assert REPORT in proc.stderr.splitlines() and "PASS" in proc.stdout


def test_design_file_bom_read_table(demo, catalog):
    design = with_bom_read(demo, 'columns = {ref = "Label", value = "Kommentar"}\ndecimal_comma = false',
                           name="design-bom-read.toml")
    proc = check_json(design, catalog)
    assert proc.returncode == 0, proc.stderr
    assert json.loads(proc.stdout)["verdict"] == "pass"
    assert REPORT in proc.stderr.splitlines()


def test_command_line_wins_over_the_design_file(demo, catalog):
    design = with_bom_read(demo, 'columns = {ref = "Position", value = "Kommentar"}', name="design-wrong-ref.toml")
    proc = check_json(design, catalog)
    assert proc.returncode == 2
    assert "found no column named 'Position' (from the column overrides)" in proc.stderr
    proc = check_json(design, catalog, "--columns", "ref=Label")  # ref from the command line, value from the file
    assert proc.returncode == 0, proc.stderr
    assert REPORT in proc.stderr.splitlines()


def test_decimal_comma_option_wins_over_the_design_file(demo, catalog):
    # Write every decimal point of the BOM as a comma ("4,7uF", "6,8R") and tell the file they are not.
    text = (demo / "bom.csv").read_text(encoding="utf-8")
    rows = list(csv.reader(text.splitlines()))
    with (demo / "bom.csv").open("w", newline="", encoding="utf-8") as fh:
        csv.writer(fh, delimiter=";").writerows([[c.replace(".", ",") for c in row] for row in rows])
    design = with_bom_read(demo, 'columns = {ref = "Label", value = "Kommentar"}\ndecimal_comma = false',
                           name="design-no-comma.toml")
    refused = check_json(design, catalog)
    assert refused.returncode in (0, 1), refused.stderr
    warnings = json.loads(refused.stdout)["bom_warnings"]
    assert any("a comma is not a decimal point" in w for w in warnings)
    proc = check_json(design, catalog, "--decimal-comma")
    assert proc.returncode == 0, proc.stderr
    result = json.loads(proc.stdout)
    assert result["verdict"] == "pass" and not any("comma" in w for w in result["bom_warnings"])


def test_sheet_from_the_design_file_and_from_the_command_line(demo, catalog):
    with (demo / "bom.csv").open(newline="", encoding="utf-8") as fh:
        rows = list(csv.reader(fh))
    book = Workbook()
    book.active.title = "Notes"
    book.active.append(["Revision notes", "nothing to read"])
    sheet = book.create_sheet("BOM")
    for row in rows:
        sheet.append(row)
    book.save(demo / "bom.xlsx")
    design = with_bom_read(demo, 'sheet = "BOM"\ncolumns = {ref = "Label", value = "Kommentar"}',
                           name="design-xlsx.toml")
    proc = check_json(design, catalog, "--bom", demo / "bom.xlsx")
    assert proc.returncode == 0, proc.stderr
    assert REPORT in proc.stderr.splitlines()
    proc = check_json(design, catalog, "--bom", demo / "bom.xlsx", "--sheet", "Notes")
    assert proc.returncode == 2 and "Traceback" not in proc.stderr


@pytest.mark.parametrize(("table", "key", "words"), [
    ('columns = {reff = "Label"}', "bom_read.columns.reff", "unknown BOM field 'reff'; did you mean 'ref'?"),
    ('colums = {ref = "Label"}', "bom_read.colums", "did you mean 'columns'?"),
    ("decimal_comma = 1", "bom_read.decimal_comma", "expected true or false"),
])
def test_bad_bom_read_keys_exit_2_through_the_command_line(demo, catalog, table, key, words):
    proc = check_json(with_bom_read(demo, table, name="design-bad.toml"), catalog)
    assert proc.returncode == 2
    assert f"key '{key}'" in proc.stderr and words in proc.stderr and "Traceback" not in proc.stderr


# ------------------------------------------------------------------ [bom_read] validation (no subprocess)

def _design(bom_read) -> dict:
    data = tomllib.loads((DEMO / "design.toml").read_text(encoding="utf-8"))
    data["bom_read"] = bom_read
    return data


def test_bom_read_is_parsed_into_read_bom_keywords():
    design = design_from_dict(_design({"columns": {"reference": "Designator", "mpn": "Mfr P/N"}, "sheet": "BOM",
                                       "decimal_comma": True}), file="d.toml")
    assert design.bom_read == {"columns": {"ref": "Designator", "part_number": "Mfr P/N"}, "sheet": "BOM",
                               "decimal_comma": True}
    assert design_from_dict(_design({}), file="d.toml").bom_read == {}
    data = _design({})
    del data["bom_read"]
    assert design_from_dict(data).bom_read == {}


@pytest.mark.parametrize(("bom_read", "key", "words"), [
    ({"columns": {"colour": "X"}}, "bom_read.columns.colour", "unknown BOM field 'colour'"),
    ({"columns": {"ref": 3}}, "bom_read.columns.ref", "expected the header text of a BOM column"),
    ({"columns": {"ref": "  "}}, "bom_read.columns.ref", "expected the header text of a BOM column"),
    ({"columns": {"ref": "A", "designator": "B"}}, "bom_read.columns.designator", "another name for 'ref'"),
    ({"columns": {"ref": "A", "value": "a"}}, "bom_read.columns.value", "column 'a' is already given for 'ref'"),
    ({"columns": "ref=Designator"}, "bom_read.columns", "expected a table of BOM field"),
    ({"columns": {}}, "bom_read.columns", "expected a table of BOM field"),
    ({"sheet": 2}, "bom_read.sheet", "expected a non-empty text"),
    ({"sheet": ""}, "bom_read.sheet", "expected a non-empty text"),
    ({"decimal_comma": "yes"}, "bom_read.decimal_comma", "expected true or false"),
    ({"decimal": True}, "bom_read.decimal", "did you mean 'decimal_comma'?"),
    ("BOM", "bom_read", "expected a table"),
])
def test_bad_bom_read_names_the_key(bom_read, key, words):
    with pytest.raises(DesignError) as info:
        design_from_dict(_design(bom_read), file="d.toml")
    assert info.value.key == key and info.value.file == "d.toml" and words in info.value.message
