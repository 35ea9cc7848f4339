"""BOM matching speed: 1,000 BOM lines against a generated catalog of 100,000 parts.

Prints lines/s for the tiered matcher (precomputed keys, category blocking, numpy value
pre-filter, rapidfuzz ``cdist``) at catalog sizes 10k, 30k and 100k, beside a naive baseline
(Python's ``difflib`` over every part's text, on a 5,000-part subset, scaled to 100,000 parts)
measured in the same run.  Only the matching is timed; building the catalog, writing and reading
the BOM and precomputing the matcher's keys are reported separately.

Run alone with ``python3 benchmarks/bench_match.py``.
"""

from __future__ import annotations

import difflib
import random
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from partcheck.bom.match import Matcher, match_bom
from partcheck.bom.read import read_bom
from partcheck.catalog.models import PartRecord
from partcheck.units import format_quantity

N_PARTS = 100_000
N_LINES = 1_000
SIZES = (10_000, 30_000, 100_000)
BASELINE_PARTS = 5_000
BASELINE_LINES = 40

E24 = (1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8,
       7.5, 8.2, 9.1)
E12 = (1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2)
CASES = ("0402", "0603", "0805", "1206", "1210", "1812")
DIELECTRICS = ("C0G", "X5R", "X7R", "X7S")
CAP_V = (6.3, 10.0, 16.0, 25.0, 35.0, 50.0, 100.0, 250.0, 630.0)
SEMI_V = (20.0, 30.0, 40.0, 60.0, 100.0, 150.0, 200.0, 400.0, 600.0, 650.0, 800.0, 1000.0)
SEMI_PKG = ("SMA", "SMB", "SMC", "SOD-123", "DPAK", "TO-220", "SO-8", "PowerPAK")


def _e96() -> tuple[float, ...]:
    return tuple(round(10 ** (i / 96), 2) for i in range(96))


def _unique(rng: random.Random, n: int, axes: tuple[tuple, ...]):
    """``n`` distinct combinations of ``axes`` (cycling with a series number once exhausted)."""
    total = 1
    for axis in axes:
        total *= len(axis)
    picks = rng.sample(range(total), min(n, total))
    while len(picks) < n:
        picks += rng.sample(range(total), min(n - len(picks), total))
    for k, flat in enumerate(picks):
        combo = []
        for axis in axes:
            flat, r = divmod(flat, len(axis))
            combo.append(axis[r])
        yield k, combo


def generate_catalog(n: int, seed: int = 7) -> list[PartRecord]:
    """``n`` invented parts across every category, with many near neighbours (shuffled)."""
    rng = random.Random(seed)
    share = {"capacitor": 0.40, "resistor": 0.35, "diode": 0.08, "switch": 0.06, "clamp": 0.04, "magnetic": 0.04,
             "optocoupler": 0.015, "reference": 0.015}
    parts: list[PartRecord] = []
    counts = {c: int(n * w) for c, w in share.items()}
    counts["capacitor"] += n - sum(counts.values())
    decades_c = tuple(10.0 ** e for e in range(-12, -2))
    for k, (m, d, v, case, diel) in _unique(rng, counts["capacitor"], (E24, decades_c, CAP_V, CASES, DIELECTRICS)):
        c = m * d
        parts.append(PartRecord(part_number=f"GCA-{k:06d}", category="capacitor", subtype="ceramic", capacitance=c,
                                v_rated=v, dielectric=diel, case_size=case, tolerance=0.1,
                                description=f"MLCC {format_quantity(c, 'F')} {v:g}V {diel} {case}"))
    decades_r = tuple(10.0 ** e for e in range(-1, 6))
    for k, (m, d, case, tol, pw) in _unique(rng, counts["resistor"], (_e96(), decades_r, CASES, (0.01, 0.05),
                                                                        (0.063, 0.1, 0.125, 0.25))):
        r = m * d
        parts.append(PartRecord(part_number=f"GRE-{k:06d}", category="resistor", subtype="thick_film", resistance=r,
                                tolerance=tol, p_rated=pw, package=case,
                                description=f"chip resistor {format_quantity(r, 'ohm')} {case}"))
    for k, (sub, v, a, pkg) in _unique(rng, counts["diode"], (("schottky", "ultrafast", "standard", "sic"), SEMI_V,
                                                               (0.5, 1.0, 2.0, 3.0, 5.0, 10.0), SEMI_PKG)):
        parts.append(PartRecord(part_number=f"GDI-{k:06d}", category="diode", subtype=sub, vrrm=v, if_avg=a,
                                package=pkg, description=f"{sub} rectifier {v:g}V {a:g}A {pkg} series S{k}"))
    for k, (v, a, pkg) in _unique(rng, counts["switch"], (SEMI_V, (1.0, 2.0, 4.0, 8.0, 12.0, 20.0), SEMI_PKG)):
        parts.append(PartRecord(part_number=f"GSW-{k:06d}", category="switch", subtype="mosfet", vds_max=v, id_max=a,
                                package=pkg, description=f"N-channel MOSFET {v:g}V {a:g}A {pkg} series M{k}"))
    for k, (sub, m, d, pkg) in _unique(rng, counts["clamp"], (("zener", "tvs"), E24, (1.0, 10.0, 100.0), SEMI_PKG)):
        v = m * d
        parts.append(PartRecord(part_number=f"GCL-{k:06d}", category="clamp", subtype=sub, v_breakdown=v, p_max=1.0,
                                package=pkg, description=f"{sub} {v:.3g}V {pkg} series Z{k}"))
    for k, (sub, m, d, isat) in _unique(rng, counts["magnetic"], (("transformer", "inductor"), E24,
                                                                  (1e-6, 1e-5, 1e-4, 1e-3), (0.5, 1.0, 2.0, 5.0))):
        lm = m * d
        parts.append(PartRecord(part_number=f"GMA-{k:06d}", category="magnetic", subtype=sub, lm=lm, isat=isat,
                                description=f"{sub} {format_quantity(lm, 'H')} core EFD{15 + k % 3 * 5} type W{k}"))
    for k in range(counts["optocoupler"]):
        parts.append(PartRecord(part_number=f"GOP-{k:06d}", category="optocoupler", vceo=(35.0, 70.0, 80.0)[k % 3],
                                package=("SOP4", "DIP4")[k % 2], description=f"optocoupler CTR {50 + k % 7 * 25} % type O{k}"))
    for k in range(counts["reference"]):
        parts.append(PartRecord(part_number=f"GRF-{k:06d}", category="reference", vka_max=(16.0, 36.0)[k % 2],
                                v_ref=2.495, package=("SOT-23", "SOT-23-3")[k % 2],
                                description=f"shunt regulator 2.495 V type V{k}"))
    rng.shuffle(parts)
    return parts


def bom_text(parts: list[PartRecord], n: int, seed: int = 11) -> tuple[str, list[str]]:
    """A CSV BOM of ``n`` lines written the way people write them, drawn from ``parts``, and the
    part number each line was written from."""
    rng = random.Random(seed)
    rows = ["Reference,Qty,Value,Description,Package,Part Number"]
    source: list[str] = []
    counters: dict[str, int] = {}
    for _ in range(n):
        p = rng.choice(parts)
        prefix = {"capacitor": "C", "resistor": "R", "diode": "D", "switch": "Q", "clamp": "D", "magnetic": "T",
                  "optocoupler": "U", "reference": "U"}[p.category]
        k = counters[prefix] = counters.get(prefix, 0) + 2
        refs, qty = f"{prefix}{k - 1}-{prefix}{k}", 2
        pn = ""
        roll = rng.random()
        if roll < 0.10:
            pn = p.part_number
        elif roll < 0.15:
            pn = p.part_number.lower() + "-TR"
        if p.category == "capacitor":
            value = f"{format_quantity(p.capacitance, 'F').replace(' ', '')} {p.v_rated:g}V {p.dielectric}"
            desc, pkg = "CAP CER", p.case_size
        elif p.category == "resistor":
            r = format_quantity(p.resistance, "ohm", digits=4).replace(" ", "").replace("Ω", "")
            value, desc, pkg = f"{r} {p.tolerance:.0%} {p.p_rated:g}W", "RES", p.package
        elif p.category == "magnetic":
            value, desc, pkg = format_quantity(p.lm, "H").replace(" ", ""), p.description, ""
        else:
            value, desc, pkg = "", p.description, p.package
        rows.append(",".join((refs, str(qty), value, desc, pkg or "", pn)))
        source.append(p.part_number)
    return "\n".join(rows) + "\n", source


def _time_matching(bom, parts) -> tuple[float, float, list]:
    t0 = time.perf_counter()
    matcher = Matcher(parts)
    t1 = time.perf_counter()
    matches = match_bom(bom, matcher)
    t2 = time.perf_counter()
    return t1 - t0, t2 - t1, matches


def _difflib_baseline(bom, parts) -> float:
    """Seconds per line for a naive best-ratio search over every part's description."""
    keys = [f"{p.part_number} {p.description}".lower() for p in parts]
    lines = bom.lines[:BASELINE_LINES]
    t0 = time.perf_counter()
    for line in lines:
        query = f"{line.value_text} {line.description} {line.package_text}".lower()
        sm = difflib.SequenceMatcher(autojunk=False)
        sm.set_seq2(query)
        best = 0.0
        for key in keys:
            sm.set_seq1(key)
            r = sm.ratio()
            best = max(best, r)
    return (time.perf_counter() - t0) / len(lines)


def run() -> list[tuple[str, str]]:
    """Figures as (label, text) pairs."""
    figures: list[tuple[str, str]] = []
    t0 = time.perf_counter()
    catalog = generate_catalog(N_PARTS)
    figures.append(("generated catalog", f"{len(catalog):,} parts in {time.perf_counter() - t0:.1f} s"))
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "bom.csv"
        # Drawn from the smallest catalog so that every line has its part at every size.
        text, source = bom_text(catalog[:SIZES[0]], N_LINES)
        path.write_text(text, encoding="utf-8")
        t0 = time.perf_counter()
        bom = read_bom(path)
        figures.append(("read BOM", f"{len(bom.lines):,} lines in {time.perf_counter() - t0:.2f} s"))
    per_size = []
    warm = Matcher(catalog[:2_000])  # import-time and first-call costs stay out of the figures
    for line in bom.lines[:50]:
        warm.match_line(line)
    for size in SIZES:
        build, match, matches = _time_matching(bom, catalog[:size])
        per_size.append((size, match))
        counts = {s: sum(1 for m in matches if m.status == s) for s in ("matched", "ambiguous", "unmatched",
                                                                          "conflict")}
        right = sum(1 for m, pn in zip(matches, source, strict=True) if m.status == "matched" and m.part_number == pn)
        counts = {"matched": counts["matched"], "of them to the part the line was written from": right,
                  **{k: v for k, v in counts.items() if k != "matched"}}
        figures.append((f"match {len(bom.lines):,} lines x {size:,} parts",
                        f"{match:.2f} s = {len(bom.lines) / match:,.0f} lines/s (keys precomputed in {build:.1f} s; "
                        + ", ".join(f"{n} {s}" for s, n in counts.items()) + ")"))
    (s0, t_small), (s1, t_big) = per_size[0], per_size[-1]
    growth = "sub-linear" if t_big / t_small <= s1 / s0 else "super-linear"
    figures.append(("growth 10k → 100k parts", f"time x{t_big / t_small:.2f} for catalog x{s1 / s0:.0f} ({growth})"))
    per_line = _difflib_baseline(bom, catalog[:BASELINE_PARTS])
    scaled = per_line * (N_PARTS / BASELINE_PARTS)
    baseline = (f"{1 / per_line:,.1f} lines/s; scaled to {N_PARTS:,} parts {1 / scaled:,.2f} lines/s = "
                f"{scaled * len(bom.lines):,.0f} s for {len(bom.lines):,} lines")
    figures.append((f"difflib baseline ({BASELINE_PARTS:,} parts, {BASELINE_LINES} lines)", baseline))
    figures.append(("speed-up over the baseline at 100k parts",
                    f"x{scaled * len(bom.lines) / per_size[-1][1]:,.0f}"))
    return figures


if __name__ == "__main__":
    for label, text in run():
        print(f"{label:<45} {text}")
