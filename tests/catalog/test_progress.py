"""The progress bar: on standard error when it is a terminal (a real pty here), never otherwise, and
never with JSON output."""

from __future__ import annotations

import os
import pty
import select
import subprocess
import sys
from pathlib import Path

from .conftest import SMALL, write
from .test_concurrency import _generate

REPO = Path(__file__).resolve().parents[2]


def _run_on_a_terminal(args: list[str], db: Path) -> tuple[int, str, str]:
    """Run ``python -m partcheck ARGS`` with standard error on a pseudo-terminal; (code, stdout, stderr)."""
    master, slave = pty.openpty()
    env = {**os.environ, "PARTCHECK_DB": str(db), "COLUMNS": "120", "TERM": "xterm"}
    proc = subprocess.Popen([sys.executable, "-m", "partcheck", *args], cwd=REPO, env=env, stdout=subprocess.PIPE,
                            stderr=slave, text=True)
    os.close(slave)
    seen = []
    while select.select([master], [], [], 120)[0]:
        try:
            data = os.read(master, 65536)
        except OSError:  # the child closed the terminal
            break
        if not data:
            break
        seen.append(data)
    os.close(master)
    out, _ = proc.communicate(timeout=120)
    return proc.returncode, out, b"".join(seen).decode("utf-8", "replace")


def test_long_import_shows_a_bar_on_a_terminal_only(tmp_path):
    big = _generate(tmp_path, "P", 25_000, curves=False)
    code, out, err = _run_on_a_terminal(["catalog", "import", str(big)], tmp_path / "a.sqlite")
    assert code == 0 and out.startswith(f"imported {big}: 25000 parts added")
    assert "importing parts" in err and "Traceback" not in err
    done = subprocess.run([sys.executable, "-m", "partcheck", "catalog", "import", str(big)], cwd=REPO,
                          env={**os.environ, "PARTCHECK_DB": str(tmp_path / "b.sqlite")}, capture_output=True,
                          text=True, timeout=120)
    assert done.returncode == 0 and done.stderr == ""  # not a terminal: no bar, no escape codes


def test_match_bar_for_the_table_never_for_json(tmp_path):
    db = tmp_path / "c.sqlite"
    subprocess.run([sys.executable, "-m", "partcheck", "catalog", "import", str(SMALL), "--db", str(db)], cwd=REPO,
                   check=True, capture_output=True, timeout=120)
    bom = write(tmp_path / "bom.csv", "Reference,Qty,Value,Part Number\nR1,1,4k7,TST-R-4K7-0W25\n")
    code, out, err = _run_on_a_terminal(["match", str(bom), "--db", str(db)], db)
    assert code == 0 and "TST-R-4K7-0W25" in out and "matching BOM lines" in err
    code, out, err = _run_on_a_terminal(["match", str(bom), "--db", str(db), "--format", "json"], db)
    assert code == 0 and out.startswith("{") and "matching BOM lines" not in err and "\x1b[" not in err
