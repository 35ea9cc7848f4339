"""Column mappings (`catalog import --map / --column`) through the real CLI, and docs/catalog-columns.md
against FIELDS.

The tables of docs/catalog-columns.md are generated from FIELDS, CATEGORIES and CURVES by
:func:`generated`; after changing the registry, rewrite them with

    python tests/catalog/test_mapping.py

and the test below fails whenever the doc and the registry disagree.
"""

from __future__ import annotations

import os
import re
import sqlite3
import subprocess
import sys
from pathlib import Path

import pytest

from partcheck.catalog.models import CATEGORIES, CATEGORY_FIELDS, CURVES, FIELDS, FieldSpec

REPO = Path(__file__).resolve().parents[2]
DOC = REPO / "docs" / "catalog-columns.md"
BEGIN = "<!-- generated from FIELDS by tests/catalog/test_mapping.py: do not edit by hand -->"
END = "<!-- end of generated tables -->"

_UNITS = {"ohm": "Ω", "degC": "°C", "%": "fraction (write `10%`)", None: "number"}


def _cell(text: str) -> str:
    return text.replace("|", "\\|")


def _unit(spec: FieldSpec) -> str:
    return "text" if spec.text else _UNITS.get(spec.kind, spec.kind or "number")


def _limits(spec: FieldSpec) -> str:
    from partcheck.units import format_quantity

    said = []
    if spec.required:
        said.append("required")
    if spec.positive:
        said.append("> 0")
    if spec.minimum is not None:
        said.append(f"≥ {format_quantity(spec.minimum, spec.kind, digits=5)}")
    if spec.maximum is not None:
        said.append(f"≤ {format_quantity(spec.maximum, spec.kind)}")
    return ", ".join(said)


def generated() -> str:
    """The generated part of docs/catalog-columns.md (between BEGIN and END)."""
    out = ["### Columns", "", "| column | unit | meaning | categories | limits |", "|---|---|---|---|---|"]
    for name, spec in FIELDS.items():
        cats = "all" if spec.common else ", ".join(spec.categories)
        out.append(f"| `{name}` | {_cell(_unit(spec))} | {_cell(spec.doc)} | {cats} | {_limits(spec)} |")
    out += ["", "### Categories and subtypes", "",
            "| category | subtypes | its rating columns (besides the common ones) |", "|---|---|---|"]
    for cat, subtypes in CATEGORIES.items():
        own = ", ".join(f"`{n}`" for n in CATEGORY_FIELDS[cat] if not FIELDS[n].common)
        out.append(f"| `{cat}` | {', '.join(f'`{s}`' for s in subtypes)} | {own} |")
    out += ["", "### Curves", "", "| curve | x | y | categories |", "|---|---|---|---|"]
    for name, spec in CURVES.items():
        x, _, y = spec.doc.partition(", y ")
        out.append(f"| `{name}` | {_cell(x.removeprefix('x '))} | {_cell(y)} | {', '.join(spec.categories)} |")
    return "\n".join(out)


def _doc_section() -> str:
    text = DOC.read_text(encoding="utf-8")
    return text[text.index(BEGIN) + len(BEGIN):text.index(END)].strip("\n")


def test_the_doc_tables_are_the_registry():
    assert _doc_section() == generated(), "docs/catalog-columns.md is stale: run python tests/catalog/test_mapping.py"


def test_every_column_subtype_and_curve_has_a_row_in_the_doc():
    rows = {m.group(1) for m in re.finditer(r"^\| `([a-z0-9_]+)` \|", _doc_section(), flags=re.M)}
    assert set(FIELDS) - rows == set(), "columns missing from docs/catalog-columns.md"
    assert set(CATEGORIES) - rows == set() and set(CURVES) - rows == set()
    for subtypes in CATEGORIES.values():
        for subtype in subtypes:
            assert f"`{subtype}`" in _doc_section()


# ---- the CLI ----------------------------------------------------------------------------------


def run(*args: str, cwd: Path) -> subprocess.CompletedProcess:
    env = {**os.environ, "COLUMNS": "200", "PYTHONPATH": str(REPO)}
    env.pop("PARTCHECK_DB", None)
    return subprocess.run([sys.executable, "-m", "partcheck", "catalog", *args], capture_output=True, text=True,
                          check=False, env=env, cwd=cwd, timeout=60)


SHEET = """\
Mfr Part;Type;Kind;Cap. (uF);Voltage (V);ESR (mOhm);Tol.;Power;Package;Remarks
C-IN-1;Cap;Ceramic;4,7;100;12;10%;;1210;"input; ceramic"
C-OUT-1;Cap;polymer;470;25 V;8,5;;;;bulk
R-SNS-1;Res;current_sense;;;;1%;0,5 W;2512;sense
"""

MAP = """\
[columns]
"Mfr Part" = "part_number"
"Type" = "category"
"Kind" = "subtype"
"Cap. (uF)" = {column = "capacitance", unit = "uF"}
"Voltage (V)" = "v_rated"
"ESR (mOhm)" = {column = "esr", unit = "mOhm"}
"Tol." = "tolerance"
"Power" = "p_rated"
"Package" = "package"
"Remarks" = "description"

[values.category]
"Cap" = "capacitor"
"Res" = "resistor"
"""


def _stored(db: Path) -> dict[str, tuple]:
    with sqlite3.connect(db) as conn:
        rows = conn.execute("SELECT part_number, category, subtype, capacitance, v_rated, esr, tolerance, p_rated, "
                            "package, description FROM part").fetchall()
    return {r[0]: r[1:] for r in rows}


@pytest.fixture
def sheet(tmp_path: Path) -> Path:
    (tmp_path / "team.csv").write_text(SHEET, encoding="utf-8")
    (tmp_path / "team.toml").write_text(MAP, encoding="utf-8")
    return tmp_path / "team.csv"


def test_a_team_spreadsheet_imports_through_a_mapping_file(sheet, tmp_path):
    db = tmp_path / "c.sqlite"
    done = run("import", "team.csv", "--map", "team.toml", "--db", str(db), cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    assert done.stdout == f"imported team.csv: 3 parts added, 0 updated, 0 curve points into {db}\n"
    assert done.stderr == ("note: team.csv: read as semicolon-separated text (separated by ';')\n"
                           "note: team.csv: read numbers with decimal commas (such as '4,7' on line 2); if that is "
                           "wrong, import with --no-decimal-comma\n")
    assert _stored(db) == {
        "C-IN-1": ("capacitor", "ceramic", 4.7e-06, 100.0, 0.012, 0.1, None, "1210", "input; ceramic"),
        "C-OUT-1": ("capacitor", "polymer", 0.00047, 25.0, 0.0085, None, None, None, "bulk"),
        "R-SNS-1": ("resistor", "current_sense", None, None, None, 0.01, 0.5, "2512", "sense"),
    }


def test_column_options_work_without_a_mapping_file_and_win_over_it(sheet, tmp_path):
    db = tmp_path / "c.sqlite"
    sheet.write_text("Mfr Part,Type,Voltage\nC-9,capacitor,50\n", encoding="utf-8")
    done = run("import", "team.csv", "--column", "Mfr Part=part_number", "--column", "type=category",
               "--column", "Voltage=v_rated", "--db", str(db), cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    assert done.stderr == ""
    assert _stored(db)["C-9"][:4] == ("capacitor", None, None, 50.0)

    sheet.write_text("Mfr Part;Type;Cap. (uF)\nC-10;Cap;2,2\n", encoding="utf-8")
    done = run("import", "team.csv", "--map", "team.toml", "--column", "Cap. (uF)=capacitance:nF",
               "--db", str(db), cwd=tmp_path)
    assert done.returncode == 2
    assert done.stderr.startswith("error: team.csv: 7 problems, nothing was imported:\n"
                                  "  line 1, column 'Kind': team.toml key columns.Kind maps the column 'Kind' to "
                                  "subtype, but the header has no such column\n")
    assert done.stderr.endswith("  line 1, column 'Remarks': team.toml key columns.Remarks maps the column 'Remarks' "
                                "to description, but the header has no such column\n"
                                "  the header has 'Mfr Part', 'Type', 'Cap. (uF)'\n")
    assert "column 'Cap. (uF)'" not in done.stderr  # --column replaced the mapping file's entry (with a unit)


def _fails(tmp_path: Path, *args: str) -> str:
    db = tmp_path / "c.sqlite"
    done = run("import", "team.csv", *args, "--db", str(db), cwd=tmp_path)
    assert done.returncode == 2 and done.stdout == "", done.stdout
    assert "Traceback" not in done.stderr
    assert not db.exists() or _stored(db) == {}
    return done.stderr


def test_an_unknown_target_names_the_mapping_file_and_key(sheet, tmp_path):
    (tmp_path / "team.toml").write_text(MAP.replace('"Voltage (V)" = "v_rated"', '"Voltage (V)" = "v_rate"'),
                                        encoding="utf-8")
    assert _fails(tmp_path, "--map", "team.toml") == (
        "error: team.toml, key 'columns.\"Voltage (V)\"': 'v_rate' is not a catalog column; did you mean "
        f"'v_rated'? valid columns are: {', '.join(FIELDS)}\n")
    (tmp_path / "team.toml").write_text(MAP.replace("[values.category]", "[values.categry]"), encoding="utf-8")
    assert _fails(tmp_path, "--map", "team.toml").startswith(
        "error: team.toml, key 'values.categry': 'categry' is not a catalog column; did you mean 'category'?")
    (tmp_path / "team.toml").write_text(MAP.replace('unit = "uF"', 'unit = "uV"'), encoding="utf-8")
    assert _fails(tmp_path, "--map", "team.toml").startswith(
        "error: team.toml, key 'columns.\"Cap. (uF)\"': 'uV' is not a unit of capacitance: '1 uV' is not a "
        "capacitance (F) (the unit says a voltage (V))\n")
    (tmp_path / "team.toml").write_text(MAP, encoding="utf-8")
    assert _fails(tmp_path, "--map", "team.toml", "--column", "Remarks=descripton").startswith(
        "error: --column 'Remarks=descripton': 'descripton' is not a catalog column; did you mean 'description'?")


def test_a_mapped_header_missing_from_the_file_is_an_error(sheet, tmp_path):
    sheet.write_text(SHEET.replace("Voltage (V)", "Volts"), encoding="utf-8")
    # the mapping is checked before the cells: the unmapped "Volts" is not reported as well
    assert _fails(tmp_path, "--map", "team.toml") == (
        "error: team.csv, line 1, column 'Voltage (V)': team.toml key columns.\"Voltage (V)\" maps the column "
        "'Voltage (V)' to v_rated, but the header has no such column; it has 'Mfr Part', 'Type', 'Kind', "
        "'Cap. (uF)', 'Volts', 'ESR (mOhm)', 'Tol.', 'Power', 'Package', 'Remarks'; nothing was imported\n")


def test_bad_cells_are_named_by_line_and_the_header_as_written(sheet, tmp_path):
    sheet.write_text(SHEET.replace("25 V", "-25 V").replace("0,5 W", "0,5 V"), encoding="utf-8")
    assert _fails(tmp_path, "--map", "team.toml") == (
        "error: team.csv: 2 problems, nothing was imported:\n"
        "  line 3, column 'Voltage (V)': '-25 V' is not allowed: v_rated must be greater than zero\n"
        "  line 4, column 'Power': '0,5 V' is not a power (W) (the unit says a voltage (V))\n")


def test_a_header_with_a_scaled_unit_needs_the_unit_in_the_mapping(sheet, tmp_path):
    (tmp_path / "team.toml").write_text(MAP.replace('{column = "capacitance", unit = "uF"}', '"capacitance"'),
                                        encoding="utf-8")
    assert _fails(tmp_path, "--map", "team.toml") == (
        "error: team.csv, line 1, column 'Cap. (uF)': the header names the unit 'uF', but plain numbers in "
        "capacitance are read in SI units; give the unit in team.toml key columns.\"Cap. (uF)\" (\"Cap. (uF)\" = "
        "{column = \"capacitance\", unit = \"uF\"}, or --column 'Cap. (uF)=capacitance:uF'); nothing was imported\n")


def test_two_headers_for_one_column_and_a_header_mapped_twice(sheet, tmp_path):
    sheet.write_text(SHEET.replace("Remarks", "v_rated"), encoding="utf-8")
    (tmp_path / "team.toml").write_text(MAP.replace('"Remarks" = "description"\n', ""), encoding="utf-8")
    assert _fails(tmp_path, "--map", "team.toml") == (
        "error: team.csv, line 1, column 'v_rated': the header has the catalog column 'v_rated' and also "
        "'Voltage (V)', which team.toml key columns.\"Voltage (V)\" maps to v_rated; map or remove one of them; "
        "nothing was imported\n")
    assert _fails(tmp_path, "--column", "Type=category", "--column", "type=subtype") == (
        "error: --column 'type=subtype': the header 'type' is mapped twice (also by --column 'Type=category')\n")


if __name__ == "__main__":  # rewrite the generated tables of docs/catalog-columns.md
    text = DOC.read_text(encoding="utf-8")
    head, rest = text.split(BEGIN, 1)
    DOC.write_text(f"{head}{BEGIN}\n{generated()}\n{END}{rest.split(END, 1)[1]}", encoding="utf-8")
    print(f"wrote {DOC}")
