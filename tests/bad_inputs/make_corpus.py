"""Write the bad-input corpus (``python tests/bad_inputs/make_corpus.py``).

The files are committed; this script documents how the binary, huge and oddly encoded ones were
made and rewrites them all identically (random bytes come from a seeded generator, XLSX files
get a fixed timestamp).  Every part number, value and text in them is invented.  What each file
gets wrong, and the message it must produce, is in README.md beside this script.
"""

from __future__ import annotations

import io
import random
import zipfile
from datetime import datetime
from pathlib import Path

HERE = Path(__file__).resolve().parent
ACCEPTED = HERE / "accepted"

DESIGN = '''# A valid design; each design-* file of the corpus breaks it in one place.
name = "bad-input base design"

[converter]
switching = "fixed"
fsw = "100 kHz"
efficiency = 0.85
max_duty = 0.7

[input]
vin_min = "18 V"
vin_max = "32 V"

[[output]]
vout = "5 V"
iout = "1 A"
vf = "0.4 V"

[transformer]
lm = "100 uH"
turns_ratio = 4
llk = "1 uH"

[clamp]
kind = "zener"
vclamp = "40 V"

[environment]
ambient_max = "60 degC"
'''

POLICY = '''# A valid policy; each policy-* file of the corpus breaks it in one place.
name = "bad-input base policy"
extends = "industrial"
warn = 0.9

[rules.test-gan-voltage]
category = "switch"
subtype = "gan"
parameter = "voltage"
fraction = 0.7
source = "invented test rule"
confidence = "common practice"
'''

BOM = '''Reference,Quantity,Value,Description,Part Number
C1,1,10uF,"Cap ceramic 10uF 25V X7R, output",BAD-C-10U-25V
"R1,R2",2,10k,Resistor 10k 0.1W 1%,
'''

CATALOG_HEADER = "part_number,category,subtype,description,vds_max,id_max,tj_max\n"
CATALOG_ROW = "BAD-SW-100V-5A,switch,mosfet,invented switch 100 V 5 A,100 V,5 A,150 degC\n"

PNG_HEADER = b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR\x00\x00\x00\x10\x00\x00\x00\x10\x08\x02\x00\x00\x00" + bytes(40)


def _random_bytes(seed: int, n: int = 2048) -> bytes:
    rng = random.Random(seed)
    return bytes(rng.randrange(256) for _ in range(n))


def _zip_not_xlsx() -> bytes:
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as z:
        info = zipfile.ZipInfo("notes.txt", date_time=(2026, 1, 1, 0, 0, 0))
        z.writestr(info, "an archive of notes, not a workbook\n")
    return buf.getvalue()


def _xlsx(rows: list[list[object]]) -> bytes:
    from openpyxl import Workbook

    book = Workbook()
    book.properties.created = book.properties.modified = datetime(2026, 1, 1)
    sheet = book.active
    for row in rows:
        sheet.append(row)
    buf = io.BytesIO()
    book.save(buf)
    # openpyxl stamps the save time into docProps/core.xml: rewrite the archive with fixed times.
    out = io.BytesIO()
    with zipfile.ZipFile(buf) as src, zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as dst:
        for item in src.infolist():
            data = src.read(item.filename)
            if item.filename == "docProps/core.xml":
                import re

                data = re.sub(rb"<dcterms:modified[^>]*>[^<]*<", b'<dcterms:modified xsi:type="dcterms:W3CDTF">'
                              b"2026-01-01T00:00:00Z<", data)
            dst.writestr(zipfile.ZipInfo(item.filename, date_time=(2026, 1, 1, 0, 0, 0)), data)
    return out.getvalue()


def _design(old: str, new: str) -> str:
    assert DESIGN.count(old) == 1, old
    return DESIGN.replace(old, new)


def _policy(old: str, new: str) -> str:
    assert POLICY.count(old) == 1, old
    return POLICY.replace(old, new)


def corpus() -> dict[str, bytes | str]:
    """File name (relative to this folder) → content."""
    files: dict[str, bytes | str] = {}

    # ---- BOMs: read by `partcheck match FILE --db CATALOG` ---------------------------------
    files["bom-empty.csv"] = ""
    files["bom-random-bytes.csv"] = _random_bytes(1)
    files["bom-png-header.csv"] = PNG_HEADER
    files["bom-zip-not-xlsx.xlsx"] = _zip_not_xlsx()
    whole = _xlsx([["Reference", "Qty", "Value", "Description"], ["C1", 1, "10uF", "Cap ceramic 10uF 25V"]])
    files["bom-truncated.xlsx"] = whole[: len(whole) // 2]
    files["bom-truncated.csv"] = BOM + 'R3,1,4k7,"Resistor 4k7 0.1W, feedb'
    files["bom-utf16-no-bom.csv"] = BOM.encode("utf-16-le")
    files["bom-utf8-bom-invalid.csv"] = b"\xef\xbb\xbf" + BOM.encode() + b"C2,1,4\xb5F,Cap\n"
    files["bom-pdf.csv"] = b"%PDF-1.4\n%\xe2\xe3\xcf\xd3\n1 0 obj\n<< /Type /Catalog >>\nendobj\n"
    files["bom-missing-reference-column.csv"] = "Quantity,Value,Description\n1,10uF,Cap ceramic 10uF 25V\n"
    files["bom-missing-reference-column.xlsx"] = _xlsx([["Qty", "Value", "Description"],
                                                        [1, "10uF", "Cap ceramic 10uF 25V"]])
    files["bom-single-column.csv"] = "C1\nC2\nR1\nR2\n"
    files["bom-backwards-range.csv"] = BOM + "C9-C4,6,1uF,Cap ceramic 1uF 50V\n"
    files["bom-range-across-prefixes.csv"] = BOM + "C3-R5,3,1uF,Cap ceramic 1uF 50V\n"
    files["bom-range-too-large.csv"] = BOM + "R3-R99999,99997,1k,Resistor 1k\n"
    files["bom-huge-cell.csv"] = BOM + "C2,1,1uF," + "capacitor " * 100_000 + "\n"

    # ---- design files: `partcheck stress FILE` ---------------------------------------------
    files["design-empty.toml"] = ""
    files["design-toml-syntax-error.toml"] = _design('vin_max = "32 V"', 'vin_max = "32 V')
    files["design-truncated.toml"] = DESIGN[: DESIGN.index("[transformer]") + 18]
    files["design-random-bytes.toml"] = _random_bytes(2)
    files["design-utf16-no-bom.toml"] = DESIGN.encode("utf-16-le")
    files["design-unknown-key.toml"] = _design("max_duty = 0.7", 'max_duty = 0.7\nfws = "100 kHz"')
    files["design-wrong-type.toml"] = _design("efficiency = 0.85", 'efficiency = "high"')
    files["design-vin-min-above-max.toml"] = _design('vin_min = "18 V"', 'vin_min = "40 V"')
    files["design-negative-inductance.toml"] = _design('lm = "100 uH"', 'lm = "-100 uH"')
    files["design-efficiency-above-one.toml"] = _design("efficiency = 0.85", "efficiency = 1.5")
    files["design-duty-beyond-max.toml"] = (DESIGN.replace("turns_ratio = 4", "turns_ratio = 12")
                                            .replace('vclamp = "40 V"', 'vclamp = "150 V"')
                                            .replace('lm = "100 uH"', 'lm = "2 mH"'))
    files["design-nan.toml"] = _design('vin_max = "32 V"', "vin_max = nan")
    files["design-wrong-unit-kind.toml"] = _design('vin_max = "32 V"', 'vin_max = "22uF"')
    files["design-missing-converter.toml"] = _design(
        '[converter]\nswitching = "fixed"\nfsw = "100 kHz"\nefficiency = 0.85\nmax_duty = 0.7\n\n', "")
    files["design-deep-nesting.toml"] = _design('ambient_max = "60 degC"',
                                                'ambient_max = "60 degC"\nambient_min = ' + "[" * 5000 + "]" * 5000)
    files["design-huge-value.toml"] = _design('vin_max = "32 V"', 'vin_max = "' + "3" * 250_000 + ' V"')

    # ---- policies: `partcheck policy validate FILE` ----------------------------------------
    files["policy-toml-syntax-error.toml"] = _policy("fraction = 0.7", "fraction = 0..7")
    files["policy-truncated.toml"] = POLICY[: POLICY.index('parameter = "voltage"') + 16]
    files["policy-random-bytes.toml"] = _random_bytes(3)
    files["policy-utf16-no-bom.toml"] = POLICY.encode("utf-16-le")
    files["policy-unknown-key.toml"] = _policy("warn = 0.9", 'warn = 0.9\nstrictness = "high"')
    files["policy-unknown-rule-key.toml"] = _policy("fraction = 0.7", "fraction = 0.7\nfactor = 0.5")
    files["policy-wrong-type.toml"] = _policy("warn = 0.9", "warn = 0.9\nfail_unmatched = \"yes\"")
    files["policy-fraction-above-one.toml"] = _policy("fraction = 0.7", "fraction = 1.5")
    files["policy-fraction-negative.toml"] = _policy("fraction = 0.7", "fraction = -0.2")
    files["policy-fraction-nan.toml"] = _policy("fraction = 0.7", "fraction = nan")
    files["policy-max-wrong-unit.toml"] = _policy("fraction = 0.7", 'max = "22 uF"')
    files["policy-warn-out-of-range.toml"] = _policy("warn = 0.9", "warn = 1.2")
    files["policy-extends-itself.toml"] = _policy('extends = "industrial"', 'extends = "policy-extends-itself.toml"')
    files["policy-cyclic-extends-a.toml"] = _policy('extends = "industrial"', 'extends = "policy-cyclic-extends-b.toml"')
    files["policy-cyclic-extends-b.toml"] = _policy('extends = "industrial"', 'extends = "policy-cyclic-extends-a.toml"')
    files["policy-extends-missing-file.toml"] = _policy('extends = "industrial"', 'extends = "no-such-policy.toml"')
    files["policy-missing-source.toml"] = _policy('source = "invented test rule"\n', "")
    files["policy-duplicate-selector.toml"] = POLICY + (
        '\n[rules.test-gan-voltage-again]\ncategory = "switch"\nsubtype = "gan"\nparameter = "voltage"\n'
        'fraction = 0.6\nsource = "invented test rule"\nconfidence = "common practice"\n')
    files["policy-deep-nesting.toml"] = _policy("warn = 0.9", "warn = 0.9\ndescription = " + "[" * 5000 + "]" * 5000)

    # ---- catalog spreadsheets: `partcheck catalog import FILE --db CATALOG` ----------------
    files["catalog-empty.csv"] = ""
    files["catalog-empty-sheet.xlsx"] = _xlsx([])
    files["catalog-random-bytes.csv"] = _random_bytes(4)
    files["catalog-zip-not-xlsx.xlsx"] = _zip_not_xlsx()
    files["catalog-truncated.csv"] = CATALOG_HEADER + CATALOG_ROW + 'BAD-SW-200V-3A,switch,mosfet,"invented switch, 2'
    files["catalog-utf16-no-bom.csv"] = (CATALOG_HEADER + CATALOG_ROW).encode("utf-16-le")
    files["catalog-latin1.csv"] = (CATALOG_HEADER + CATALOG_ROW.replace("invented switch", "Schalter für")).encode(
        "latin-1")
    files["catalog-unknown-column.csv"] = "part_number,category,vds_max,colour\nBAD-SW-1,switch,100 V,blue\n"
    files["catalog-missing-category.csv"] = "part_number,vds_max\nBAD-SW-1,100 V\n"
    files["catalog-duplicate-part-number.csv"] = (CATALOG_HEADER + CATALOG_ROW
                                                  + CATALOG_ROW.replace("100 V,5 A", "120 V,6 A"))
    files["catalog-already-in-catalog.csv"] = (CATALOG_HEADER
                                               + "SEED-SW-150V-8A,switch,mosfet,a new rating,160 V,8 A,150 degC\n")
    files["catalog-wrong-unit-kind.csv"] = CATALOG_HEADER + CATALOG_ROW.replace("100 V,5 A", "22uF,5 A")
    files["catalog-negative-rating.csv"] = CATALOG_HEADER + CATALOG_ROW.replace("100 V,5 A", "-100 V,5 A")
    files["catalog-nan-rating.csv"] = CATALOG_HEADER + CATALOG_ROW.replace("100 V,5 A", "NaN,5 A")
    files["catalog-inf-rating.json"] = ('{"parts": [{"part_number": "BAD-SW-1", "category": "switch", '
                                        '"vds_max": Infinity}]}\n')
    files["catalog-row-too-wide.csv"] = CATALOG_HEADER + CATALOG_ROW.replace("\n", ",extra,cells\n")
    files["catalog-huge-cell.csv"] = CATALOG_HEADER + CATALOG_ROW.replace("invented switch", "switch " * 150_000)
    files["catalog-bad-json.json"] = '{"parts": [{"part_number": "BAD-SW-1", "category": "switch",}\n'
    files["catalog-json-object-category.json"] = ('{"parts": [{"part_number": ["BAD-SW-1"],\n'
                                                  '            "category": {"name": "switch"}}]}\n')
    files["catalog-deep-nesting.json"] = '{"parts": ' + "[" * 100_000 + "]" * 100_000 + "}\n"
    files["catalog-curve-not-increasing.csv"] = (
        "part_number,category,subtype,capacitance,v_rated,dielectric\nBAD-C-10U-25V,capacitor,ceramic,10 uF,25 V,X7R\n")
    files["catalog-curve-not-increasing.curves.csv"] = (
        "part_number,curve,x,y\nBAD-C-10U-25V,dc_bias,0 V,1.0\nBAD-C-10U-25V,dc_bias,12 V,0.55\n"
        "BAD-C-10U-25V,dc_bias,6 V,0.8\n")

    # ---- accepted: odd but not errors (tests/test_bad_inputs.py says what each must do) ----
    files["accepted/bom-formula-injection.csv"] = (
        "Reference,Quantity,Value,Description,Part Number\n"
        'C1,1,10uF,"=HYPERLINK(""http://x"",""y"")",SEED-C-10U-25V\n'
        "R1,1,10k,+cmd|' /C calc'!A0,\n"
        "R2,1,10k,-2+3+cmd|' /C calc'!A0,\n"
        "R3,1,10k,@SUM(1+1)*cmd|' /C calc'!A0,\n"
        '"=1+1",1,10k,Resistor,\n')
    files["accepted/bom-script-description.csv"] = (
        "Reference,Quantity,Value,Description\n"
        "C1,1,10uF,<script>alert('partcheck')</script> Cap ceramic 10uF 25V X7R\n"
        'R1,1,10k,"<img src=x onerror=alert(1)> Resistor 10k"\n')
    files["accepted/bom-duplicate-reference.csv"] = (
        "Reference,Quantity,Value,Description\nC1,1,10uF,Cap ceramic 10uF 25V\nC1,1,10uF,Cap ceramic 10uF 25V\n")
    files["accepted/bom-only-header.csv"] = "Reference,Quantity,Value,Description\n"
    files["accepted/bom-impossible-values.csv"] = (
        "Reference,Quantity,Value,Voltage,Description\n"
        "C1,1,-10uF,25V,Cap ceramic\n"
        "C2,1,NaN,25V,Cap ceramic\n"
        "C3,1,inf F,25V,Cap ceramic\n"
        "C4,1,10uF,22uF,Cap ceramic\n"
        "R1,1,10k,-50V,Resistor\n")
    files["accepted/bom-cp1252.csv"] = ("Reference,Quantity,Value,Description\n"
                                        "C1,1,4.7µF,Kondensator 4.7µF ±10% 25V\n").encode("cp1252")
    files["accepted/catalog-only-header.csv"] = CATALOG_HEADER
    files["accepted/catalog-script-description.csv"] = (
        "part_number,category,description,vds_max\n"
        'BAD-SW-SCRIPT,switch,"<script>alert(1)</script> =HYPERLINK(""http://x"",""y"")",100 V\n')
    files["accepted/policy-empty.toml"] = ""
    files["accepted/design-script-name.toml"] = _design('name = "bad-input base design"',
                                                        'name = "<script>alert(1)</script> =cmd|\' /C calc\'!A0"')
    return files


def main() -> None:
    ACCEPTED.mkdir(exist_ok=True)
    for name, content in corpus().items():
        data = content.encode("utf-8") if isinstance(content, str) else content
        (HERE / name).write_bytes(data)


if __name__ == "__main__":
    main()
