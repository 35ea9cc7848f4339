"""Silent-pass traps, through the real CLI: each a bundled demo with one change that a careful
reviewer would catch, and that partcheck must refuse (exit 2, bad input) or fail (exit 1) with
the reference named.  Before issue 11 each of these passed without a word.

The demos, BOMs and seed catalog are invented demo data (sample_boms/README.md, db/README.md).
Each trap copies one scenario to a temporary folder, edits one file and runs
``python -m partcheck check DESIGN --db CATALOG --format json``; a trap that needs a catalog
change imports an edited copy of the seed CSV through ``partcheck catalog import``.
"""

from __future__ import annotations

import csv
import json
import shutil
import subprocess
import sys
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

import pytest

from partcheck.catalog.seed import SEED_DIR

REPO = Path(__file__).resolve().parents[1]
SAMPLES = REPO / "sample_boms"


def _cli(*args: str, cwd: Path | None = None) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "partcheck", *args], capture_output=True, text=True, cwd=cwd,
                          timeout=300)


@pytest.fixture(scope="module")
def seed_db(tmp_path_factory) -> Path:
    db = tmp_path_factory.mktemp("seed") / "catalog.sqlite"
    done = _cli("catalog", "import", str(SEED_DIR / "parts.csv"), "--db", str(db))
    assert done.returncode == 0, done.stderr
    return db


def _seed_rows() -> tuple[list[str], list[dict[str, str]]]:
    with (SEED_DIR / "parts.csv").open(encoding="utf-8", newline="") as fh:
        rows = list(csv.DictReader(fh))
    return list(rows[0]), rows


def _catalog_with(tmp: Path, part_number: str, **columns: str) -> Path:
    """A catalog imported through the CLI from the seed CSV with some cells of one part changed."""
    header, rows = _seed_rows()
    (hit,) = [r for r in rows if r["part_number"] == part_number]
    hit.update(columns)
    folder = tmp / "cat"
    folder.mkdir()
    with (folder / "parts.csv").open("w", encoding="utf-8", newline="") as fh:
        writer = csv.DictWriter(fh, header, lineterminator="\n")
        writer.writeheader()
        writer.writerows(rows)
    shutil.copy(SEED_DIR / "parts.curves.csv", folder / "parts.curves.csv")
    db = tmp / "edited.sqlite"
    done = _cli("catalog", "import", str(folder / "parts.csv"), "--db", str(db))
    assert done.returncode == 0, done.stderr
    return db


@dataclass
class Trap:
    id: str
    scenario: str
    expect_exit: int
    ref: str  # the reference (or line) the message or a non-passing finding must name
    words: str  # a phrase the finding's detail or the error message holds
    design: Callable[[str], str] | None = None
    bom: Callable[[str], str] | None = None
    policy: Callable[[str], str] | None = None
    catalog: dict[str, dict[str, str]] = field(default_factory=dict)  # part number → changed columns


def _append(text: str) -> Callable[[str], str]:
    return lambda s: s + "\n" + text + "\n"


def _sub(old: str, new: str) -> Callable[[str], str]:
    def edit(s: str) -> str:
        assert old in s, f"trap edit: {old!r} not in the file"
        return s.replace(old, new, 1)
    return edit


def _not_fitted_c7(bom: str) -> str:
    """C7 moved to a line of its own whose value says DNF (the reader's do-not-fit flag)."""
    bom = _sub('"C6,C7",2,22uF,', '"C6",1,22uF,')(bom)
    header, _, rest = bom.partition("\n")
    return f'{header}\nC7,1,DNF,"Cap ceramic 22uF 16V X7R, 5V out",cc-x7r-226-16-1210,1210\n{rest}'


TRAPS = [
    Trap("obsolete-part", "remote_io_24v", 1, "Q1", "catalog status is obsolete",
         catalog={"SW-N150-R050-D56": {"status": "obsolete"}}),
    Trap("restricted-part", "remote_io_24v", 1, "D1", "catalog status is restricted",
         catalog={"DS-045-10A-DPK": {"status": "restricted"}}),
    Trap("snubber-without-capacitor", "remote_io_24v", 1, "R8", "one resistor",
         design=_sub('snubber = ["R8", "C10"]', 'snubber = ["R8"]')),
    Trap("resistor-as-output-cap", "remote_io_24v", 2, "R5", "role output_cap takes capacitor",
         design=_sub('output_cap = ["C5", "C6", "C7"]', 'output_cap = ["C5", "C6", "C7", "R5"]')),
    Trap("inductor-as-clamp", "remote_io_24v", 2, "L1", "role clamp takes",
         design=_sub('clamp = "D2"', 'clamp = ["D2", "L1"]')),
    Trap("ref-twice-in-a-role", "remote_io_24v", 2, "C6", "more than once in role output_cap",
         design=_sub('output_cap = ["C5", "C6", "C7"]', 'output_cap = ["C5", "C6", "C6", "C7"]')),
    Trap("ref-in-two-roles", "remote_io_24v", 2, "R1", "two roles",
         design=_sub('feedback_divider = ["R2", "R3"]', 'feedback_divider = ["R2", "R3", "R1"]')),
    Trap("role-part-not-fitted", "remote_io_24v", 1, "C7", "not fitted", bom=lambda s: _not_fitted_c7(s)),
    Trap("empty-reference-cell", "battery_monitor_48v", 1, "line", "no reference designator",
         bom=_sub("R9;1;10R;", ";1;10R;")),
    Trap("reference-on-two-lines", "battery_monitor_48v", 1, "R6", "appears on BOM lines",
         bom=_sub("R9;1;10R;", "R6;1;10R;")),
    Trap("waiver-in-the-future", "remote_io_24v", 2, "D1", "in the future",
         design=_append('[[waiver]]\nref = "D1"\nparameter = "voltage"\nreason = "bench check"\n'
                        'approved_by = "review board"\ndate = 2099-01-05')),
    Trap("extra-stress-typo", "remote_io_24v", 1, "R77", "not on the BOM",
         design=_append('[[extra_stress]]\nrefs = ["R77"]\npower = "10 mW"\nnote = "typo for R7"')),
    Trap("extra-stress-over-rating", "remote_io_24v", 1, "R7", "",
         design=_sub('power = "15 mW"\nnote = "gate pull-down"', 'power = "5 W"\nnote = "gate pull-down"')),
    Trap("blank-capacitance", "remote_io_24v", 1, "C5", "no capacitance in the catalog",
         catalog={"CP-331-10-8x9": {"capacitance": ""}}),
    Trap("blank-life", "battery_monitor_48v", 1, "C1", "no life_hours in the catalog",
         catalog={"CEH-330-100-8x11.5": {"life_hours": ""}}),
    Trap("blank-esr-and-rise", "battery_monitor_48v", 1, "C1", "self-heating not computed",
         catalog={"CEH-330-100-8x11.5": {"esr": "", "ripple_rise": ""}}),
    Trap("policy-rating-wrong-kind", "remote_io_24v", 2, "rating", "a voltage",
         policy=_append('[rules.diode-voltage]\nrating = "if_avg"')),
    Trap("transformer-core-unknown", "remote_io_24v", 1, "T1", "peak flux density not computed",
         design=lambda s: "\n".join(line for line in s.splitlines()
                                    if not line.startswith(("turns_primary", "ae ")))),
]
def _policy_file(design_text: str) -> str | None:
    for line in design_text.splitlines():
        if line.startswith("policy"):
            return line.split("=", 1)[1].strip().strip('"')
    return None


@pytest.mark.parametrize("trap", TRAPS, ids=[t.id for t in TRAPS])
def test_trap_is_caught(trap: Trap, seed_db: Path, tmp_path: Path):
    work = tmp_path / trap.scenario
    shutil.copytree(SAMPLES / trap.scenario, work)
    design = work / "design.toml"
    if trap.design:
        design.write_text(trap.design(design.read_text(encoding="utf-8")), encoding="utf-8")
    if trap.bom:
        (bom,) = [p for p in work.iterdir() if p.name.startswith("bom.")]
        bom.write_text(trap.bom(bom.read_text(encoding="utf-8-sig")), encoding="utf-8")
    if trap.policy:
        policy = work / _policy_file(design.read_text(encoding="utf-8"))
        policy.write_text(trap.policy(policy.read_text(encoding="utf-8")), encoding="utf-8")
    db = seed_db
    if trap.catalog:
        ((part_number, columns),) = trap.catalog.items()
        db = _catalog_with(tmp_path, part_number, **columns)
    done = _cli("check", str(design), "--db", str(db), "--format", "json")
    assert done.returncode == trap.expect_exit, (done.stdout[-2000:], done.stderr[-2000:])
    assert "Traceback" not in done.stderr
    if trap.expect_exit == 2:
        assert trap.ref in done.stderr and trap.words in done.stderr, done.stderr
        return
    result = json.loads(done.stdout)
    hits = [f for f in result["findings"] if f["status"] in ("fail", "not_assessed", "unmatched")
            and any(trap.ref in r for r in f["refs"]) and trap.words in f["detail"]]
    assert hits, [(f["refs"], f["status"], f["detail"]) for f in result["findings"] if f["status"] != "pass"]
