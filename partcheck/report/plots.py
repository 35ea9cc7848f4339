"""Inline SVG figures for the HTML report, generated as text (no plotting library).

Every function takes plain data (numbers and strings from a :class:`~partcheck.result.CheckResult`)
and returns one ``<svg>`` element as a string.  All text that reaches the markup goes through
:func:`xml.sax.saxutils.escape` / :func:`~xml.sax.saxutils.quoteattr` inside :class:`Svg`; no
caller-supplied string is ever pasted into markup directly, so a part description holding
``<script>`` stays text.

Status is never carried by colour alone: bars are filled with the patterns defined once per
page by :func:`pattern_defs` (solid, diagonal hatch, cross-hatch, dots), and every bar carries a
text label.  The patterns are drawn in dark ink over a pale tint so they survive black-and-white
printing.

The elements are meant for inline use in HTML5, where ``<svg>`` needs no namespace
declaration, so the page holds no URL at all.

Output is deterministic (fixed number formatting, no ids beyond the shared pattern ids), so a
report rendered twice from the same result is byte-identical.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from typing import Any
from xml.sax.saxutils import escape, quoteattr

from ..units import format_quantity

#: Upper end of every utilisation scale (1.0 = at the limit).  Longer bars are clipped and
#: marked with an arrow; the number beside the bar is always the true value.
UTIL_SCALE_MAX = 1.5

#: Pattern id per status; the fill of every status bar.
STATUS_FILL: dict[str, str] = {
    "pass": "url(#pc-pass)",
    "warn": "url(#pc-warn)",
    "fail": "url(#pc-fail)",
    "waived": "url(#pc-waived)",
    "not_assessed": "url(#pc-none)",
    "unmatched": "url(#pc-none)",
    "not_fitted": "url(#pc-none)",
    "info": "url(#pc-none)",
    "out_of_scope": "url(#pc-none)",
}

#: Status words and symbols: every status shows both, never colour alone.
STATUS_LABELS: dict[str, str] = {
    "fail": "FAIL",
    "unmatched": "UNMATCHED",
    "not_assessed": "NOT ASSESSED",
    "warn": "WARN",
    "waived": "WAIVED",
    "pass": "PASS",
    "not_fitted": "NOT FITTED",
    "info": "INFO (NO LIMIT)",
    "out_of_scope": "OUT OF SCOPE",
}
STATUS_SYMBOLS: dict[str, str] = {
    "fail": "✖",
    "unmatched": "∅",
    "not_assessed": "?",
    "warn": "▲",
    "waived": "◇",
    "pass": "✔",
    "not_fitted": "–",
    "info": "·",
    "out_of_scope": "○",
}

INK = "#1d2733"
GRID = "#c9d0d8"
MUTED = "#5b6673"


def _num(value: float) -> str:
    """A coordinate: 2 decimals at most, no trailing zeros, never exponent form."""
    text = f"{value:.2f}".rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text


class Svg:
    """A tiny SVG writer that escapes every attribute value and text node."""

    def __init__(self, width: float, height: float, *, label: str, css_class: str = "plot") -> None:
        self.width = width
        self.height = height
        self.parts: list[str] = []
        self.label = label
        self.css_class = css_class

    @staticmethod
    def _attrs(attrs: dict[str, Any]) -> str:
        out = []
        for key, value in attrs.items():
            if value is None:
                continue
            name = key.rstrip("_").replace("_", "-")
            text = _num(value) if isinstance(value, float) else str(value)
            out.append(f" {name}={quoteattr(text)}")
        return "".join(out)

    def el(self, tag: str, text: str | None = None, **attrs: Any) -> None:
        if text is None:
            self.parts.append(f"<{tag}{self._attrs(attrs)}/>")
        else:
            self.parts.append(f"<{tag}{self._attrs(attrs)}>{escape(text)}</{tag}>")

    def open(self, tag: str, **attrs: Any) -> None:
        self.parts.append(f"<{tag}{self._attrs(attrs)}>")

    def close(self, tag: str) -> None:
        self.parts.append(f"</{tag}>")

    def text(self, x: float, y: float, text: str, **attrs: Any) -> None:
        self.el("text", text, x=float(x), y=float(y), **attrs)

    def line(self, x1: float, y1: float, x2: float, y2: float, **attrs: Any) -> None:
        self.el("line", x1=float(x1), y1=float(y1), x2=float(x2), y2=float(y2), **attrs)

    def rect(self, x: float, y: float, w: float, h: float, **attrs: Any) -> None:
        self.el("rect", x=float(x), y=float(y), width=float(max(w, 0.0)), height=float(max(h, 0.0)), **attrs)

    def polyline(self, points: Iterable[tuple[float, float]], **attrs: Any) -> None:
        pts = " ".join(f"{_num(x)},{_num(y)}" for x, y in points)
        self.el("polyline", points=pts, **attrs)

    def __str__(self) -> str:
        head = (
            f'<svg class={quoteattr(self.css_class)} role="img"'
            f' viewBox="0 0 {_num(self.width)} {_num(self.height)}" width="{_num(self.width)}"'
            f' height="{_num(self.height)}" aria-label={quoteattr(self.label)}>'
        )
        return head + f"<title>{escape(self.label)}</title>" + "".join(self.parts) + "</svg>"


def pattern_defs() -> str:
    """The status fill patterns, to be placed once at the top of the page.

    pass: solid pale fill with a dark outline; warn: diagonal hatch; fail: dense cross-hatch;
    waived: dots; not assessed / unmatched: open (white) bar.
    """
    return (
        '<svg class="defs" width="0" height="0" aria-hidden="true"'
        ' focusable="false"><defs>'
        '<pattern id="pc-pass" width="6" height="6" patternUnits="userSpaceOnUse">'
        '<rect width="6" height="6" fill="#cfe3d3"/></pattern>'
        '<pattern id="pc-warn" width="6" height="6" patternUnits="userSpaceOnUse" patternTransform="rotate(45)">'
        '<rect width="6" height="6" fill="#f3e2b8"/><line x1="0" y1="0" x2="0" y2="6" stroke="#6b4a00"'
        ' stroke-width="2"/></pattern>'
        '<pattern id="pc-fail" width="5" height="5" patternUnits="userSpaceOnUse" patternTransform="rotate(45)">'
        '<rect width="5" height="5" fill="#f1c9c4"/><line x1="0" y1="0" x2="0" y2="5" stroke="#7a1712"'
        ' stroke-width="1.6"/><line x1="0" y1="0" x2="5" y2="0" stroke="#7a1712" stroke-width="1.6"/></pattern>'
        '<pattern id="pc-waived" width="5" height="5" patternUnits="userSpaceOnUse">'
        '<rect width="5" height="5" fill="#dcd8ea"/><circle cx="2.5" cy="2.5" r="1.1" fill="#3d3566"/></pattern>'
        '<pattern id="pc-none" width="6" height="6" patternUnits="userSpaceOnUse">'
        '<rect width="6" height="6" fill="#ffffff"/></pattern>'
        '<pattern id="pc-band" width="4" height="4" patternUnits="userSpaceOnUse" patternTransform="rotate(-45)">'
        '<rect width="4" height="4" fill="#f7f1e1"/><line x1="0" y1="0" x2="0" y2="4" stroke="#c9b27a"'
        ' stroke-width="0.8"/></pattern>'
        "</defs></svg>"
    )


# --------------------------------------------------------------------------------------------
# Axis helpers
# --------------------------------------------------------------------------------------------

_PREFIX = {-12: "p", -9: "n", -6: "µ", -3: "m", 0: "", 3: "k", 6: "M", 9: "G"}
_UNIT_TEXT = {"ohm": "Ω", "degC": "°C", None: ""}
_NO_PREFIX = {"degC", "K", "h", "K/W", "%"}


def axis_unit(max_abs: float, kind: str | None) -> tuple[float, str]:
    """Factor to multiply values by and the unit text for an axis spanning ``max_abs``.

    ``axis_unit(4e-6, "s")`` → ``(1e6, "µs")``; percentages are shown ×100.
    """
    if kind == "%":
        return 100.0, "%"
    unit = _UNIT_TEXT.get(kind, kind or "")
    if kind in _NO_PREFIX or kind is None or not max_abs or not math.isfinite(max_abs):
        return 1.0, unit
    exponent = int(math.floor(math.log10(abs(max_abs)) / 3.0) * 3)
    exponent = max(-12, min(9, exponent))
    return 10.0 ** (-exponent), f"{_PREFIX[exponent]}{unit}"


def nice_ticks(lo: float, hi: float, count: int = 5) -> list[float]:
    """Round tick values covering ``[lo, hi]`` (steps of 1, 2, 2.5 or 5 × 10^n)."""
    if not (math.isfinite(lo) and math.isfinite(hi)):
        return [0.0]
    if hi <= lo:
        hi = lo + (abs(lo) or 1.0)
    raw = (hi - lo) / max(count, 1)
    mag = 10.0 ** math.floor(math.log10(raw))
    step = next(m * mag for m in (1.0, 2.0, 2.5, 5.0, 10.0) if m * mag >= raw)
    first = math.floor(lo / step + 1e-9) * step
    ticks = []
    value = first
    while value <= hi + step * 1e-6 and len(ticks) < 50:
        ticks.append(round(value, 12))
        value += step
    if ticks[-1] < hi - step * 1e-6:
        ticks.append(round(ticks[-1] + step, 12))
    return ticks


def _tick_label(value: float) -> str:
    text = f"{value:.4g}"
    if "e" in text:
        text = f"{value:.3f}".rstrip("0").rstrip(".")
    return "0" if text == "-0" else text


def _clean(values: Sequence[Any]) -> list[float | None]:
    out: list[float | None] = []
    for v in values:
        if isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v):
            out.append(float(v))
        else:
            out.append(None)
    return out


#: A limit further than this factor above the data is not drawn to scale; it is stated in text
#: so that the curve keeps the panel's height.
OFF_SCALE_FACTOR = 3.0


def format_utilisation(utilisation: float | None) -> str:
    """Utilisation (stress/limit) as a percentage that never crosses 100 % by rounding.

    Three significant digits as everywhere else, but a value above 1 always reads above
    "100 %" and a value below 1 always below it, with as many more digits as that takes
    (``1.0004`` → ``"100.04 %"``, ``0.9996`` → ``"99.96 %"``); only exactly 1 reads
    ``"100 %"``.  So a FAIL just over its limit never shows the same figure as a WARN at it.
    """
    if utilisation is None or not math.isfinite(utilisation):
        return format_quantity(utilisation, "%")
    for digits in range(3, 9):
        text = format_quantity(utilisation, "%", digits)
        shown = float(text.split()[0]) / 100.0
        if (utilisation > 1.0) == (shown > 1.0) and (utilisation < 1.0) == (shown < 1.0):
            return text
    return "> 100 %" if utilisation > 1.0 else "< 100 %"


# --------------------------------------------------------------------------------------------
# Utilisation bars
# --------------------------------------------------------------------------------------------


def utilisation_bar(utilisation: float | None, status: str, warn_from: float | None = None,
                    *, width: float = 220.0, height: float = 22.0, label: str = "") -> str:
    """One horizontal bar of ``utilisation`` (stress/limit) on a 0–150 % scale.

    A solid tick marks 100 % of the limit; the warn band (``warn_from``…1.0) is a light hatch
    behind the bar; the bar's fill pattern says the status; a clipped bar ends in an arrow.
    """
    text_label = label or f"utilisation {format_utilisation(utilisation)} of limit, {STATUS_LABELS.get(status, status)}"
    svg = Svg(width, height, label=text_label, css_class="ubar")
    x0, x1 = 1.0, width - 1.0
    span = x1 - x0

    def sx(u: float) -> float:
        return x0 + span * min(max(u, 0.0), UTIL_SCALE_MAX) / UTIL_SCALE_MAX

    bar_top, bar_h = 4.0, height - 10.0
    svg.rect(x0, bar_top, span, bar_h, fill="#ffffff", stroke=GRID, stroke_width=0.8)
    if warn_from is not None and 0.0 < warn_from < 1.0:
        svg.rect(sx(warn_from), bar_top, sx(1.0) - sx(warn_from), bar_h, fill="url(#pc-band)")
    if utilisation is not None and math.isfinite(utilisation):
        svg.rect(x0, bar_top + 2, sx(utilisation) - x0, bar_h - 4, fill=STATUS_FILL.get(status, "url(#pc-none)"),
                 stroke=INK, stroke_width=0.8)
        if utilisation > UTIL_SCALE_MAX:
            xe = sx(UTIL_SCALE_MAX)
            mid = bar_top + bar_h / 2
            svg.el("path", d=f"M{_num(xe - 7)},{_num(bar_top)} L{_num(xe)},{_num(mid)} L{_num(xe - 7)},"
                   f"{_num(bar_top + bar_h)} Z", fill=INK)
    for u in (0.5,):
        svg.line(sx(u), bar_top + bar_h, sx(u), bar_top + bar_h + 3, stroke=MUTED, stroke_width=0.8)
    svg.line(sx(1.0), 1.0, sx(1.0), height - 2.0, stroke=INK, stroke_width=2.0)
    svg.text(sx(1.0) + 2, height - 0.5, "limit", font_size=6.5, fill=INK)
    return str(svg)


def utilisation_chart(rows: Sequence[dict[str, Any]], *, max_rows: int = 40) -> str:
    """Horizontal bars of each part's worst utilisation against its limit (1.0).

    ``rows``: dicts with ``label``, ``utilization`` (float or None), ``status``,
    ``warn_from`` (float or None) and ``parameter``; drawn in the given order, at most
    ``max_rows`` of them (the caller says how many were left out).
    """
    rows = [r for r in rows if r.get("utilization") is not None][:max_rows]
    label_w, value_w, plot_w = 250.0, 150.0, 520.0
    row_h, top, bottom = 17.0, 26.0, 30.0
    width = label_w + plot_w + value_w
    height = top + bottom + row_h * max(len(rows), 1)
    svg = Svg(width, height, label=f"Worst utilisation of each part against its limit ({len(rows)} parts)")
    x0 = label_w

    def sx(u: float) -> float:
        return x0 + plot_w * min(max(u, 0.0), UTIL_SCALE_MAX) / UTIL_SCALE_MAX

    for tick in (0.0, 0.25, 0.5, 0.75, 1.0, 1.25, 1.5):
        svg.line(sx(tick), top - 4, sx(tick), height - bottom, stroke=GRID, stroke_width=0.6)
        svg.text(sx(tick), height - bottom + 12, f"{tick * 100:.0f} %", font_size=9, text_anchor="middle", fill=MUTED)
    svg.text(x0 + plot_w / 2, height - 4, "utilisation = stress / limit (worst finding of the part)", font_size=9,
             text_anchor="middle", fill=MUTED)
    if not rows:
        svg.text(x0 + 8, top + 12, "no part has an assessed utilisation", font_size=10, fill=MUTED)
    for i, row in enumerate(rows):
        y = top + i * row_h
        util = float(row["utilization"])
        status = row.get("status", "pass")
        warn_from = row.get("warn_from")
        if warn_from is not None and 0.0 < warn_from < 1.0:
            svg.rect(sx(warn_from), y + 1, sx(1.0) - sx(warn_from), row_h - 2, fill="url(#pc-band)")
        svg.rect(x0, y + 3, sx(util) - x0, row_h - 6, fill=STATUS_FILL.get(status, "url(#pc-none)"),
                 stroke=INK, stroke_width=0.7)
        if util > UTIL_SCALE_MAX:
            xe = sx(UTIL_SCALE_MAX)
            svg.el("path", d=f"M{_num(xe - 7)},{_num(y + 2)} L{_num(xe)},{_num(y + row_h / 2)} "
                   f"L{_num(xe - 7)},{_num(y + row_h - 2)} Z", fill=INK)
        svg.text(label_w - 6, y + row_h - 5, _shorten(str(row.get("label", "")), 42), font_size=10,
                 text_anchor="end", fill=INK)
        symbol = STATUS_SYMBOLS.get(status, "")
        svg.text(x0 + plot_w + 6, y + row_h - 5,
                 f"{symbol} {format_utilisation(util)} {STATUS_LABELS.get(status, status)}",
                 font_size=10, fill=INK)
    svg.line(sx(1.0), top - 8, sx(1.0), height - bottom, stroke=INK, stroke_width=2.0)
    svg.text(sx(1.0) + 3, top - 10, "limit (100 %)", font_size=9, fill=INK)
    svg.rect(x0 + 4, 4, 14, 9, fill="url(#pc-band)", stroke=GRID, stroke_width=0.6)
    svg.text(x0 + 22, 12, "warn band of the rule", font_size=9, fill=MUTED)
    return str(svg)


def _shorten(text: str, n: int) -> str:
    return text if len(text) <= n else text[: n - 1] + "…"


# --------------------------------------------------------------------------------------------
# Line plots: sweep panels and waveforms
# --------------------------------------------------------------------------------------------


def _frame(svg: Svg, x0: float, y0: float, w: float, h: float, xlo: float, xhi: float, ylo: float, yhi: float,
           xlabel: str, ylabel: str, xticks: Sequence[float], yticks: Sequence[float]) -> tuple[Any, Any]:
    def sx(x: float) -> float:
        return x0 + w * (x - xlo) / ((xhi - xlo) or 1.0)

    def sy(y: float) -> float:
        return y0 + h - h * (y - ylo) / ((yhi - ylo) or 1.0)

    for t in yticks:
        svg.line(x0, sy(t), x0 + w, sy(t), stroke=GRID, stroke_width=0.6)
        svg.text(x0 - 4, sy(t) + 3, _tick_label(t), font_size=9, text_anchor="end", fill=MUTED)
    for t in xticks:
        svg.line(sx(t), y0 + h, sx(t), y0 + h + 3, stroke=MUTED, stroke_width=0.8)
        svg.text(sx(t), y0 + h + 13, _tick_label(t), font_size=9, text_anchor="middle", fill=MUTED)
    svg.rect(x0, y0, w, h, fill="none", stroke=MUTED, stroke_width=0.8)
    svg.text(x0 + w / 2, y0 + h + 26, xlabel, font_size=9, text_anchor="middle", fill=MUTED)
    svg.text(x0, y0 - 6, ylabel, font_size=9, fill=MUTED)
    return sx, sy


def _off_scale_text(limit: float, data_max: float, kind: str | None, label: str = "limit") -> str:
    ratio = limit / data_max if data_max > 0 else math.inf
    times = f"{ratio:.0f}×" if math.isfinite(ratio) else "far above"
    return f"{label} {format_quantity(limit, kind)} off scale ({times} the highest value)"


def sweep_panel(vin: Sequence[Any], series: dict[str, Any]) -> str:
    """One stress against input voltage, with its limit as a dashed line.

    Points within the limit are open circles, points beyond it filled squares, so the crossing
    reads without colour.  ``series``: ``{"label", "unit", "values", "limit", "limit_label"}``,
    optionally ``"checked": {"value", "corner"}`` (the finding's stress at its own corner, which
    may lie outside the sweep: the surge or current-limit corner), stated under the plot.

    The sweep covers only the full-load points it was given, so its extreme is called the
    highest (or lowest) *in the sweep*, never the worst.  A limit more than
    :data:`OFF_SCALE_FACTOR` times above the highest value is stated in text instead of
    squashing the curve against the floor.
    """
    xs = _clean(vin)
    ys = _clean(series.get("values", []))
    unit = series.get("unit")
    limit = series.get("limit")
    limit = float(limit) if isinstance(limit, (int, float)) and not isinstance(limit, bool) else None
    pts = [(x, y) for x, y in zip(xs, ys) if x is not None and y is not None]
    label = str(series.get("label") or series.get("key") or "")
    checked = series.get("checked") if isinstance(series.get("checked"), dict) else None
    width, height = 330.0, 222.0
    x0, y0, w, h = 48.0, 34.0, 266.0, 130.0
    svg = Svg(width, height, label=f"{label} against input voltage", css_class="plot panel")
    svg.text(4, 13, _shorten(label, 52), font_size=11, font_weight="600", fill=INK)
    if not pts:
        svg.text(x0, y0 + 20, "no values", font_size=10, fill=MUTED)
        return str(svg)
    larger_is_better = bool(series.get("larger_is_better"))
    data_max = max(abs(y) for _, y in pts)
    off_scale = (limit is not None and not larger_is_better and data_max > 0
                 and limit > OFF_SCALE_FACTOR * data_max)
    drawn_limit = None if off_scale else limit
    candidates = [abs(y) for _, y in pts] + ([abs(drawn_limit)] if drawn_limit is not None else [])
    factor, unit_text = axis_unit(max(candidates) or 1.0, unit)
    xv = [p[0] for p in pts]
    yv = [p[1] * factor for p in pts]
    lim = drawn_limit * factor if drawn_limit is not None else None
    ylo = min(0.0, min(yv))
    yhi = max(yv + ([lim] if lim is not None else []))
    yticks = nice_ticks(ylo, yhi * 1.05 if yhi > 0 else yhi + 1.0, 4)
    xticks = nice_ticks(min(xv), max(xv), 5)
    xticks = [t for t in xticks if min(xv) - 1e-9 <= t <= max(xv) + 1e-9] or [min(xv), max(xv)]
    sx, sy = _frame(svg, x0, y0, w, h, min(xv), max(xv), yticks[0], yticks[-1], "input voltage [V]",
                    f"[{unit_text}]" if unit_text else "", xticks, yticks)
    lim_text = str(series.get("limit_label") or "limit")
    if lim is not None:
        svg.line(x0, sy(lim), x0 + w, sy(lim), stroke=INK, stroke_width=1.4, stroke_dasharray="6 3")
        svg.text(x0 + w - 2, sy(lim) - 3, f"{_shorten(lim_text, 30)} {format_quantity(limit, unit)}", font_size=8.5,
                 text_anchor="end", fill=INK)
    elif off_scale:
        svg.text(x0 + w - 2, y0 + 10, _off_scale_text(limit, data_max, unit), font_size=8.5, text_anchor="end",
                 fill=INK)
    svg.polyline([(sx(x), sy(y)) for x, y in zip(xv, yv)], fill="none", stroke=INK, stroke_width=1.5)
    over = 0
    for x, y in zip(xv, yv):
        beyond = limit is not None and ((y < limit * factor) if larger_is_better else (y > limit * factor))
        if beyond:
            over += 1
            svg.rect(sx(x) - 3, sy(y) - 3, 6, 6, fill=INK)
        else:
            svg.el("circle", cx=float(sx(x)), cy=float(sy(y)), r=2.6, fill="#ffffff", stroke=INK, stroke_width=1.2)
    extreme = (min if larger_is_better else max)(pts, key=lambda p: p[1])
    note = (f"{'lowest' if larger_is_better else 'highest'} in the sweep {format_quantity(extreme[1], unit)} "
            f"at {format_quantity(extreme[0], 'V')}")
    if limit is not None:
        note += f"; beyond limit at {over} of {len(pts)} points" if over else "; within limit everywhere"
    svg.text(4, height - 16, note, font_size=9, fill=INK)
    value = checked.get("value") if checked else None
    if isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value):
        svg.text(4, height - 4, _shorten(f"checked: {format_quantity(float(value), unit)} at corner "
                                         f"{checked.get('corner') or '—'}", 64), font_size=9, fill=INK)
    return str(svg)


def waveform_panel(wave: dict[str, Any], *, unit: str = "A") -> str:
    """A current waveform from its breakpoints ``t`` [s], ``y`` [A] (piecewise linear).

    ``wave["checked_peak"]`` (optional) is the peak the corner table and the finding use for this
    corner; when the drawn waveform's own peak differs from it by more than 0.5 %, the checked
    peak is drawn as a dashed line and both figures are stated, so the panel never shows a peak
    that silently disagrees with the table.
    """
    ts = _clean(wave.get("t", []))
    ys = _clean(wave.get("y", []))
    pts = [(t, y) for t, y in zip(ts, ys) if t is not None and y is not None]
    label = str(wave.get("label") or wave.get("name") or "")
    corner = str(wave.get("corner") or "")
    checked = wave.get("checked_peak")
    checked = float(checked) if isinstance(checked, (int, float)) and not isinstance(checked, bool) \
        and math.isfinite(checked) else None
    width, height = 460.0, 232.0
    x0, y0, w, h = 52.0, 36.0, 390.0, 132.0
    svg = Svg(width, height, label=f"{label} at corner {corner}", css_class="plot panel")
    svg.text(4, 13, _shorten(label, 60), font_size=11, font_weight="600", fill=INK)
    svg.text(width - 4, 13, f"at corner {_shorten(corner, 40)}", font_size=9, text_anchor="end", fill=MUTED)
    if len(pts) < 2:
        svg.text(x0, y0 + 20, "no waveform", font_size=10, fill=MUTED)
        return str(svg)
    peak_i = max(range(len(pts)), key=lambda i: abs(pts[i][1]))
    peak = pts[peak_i][1]
    differs = checked is not None and abs(checked - peak) > 0.005 * max(abs(checked), abs(peak))
    tmax = max(p[0] for p in pts)
    tfac, tunit = axis_unit(tmax, "s")
    yabs = max([abs(p[1]) for p in pts] + ([abs(checked)] if differs else [])) or 1.0
    yfac, yunit = axis_unit(yabs, unit)
    tv = [p[0] * tfac for p in pts]
    yv = [p[1] * yfac for p in pts]
    top = max([0.0, *yv] + ([checked * yfac] if differs else []))
    yticks = nice_ticks(min(0.0, min(yv)), top * 1.05 or 1.0, 4)
    xticks = nice_ticks(min(tv), max(tv), 6)
    xticks = [t for t in xticks if min(tv) - 1e-9 <= t <= max(tv) + 1e-9]
    sx, sy = _frame(svg, x0, y0, w, h, min(tv), max(tv), yticks[0], yticks[-1], f"time [{tunit}]",
                    f"[{yunit}]", xticks, yticks)
    if yticks[0] < 0 < yticks[-1]:
        svg.line(x0, sy(0.0), x0 + w, sy(0.0), stroke=MUTED, stroke_width=0.8)
    if differs:
        svg.line(x0, sy(checked * yfac), x0 + w, sy(checked * yfac), stroke=INK, stroke_width=1.2,
                 stroke_dasharray="5 3")
        svg.text(x0 + w - 2, sy(checked * yfac) - 3, f"checked peak {format_quantity(checked, unit)}",
                 font_size=8.5, text_anchor="end", fill=INK)
    svg.polyline([(sx(t), sy(y)) for t, y in zip(tv, yv)], fill="none", stroke=INK, stroke_width=1.6,
                 stroke_linejoin="round")
    svg.el("circle", cx=float(sx(tv[peak_i])), cy=float(sy(yv[peak_i])), r=3.0, fill=INK)
    name = "waveform peak" if differs else "peak"
    svg.text(4, height - 16, f"{name} {format_quantity(peak, unit)}; {len(pts)} breakpoints, "
             f"{format_quantity(tmax, 's')} shown", font_size=9, fill=INK)
    if differs:
        svg.text(4, height - 4, f"dashed: the peak the corner table and the finding use, "
                 f"{format_quantity(checked, unit)} (a bound above this sketch)" if checked > peak else
                 f"dashed: the peak the corner table and the finding use, {format_quantity(checked, unit)}",
                 font_size=9, fill=INK)
    return str(svg)


# --------------------------------------------------------------------------------------------
# Capacitor bank split
# --------------------------------------------------------------------------------------------


def bank_split_chart(bank_name: str, bank: dict[str, Any]) -> str:
    """How the ripple current of one output bank splits across its capacitors.

    One bar per capacitor (length = its RMS ripple current), labelled with the reference, the
    current and its share of the bank's total; a capacitor's rated ripple current, where given
    (``i_rms_rating``), is a tick on its bar.
    """
    caps = [c for c in bank.get("caps", []) if isinstance(c, dict)]
    label_w, plot_w, value_w = 170.0, 330.0, 260.0
    row_h, top, bottom = 20.0, 22.0, 26.0
    width = label_w + plot_w + value_w
    height = top + bottom + row_h * max(len(caps), 1)
    svg = Svg(width, height, label=f"Ripple current split across {bank_name}")
    currents = [c.get("i_rms") if isinstance(c.get("i_rms"), (int, float)) else None for c in caps]
    ratings = [c.get("i_rms_rating") if isinstance(c.get("i_rms_rating"), (int, float)) else None for c in caps]
    total_sq = sum(i * i for i in currents if i is not None)
    i_max = max([i for i in currents if i is not None] + [1e-12])
    # A rating far above every current would squash the bars: it stays off the scale (said in text).
    on_scale = [r for r in ratings if r is not None and r <= OFF_SCALE_FACTOR * i_max]
    top_value = max([i_max] + on_scale)
    factor, unit_text = axis_unit(top_value, "A")
    ticks = nice_ticks(0.0, top_value * factor, 4)
    scale_hi = ticks[-1] or 1.0

    def sx(value_a: float) -> float:
        return label_w + plot_w * (value_a * factor) / scale_hi

    for t in ticks:
        x = label_w + plot_w * t / scale_hi
        svg.line(x, top - 4, x, height - bottom, stroke=GRID, stroke_width=0.6)
        svg.text(x, height - bottom + 12, _tick_label(t), font_size=9, text_anchor="middle", fill=MUTED)
    svg.text(label_w + plot_w / 2, height - 3, f"RMS ripple current [{unit_text}]", font_size=9,
             text_anchor="middle", fill=MUTED)
    svg.text(label_w, 12, f"{_shorten(bank_name, 40)} at corner {_shorten(str(bank.get('corner', '')), 40)}",
             font_size=10, fill=INK)
    for i, (cap, current, rating) in enumerate(zip(caps, currents, ratings)):
        y = top + i * row_h
        ref = str(cap.get("ref", ""))
        svg.text(label_w - 6, y + row_h - 6, _shorten(f"{ref} {cap.get('part_number') or ''}", 30),
                 font_size=10, text_anchor="end", fill=INK)
        if current is None:
            svg.text(label_w + 4, y + row_h - 6, "no value", font_size=9, fill=MUTED)
            continue
        svg.rect(label_w, y + 4, sx(current) - label_w, row_h - 8, fill="url(#pc-pass)", stroke=INK, stroke_width=0.7)
        if rating is not None and rating <= OFF_SCALE_FACTOR * i_max:
            svg.line(sx(rating), y + 1, sx(rating), y + row_h - 1, stroke=INK, stroke_width=2.0)
        share = (current * current / total_sq) if total_sq > 0 else 0.0
        text = f"{format_quantity(current, 'A')} ({format_quantity(share, '%')} of I²)"
        if rating is not None:
            text += f" | rated {format_quantity(rating, 'A')}"
            if rating > OFF_SCALE_FACTOR * i_max:
                text += " (off scale)"
        svg.text(label_w + plot_w + 6, y + row_h - 6, text, font_size=9.5, fill=INK)
    if any(r is not None for r in ratings):
        svg.text(label_w + plot_w + 6, 12, "tick = rated ripple current", font_size=9, fill=MUTED)
    return str(svg)
