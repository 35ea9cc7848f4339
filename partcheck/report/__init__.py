"""The design-review report: a :class:`~partcheck.result.CheckResult` as one self-contained HTML page.

``render_html(result) -> str`` and ``write_html(result, path) -> Path`` are the public calls;
``build_view(result)`` gives the display data the template shows (for other renderers and tests).
This package reads a ``CheckResult`` and nothing else.
"""

from __future__ import annotations

from .build import build_view
from .html import render_html, write_html

__all__ = ["build_view", "render_html", "write_html"]
