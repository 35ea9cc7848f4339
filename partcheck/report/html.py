"""Render a :class:`~partcheck.result.CheckResult` as one self-contained HTML page.

The page is a jinja2 template (``templates/report.html.j2`` with its stylesheet
``templates/report.css.j2`` inlined) filled with the view from :func:`~.build.build_view`.
Autoescaping is on and undefined names are errors, so every string from the result (part
descriptions, references, waiver reasons) is text, and a template typo fails loudly instead of
printing nothing.

The page fetches nothing: styles are inline, figures are inline SVG, fonts are the reader's
system fonts, and it has no script.  A Content-Security-Policy meta tag (``default-src 'none'``)
makes the browser refuse any fetch or script that might still slip in.
"""

from __future__ import annotations

from functools import lru_cache
from pathlib import Path

import jinja2

from ..result import CheckResult
from .build import build_view

TEMPLATE = "report.html.j2"
TEMPLATE_DIR = Path(__file__).with_name("templates")


@lru_cache(maxsize=1)
def environment() -> jinja2.Environment:
    """The report's jinja2 environment: autoescape on, StrictUndefined, templates from the package."""
    return jinja2.Environment(
        loader=jinja2.FileSystemLoader(str(TEMPLATE_DIR)),
        autoescape=True,
        undefined=jinja2.StrictUndefined,
        trim_blocks=False,
        lstrip_blocks=False,
        keep_trailing_newline=True,
    )


def render_html(result: CheckResult) -> str:
    """The design-review report for ``result`` as one HTML document (a ``str``)."""
    return environment().get_template(TEMPLATE).render(v=build_view(result))


def write_html(result: CheckResult, path: str | Path) -> Path:
    """Write the report to ``path`` (UTF-8; parent folders are created) and return the path."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(render_html(result), encoding="utf-8")
    return path
