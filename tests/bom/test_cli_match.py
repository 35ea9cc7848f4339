"""``partcheck match`` through typer's runner and through a real subprocess."""

from __future__ import annotations

import json
import subprocess
import sys

from typer.testing import CliRunner

from partcheck.cli import app

runner = CliRunner()

GOOD = ("Reference,Qty,Value,Description,Package\n"
        "\"C1,C2\",2,10uF 25V X7R,MLCC,1206\n"
        "D1,1,,Schottky 40V 3A,SMA\n"
        "C3,1,DNP,,\n")


def test_json_shape_and_exit_0(write, catalog_file):
    bom = write("bom.csv", GOOD)
    result = runner.invoke(app, ["match", str(bom), "--db", str(catalog_file), "--format", "json"])
    assert result.exit_code == 0, result.output
    doc = json.loads(result.stdout)
    assert doc["bom"] == str(bom)
    first = doc["lines"][0]
    assert first == {**first, "line": 2, "refs": ["C1", "C2"], "qty": 2, "text": "10uF 25V X7R | MLCC",
                     "status": "matched", "part_number": "KC-106-25-X7R-1206", "method": "fuzzy"}
    assert isinstance(first["score"], float) and first["reason"]
    assert first["candidates"][0] == {"part_number": "KC-106-25-X7R-1206", "score": first["score"]}
    assert [ln["status"] for ln in doc["lines"]] == ["matched", "matched", "not_fitted"]


def test_table_exit_1_and_status_words(write, catalog_file):
    bom = write("bom.csv", GOOD + "C4,1,22uF 25V,MLCC,1206\n")
    result = runner.invoke(app, ["match", str(bom), "--db", str(catalog_file)])
    assert result.exit_code == 1
    assert "unmatched" in result.stdout and "matched" in result.stdout and "not_fitted" in result.stdout
    assert "4 lines: 2 matched, 1 unmatched, 1 not_fitted" in result.stdout


def test_pin_and_columns_options(write, catalog_file):
    bom = write("bom.csv", "Part ID,Val\nC1,10uF 25V\n")
    result = runner.invoke(app, ["match", str(bom), "--db", str(catalog_file), "--format", "json",
                                 "--columns", "ref=Part ID,value=Val", "--pin", "C1=KC-106-50-X7R-1206"])
    assert result.exit_code == 0, result.output
    (line,) = json.loads(result.stdout)["lines"]
    assert (line["method"], line["part_number"]) == ("pinned", "KC-106-50-X7R-1206")


def test_csv_format_neutralises_formulas(write, catalog_file):
    bom = write("bom.csv", "Ref,Value,Description\nC1,10uF 25V,=cmd()\n")
    result = runner.invoke(app, ["match", str(bom), "--db", str(catalog_file), "--format", "csv"])
    assert result.stdout.splitlines()[0] == "line,refs,qty,text,status,part_number,score,method,reason,candidates"
    assert result.stdout.splitlines()[1].startswith("2,C1,,10uF 25V | =cmd(),")


def test_not_a_table_runner(write, catalog_file):
    bom = write("notes.csv", "Just some prose about the converter.\nNo table here.\n")
    result = runner.invoke(app, ["match", str(bom), "--db", str(catalog_file)])
    assert result.exit_code == 2
    assert f"error: {bom}: this is not a table: every line holds a single cell" in result.stderr


def test_not_a_table_subprocess(write, catalog_file):
    bom = write("scan.pdf", b"%PDF-1.4\n%\xe2\xe3\xcf\xd3\n")
    proc = subprocess.run([sys.executable, "-m", "partcheck", "match", str(bom), "--db", str(catalog_file)],
                          capture_output=True, text=True, timeout=60, check=False)
    assert proc.returncode == 2
    assert proc.stderr.strip() == (f"error: {bom}: this is a PDF document, not a table; export the BOM from the "
                                   "schematic tool or spreadsheet as CSV or XLSX")
    assert "Traceback" not in proc.stderr and proc.stdout == ""


def test_bad_format_and_bad_pin(write, catalog_file):
    bom = write("bom.csv", GOOD)
    assert runner.invoke(app, ["match", str(bom), "--db", str(catalog_file), "--format", "xml"]).exit_code == 2
    result = runner.invoke(app, ["match", str(bom), "--db", str(catalog_file), "--pin", "C1"])
    assert result.exit_code == 2 and "--pin 'C1' is not REF=PART" in result.stderr


def test_help_text():
    result = runner.invoke(app, ["match", "--help"])
    assert result.exit_code == 0 and "Match every line of BOM to a catalog part" in result.stdout


def test_sheet_and_decimal_comma_options(tmp_path, write, catalog_file):
    from openpyxl import Workbook

    book = Workbook()
    book.active.title = "Cover"
    book.active.append(["nothing to see"])
    ws = book.create_sheet("Parts")
    ws.append(["Designator", "Comment", "Footprint"])
    ws.append(["R1", "4k7 1%", "0603"])
    path = tmp_path / "bom.xlsx"
    book.save(path)
    result = runner.invoke(app, ["match", str(path), "--db", str(catalog_file), "--sheet", "Parts", "--format", "json"])
    assert result.exit_code == 0, result.output
    assert json.loads(result.stdout)["lines"][0]["part_number"] == "KR-4K70-0603-1"

    bom = write("bom.csv", "Ref;Value;Footprint\nR1;0,47;2512\n")
    auto = runner.invoke(app, ["match", str(bom), "--db", str(catalog_file), "--format", "json"])
    assert json.loads(auto.stdout)["lines"][0]["part_number"] == "KR-0R47-2512-1"
    forced = runner.invoke(app, ["match", str(bom), "--db", str(catalog_file), "--format", "json",
                                 "--no-decimal-comma"])
    assert forced.exit_code == 1
    assert "a comma is not a decimal point here" in forced.stderr


def test_table_shows_cells_as_plain_text(write, catalog_file):
    bom = write("bom.csv", 'Ref,Value,Description\nC1,10uF 25V,"[bold red]x[/] <script>alert(1)</script>"\n'
                           "C2,1uQ,\n")
    result = runner.invoke(app, ["match", str(bom), "--db", str(catalog_file)], env={"COLUMNS": "200"})
    assert result.exit_code == 1
    assert "[bold red]x[/]" in result.stdout and "<script>" in result.stdout  # not taken as markup
    assert "warning: line 3: value '1uQ': no capacitance could be read" in result.stderr
    doc = runner.invoke(app, ["match", str(bom), "--db", str(catalog_file), "--format", "json"])
    assert json.loads(doc.stdout)["lines"][0]["text"] == "10uF 25V | [bold red]x[/] <script>alert(1)</script>"
