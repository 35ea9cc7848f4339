"""The three sample BOMs match exactly as sample_boms/README.md records, read without --columns.

Each row: (line in the file / spreadsheet row, references, status, catalog part, method).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from partcheck.bom import match_bom, read_bom
from partcheck.catalog.seed import demo_catalog

ROOT = Path(__file__).resolve().parents[2]

EXPECTED = {
    "sample_boms/remote_io_24v/bom.csv": [
        (2, ('C1',), 'matched', 'CEH-470-63-8x11.5', 'exact'),
        (3, ('C2', 'C3', 'C4'), 'matched', 'CC-X7R-225-100-1210', 'normalized'),
        (4, ('C5',), 'matched', 'CP-331-10-8x9', 'exact'),
        (5, ('C6', 'C7'), 'matched', 'CC-X7R-226-16-1210', 'normalized'),
        (6, ('C8',), 'matched', 'CC-X7R-475-50-1206', 'fuzzy'),
        (7, ('C9',), 'matched', 'CC-X7R-104-50-0603', 'fuzzy'),
        (8, ('C10',), 'matched', 'CC-C0G-102-100-0603', 'exact'),
        (9, ('C11',), 'matched', 'CC-X7R-102-2000-1812', 'fuzzy'),
        (10, ('D1',), 'matched', 'DS-045-10A-DPK', 'exact'),
        (11, ('D2',), 'matched', 'ZC-27V-3W-SMB', 'normalized'),
        (12, ('D3',), 'matched', 'DU-200-1A-SMA', 'exact'),
        (13, ('D4',), 'matched', 'DR-100-0A3-SOD123', 'fuzzy'),
        (14, ('L1',), 'matched', 'LI-10U-2A-5050', 'exact'),
        (15, ('Q1',), 'matched', 'SW-N150-R050-D56', 'exact'),
        (16, ('R1',), 'matched', 'RC-R15-1W-2512', 'exact'),
        (17, ('R2',), 'matched', 'RS-47K0-F-0603', 'fuzzy'),
        (18, ('R3',), 'matched', 'RS-10K0-F-0603', 'exact'),
        (19, ('R4',), 'matched', 'RS-100K-F-1206', 'fuzzy'),
        (20, ('R5',), 'matched', 'RS-2K2-F-0805', 'fuzzy'),
        (21, ('R6',), 'matched', 'RS-10R-F-0603', 'fuzzy'),
        (22, ('R7',), 'matched', 'RS-100K-F-0603', 'fuzzy'),
        (23, ('T1',), 'matched', 'TX-EFD20-27U-3R5', 'exact'),
        (24, ('R8',), 'matched', 'RS-6R8-F-1206', 'exact'),
    ],
    "sample_boms/battery_monitor_48v/bom.csv": [
        (4, ('C1',), 'matched', 'CEH-330-100-8x11.5', 'exact'),
        (5, ('C5',), 'matched', 'CC-X7R-103-250-1206', 'fuzzy'),
        (6, ('C6',), 'matched', 'CC-X7R-475-50-1206', 'fuzzy'),
        (7, ('C7', 'C8', 'C9'), 'matched', 'CC-X7R-105-250-1210', 'exact'),
        (8, ('C10',), 'matched', 'CEG-101-25-6.3x11', 'exact'),
        (9, ('C11',), 'matched', 'CC-X7R-225-25-0805', 'exact'),
        (10, ('C12',), 'matched', 'CC-X7R-104-50-0603', 'fuzzy'),
        (11, ('D1',), 'matched', 'DU-050-2A-SMB', 'exact'),
        (12, ('D2',), 'matched', 'DU-200-1A-SMA', 'normalized'),
        (13, ('D3',), 'matched', 'DR-100-0A3-SOD123', 'fuzzy'),
        (14, ('Q1',), 'matched', 'SW-N200-R350-DPK', 'exact'),
        (15, ('R4',), 'matched', 'RC-R68-0W5-1206', 'fuzzy'),
        (16, ('R5',), 'matched', 'RT-49K9-B-0603', 'exact'),
        (17, ('R6',), 'matched', 'RT-10K0-B-0603', 'exact'),
        (18, ('R7', 'R8'), 'matched', 'RS-1K0-F-0603', 'fuzzy'),
        (19, ('R9',), 'matched', 'RS-10R-F-0603', 'fuzzy'),
        (20, ('R10', 'R11'), 'matched', 'RS-22K0-F-2512', 'normalized'),
        (21, ('R12',), 'matched', 'RS-200K-F-1206', 'fuzzy'),
        (22, ('R13',), 'matched', 'RS-120R-F-1206', 'exact'),
        (23, ('C13',), 'matched', 'CC-C0G-221-250-0805', 'exact'),
        (24, ('T1',), 'matched', 'TX-EE16-200U-2R0', 'exact'),
        (25, ('U2',), 'matched', 'OC-CTR100-SOP4', 'exact'),
        (26, ('U3',), 'matched', 'VR-2V50-1-S23', 'exact'),
    ],
    "sample_boms/sic_gate_drive/bom.xlsx": [
        (2, ('C1', 'C2'), 'matched', 'CC-X7R-105-50-0805', 'exact'),
        (3, ('C3', 'C4', 'C5'), 'matched', 'CC-X7R-475-50-1210', 'exact'),
        (4, ('C6', 'C7'), 'matched', 'CC-X7R-475-50-1210', 'normalized'),
        (5, ('C8', 'C9'), 'matched', 'CC-X7R-106-25-1206', 'fuzzy'),
        (6, ('D1',), 'matched', 'DS-100-1A-SOD123F', 'fuzzy'),
        (7, ('D2',), 'matched', 'DS-040-1A-SOD123F', 'exact'),
        (8, ('D3',), 'matched', 'ZC-27V-1W-SMA', 'normalized'),
        (9, ('D4',), 'matched', 'DU-100-1A-SMA', 'exact'),
        (10, ('Q1',), 'matched', 'SW-N080-R024-D33', 'exact'),
        (11, ('R1',), 'matched', 'RC-R33-0W5-1206', 'exact'),
        (12, ('R2',), 'matched', 'RS-47K0-F-0603', 'fuzzy'),
        (13, ('R3',), 'matched', 'RT-10K0-B-0603', 'exact'),
        (14, ('R4',), 'matched', 'RS-10K0-F-0805', 'fuzzy'),
        (15, ('R5',), 'matched', 'RS-2K2-F-0603', 'fuzzy'),
        (16, ('R6',), 'matched', 'RS-10R-F-0603', 'fuzzy'),
        (17, ('R7',), 'matched', 'RS-120R-F-1206', 'exact'),
        (18, ('C10',), 'matched', 'CC-C0G-221-250-0805', 'exact'),
        (19, ('T1',), 'matched', 'TX-EP13-20U-0R73', 'exact'),
    ],
}


@pytest.fixture(scope="module")
def seed_parts(tmp_path_factory):
    catalog = demo_catalog(tmp_path_factory.mktemp("seed"))
    try:
        yield catalog.parts()
    finally:
        catalog.close()


@pytest.mark.parametrize("bom_path", sorted(EXPECTED))
def test_sample_bom_matches_as_recorded(bom_path, seed_parts):
    bom = read_bom(ROOT / bom_path)
    got = [(m.line, m.refs, m.status, m.part_number, m.method) for m in match_bom(bom, seed_parts)]
    assert got == EXPECTED[bom_path]
    assert all(not ln.warnings for ln in bom.lines)


def test_semicolon_sample_reads_its_layout():
    bom = read_bom(ROOT / "sample_boms/battery_monitor_48v/bom.csv")
    assert (bom.delimiter, bom.header_line, bom.encoding, bom.decimal_comma) == (";", 3, "utf-8-sig", True)
    c11 = next(ln for ln in bom.lines if ln.refs == ("C11",))
    assert c11.values["capacitance"] == pytest.approx(2.2e-6)


def test_xlsx_sample_reads_first_sheet_with_odd_headers():
    bom = read_bom(ROOT / "sample_boms/sic_gate_drive/bom.xlsx")
    assert bom.sheet == "BOM"
    assert bom.column_map == {"ref": "Designator", "value": "Comment", "description": "Description",
                              "package": "Footprint", "qty": "Qty.", "part_number": "Manufacturer Part"}
