"""Large inputs with bounded memory: a 100,000-line BOM and a 1,000,000-part catalog.

Each step runs in a fresh child process and reports its own peak resident set size
(``resource.getrusage(RUSAGE_SELF).ru_maxrss``) beside the peak of a child that only imports the
same modules, so the figure attributable to the data is the difference.

* BOM: a generated 100,000-line CSV BOM (``bench_match.bom_text``) read with ``read_bom`` and
  matched (``match_bom``) against a generated 10,000-part catalog read from an SQLite catalog.
* Catalog: a generated 1,000,000-part CSV (``bench_catalog_import.generate``; every tenth part,
  a ceramic capacitor, with a three-point DC-bias curve in the side file) imported with
  ``Catalog.import_file`` (streamed in chunks of ``IMPORT_CHUNK`` rows inside one transaction),
  then read back with ``Catalog.iter_parts`` (streamed), hashed (``snapshot_hash``: the canonical
  JSON export, streamed), and copied to a second SQLite file with ``Catalog.copy_to``.
  Set ``PARTCHECK_BENCH_PG`` to an empty PostgreSQL database URL to time the copy into it too.

The generated data are invented.  Run alone with ``python3 benchmarks/bench_large.py``
(about ten minutes on a shared two-core machine, and 1.5 GB of temporary disk).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import tempfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))

BOM_LINES = 100_000
BOM_CATALOG = 10_000
CATALOG_PARTS = 1_000_000

_PRELUDE = f"""
import json, resource, sys, time
sys.path.insert(0, {str(HERE.parent)!r}); sys.path.insert(0, {str(HERE)!r})
from partcheck.bom.match import match_bom
from partcheck.bom.read import read_bom
from partcheck.catalog import open_catalog
def done(**figures):
    figures["rss_mb"] = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(json.dumps(figures))
"""

_STEPS = {
    "baseline": "done()",
    "bom": """
with open_catalog(sys.argv[2], create=False) as cat:
    parts = cat.parts()
t0 = time.perf_counter()
bom = read_bom(sys.argv[1])
t1 = time.perf_counter()
matches = match_bom(bom, parts)
t2 = time.perf_counter()
done(lines=len(bom.lines), matched=sum(m.status == "matched" for m in matches), read_s=t1 - t0, match_s=t2 - t1)
""",
    "import": """
with open_catalog(sys.argv[2]) as cat:
    t0 = time.perf_counter()
    report = cat.import_file(sys.argv[1])
    done(parts=report.added, points=report.curve_points, seconds=time.perf_counter() - t0)
""",
    "iter": """
with open_catalog(sys.argv[1], create=False) as cat:
    t0 = time.perf_counter()
    n = sum(1 for _ in cat.iter_parts())
    done(parts=n, seconds=time.perf_counter() - t0)
""",
    "hash": """
with open_catalog(sys.argv[1], create=False) as cat:
    t0 = time.perf_counter()
    cat.snapshot_hash()
    done(seconds=time.perf_counter() - t0)
""",
    "copy": """
with open_catalog(sys.argv[1], create=False) as cat:
    t0 = time.perf_counter()
    report = cat.copy_to(sys.argv[2])
    done(parts=report.parts, points=report.curve_points, export_bytes=report.export_bytes,
         seconds=time.perf_counter() - t0)
""",
}


def _child(step: str, *args: str) -> dict:
    done = subprocess.run([sys.executable, "-c", _PRELUDE + _STEPS[step], *args], capture_output=True, text=True,
                          check=False, timeout=3600)
    if done.returncode != 0:
        raise RuntimeError(f"step {step} failed: {done.stderr.strip().splitlines()[-1:]}")
    return json.loads(done.stdout.strip().splitlines()[-1])


def _write_bom_inputs(tmp: Path) -> tuple[Path, Path]:
    from bench_match import bom_text, generate_catalog

    from partcheck.catalog import io as cio
    from partcheck.catalog import open_catalog

    parts = generate_catalog(BOM_CATALOG)
    with open(tmp / "bom-catalog.csv", "w", encoding="utf-8", newline="") as f:
        cio.write_csv(parts, f)
    with open_catalog(tmp / "bom-catalog.sqlite") as cat:
        cat.import_file(tmp / "bom-catalog.csv")
    text, _ = bom_text(parts, BOM_LINES)
    (tmp / "bom.csv").write_text(text, encoding="utf-8")
    return tmp / "bom.csv", tmp / "bom-catalog.sqlite"


def run() -> list[tuple[str, str]]:
    from bench_catalog_import import generate

    figures: list[tuple[str, str]] = []
    base = _child("baseline")["rss_mb"]
    figures.append(("peak RSS of a child that only imports partcheck (baseline)", f"{base:.0f} MB"))
    with tempfile.TemporaryDirectory() as tmp_name:
        tmp = Path(tmp_name)
        bom, bom_db = _write_bom_inputs(tmp)
        r = _child("bom", str(bom), str(bom_db))
        figures.append((f"BOM {r['lines']:,} lines: read_bom + match_bom against {BOM_CATALOG:,} parts",
                        f"read {r['lines'] / r['read_s']:,.0f} lines/s, match {r['lines'] / r['match_s']:,.0f} "
                        f"lines/s ({r['read_s'] + r['match_s']:.1f} s, {r['matched']:,} matched); "
                        f"peak RSS {r['rss_mb']:.0f} MB (+{r['rss_mb'] - base:.0f} MB)"))

        csv_path, db = tmp / "parts-1m.csv", tmp / "parts-1m.sqlite"
        generate(csv_path, CATALOG_PARTS)
        size_mb = csv_path.stat().st_size / 1e6
        for with_curves in (False, True):
            if with_curves:
                with open(tmp / "parts-1m.curves.csv", "w", encoding="utf-8") as f:
                    f.write("part_number,curve,x,y\n")
                    for i in range(1, CATALOG_PARTS, 10):  # kind 1 of the generator: ceramic capacitors
                        f.write(f"GEN-{i:06d},dc_bias,0,1\nGEN-{i:06d},dc_bias,10 V,0.7\n"
                                f"GEN-{i:06d},dc_bias,25 V,0.4\n")
            target = db if with_curves else tmp / "plain.sqlite"
            r = _child("import", str(csv_path), str(target))
            figures.append((f"catalog import, {r['parts']:,} parts + {r['points']:,} curve points "
                            f"({size_mb:.0f} MB CSV, streamed, one transaction)",
                            f"{r['parts'] / r['seconds']:,.0f} rows/s ({r['seconds']:.1f} s); "
                            f"peak RSS {r['rss_mb']:.0f} MB (+{r['rss_mb'] - base:.0f} MB)"))
            if not with_curves:
                for stale in tmp.glob("plain.sqlite*"):
                    stale.unlink()
        csv_path.unlink()
        r = _child("iter", str(db))
        figures.append((f"Catalog.iter_parts over {r['parts']:,} parts (streamed)",
                        f"{r['parts'] / r['seconds']:,.0f} parts/s ({r['seconds']:.1f} s); peak RSS "
                        f"{r['rss_mb']:.0f} MB (+{r['rss_mb'] - base:.0f} MB)"))
        r = _child("hash", str(db))
        figures.append((f"snapshot_hash (canonical JSON export, streamed) of {CATALOG_PARTS:,} parts",
                        f"{r['seconds']:.1f} s; peak RSS {r['rss_mb']:.0f} MB (+{r['rss_mb'] - base:.0f} MB)"))
        targets = [("SQLite file", str(tmp / "copy.sqlite"))]
        if os.environ.get("PARTCHECK_BENCH_PG"):
            targets.append(("PostgreSQL", os.environ["PARTCHECK_BENCH_PG"]))
        for name, target in targets:
            r = _child("copy", str(db), target)
            figures.append((f"catalog copy of {r['parts']:,} parts + {r['points']:,} points to {name} "
                            "(incl. export comparison)",
                            f"{r['parts'] / r['seconds']:,.0f} parts/s ({r['seconds']:.1f} s, exports of "
                            f"{r['export_bytes'] / 1e6:.0f} MB identical); peak RSS {r['rss_mb']:.0f} MB "
                            f"(+{r['rss_mb'] - base:.0f} MB)"))
    return figures


if __name__ == "__main__":
    for label, figure in run():
        print(f"{label}: {figure}")
