"""Catalog import speed: 100,000 generated parts through the bulk path, 5,000 through the ORM.

Both paths include reading and validating the CSV (unit parsing, category checks) and the one
commit.  The generated rows are invented: a mix of every category, cells written with units
the way people type them ("100 V", "4k7", "22u", "±5%"), so the parser is exercised.
"""

from __future__ import annotations

import random
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from partcheck.catalog import open_catalog
from partcheck.catalog.models import FIELDS

BULK_ROWS = 100_000
ORM_ROWS = 5_000

_E12 = (1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2)


def _row(i: int, rng: random.Random) -> dict[str, str]:
    e = rng.choice(_E12)
    kind = i % 5
    if kind == 0:
        return {"category": "switch", "subtype": "mosfet", "vds_max": f"{rng.choice((40, 60, 100, 150, 650))} V",
                "id_max": f"{rng.randint(1, 40)} A", "rds_on": f"{rng.randint(5, 900)}m", "qg": f"{rng.randint(3, 80)} nC",
                "tj_max": "150 °C", "rth_ja": f"{rng.randint(30, 90)} K/W", "package": "TO-220"}
    if kind == 1:
        return {"category": "capacitor", "subtype": "ceramic", "capacitance": f"{e:g}u",
                "v_rated": f"{rng.choice((16, 25, 50, 100))} V", "dielectric": "X7R", "tolerance": "±10%",
                "t_max": "125 °C", "case_size": "1206", "esr": f"{rng.randint(2, 30)} mΩ"}
    if kind == 2:
        return {"category": "resistor", "subtype": "thick_film", "resistance": f"{str(e).replace('.', 'k')}",
                "p_rated": "0.25 W", "tolerance": "1%", "t_knee": "70 °C", "t_max": "155 °C", "v_max": "200 V"}
    if kind == 3:
        return {"category": "diode", "subtype": "schottky", "vrrm": f"{rng.choice((40, 60, 100))} V",
                "if_avg": f"{rng.randint(1, 10)} A", "vf": f"{rng.randint(380, 850)} mV", "vf_current": "1 A",
                "tj_max": "150 °C", "rth_ja": "60 K/W"}
    return {"category": "magnetic", "subtype": "transformer", "lm": f"{e:g}00 µH", "turns_ratio": f"{rng.randint(2, 12)}",
            "llk": f"{rng.randint(1, 20)} µH", "isat": f"{rng.randint(1, 5)} A", "v_isolation": "3 kV", "t_max": "130 °C"}


def generate(path: Path, rows: int, seed: int = 1) -> None:
    """Write ``rows`` invented parts as catalog CSV (all columns, most empty as in a real export)."""
    rng = random.Random(seed)
    names = list(FIELDS)
    with open(path, "w", encoding="utf-8", newline="") as f:
        f.write(",".join(names) + "\n")
        for i in range(rows):
            row = _row(i, rng)
            row["part_number"] = f"GEN-{i:06d}"
            row["description"] = f"generated part {i}"
            f.write(",".join(row.get(n, "") for n in names) + "\n")


def _timed_import(csv_path: Path, db_path: Path, method: str) -> tuple[float, float]:
    """(wall seconds, CPU seconds of this process) for one import into a new catalog."""
    with open_catalog(db_path) as catalog:
        t0, c0 = time.perf_counter(), time.process_time()
        report = catalog.import_file(csv_path, method=method)  # type: ignore[arg-type]
        elapsed, cpu = time.perf_counter() - t0, time.process_time() - c0
        assert report.added == catalog.count()
    return elapsed, cpu


def run() -> list[tuple[str, str]]:
    with tempfile.TemporaryDirectory() as tmp:
        tmpdir = Path(tmp)
        big, small = tmpdir / "big.csv", tmpdir / "small.csv"
        generate(big, BULK_ROWS)
        generate(small, ORM_ROWS)
        bulk_s, bulk_cpu = _timed_import(big, tmpdir / "bulk.sqlite", "bulk")
        orm_s, orm_cpu = _timed_import(small, tmpdir / "orm.sqlite", "orm")
        with open_catalog(tmpdir / "bulk.sqlite") as catalog:
            t0, c0 = time.perf_counter(), time.process_time()
            parts = catalog.parts()
            read_s, read_cpu = time.perf_counter() - t0, time.process_time() - c0
            assert len(parts) == BULK_ROWS
    bulk_rate, orm_rate = BULK_ROWS / bulk_s, ORM_ROWS / orm_s
    return [
        (f"bulk import, {BULK_ROWS:,} rows (read + parse + validate + Core executemany, one transaction)",
         f"{bulk_rate:,.0f} rows/s ({bulk_s:.2f} s wall; {BULK_ROWS / bulk_cpu:,.0f} rows/s by CPU time)"),
        (f"ORM row-by-row import, {ORM_ROWS:,}-row subset (same read + validate, one flush per row)",
         (f"{orm_rate:,.0f} rows/s ({orm_s:.2f} s wall, ~{BULK_ROWS / orm_rate:.0f} s scaled to {BULK_ROWS:,} rows; "
          f"{ORM_ROWS / orm_cpu:,.0f} rows/s by CPU time)")),
        ("bulk / ORM speed ratio (wall)", f"{bulk_rate / orm_rate:.1f}x"),
        (f"Catalog.parts() bulk read, {BULK_ROWS:,} parts with curves", f"{read_s:.2f} s wall ({read_cpu:.2f} s CPU)"),
    ]


if __name__ == "__main__":
    for label, figure in run():
        print(f"{label}: {figure}")
