"""Shared helpers for the rules tests."""

from __future__ import annotations

import textwrap
from pathlib import Path

import pytest


@pytest.fixture
def write(tmp_path: Path):
    """write("name.toml", text) -> path of a dedented file in a temporary folder."""

    def _write(name: str, text: str) -> Path:
        path = tmp_path / name
        path.write_text(textwrap.dedent(text).lstrip("\n"), encoding="utf-8")
        return path

    return _write
