"""The bundled demo: the three invented scenarios in ``sample_boms/`` checked against a temporary
catalog seeded from ``db/``, each written as an HTML report.

Nothing outside ``out_dir`` and a temporary folder is touched: the user's own catalog is not
opened.
"""

from __future__ import annotations

import datetime as _dt
import tempfile
from dataclasses import dataclass
from pathlib import Path

from .catalog.seed import demo_catalog
from .errors import NotFoundError
from .pipeline import check
from .result import CheckResult

SAMPLES = Path(__file__).resolve().parents[1] / "sample_boms"
#: Scenario folders in the order the demo shows them (expected: pass, fail, marginal pass).
SCENARIOS = ("remote_io_24v", "battery_monitor_48v", "sic_gate_drive")


@dataclass
class DemoRun:
    scenario: str
    result: CheckResult
    report: Path


def run_demo(out_dir: str | Path, scenarios: tuple[str, ...] = SCENARIOS, *,
             today: _dt.date | None = None, command: str = "partcheck demo") -> list[DemoRun]:
    """Check each demo scenario and write ``out_dir/<scenario>.html``; return what was done."""
    from .report.html import write_html

    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    runs = []
    with tempfile.TemporaryDirectory(prefix="partcheck-demo-") as tmp:
        catalog = demo_catalog(tmp)
        try:
            for name in scenarios:
                design = SAMPLES / name / "design.toml"
                if not design.is_file():
                    raise NotFoundError(f"no demo scenario {name!r}; scenarios are {', '.join(SCENARIOS)}")
                result = check(design, catalog=catalog, today=today, command=command)
                runs.append(DemoRun(name, result, write_html(result, out / f"{name}.html")))
        finally:
            catalog.close()
    return runs
