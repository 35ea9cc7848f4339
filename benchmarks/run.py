"""Run every benchmark (benchmarks/bench_*.py) and print their figures side by side.

Each benchmark module defines ``run() -> list[tuple[str, str]]`` (label, figure as text).
Usage: ``python benchmarks/run.py [NAME ...]`` (names without ``bench_``; default: all).
A benchmark that fails is reported in the table and makes the exit code 1; the others still run.
"""

from __future__ import annotations

import importlib.util
import platform
import sys
import time
import traceback
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))


def _load(path: Path):
    spec = importlib.util.spec_from_file_location(path.stem, path)
    module = importlib.util.module_from_spec(spec)  # type: ignore[arg-type]
    assert spec and spec.loader
    spec.loader.exec_module(module)
    return module


def collect(names: list[str] | None = None) -> list[Path]:
    """The benchmark files to run, sorted by name."""
    files = sorted(HERE.glob("bench_*.py"))
    if names:
        wanted = {n.removeprefix("bench_").removesuffix(".py") for n in names}
        unknown = wanted - {f.stem.removeprefix("bench_") for f in files}
        if unknown:
            raise SystemExit(f"no benchmark named {', '.join(sorted(unknown))}; have: "
                             + ", ".join(f.stem.removeprefix("bench_") for f in files))
        files = [f for f in files if f.stem.removeprefix("bench_") in wanted]
    return files


def main(argv: list[str]) -> int:
    rows: list[tuple[str, str, str]] = []
    failed = False
    for path in collect(argv):
        name = path.stem.removeprefix("bench_")
        print(f"running {name} ...", file=sys.stderr, flush=True)
        t0 = time.perf_counter()
        try:
            figures = _load(path).run()
        except Exception as exc:  # noqa: BLE001 - one broken benchmark must not hide the others' figures
            traceback.print_exc()
            figures = [("FAILED", f"{type(exc).__name__}: {exc}")]
            failed = True
        rows.extend((name, label, figure) for label, figure in figures)
        rows.append((name, "(wall time of this benchmark)", f"{time.perf_counter() - t0:.1f} s"))

    print(f"partcheck benchmarks on {platform.python_implementation()} {platform.python_version()}, "
          f"{platform.machine()}, {platform.system()}")
    widths = [max(len(r[i]) for r in rows + [("benchmark", "label", "figure")]) for i in range(3)]
    line = "  ".join("-" * w for w in widths)
    print("  ".join(h.ljust(w) for h, w in zip(("benchmark", "label", "figure"), widths)).rstrip())
    print(line)
    for row in rows:
        print("  ".join(cell.ljust(w) for cell, w in zip(row, widths)).rstrip())
    return 1 if failed else 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
