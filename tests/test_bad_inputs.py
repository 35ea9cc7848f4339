"""The bad-input corpus (tests/bad_inputs/) through the real command line.

Every file of the corpus's *Errors* table (tests/bad_inputs/README.md) is run with the command
for its kind in a fresh ``python -m partcheck`` process: it must exit with code 2, print one
``error: <file>, <where>: <message>`` naming the file and the place in it that the table gives,
print no traceback, and leave the catalog database byte-identical.  The files of the
*Accepted* table are odd but valid; each has a test below saying what must happen instead
(formula-injection cells are kept as text and neutralised on export, script text stays plain
text, ...).

Runtime: one process per file, 0.3-1.2 s each (72 error files and 10 accepted ones: about a
minute on a shared 2-core machine).
"""

from __future__ import annotations

import csv
import hashlib
import json
import os
import re
import shutil
import subprocess
import sys
import zipfile
from pathlib import Path

import pytest

from partcheck.bom.export import FORMULA_STARTS, write_annotated_bom
from partcheck.bom.read import read_bom
from partcheck.catalog import open_catalog

CORPUS = Path(__file__).resolve().parent / "bad_inputs"
README = CORPUS / "README.md"
#: Files in the corpus folder that are not inputs.
NOT_INPUTS = {"README.md", "make_corpus.py"}
#: Side files read together with another corpus file (never run alone).
SIDE_FILES = {"catalog-curve-not-increasing.curves.csv": "catalog-curve-not-increasing.csv"}

SEED_PARTS = (
    {"part_number": "SEED-SW-150V-8A", "category": "switch", "subtype": "mosfet", "vds_max": "150 V",
     "id_max": "8 A", "tj_max": "150 degC", "description": "seed switch 150 V 8 A"},
    {"part_number": "SEED-C-10U-25V", "category": "capacitor", "subtype": "ceramic", "capacitance": "10 uF",
     "v_rated": "25 V", "dielectric": "X7R", "description": "seed ceramic 10 uF 25 V X7R"},
    {"part_number": "SEED-R-10K-0W1", "category": "resistor", "subtype": "thick_film", "resistance": "10 kOhm",
     "p_rated": "0.1 W", "description": "seed resistor 10k 0.1 W"},
)


# ---- the README tables --------------------------------------------------------------------------


def _table(section: str) -> list[list[str]]:
    """Rows (cells stripped, backticks removed, ``\\|`` unescaped) of the first table under ``## section``."""
    text = README.read_text(encoding="utf-8")
    body = text.split(f"## {section}\n", 1)[1].split("\n## ", 1)[0]
    rows = []
    for line in body.splitlines():
        if not line.startswith("|") or line.startswith("|---"):
            continue
        cells = [c.strip().replace("\\|", "|") for c in re.split(r"(?<!\\)\|", line)[1:-1]]
        rows.append([c[1:-1] if c.startswith("`") and c.endswith("`") and c.count("`") == 2 else c for c in cells])
    return rows[1:]  # without the header row


ERRORS = _table("Errors")
ACCEPTED = [row[0] for row in _table("Accepted: odd, but not errors (`accepted/`)")]


def _command(name: str, path: Path, db: Path) -> list[str]:
    kind = name.split("-", 1)[0]
    return {
        "bom": ["match", str(path), "--db", str(db)],
        "design": ["stress", str(path)],
        "policy": ["policy", "validate", str(path)],
        "catalog": ["catalog", "import", str(path), "--db", str(db)],
    }[kind]


# ---- the catalog and its fingerprint ----------------------------------------------------------


@pytest.fixture(scope="module")
def catalog(tmp_path_factory) -> Path:
    """A throw-away SQLite catalog holding the three SEED-* parts, closed (its WAL folded back)."""
    path = tmp_path_factory.mktemp("bad-inputs") / "catalog.sqlite"
    with open_catalog(path, create=True) as cat:
        for part in SEED_PARTS:
            cat.add(dict(part))
    return path


def fingerprint(db: Path) -> tuple[str, int]:
    """sha256 of the catalog's main file and the size of its write-ahead log (0 when absent).

    The catalog runs in WAL mode, so a committed write may sit in ``catalog.sqlite-wal`` and not
    yet in the main file.  When the last connection closes, SQLite checkpoints the log into the
    main file and deletes it; the seeding fixture closes its engine, so afterwards the main file
    holds the whole catalog and there is no log.  A command that wrote nothing leaves the main
    file byte-identical and adds no log content; a command that committed a change (or died
    before its checkpoint) changes the main file or leaves a non-empty log.  So the pair (hash of
    the main file, size of the log) before and after is a sound "nothing changed" test.  We do
    not open the database to checkpoint it ourselves: opening it is itself a use of the file.
    """
    wal = db.with_name(db.name + "-wal")
    return hashlib.sha256(db.read_bytes()).hexdigest(), wal.stat().st_size if wal.exists() else 0


def run_cli(*args: str, db: Path | None = None) -> subprocess.CompletedProcess:
    env = dict(os.environ, NO_COLOR="1", COLUMNS="200")
    if db is not None:
        env["PARTCHECK_DB"] = str(db)  # commands without --db would see this catalog too
    return subprocess.run([sys.executable, "-m", "partcheck", *args], check=False, capture_output=True, text=True,
                          encoding="utf-8", errors="replace", env=env, timeout=120)


# ---- coverage of the corpus ---------------------------------------------------------------------


def test_every_corpus_file_is_in_the_readme_and_every_row_has_a_file():
    on_disk = {p.name for p in CORPUS.iterdir() if p.is_file()} - NOT_INPUTS
    on_disk |= {f"accepted/{p.name}" for p in (CORPUS / "accepted").iterdir() if p.is_file()}
    listed = {row[0] for row in ERRORS} | set(ACCEPTED) | set(SIDE_FILES)
    assert on_disk - listed == set(), "corpus files missing from tests/bad_inputs/README.md"
    assert listed - on_disk == set(), "README rows naming files that do not exist"
    assert len(ERRORS) == len({row[0] for row in ERRORS}), "a file is listed twice"
    for name, main in SIDE_FILES.items():
        assert main in {row[0] for row in ERRORS}, name


def test_the_corpus_covers_every_kind():
    kinds = {}
    for row in ERRORS:
        kinds[row[0].split("-", 1)[0]] = kinds.get(row[0].split("-", 1)[0], 0) + 1
    assert set(kinds) == {"bom", "design", "policy", "catalog"}
    assert all(n >= 10 for n in kinds.values()), kinds
    assert sum(kinds.values()) >= 44


def test_every_accepted_file_has_its_own_test():
    assert set(ACCEPTED) == set(ACCEPTED_TESTS)


def test_the_table_rows_are_complete():
    for row in ERRORS:
        assert len(row) == 4 and all(row), row


# ---- the errors ---------------------------------------------------------------------------------


@pytest.mark.parametrize("name,what,where,message", ERRORS, ids=[row[0] for row in ERRORS])
def test_bad_input_is_refused_cleanly(name, what, where, message, catalog):
    path = CORPUS / name
    before = fingerprint(catalog)
    assert before[1] == 0, "the seeded catalog must have no write-ahead log left"
    proc = run_cli(*_command(name, path, catalog), db=catalog)
    stderr = " ".join(proc.stderr.split())  # rich may break a long line; compare with single spaces
    assert proc.returncode == 2, (proc.returncode, proc.stdout[-2000:], proc.stderr[-2000:])
    assert "Traceback" not in proc.stderr and "Traceback" not in proc.stdout
    assert proc.stderr.startswith("error: "), proc.stderr[:500]
    # the file named is this one, or the file of the same stem that holds the fault (a curve
    # side file, the other half of a cyclic extends)
    assert path.stem in stderr or (name.startswith("policy-cyclic") and "policy-cyclic-extends" in stderr), stderr
    if where != "whole file":
        assert where in stderr, f"expected the location {where!r} in: {stderr[:800]}"
    assert message in stderr, f"expected {message!r} in: {stderr[:800]}"
    assert fingerprint(catalog) == before, "the catalog changed"


# ---- accepted inputs ---------------------------------------------------------------------------


def _accepted(name: str) -> Path:
    return CORPUS / "accepted" / name


def _cells_safe(cells) -> list[str]:
    """The cells a spreadsheet would execute (should be none)."""
    return [c for c in cells if isinstance(c, str) and c.startswith(FORMULA_STARTS)]


HOSTILE = ['=HYPERLINK("http://x","y")', "+cmd|' /C calc'!A0", "-2+3+cmd|' /C calc'!A0",
           "@SUM(1+1)*cmd|' /C calc'!A0", "=1+1"]


def test_formula_cells_are_read_as_text_and_neutralised_on_export(tmp_path):
    bom = read_bom(_accepted("bom-formula-injection.csv"))
    cells = [cell for line in bom.lines for cell in line.raw.values()]
    for text in HOSTILE:
        assert text in cells, text  # read as written: nothing evaluated, nothing dropped
    status = {"partcheck_status": ["=SUM(1,2)"] + ["ok"] * (len(bom.lines) - 1)}  # an added column too

    out_csv = write_annotated_bom(bom, status, tmp_path / "annotated.csv")
    with out_csv.open(encoding="utf-8-sig", newline="") as fh:
        rows = list(csv.reader(fh))
    written = [c for row in rows for c in row]
    assert _cells_safe(written) == []
    for text in HOSTILE + ["=SUM(1,2)"]:
        assert "'" + text in written, text  # the apostrophe, then the text unchanged

    from openpyxl import load_workbook

    out_xlsx = write_annotated_bom(bom, status, tmp_path / "annotated.xlsx")
    sheet = load_workbook(out_xlsx).active
    values = []
    for row in sheet.iter_rows():
        for cell in row:
            if cell.column == 1 and cell.row > 1:  # the line number, written as a number
                assert cell.data_type == "n", (cell.coordinate, cell.value)
                continue
            # text ("s" shared or "inlineStr" inline string), never a formula ("f") or a number
            assert cell.data_type in ("s", "inlineStr"), (cell.coordinate, cell.value, cell.data_type)
            assert cell.value is None or isinstance(cell.value, str), (cell.coordinate, cell.value)
            values.append(cell.value)
    assert _cells_safe(values) == []
    for text in HOSTILE:
        assert "'" + text in values, text
    with zipfile.ZipFile(out_xlsx) as z:  # no formula element anywhere in the workbook's XML
        for item in z.namelist():
            if item.startswith("xl/worksheets/"):
                assert not re.search(rb"<(\w+:)?f[ >]", z.read(item)), item


def test_formula_cells_are_neutralised_in_match_csv_output(catalog):
    before = fingerprint(catalog)
    proc = run_cli("match", str(_accepted("bom-formula-injection.csv")), "--db", str(catalog), "--format", "csv")
    assert proc.returncode in (0, 1), proc.stderr
    assert "Traceback" not in proc.stderr
    rows = list(csv.reader(proc.stdout.splitlines()))
    assert len(rows) == 6  # header + 5 lines
    assert _cells_safe([c for row in rows for c in row]) == []
    assert rows[1][3] == '10uF | =HYPERLINK("http://x","y")'  # the text as read, not at the start of a cell
    assert rows[5][1] == "'=1 1"  # the reference "=1+1" (read as =1 and 1) starts its cell: neutralised
    assert fingerprint(catalog) == before


def test_script_text_in_a_bom_is_kept_as_plain_text(catalog):
    bom = read_bom(_accepted("bom-script-description.csv"))
    assert bom.lines[0].description == "<script>alert('partcheck')</script> Cap ceramic 10uF 25V X7R"
    assert bom.lines[1].description == "<img src=x onerror=alert(1)> Resistor 10k"
    proc = run_cli("match", str(_accepted("bom-script-description.csv")), "--db", str(catalog), "--format", "json")
    assert proc.returncode in (0, 1), proc.stderr
    texts = [m["text"] for m in json.loads(proc.stdout)["lines"]]
    assert texts == ["10uF | <script>alert('partcheck')</script> Cap ceramic 10uF 25V X7R",
                     "10k | <img src=x onerror=alert(1)> Resistor 10k"]


def test_a_duplicate_reference_warns_but_is_read(catalog):
    proc = run_cli("match", str(_accepted("bom-duplicate-reference.csv")), "--db", str(catalog))
    assert proc.returncode in (0, 1), proc.stderr
    assert "Traceback" not in proc.stderr
    assert "warning: line 3: reference C1 appears twice: on line 2 and on line 3" in proc.stderr
    assert [line.refs for line in read_bom(_accepted("bom-duplicate-reference.csv")).lines] == [("C1",), ("C1",)]


def test_a_bom_with_only_a_header_is_read_with_a_note(catalog):
    bom = read_bom(_accepted("bom-only-header.csv"))
    assert bom.lines == [] and bom.notices == ["the header row (line 1) has no lines below it"]
    proc = run_cli("match", str(_accepted("bom-only-header.csv")), "--db", str(catalog))
    assert proc.returncode == 0, proc.stderr
    assert "note: the header row (line 1) has no lines below it" in proc.stderr


def test_impossible_bom_values_warn_and_are_not_used():
    bom = read_bom(_accepted("bom-impossible-values.csv"))
    by_ref = {line.refs[0]: line for line in bom.lines}
    assert "capacitance" not in by_ref["C1"].values
    assert by_ref["C1"].warnings == ["capacitance -10 µF is negative; no part value or rating is, so it was not used"]
    for ref in ("C2", "C3"):
        assert "capacitance" not in by_ref[ref].values
        assert by_ref[ref].warnings and "no capacitance could be read" in by_ref[ref].warnings[0]
    assert "v_rated" not in by_ref["C4"].values and "the unit says a capacitance (F)" in by_ref["C4"].warnings[0]
    assert "v_rated" not in by_ref["R1"].values and "voltage rating -50 V is negative" in by_ref["R1"].warnings[0]
    assert by_ref["R1"].values == {"resistance": 10e3}


def test_a_cp1252_bom_is_read_with_a_notice():
    bom = read_bom(_accepted("bom-cp1252.csv"))
    assert bom.encoding == "cp1252"
    assert any("Windows-1252" in n for n in bom.notices)
    assert bom.lines[0].description == "Kondensator 4.7µF ±10% 25V"
    assert bom.lines[0].values["capacitance"] == pytest.approx(4.7e-6)


@pytest.fixture
def scratch_catalog(catalog, tmp_path) -> Path:
    """A copy of the seeded catalog that a test may change."""
    copy = tmp_path / "catalog.sqlite"
    shutil.copyfile(catalog, copy)
    return copy


def test_a_catalog_file_with_only_a_header_imports_nothing(scratch_catalog):
    before = fingerprint(scratch_catalog)
    proc = run_cli("catalog", "import", str(_accepted("catalog-only-header.csv")), "--db", str(scratch_catalog))
    assert proc.returncode == 0, proc.stderr
    assert "0 parts added, 0 updated" in proc.stdout
    assert fingerprint(scratch_catalog) == before


def test_script_text_in_a_catalog_description_is_stored_as_text(scratch_catalog):
    proc = run_cli("catalog", "import", str(_accepted("catalog-script-description.csv")), "--db", str(scratch_catalog))
    assert proc.returncode == 0, proc.stderr
    with open_catalog(scratch_catalog, create=False) as cat:
        part = cat.get("BAD-SW-SCRIPT")
    assert part.description == '<script>alert(1)</script> =HYPERLINK("http://x","y")'


def test_an_empty_policy_file_is_a_valid_policy_without_rules():
    proc = run_cli("policy", "validate", str(_accepted("policy-empty.toml")))
    assert proc.returncode == 0, proc.stderr
    assert "valid: 0 rules" in proc.stdout


def test_script_text_in_a_design_name_is_printed_as_text():
    proc = run_cli("stress", str(_accepted("design-script-name.toml")))
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.startswith("<script>alert(1)</script> =cmd|' /C calc'!A0: ")


ACCEPTED_TESTS = {
    "accepted/bom-formula-injection.csv": test_formula_cells_are_read_as_text_and_neutralised_on_export,
    "accepted/bom-script-description.csv": test_script_text_in_a_bom_is_kept_as_plain_text,
    "accepted/bom-duplicate-reference.csv": test_a_duplicate_reference_warns_but_is_read,
    "accepted/bom-only-header.csv": test_a_bom_with_only_a_header_is_read_with_a_note,
    "accepted/bom-impossible-values.csv": test_impossible_bom_values_warn_and_are_not_used,
    "accepted/bom-cp1252.csv": test_a_cp1252_bom_is_read_with_a_notice,
    "accepted/catalog-only-header.csv": test_a_catalog_file_with_only_a_header_imports_nothing,
    "accepted/catalog-script-description.csv": test_script_text_in_a_catalog_description_is_stored_as_text,
    "accepted/policy-empty.toml": test_an_empty_policy_file_is_a_valid_policy_without_rules,
    "accepted/design-script-name.toml": test_script_text_in_a_design_name_is_printed_as_text,
}
