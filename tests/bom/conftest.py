"""Fixtures for the BOM tests: a small invented catalog and helpers to write BOM files."""

from __future__ import annotations

from pathlib import Path

import pytest

from partcheck.catalog.models import PartRecord


def _cap(pn, c, v, diel, case, sub="ceramic", desc=None, tol=0.1):
    return PartRecord(part_number=pn, category="capacitor", subtype=sub, capacitance=c, v_rated=v, dielectric=diel,
                      case_size=case, tolerance=tol, description=desc or f"MLCC {diel} {case}")


def small_parts() -> list[PartRecord]:
    """Invented parts with near neighbours, so that the right neighbour has to win."""
    return [
        _cap("KC-106-25-X7R-1206", 10e-6, 25.0, "X7R", "1206"),
        _cap("KC-106-50-X7R-1206", 10e-6, 50.0, "X7R", "1206"),
        _cap("KC-106-25-X7R-0805", 10e-6, 25.0, "X7R", "0805"),
        _cap("KC-226-10-X5R-1206", 22e-6, 10.0, "X5R", "1206"),
        _cap("KC-475-50-X7R-1210", 4.7e-6, 50.0, "X7R", "1210"),
        _cap("KC-104-100-X7R-0603", 100e-9, 100.0, "X7R", "0603"),
        _cap("KC-102-1K-C0G-1206", 1e-9, 1000.0, "C0G", "1206"),
        _cap("KE-471-35-RAD", 470e-6, 35.0, None, None, sub="aluminium_electrolytic",
             desc="aluminium electrolytic 105C low ESR radial", tol=0.2),
        PartRecord(part_number="KR-4K70-0603-1", category="resistor", subtype="thick_film", resistance=4700.0,
                   tolerance=0.01, p_rated=0.1, package="0603", description="thick film chip resistor"),
        PartRecord(part_number="KR-4K70-0805-1", category="resistor", subtype="thick_film", resistance=4700.0,
                   tolerance=0.01, p_rated=0.125, package="0805", description="thick film chip resistor"),
        PartRecord(part_number="KR-0R47-2512-1", category="resistor", subtype="current_sense", resistance=0.47,
                   tolerance=0.01, p_rated=1.0, package="2512", description="current sense resistor"),
        PartRecord(part_number="KD-SK-40V-3A-SMA", category="diode", subtype="schottky", vrrm=40.0, if_avg=3.0,
                   package="SMA", description="schottky rectifier"),
        PartRecord(part_number="KD-SK-100V-3A-SMB", category="diode", subtype="schottky", vrrm=100.0, if_avg=3.0,
                   package="SMB", description="schottky rectifier"),
        PartRecord(part_number="KD-UF-200V-1A-SMA", category="diode", subtype="ultrafast", vrrm=200.0, if_avg=1.0,
                   package="SMA", description="ultrafast rectifier"),
        PartRecord(part_number="KZ-150V-SMB", category="clamp", subtype="tvs", v_breakdown=150.0, p_max=5.0,
                   package="SMB", description="TVS clamp 600 W peak"),
        PartRecord(part_number="KQ-650V-4A-DPAK", category="switch", subtype="mosfet", vds_max=650.0, id_max=4.0,
                   package="DPAK", description="N-channel MOSFET 650 V"),
        PartRecord(part_number="KT-FLY-EFD20-5V", category="magnetic", subtype="transformer", lm=600e-6,
                   turns_ratio=6.0, description="flyback transformer EFD20 24 V to 5 V"),
        PartRecord(part_number="KO-CTR100-DIP4", category="optocoupler", package="SOP4",
                   description="optocoupler CTR 100-300 %"),
    ]


@pytest.fixture
def parts() -> list[PartRecord]:
    return small_parts()


@pytest.fixture
def write(tmp_path):
    """write(name, text_or_bytes, encoding="utf-8") -> Path"""

    def _write(name: str, content, encoding: str = "utf-8") -> Path:
        p = tmp_path / name
        if isinstance(content, bytes):
            p.write_bytes(content)
        else:
            p.write_bytes(content.encode(encoding))
        return p

    return _write


def make_catalog_file(path: Path) -> Path:
    """A real SQLite catalog at ``path`` holding :func:`small_parts`, imported through the catalog's API."""
    import csv
    from dataclasses import fields

    from partcheck.catalog.store import open_catalog

    parts = small_parts()
    names = [f.name for f in fields(PartRecord) if f.name != "curves"
             and any(getattr(p, f.name) is not None for p in parts)]
    source = path.with_suffix(".csv")
    with source.open("w", newline="", encoding="utf-8") as fh:
        writer = csv.writer(fh)
        writer.writerow(names)
        for part in parts:
            writer.writerow(["" if getattr(part, n) is None else getattr(part, n) for n in names])
    with open_catalog(path, create=True) as cat:
        cat.import_file(source)
    return path


@pytest.fixture(scope="session")
def catalog_file(tmp_path_factory) -> Path:
    return make_catalog_file(tmp_path_factory.mktemp("catalog") / "small.sqlite")
