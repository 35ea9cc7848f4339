"""The bundled seed catalog in db/ imports cleanly and covers every category and subtype."""

from __future__ import annotations

import io

from partcheck.catalog import CATEGORIES, CURVES, open_catalog
from partcheck.catalog.seed import SEED_DIR, demo_catalog, seed_catalog


def test_seed_imports_cleanly_and_covers_every_subtype(tmp_path):
    assert (SEED_DIR / "parts.csv").is_file() and (SEED_DIR / "README.md").is_file()
    with demo_catalog(tmp_path) as cat:
        parts = cat.parts()
        assert len(parts) >= 150  # issue 2: at least 150 invented parts
        present = {(p.category, p.subtype) for p in parts}
        assert present >= {(c, s) for c, subs in CATEGORIES.items() for s in subs}
        assert {name for p in parts for name in p.curves} == set(CURVES)
        assert all(p.status in ("approved", "restricted", "obsolete") for p in parts)
        # schema version 3 columns (invented values, see db/README.md)
        diodes = [p for p in parts if p.category == "diode"]
        assert diodes and all(p.if_avg < p.i_frm < p.ifsm for p in diodes)
        transformers = [p for p in parts if p.subtype == "transformer"]
        assert transformers and all(0.35 <= p.b_sat <= 0.40 for p in transformers)
        assert all(p.b_sat is None for p in parts if p.subtype == "inductor")
        hash_first = cat.snapshot_hash()
        text = io.StringIO()
        cat.export(text, "json")
    (tmp_path / "seed.json").write_text(text.getvalue(), encoding="utf-8")
    with open_catalog(tmp_path / "again.sqlite") as again:
        again.import_file(tmp_path / "seed.json")
        assert again.snapshot_hash() == hash_first


def test_seed_catalog_into_an_open_catalog(catalog_url):
    with open_catalog(catalog_url) as cat:
        report = seed_catalog(cat)
        assert report.added == cat.count() >= 150 and report.updated == 0
        assert report.curves_file == str(SEED_DIR / "parts.curves.csv") and report.curve_points > 0
        again = seed_catalog(cat, update=True)  # re-seeding with update changes nothing
        assert (again.added, again.updated) == (0, report.added)
        assert cat.count() == report.added
