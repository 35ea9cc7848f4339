"""Regenerate bom.xlsx, the BOM of the sic_gate_drive demo.

bom.xlsx is the artefact (it stands for a spreadsheet exported from a schematic tool, with that
tool's odd column names); this script exists only so maintainers can change it reproducibly:

    python sample_boms/sic_gate_drive/make_bom_xlsx.py

The expected catalog match of every line is listed in sample_boms/README.md and pinned in the tests.
"""

from pathlib import Path

from openpyxl import Workbook
from openpyxl.styles import Font

HEADER = ("Designator", "Comment", "Description", "Footprint", "Qty.", "Manufacturer Part")

ROWS = (
    ("C1, C2", "1uF", "MLCC 1uF 50V X7R, VCC / VIN decoupling", "0805", 2, "CC-X7R-105-50-0805"),
    ("C3-C5", "4.7uF", "MLCC 4.7uF 50V X7R input", "1210", 3, "CC-X7R-475-50-1210"),
    ("C6, C7", "4.7uF", "MLCC 4.7uF 50V X7R +18V output", "1210", 2, "cc-x7r-475-50-1210"),
    ("C8, C9", "10uF", "Ceramic cap 10u 25V X7R -4V output", "1206", 2, ""),
    ("D1", "100V 1A", "Schottky 100V 1A +18V rectifier", "SOD-123F", 1, ""),
    ("D2", "40V 1A", "Schottky 40V 1A -4V rectifier", "SOD-123F", 1, "DS-040-1A-SOD123F"),
    ("D3", "27V", "Zener 27V 1W primary clamp", "SMA", 1, "ZC-27V-1W-SMA-TR"),
    ("D4", "100V", "Ultrafast diode 100V 1A clamp blocking", "SMA", 1, "DU-100-1A-SMA"),
    ("Q1", "80V", "N-channel MOSFET 80V 24mOhm", "DFN3.3x3.3", 1, "SW-N080-R024-D33"),
    ("R1", "0R33", "Current sense resistor 0.33R 1% 0.5W", "1206", 1, "RC-R33-0W5-1206"),
    ("R2", "47k", "Resistor 47k 1% sense divider top", "0603", 1, ""),
    ("R3", "10k", "Resistor 10k 0.1% sense divider bottom", "0603", 1, "RT-10K0-B-0603"),
    ("R4", "10k", "Resistor 10k 1% preload, positive rail", "0805", 1, ""),
    ("R5", "2k2", "Resistor 2k2 1% preload, negative rail", "0603", 1, ""),
    ("R6", "10R", "Resistor 10R 1% gate", "0603", 1, ""),
    ("R7", "120R", "Resistor 120R 1% 1206 snubber across D1", "1206", 1, "RS-120R-F-1206"),
    ("C10", "220pF", "MLCC 220pF 250V C0G snubber across D1", "0805", 1, "CC-C0G-221-250-0805"),
    ("T1", "20uH", "Gate-drive transformer EP13 27:37:9 reinforced", "EP13", 1, "TX-EP13-20U-0R73"),
)


def main() -> Path:
    wb = Workbook()
    ws = wb.active
    ws.title = "BOM"
    ws.append(HEADER)
    for cell in ws[1]:
        cell.font = Font(bold=True)
    for row in ROWS:
        ws.append(row)
    for col, width in zip("ABCDEF", (12, 10, 48, 12, 6, 22)):
        ws.column_dimensions[col].width = width
    notes = wb.create_sheet("Notes")
    notes.append(("Isolated gate-drive supply +18 V / -4 V, invented demo BOM. The BOM is on the first sheet.",))
    target = Path(__file__).with_name("bom.xlsx")
    # fixed document properties so that regenerating gives the same content
    wb.properties.creator = "partcheck demo"
    wb.save(target)
    return target


if __name__ == "__main__":
    print(main())
