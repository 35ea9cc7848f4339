"""The README's team-catalog section states the numbers the code uses."""

from __future__ import annotations

import re
from pathlib import Path

from partcheck.catalog import store

README = Path(__file__).resolve().parents[2] / "README.md"


def _section() -> str:
    text = README.read_text(encoding="utf-8")
    start = text.index("## Team catalog on PostgreSQL")
    end = text.find("\n## ", start + 1)
    return text[start:] if end < 0 else text[start:end]


def test_team_section_states_the_retry_and_chunk_figures():
    section = _section()
    assert f"up to {store.WRITE_ATTEMPTS} tries with a backoff doubling from {store.BACKOFF_S:g} s" in section
    assert f"more than {store.IMPORT_CHUNK:,} rows is streamed" in section
    assert "export PARTCHECK_DB=postgresql+psycopg://USER@HOST/partcheck" in section


def test_setup_keeps_exactly_two_commands():
    text = README.read_text(encoding="utf-8")
    setup = text[text.index("## Set-up"):text.index("## Using it")]
    assert len(re.findall(r"^```\n(.+?)\n```", setup, flags=re.M | re.S)) == 2
