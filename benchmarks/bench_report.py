"""HTML report speed and size: a result for a 500-line BOM (up to 3 findings per part).

The result is generated from the report tests' hand-written sample (two-output flyback):
its parts are repeated with new references until the BOM has 500 lines, with utilisations and
statuses spread so that every section of the report is filled (attention cards for the
failing and warning findings, every part in the tables and the top 40 in the chart).
Target: under 2 s to render, under a few MB of HTML.
"""

from __future__ import annotations

import copy
import random
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from partcheck.report import render_html
from partcheck.result import CheckResult

SAMPLE = Path(__file__).resolve().parents[1] / "tests" / "report" / "data" / "sample_result.json"
BOM_LINES = 500
FINDINGS_PER_PART = 3


def large_result(lines: int = BOM_LINES, seed: int = 7) -> CheckResult:
    """A result with ``lines`` BOM lines built from the sample's parts and findings."""
    rng = random.Random(seed)
    base = CheckResult.load(SAMPLE)
    templates = [p for p in base.parts if p.get("part_number")]
    by_ref = {}
    for f in base.findings:
        by_ref.setdefault(f["refs"][0], []).append(f)
    parts, findings, bom_lines = [], [], []
    for i in range(lines):
        template = templates[i % len(templates)]
        prefix = "".join(c for c in template["refs"][0] if c.isalpha())
        ref = f"{prefix}{100 + i}"
        part = copy.deepcopy(template)
        part.update(refs=[ref], bom_line=i + 2)
        worst = 0.0
        worst_status = "pass"
        worst_param = None
        for f in (by_ref.get(template["refs"][0]) or [])[:FINDINGS_PER_PART]:
            new = copy.deepcopy(f)
            util = rng.choice((rng.uniform(0.1, 0.85), rng.uniform(0.1, 0.85), rng.uniform(0.9, 1.0),
                               rng.uniform(1.0, 1.6)))
            status = "fail" if util > 1.0 else "warn" if util >= 0.9 else "pass"
            if f["status"] in ("not_assessed", "waived"):
                status = f["status"]
            new.update(refs=[ref], utilization=round(util, 4), margin=round(1 - util, 4), status=status)
            findings.append(new)
            if util > worst:
                worst, worst_param = util, f["parameter"]
            if ("fail", "not_assessed", "warn", "waived", "pass").index(status) < \
                    ("fail", "not_assessed", "warn", "waived", "pass").index(worst_status):
                worst_status = status
        part.update(status=worst_status, worst_utilization=round(worst, 4) if worst else None,
                    worst_parameter=worst_param)
        parts.append(part)
        bom_lines.append({"line": i + 2, "refs": [ref], "description": part["description"], "status": "matched"})
    base.parts, base.findings, base.bom_lines = parts, findings, bom_lines
    base.verdict = "fail"
    return base


def run() -> list[tuple[str, str]]:
    result = large_result()
    render_html(result)  # warm-up: template compilation happens once per process
    start = time.perf_counter()
    html = render_html(result)
    seconds = time.perf_counter() - start
    cold_start = time.perf_counter()
    from partcheck.report.html import environment

    environment.cache_clear()
    render_html(result)
    cold = time.perf_counter() - cold_start
    size = len(html.encode("utf-8"))
    return [
        ("report: BOM lines / findings", f"{len(result.parts)} / {len(result.findings)}"),
        ("report: render (template cached)", f"{seconds:.3f} s (target < 2 s)"),
        ("report: render (first, compiling the template)", f"{cold:.3f} s"),
        ("report: HTML size", f"{size / 1e6:.2f} MB (target < a few MB)"),
    ]


if __name__ == "__main__":
    for label, figure in run():
        print(f"{label:48s} {figure}")
