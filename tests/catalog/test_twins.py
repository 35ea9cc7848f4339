"""Part-number twins: spellings that differ only in letter case or Unicode form are one part number.

The key is ``unicodedata.normalize("NFKC", pn).casefold()`` (``models.part_number_key``).  An
import holding two twins, or a twin of a stored part, is refused with every import's
all-or-nothing rule, in the whole and the streamed path and on every backend.
"""

from __future__ import annotations

import unicodedata

import pytest

from partcheck.catalog import open_catalog, store
from partcheck.catalog.models import part_number_key
from partcheck.errors import CatalogInputError, NotFoundError

from .conftest import engine_for, write
from .test_cli import cli

HEAD = "part_number,category,resistance\n"
TWIN = "(differs only in letter case or Unicode form)"
NFC = unicodedata.normalize("NFC", "R-CAFÉ-1K")  # É as one code point, U+00C9
NFD = unicodedata.normalize("NFD", "R-CAFÉ-1K")  # E followed by the combining acute accent U+0301


def test_the_key_folds_case_and_unicode_forms():
    assert unicodedata.normalize("NFKC", "\u00b5") == "\u03bc"  # NFKC maps the micro sign to the Greek mu
    assert part_number_key("R-10\u00b5") == part_number_key("r-10\u03bc") == "r-10\u03bc"
    assert NFC != NFD and part_number_key(NFC) == part_number_key(NFD) == "r-café-1k"
    assert part_number_key("\uff32-\uff11\uff2b") == part_number_key("R-1K")  # full-width forms
    assert part_number_key("R-1K") != part_number_key("R-1K0")


@pytest.mark.parametrize(("first", "second", "shown_first", "shown_second"), [
    ("R-4K7-A", "r-4k7-a", "'R-4K7-A'", "'r-4k7-a'"),
    (NFC, NFD, r"'R-CAF\xc9-1K'", r"'R-CAFE\u0301-1K'"),
    ("R-10\u00b5-X", "R-10\u03bc-X", r"'R-10\xb5-X'", r"'R-10\u03bc-X'"),
], ids=["case", "nfc-nfd", "micro-sign"])
def test_two_twins_in_one_file_are_refused_naming_both_lines(tmp_path, catalog, first, second, shown_first,
                                                             shown_second):
    path = write(tmp_path / "in.csv", HEAD + f"{first},resistor,1k\nR-OTHER,resistor,2k\n{second},resistor,1k\n")
    before = catalog.snapshot_hash()
    with pytest.raises(CatalogInputError) as info:
        catalog.import_file(path)
    assert str(info.value) == (f"{path}, line 4, column 'part_number': part number {shown_second} is the same part "
                               f"number as {shown_first} on line 2 {TWIN}; nothing was imported")
    assert catalog.snapshot_hash() == before and catalog.count() == 12


def test_a_twin_of_a_stored_part_is_refused_naming_the_stored_spelling(tmp_path, catalog):
    path = write(tmp_path / "in.csv", HEAD + "R-NEW,resistor,1k\ntst-r-4k7-0w25,resistor,4k7\n"
                                             "\uff34\uff33\uff34-R-0R1-1W,resistor,0R1\n")
    before = catalog.snapshot_hash()
    for update in (False, True):  # --update replaces a stored spelling, never its twin
        with pytest.raises(CatalogInputError) as info:
            catalog.import_file(path, update=update)
        assert str(info.value) == (
            f"{path}: 2 problems, nothing was imported:\n"
            f"  line 3, column 'part_number': part number 'tst-r-4k7-0w25' is the same part number as the stored "
            f"'TST-R-4K7-0W25' {TWIN}\n"
            r"  line 4, column 'part_number': part number '\uff34\uff33\uff34-R-0R1-1W' is the same part number as "
            f"the stored 'TST-R-0R1-1W' {TWIN}")
        assert catalog.snapshot_hash() == before and catalog.count() == 12
    with pytest.raises(CatalogInputError) as info:
        catalog.add({"part_number": "tst-d-100v-3a", "category": "diode"})
    assert str(info.value) == (f"column 'part_number': part number 'tst-d-100v-3a' is the same part number as the "
                               f"stored 'TST-D-100V-3A' {TWIN}; nothing was added")
    assert catalog.snapshot_hash() == before


def test_the_exact_spelling_is_still_updated_or_refused_as_before(tmp_path, catalog):
    path = write(tmp_path / "in.csv", HEAD + "TST-R-4K7-0W25,resistor,4k8\n")
    with pytest.raises(CatalogInputError, match="part number 'TST-R-4K7-0W25' is already in the catalog; import with "
                                                "--update to replace it; nothing was imported"):
        catalog.import_file(path)
    assert catalog.import_file(path, update=True).updated == 1
    assert catalog.get("TST-R-4K7-0W25").resistance == 4800.0 and catalog.count() == 12


def test_a_twin_in_a_streamed_import_is_refused_with_the_same_message(tmp_path, catalog_url, monkeypatch):
    rows = [f"R-{i:03d},resistor,{i + 1}k\n" for i in range(30)]
    rows[17] = "r-003,resistor,1k\n"          # line 19, chunk 4: twin of line 5 (chunk 1)
    rows[26] = "TST-r-4K7-0W25,resistor,1k\n"  # line 28, chunk 6: twin of a stored part
    path = write(tmp_path / "big.csv", HEAD + "".join(rows))
    expected = (f"{path}: 2 problems, nothing was imported:\n"
                f"  line 19, column 'part_number': part number 'r-003' is the same part number as 'R-003' on line 5 "
                f"{TWIN}\n"
                f"  line 28, column 'part_number': part number 'TST-r-4K7-0W25' is the same part number as the stored "
                f"'TST-R-4K7-0W25' {TWIN}")
    small = tmp_path / "stored.csv"
    write(small, "part_number,category,resistance\nTST-R-4K7-0W25,resistor,4k7\n")
    for location, chunk in ((tmp_path / "whole.sqlite", store.IMPORT_CHUNK), (catalog_url, 5)):
        with open_catalog(location) as cat:
            cat.import_file(small)
            before = cat.snapshot_hash()
            monkeypatch.setattr(store, "IMPORT_CHUNK", chunk)
            with pytest.raises(CatalogInputError) as info:
                cat.import_file(path)
            assert str(info.value) == expected, chunk
            assert cat.snapshot_hash() == before and cat.count() == 1
            monkeypatch.setattr(store, "IMPORT_CHUNK", 20_000)


def test_a_twin_across_chunks_written_before_is_named_as_in_the_file(tmp_path, catalog_url, monkeypatch):
    # The first chunks are written inside the import's transaction before the twin's chunk is read;
    # the twin is still reported as a twin of the file's own line, and nothing stays written.
    rows = [f"R-{i:03d},resistor,{i + 1}k\n" for i in range(12)] + ["R-\uff10\uff10\uff11,resistor,1k\n"]
    path = write(tmp_path / "big.csv", HEAD + "".join(rows))
    monkeypatch.setattr(store, "IMPORT_CHUNK", 5)
    with open_catalog(catalog_url) as cat:
        with pytest.raises(CatalogInputError) as info:
            cat.import_file(path)
        assert str(info.value) == (rf"{path}, line 14, column 'part_number': part number 'R-\uff10\uff10\uff11' is "
                                   f"the same part number as 'R-001' on line 3 {TWIN}; nothing was imported")
        assert cat.count() == 0


def test_lookups_tolerate_twins_but_the_exact_spelling_wins(catalog):
    assert catalog.get("tst-sw-150v-8a").part_number == "TST-SW-150V-8A"
    assert catalog.get("\uff34\uff33\uff34-SW-150V-8A").part_number == "TST-SW-150V-8A"
    assert catalog.updated_at("tst-sw-150v-8a") == catalog.updated_at("TST-SW-150V-8A") is not None
    with pytest.raises(NotFoundError, match="part 'TST-SW-150V-8B' is not in the catalog"):
        catalog.get("TST-SW-150V-8B")
    with pytest.raises(NotFoundError, match="part 'tst-sw-150v-8a' is not in the catalog"):
        catalog.remove("tst-sw-150v-8a")  # removing takes the exact spelling
    assert catalog.count() == 12


def test_every_write_stores_the_key(tmp_path, catalog_url):
    with open_catalog(catalog_url) as cat:
        cat.import_file(write(tmp_path / "a.csv", HEAD + "R-Ä-1,resistor,1k\n"))
        cat.add({"part_number": "R-\u00b5-2", "category": "resistor", "resistance": "2k"})
        cat.import_file(write(tmp_path / "b.csv", HEAD + "R-Ä-1,resistor,3k\n"), update=True)
        cat.copy_to(tmp_path / "copy.sqlite")
    for location in (catalog_url, tmp_path / "copy.sqlite"):
        engine = engine_for(location)
        try:
            with engine.connect() as conn:
                rows = conn.exec_driver_sql("select part_number, part_number_key from part").all()
        finally:
            engine.dispose()
        assert sorted(rows) == [("R-\u00b5-2", "r-\u03bc-2"), ("R-Ä-1", "r-ä-1")], location


def test_the_import_command_refuses_a_twin_with_exit_code_2(tmp_path):
    db = tmp_path / "c.sqlite"
    assert cli("import", str(write(tmp_path / "a.csv", HEAD + "R-1K,resistor,1k\n")), db=db).exit_code == 0
    result = cli("import", str(write(tmp_path / "b.csv", HEAD + "r-1k,resistor,1k\n")), db=db)
    assert result.exit_code == 2
    assert f"line 2, column 'part_number': part number 'r-1k' is the same part number as the stored 'R-1K' {TWIN}" \
        in result.stderr
