"""Import files the way spreadsheets write them: ';' or tab separators in a .csv, decimal commas,
several unknown headers; and `catalog show` with another letter case.  Through the real CLI
(subprocess), and through the library on every backend."""

from __future__ import annotations

import os
import sqlite3
import subprocess
import sys
from pathlib import Path

import pytest

from partcheck.catalog import open_catalog, store
from partcheck.catalog.io import ReadOptions, sniff_delimiter
from partcheck.catalog.models import FIELDS
from partcheck.errors import CatalogInputError

REPO = Path(__file__).resolve().parents[2]


def run(*args: str, cwd: Path) -> subprocess.CompletedProcess:
    env = {**os.environ, "COLUMNS": "200", "PYTHONPATH": str(REPO)}
    env.pop("PARTCHECK_DB", None)
    return subprocess.run([sys.executable, "-m", "partcheck", "catalog", *args], capture_output=True, text=True,
                          check=False, env=env, cwd=cwd, timeout=60)


def values(db: Path, *columns: str) -> dict[str, tuple]:
    with sqlite3.connect(db) as conn:
        rows = conn.execute(f"SELECT part_number, {', '.join(columns)} FROM part").fetchall()
    return {r[0]: r[1:] for r in rows}


EUROPEAN = """\
part_number;category;subtype;capacitance;v_rated;esr;resistance;p_rated;tolerance;description
C-1;capacitor;ceramic;4,7 uF;50;0,012;;;10%;"4,7 uF; 50 V"
R-1;resistor;thick_film;;;;4k7;0,5 W;0,5%;R 4k7
"""
CURVES = """\
part_number;curve;x;y
C-1;dc_bias;0;1
C-1;dc_bias;12,5 V;0,55
"""


def test_a_semicolon_csv_with_decimal_commas_and_its_curve_file(tmp_path):
    (tmp_path / "eu.csv").write_text(EUROPEAN, encoding="utf-8")
    (tmp_path / "eu.curves.csv").write_text(CURVES, encoding="utf-8")
    db = tmp_path / "c.sqlite"
    done = run("import", "eu.csv", "--db", str(db), cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    assert done.stdout == f"imported eu.csv: 2 parts added, 0 updated, 2 curve points from eu.curves.csv into {db}\n"
    assert done.stderr == (
        "note: eu.csv: read as semicolon-separated text (separated by ';')\n"
        "note: eu.csv: read numbers with decimal commas (such as '4,7 uF' on line 2); if that is wrong, import "
        "with --no-decimal-comma\n"
        "note: eu.curves.csv: read as semicolon-separated text (separated by ';')\n"
        "note: eu.curves.csv: read numbers with decimal commas (such as '12,5 V' on line 3); if that is wrong, "
        "import with --no-decimal-comma\n")
    assert values(db, "capacitance", "v_rated", "esr", "resistance", "p_rated", "tolerance", "description") == {
        "C-1": (4.7e-06, 50.0, 0.012, None, None, 0.1, "4,7 uF; 50 V"),
        "R-1": (None, None, None, 4700.0, 0.5, 0.005, "R 4k7"),
    }
    with sqlite3.connect(db) as conn:
        assert conn.execute("SELECT x, y FROM curve_point ORDER BY seq").fetchall() == [(0.0, 1.0), (12.5, 0.55)]


COMMA = "a comma is not a decimal point here; use '.' or read the file with decimal commas"


def test_no_decimal_comma_refuses_the_comma_cells_with_their_place(tmp_path):
    (tmp_path / "eu.csv").write_text(EUROPEAN, encoding="utf-8")
    db = tmp_path / "c.sqlite"
    done = run("import", "eu.csv", "--no-decimal-comma", "--db", str(db), cwd=tmp_path)
    assert done.returncode == 2 and done.stdout == ""
    assert done.stderr == (
        "error: eu.csv: 4 problems, nothing was imported:\n"
        f"  line 2, column 'capacitance': '4,7 uF' is not a capacitance (F) ({COMMA})\n"
        f"  line 2, column 'esr': '0,012' is not a resistance (Ω) ({COMMA})\n"
        f"  line 3, column 'tolerance': '0,5%' is not a percentage (%) ({COMMA})\n"
        f"  line 3, column 'p_rated': '0,5 W' is not a power (W) ({COMMA})\n")
    assert values(db, "category") == {}


def test_decimal_points_and_commas_in_one_file_are_not_guessed(tmp_path):
    text = EUROPEAN.replace("0,012", "0.012")
    (tmp_path / "eu.csv").write_text(text, encoding="utf-8")
    db = tmp_path / "c.sqlite"
    done = run("import", "eu.csv", "--db", str(db), cwd=tmp_path)
    assert done.returncode == 2
    assert f"line 2, column 'capacitance': '4,7 uF' is not a capacitance (F) ({COMMA})\n" in done.stderr
    assert "decimal commas (such as" not in done.stderr
    done = run("import", "eu.csv", "--decimal-comma", "--db", str(db), cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    assert values(db, "esr", "p_rated") == {"C-1": (0.012, None), "R-1": (None, 0.5)}


def test_a_tab_separated_csv_and_quoted_decimal_commas_in_a_comma_file(tmp_path):
    db = tmp_path / "c.sqlite"
    (tmp_path / "tabs.csv").write_text("part_number\tcategory\tv_rated\nC-T\tcapacitor\t6,3 V\n", encoding="utf-8")
    done = run("import", "tabs.csv", "--db", str(db), cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    assert done.stderr.startswith("note: tabs.csv: read as TSV (separated by '\\t')\n")
    (tmp_path / "comma.csv").write_text('part_number,category,v_rated,description\nC-Q,capacitor,"6,3 V","a, b"\n',
                                        encoding="utf-8")
    done = run("import", "comma.csv", "--db", str(db), cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    assert values(db, "v_rated", "description") == {"C-T": (6.3, None), "C-Q": (6.3, "a, b")}


def test_a_comma_file_with_semicolons_in_its_cells_stays_a_comma_file(tmp_path):
    path = tmp_path / "c.csv"
    path.write_text("part_number,category,description\n" + "".join(f"P{i},resistor,a;b;c;d\n" for i in range(5)),
                    encoding="utf-8")
    assert sniff_delimiter(path) == ","


def test_each_unknown_header_is_one_line_and_the_valid_columns_are_listed_once(tmp_path):
    (tmp_path / "bad.csv").write_text("part_number,category,vds_mx,colour,rezistance\nA,switch,1,2,3\n",
                                      encoding="utf-8")
    db = tmp_path / "c.sqlite"
    done = run("import", "bad.csv", "--db", str(db), cwd=tmp_path)
    assert done.returncode == 2 and done.stdout == ""
    assert done.stderr == (
        "error: bad.csv: 3 problems, nothing was imported:\n"
        "  line 1, column 'vds_mx': unknown column 'vds_mx'; did you mean 'vds_max'?\n"
        "  line 1, column 'colour': unknown column 'colour'\n"
        "  line 1, column 'rezistance': unknown column 'rezistance'; did you mean 'resistance'?\n"
        f"  valid columns are: {', '.join(FIELDS)}\n")
    assert done.stderr.count("valid columns") == 1
    assert not db.exists() or values(db, "category") == {}


def test_show_finds_another_letter_case_and_says_which_part_it_shows(tmp_path):
    db = tmp_path / "c.sqlite"
    (tmp_path / "p.csv").write_text("part_number,category,vds_max\nSW-Ab1,switch,100 V\n", encoding="utf-8")
    assert run("import", "p.csv", "--db", str(db), cwd=tmp_path).returncode == 0
    done = run("show", "sw-ab1", "--db", str(db), cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    assert done.stderr == ("note: showing the stored part number 'SW-Ab1' for 'sw-ab1' (they differ only in "
                           "letter case or Unicode form)\n")
    assert "SW-Ab1" in done.stdout and "100 V" in done.stdout and "last written: 20" in done.stdout
    done = run("show", "SW-Ab1", "--format", "json", "--db", str(db), cwd=tmp_path)
    assert done.returncode == 0 and done.stderr == ""
    done = run("show", "SW-AB2", "--db", str(db), cwd=tmp_path)
    assert done.returncode == 2
    assert done.stderr.startswith("error: part 'SW-AB2' is not in the catalog (closest: SW-Ab1)")


def test_a_streamed_import_maps_and_reads_decimal_commas_in_every_chunk(tmp_path, catalog_url, monkeypatch):
    monkeypatch.setattr(store, "IMPORT_CHUNK", 3)
    rows = "".join(f"R-{i};Res;{i + 1},5 k\n" for i in range(7))
    path = tmp_path / "big.csv"
    path.write_text("Mfr Part;Type;Ohms\n" + rows, encoding="utf-8")
    options = ReadOptions(columns={"Mfr Part": "part_number", "Type": "category", "Ohms": "resistance"},
                          values={"category": {"res": "resistor"}})
    with open_catalog(catalog_url) as cat:
        report = cat.import_file(path, read=options)
        assert (report.added, report.updated) == (7, 0)
        assert cat.get("R-6").resistance == 7500.0
        assert options.notices == [
            f"{path}: read as semicolon-separated text (separated by ';')",
            f"{path}: read numbers with decimal commas (such as '1,5 k' on line 2); if that is wrong, import "
            "with --no-decimal-comma"]
        path.write_text("Mfr Part;Type;Ohms\n" + rows.replace("R-5;Res;6,5 k", "R-5;Res;-6,5 k")
                        .replace("R-0", "S-0"), encoding="utf-8")
        with pytest.raises(CatalogInputError) as info:
            cat.import_file(path, read=options, update=True)
        assert str(info.value) == (f"{path}, line 7, column 'Ohms': '-6,5 k' is not allowed: resistance must be "
                                   "greater than zero; nothing was imported")
        assert cat.count() == 7 and "S-0" not in {r.part_number for r in cat.parts()}
