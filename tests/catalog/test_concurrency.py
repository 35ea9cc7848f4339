"""Real processes on one catalog, on every backend: two importers at once end with every row of
both or a clean error for one (never part of a file); a reader during an import sees the catalog
before or after it, never in between."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

from partcheck.catalog import open_catalog

from .conftest import SMALL

REPO = Path(__file__).resolve().parents[2]


def _generate(folder: Path, prefix: str, n: int, curves: bool, shared: str | None = None) -> Path:
    """``n`` invented resistors ``<prefix>-00000`` ... (and a two-point derating curve each)."""
    path = folder / f"{prefix}.csv"
    numbers = [f"{prefix}-{i:05d}" for i in range(n)] + ([shared] if shared else [])
    with open(path, "w", encoding="utf-8") as f:
        f.write("part_number,category,subtype,resistance,p_rated,tolerance,t_max,description\n")
        for i, pn in enumerate(numbers):
            f.write(f"{pn},resistor,thick_film,{1 + i % 97}k,250 mW,1%,155,generated resistor {i}\n")
    if curves:
        with open(folder / f"{prefix}.curves.csv", "w", encoding="utf-8") as f:
            f.write("part_number,curve,x,y\n")
            for pn in numbers:
                f.write(f"{pn},power_derating,70,1\n{pn},power_derating,155,0\n")
    return path


def _env(db: str) -> dict[str, str]:
    return {**os.environ, "PARTCHECK_DB": db, "COLUMNS": "200"}


def _import(db: str, path: Path) -> subprocess.Popen:
    return subprocess.Popen([sys.executable, "-m", "partcheck", "catalog", "import", str(path)], cwd=REPO,
                            env=_env(db), stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)


def _finish(proc: subprocess.Popen) -> tuple[int, str, str]:
    out, err = proc.communicate(timeout=240)
    return proc.returncode, out, err


def _state(db: str) -> tuple[set[str], int]:
    with open_catalog(db) as cat:
        parts = cat.parts()
        return {p.part_number for p in parts}, sum(len(c) for p in parts for c in p.curves.values())


def test_two_importers_of_disjoint_files_at_once(catalog_url, tmp_path):
    open_catalog(catalog_url).close()
    a = _generate(tmp_path, "A", 8_000, curves=True)
    b = _generate(tmp_path, "B", 8_000, curves=False)
    procs = [_import(catalog_url, a), _import(catalog_url, b)]  # started together, they overlap
    results = [_finish(p) for p in procs]
    numbers, points = _state(catalog_url)
    expected, expected_points = set(), 0
    for (code, out, err), prefix, pts in zip(results, "AB", (16_000, 0)):
        if code == 0:
            assert out.startswith(f"imported {tmp_path / prefix}.csv: 8000 parts added"), out
            expected |= {f"{prefix}-{i:05d}" for i in range(8_000)}
            expected_points += pts
        else:  # allowed: a clean error after the retries, and then nothing of that file
            assert code == 1 and err.startswith("error: ") and "Traceback" not in err and "try again" in err, err
    assert numbers == expected and points == expected_points  # every row of each import that succeeded, no other
    # Neither importer should have to give up here (SQLite queues writers, PostgreSQL has no conflict):
    assert [r[0] for r in results] == [0, 0], [r[2] for r in results]


def test_two_importers_of_overlapping_files_one_wins_whole(catalog_url, tmp_path):
    open_catalog(catalog_url).close()
    a = _generate(tmp_path, "A", 5_000, curves=True, shared="SHARED-1")
    b = _generate(tmp_path, "B", 5_000, curves=True, shared="SHARED-1")
    results = [_finish(p) for p in [_import(catalog_url, a), _import(catalog_url, b)]]
    codes = sorted(r[0] for r in results)
    assert codes in ([0, 1], [0, 2]), [r[2] for r in results]  # exactly one wins
    winner, loser = (results[0], results[1]) if results[0][0] == 0 else (results[1], results[0])
    prefix = "A" if winner is results[0] else "B"
    assert "SHARED-1" in loser[2] and "nothing was" in loser[2] and "Traceback" not in loser[2], loser[2]
    numbers, points = _state(catalog_url)
    assert numbers == {f"{prefix}-{i:05d}" for i in range(5_000)} | {"SHARED-1"}
    assert points == 2 * 5_001


READER = r"""
import sys
from partcheck.catalog import open_catalog
seen_new = 0
with open_catalog(sys.argv[1]) as cat:
    for _ in range(100_000):
        parts = cat.parts()               # what a check reads: every part and its curves, one transaction
        points = sum(len(c) for p in parts for c in p.curves.values())
        print(len(parts), points, flush=True)
        if len(parts) != int(sys.argv[2]):
            seen_new += 1
            if seen_new == 3:
                break
"""


def test_a_reader_during_an_import_sees_the_old_or_the_new_catalog(catalog_url, tmp_path):
    with open_catalog(catalog_url) as cat:
        cat.import_file(SMALL)  # 12 parts, 8 curve points
    big = _generate(tmp_path, "BIG", 15_000, curves=True)
    reader = subprocess.Popen([sys.executable, "-c", READER, catalog_url, "12"], cwd=REPO, env=_env(catalog_url),
                              stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    assert reader.stdout is not None
    first = reader.stdout.readline()  # the reader is running before the import starts
    importer = _import(catalog_url, big)
    code, _, err = _finish(importer)
    rest, reader_err = reader.communicate(timeout=240)
    assert code == 0, err
    assert reader.returncode == 0, reader_err
    states = [tuple(map(int, line.split())) for line in (first + rest).splitlines()]
    old, new = (12, 8), (12 + 15_000, 8 + 30_000)
    assert states[0] == old and states[-1] == new
    assert set(states) <= {old, new}, sorted(set(states) - {old, new})[:5]  # never a half-written catalog
