"""Match every BOM line to a catalog part, in tiers, and say why.

Tiers, each recorded as ``method``:

1. ``pinned`` — an override (reference → part number) always wins.
2. ``exact`` — the part-number cell (or the value cell) equals a catalog part number.
3. ``normalized`` — equal after folding case, spaces, dashes, underscores, dots and the
   packaging or distributor suffixes in :data:`PACKAGING_SUFFIXES`.
4. ``fuzzy`` — among parts of the line's category (from the reference prefix and the
   description), those whose ratings agree with the line's values (capacitance/resistance
   within tolerance, rated voltage not below the BOM's, same case size, same dielectric and
   subtype) are scored by text similarity plus value agreement.

Statuses: ``matched``; ``ambiguous`` (two candidates within ``ambiguity_gap`` points);
``unmatched`` (nothing reaches ``threshold``); ``conflict`` (a part found by number, or whose
description the line copies, contradicts a value the line states); ``not_fitted``.

The :class:`Matcher` precomputes normalised keys and numpy rating arrays per category once, so
that each line costs a few vectorised comparisons and one rapidfuzz call over the survivors.
"""

from __future__ import annotations

import math
import re
from collections import defaultdict
from collections.abc import Callable, Iterable
from dataclasses import dataclass, field
from os import PathLike
from typing import Any, Final

import numpy as np
from rapidfuzz import fuzz, process

from ..errors import BomError
from ..units import format_quantity
from .read import Bom, BomLine, read_bom
from .values import PRIMARY, dielectric_key, package_key, quantity_token

DEFAULT_THRESHOLD: Final = 70.0
DEFAULT_AMBIGUITY_GAP: Final = 3.0
#: Text similarity of a line's description to a part's description above which a contradiction
#: of values is reported as a conflict rather than as "no such part".
CONFLICT_TEXT: Final = 95.0
#: Rows scored by text at a time, and best rows kept per category (see ``Matcher._score_block``).
_CHUNK: Final = 256
_PER_BLOCK: Final = 8
#: A word of the line that reads like a type or series code: a letter first, a digit somewhere
#: (``m924``, ``efd20``); quantities (``25v``, ``4k7``) start with a digit and dielectric codes are excluded.
_CODE_TOKEN: Final = re.compile(r"(?!(?:c0g|np0|x5r|x6s|x7r|x7s|x7t|x8r|x8l|y5v|z5u|u2j)$)[a-z][a-z]*[0-9][a-z0-9]*")

STATUSES: Final = ("matched", "ambiguous", "unmatched", "conflict", "not_fitted")

#: Packaging / distributor suffixes dropped when normalising a part number (our own rules).
PACKAGING_SUFFIXES: Final = ("TR-ND", "CT-ND", "DKR-ND", "ND", "TR", "T", "REEL", "R7", "R13", "CT", "DKR", "TB",
                             "TA", "TAPE", "BULK", "BLK", "CUT", "PBF", "LF", "E3", "GT")
_SUFFIX_RE: Final = re.compile(r"(?:[-/_ .](?:" + "|".join(PACKAGING_SUFFIXES) + r")|#)$", re.IGNORECASE)

#: Per category: (BOM value key, catalog field, how they must agree, unit kind for messages).
#: ``nominal``: within tolerance; ``min``: the part's rating at least the BOM's; ``max``: at most the
#: BOM's (a tighter tolerance will do); ``near``: within 10 %.
SPECS: Final[dict[str, tuple[tuple[str, str, str, str], ...]]] = {
    "capacitor": (("capacitance", "capacitance", "nominal", "F"), ("v_rated", "v_rated", "min", "V"),
                  ("tolerance", "tolerance", "max", "%")),
    "resistor": (("resistance", "resistance", "nominal", "ohm"), ("p_rated", "p_rated", "min", "W"),
                 ("v_rated", "v_max", "min", "V"), ("tolerance", "tolerance", "max", "%")),
    "magnetic": (("inductance", "lm", "nominal", "H"), ("i_rated", "isat", "min", "A")),
    "diode": (("v_rated", "vrrm", "min", "V"), ("i_rated", "if_avg", "min", "A")),
    "switch": (("v_rated", "vds_max", "min", "V"), ("i_rated", "id_max", "min", "A")),
    "clamp": (("v_rated", "v_breakdown", "near", "V"), ("p_rated", "p_max", "min", "W")),
    "optocoupler": (("v_rated", "vceo", "min", "V"),),
    "reference": (("v_rated", "v_ref", "near", "V"),),
}
CATEGORIES: Final = tuple(SPECS)
#: Categories in which a stated subtype (ceramic vs electrolytic, schottky vs ultrafast) must agree.
_HARD_SUBTYPE: Final = frozenset({"capacitor", "diode", "clamp"})
_IMPERIAL: Final = frozenset({"01005", "0201", "0402", "0603", "0805", "1008", "1206", "1210", "1806", "1808",
                              "1812", "2010", "2220", "2225", "2512"})
_RATING_WORDS: Final = {"nominal": "", "min": "rated ≥ ", "near": "≈ ", "max": "±≤ "}
_CATEGORY_NAMES: Final = {"capacitor": "capacitor", "resistor": "resistor", "magnetic": "magnetic part",
                          "diode": "diode", "switch": "switch", "clamp": "clamp", "optocoupler": "optocoupler",
                          "reference": "voltage reference"}
_NON_ALNUM: Final = re.compile(r"[^0-9a-z.]+")


def normalise_part_number(text: str | None) -> str:
    """``"cap-10u 25v_1206-TR"`` → ``"CAP10U25V1206"``: case, separators and packaging suffixes folded."""
    if not text:
        return ""
    t = str(text).strip().upper()
    for _ in range(3):
        stripped = _SUFFIX_RE.sub("", t).strip()
        if stripped == t or not stripped:
            break
        t = stripped
    return re.sub(r"[^0-9A-Z]", "", t)


def normalise_text(text: str) -> str:
    """Lower case, ``µ``→``u``, ``Ω``→``ohm``, punctuation to spaces (keeps decimal points)."""
    t = (text or "").lower().replace("µ", "u").replace("μ", "u").replace("ω", "ohm").replace("Ω".lower(), "ohm")
    return " ".join(_NON_ALNUM.sub(" ", t).split())


@dataclass
class LineMatch:
    """The outcome for one BOM line (see the module docstring for statuses and methods)."""

    line: int
    refs: tuple[str, ...]
    qty: int | None
    text: str
    status: str
    part_number: str | None
    score: float
    method: str | None
    reason: str
    candidates: list[tuple[str, float]] = field(default_factory=list)
    category: str | None = None
    warnings: list[str] = field(default_factory=list)
    bom_line: BomLine | None = field(default=None, repr=False, compare=False)

    def to_dict(self) -> dict[str, Any]:
        """The JSON shape of ``partcheck match --format json`` for this line."""
        return {
            "line": self.line, "refs": list(self.refs), "qty": self.qty, "text": self.text, "status": self.status,
            "part_number": self.part_number, "score": round(float(self.score), 1), "method": self.method,
            "reason": self.reason,
            "candidates": [{"part_number": pn, "score": round(float(s), 1)} for pn, s in self.candidates],
            "category": self.category, "warnings": list(self.warnings),
        }


@dataclass
class _Block:
    """The parts of one category with their precomputed keys and rating arrays."""

    idx: np.ndarray  # indices into Matcher.parts
    keys: list[str]  # normalised fuzzy text per part
    keys_array: np.ndarray  # the same as an object array, for fancy indexing
    parts: list[Any]  # the block's parts, in row order
    ratings: dict[str, np.ndarray]  # catalog field → float array (NaN when empty)
    tolerance: np.ndarray
    package: np.ndarray  # int codes, -1 when empty
    dielectric: np.ndarray
    subtype: np.ndarray
    #: The nominal-value field (capacitance, resistance, lm) sorted, for a range search.
    primary: tuple[str, np.ndarray, np.ndarray, np.ndarray] | None = None  # BOM key, sorted values, order, NaN rows
    max_tolerance: float = 0.05
    by_code: dict[str, tuple[dict[int, np.ndarray], np.ndarray]] = field(default_factory=dict)
    _descriptions: list[str] | None = None

    @property
    def descriptions(self) -> list[str]:
        """Normalised description per part (built on first use: only conflict detection needs it)."""
        if self._descriptions is None:
            self._descriptions = [normalise_text(_attr(p, "description") or "") for p in self.parts]
        return self._descriptions


def _attr(part: Any, name: str) -> Any:
    return getattr(part, name, None)


def _part_package(part: Any) -> str | None:
    return package_key(_attr(part, "case_size") or _attr(part, "package"))


def _part_key(part: Any) -> str:
    words = [part.part_number, (_attr(part, "subtype") or "").replace("_", " "), _attr(part, "description") or "",
             _attr(part, "dielectric") or "", _attr(part, "case_size") or "", _attr(part, "package") or ""]
    for _bkey, fname, _mode, kind in SPECS.get(part.category, ()):
        v = _attr(part, fname)
        if isinstance(v, (int, float)) and v > 0 and kind != "%":
            words.append(quantity_token(float(v), kind))
    return normalise_text(" ".join(w for w in words if w))


class Matcher:
    """Precomputed lookup structures over a list of catalog parts; match lines with :meth:`match_line`."""

    def __init__(self, parts: Iterable[Any], *, threshold: float = DEFAULT_THRESHOLD,
                 ambiguity_gap: float = DEFAULT_AMBIGUITY_GAP) -> None:
        self.parts = list(parts)
        self.threshold = float(threshold)
        self.ambiguity_gap = float(ambiguity_gap)
        self.by_number: dict[str, int] = {}
        self.by_normalised: dict[str, list[int]] = defaultdict(list)
        self._codes: dict[str, int] = {}
        for i, p in enumerate(self.parts):
            self.by_number.setdefault(p.part_number.strip(), i)
            self.by_normalised[normalise_part_number(p.part_number)].append(i)
        by_cat: dict[str, list[int]] = defaultdict(list)
        for i, p in enumerate(self.parts):
            by_cat[p.category].append(i)
        self.blocks: dict[str, _Block] = {cat: self._block(cat, idx) for cat, idx in by_cat.items()}

    def _code(self, text: str | None) -> int:
        if not text:
            return -1
        return self._codes.setdefault(text, len(self._codes))

    def _block(self, cat: str, idx: list[int]) -> _Block:
        parts = [self.parts[i] for i in idx]
        ratings = {}
        for _bkey, fname, _mode, _kind in SPECS.get(cat, ()):
            ratings[fname] = np.array([_num(_attr(p, fname)) for p in parts], dtype=float)
        block = _Block(
            idx=np.array(idx, dtype=np.int64),
            keys=(keys := [_part_key(p) for p in parts]),
            keys_array=np.array(keys, dtype=object),
            parts=parts,
            ratings=ratings,
            tolerance=np.array([_num(_attr(p, "tolerance")) for p in parts], dtype=float),
            package=np.array([self._code(_part_package(p)) for p in parts], dtype=np.int64),
            dielectric=np.array([self._code(dielectric_key(_attr(p, "dielectric"))) for p in parts], dtype=np.int64),
            subtype=np.array([self._code("sub:" + s if (s := _attr(p, "subtype")) else None) for p in parts],
                             dtype=np.int64),
        )
        nominal = [(bkey, fname) for bkey, fname, mode, _k in SPECS.get(cat, ()) if mode == "nominal"]
        if nominal:
            values = ratings[nominal[0][1]]
            order = np.argsort(values, kind="stable")  # NaN sorts last
            finite = int(np.count_nonzero(~np.isnan(values)))
            block.primary = (nominal[0][0], values[order[:finite]], order[:finite], order[finite:])
        tol = block.tolerance[~np.isnan(block.tolerance)]
        block.max_tolerance = max(0.05, float(tol.max()) if tol.size else 0.05)
        for name, arr in (("package", block.package), ("subtype", block.subtype), ("dielectric", block.dielectric)):
            order = np.argsort(arr, kind="stable")
            codes, starts = np.unique(arr[order], return_index=True)
            groups = dict(zip(codes.tolist(), np.split(order, starts[1:]), strict=True)) if len(arr) else {}
            block.by_code[name] = (groups, groups.get(-1, np.empty(0, dtype=np.int64)))
        return block

    # ------------------------------------------------------------------------------------------
    def match_line(self, line: BomLine, pins: dict[str, str] | None = None) -> LineMatch:
        """Match one line; ``pins`` maps references (case-insensitive) to catalog part numbers."""
        base = {"line": line.line, "refs": line.refs, "qty": line.qty, "text": line.text,
                "warnings": list(line.warnings), "bom_line": line, "category": line.category_hint}
        if line.dnf:
            return LineMatch(status="not_fitted", part_number=None, score=0.0, method=None,
                             reason="marked do-not-fit; kept on the BOM but not checked", **base)
        pinned = self._pinned(line, pins, base)
        if pinned is not None:
            return pinned
        by_number = self._by_number(line, base)
        if by_number is not None:
            return by_number
        return self._fuzzy(line, base)

    # -- pins -----------------------------------------------------------------------------------
    def _pinned(self, line: BomLine, pins: dict[str, str] | None, base: dict) -> LineMatch | None:
        if not pins:
            return None
        upper = {str(k).strip().upper(): str(v).strip() for k, v in pins.items()}
        hits = {r: upper[r.upper()] for r in line.refs if r.upper() in upper}
        if not hits:
            return None
        targets = sorted(set(hits.values()))
        if len(targets) > 1:
            detail = ", ".join(f"{r} → {pn}" for r, pn in hits.items())
            return LineMatch(status="conflict", part_number=None, score=0.0, method="pinned",
                             reason=f"the pins name different parts for one BOM line ({detail}); "
                                    "split the line or pin every reference to the same part", **base)
        pn = targets[0]
        i = self.by_number.get(pn)
        if i is None:
            cands = self.by_normalised.get(normalise_part_number(pn), [])
            i = cands[0] if len(cands) == 1 else None
        refs_text = ", ".join(hits)
        if i is None:
            return LineMatch(status="unmatched", part_number=None, score=0.0, method="pinned",
                             reason=f"pinned part {pn!r} ({refs_text}) is not in the catalog", **base)
        part = self.parts[i]
        reason = f"pinned: {refs_text} → {part.part_number} (an override always wins)"
        unpinned = [r for r in line.refs if r not in hits]
        if unpinned:
            reason += f"; the pin also applies to {', '.join(unpinned)} on the same line"
        problems = _disagreements(line, part)
        if problems:
            reason += "; note: " + "; ".join(problems)
        base["category"] = part.category
        return LineMatch(status="matched", part_number=part.part_number, score=100.0, method="pinned",
                         reason=reason, candidates=[(part.part_number, 100.0)], **base)

    # -- part numbers ---------------------------------------------------------------------------
    def _by_number(self, line: BomLine, base: dict) -> LineMatch | None:
        for column, text in (("part number", line.part_number), ("value", line.value_text)):
            t = (text or "").strip()
            if not t:
                continue
            if t in self.by_number:
                part = self.parts[self.by_number[t]]
                return self._number_result(line, base, part, "exact", 100.0,
                                           f"{column} {t!r} equals the catalog part {part.part_number}")
            norm = normalise_part_number(t)
            hits = self.by_normalised.get(norm, []) if len(norm) >= 3 else []
            if len(hits) == 1:
                part = self.parts[hits[0]]
                return self._number_result(line, base, part, "normalized", 98.0,
                                           f"{column} {t!r} equals catalog part {part.part_number} once case, "
                                           "separators and packaging suffixes are folded")
            if len(hits) > 1:
                names = [self.parts[h].part_number for h in hits]
                return LineMatch(status="ambiguous", part_number=None, score=98.0, method="normalized",
                                 reason=f"{column} {t!r} folds to the same key as {len(names)} catalog parts "
                                        f"({', '.join(names)}); write the exact part number or pin the reference",
                                 candidates=[(n, 98.0) for n in names], **base)
        return None

    def _number_result(self, line, base, part, method, score, reason) -> LineMatch:
        problems = _disagreements(line, part)
        base["category"] = part.category
        if problems:
            return LineMatch(status="conflict", part_number=part.part_number, score=score, method=method,
                             reason=reason + ", but " + "; ".join(problems), candidates=[(part.part_number, score)],
                             **base)
        agree = _agreement_words(line, part)
        if agree:
            reason += f"; {agree} agree"
        return LineMatch(status="matched", part_number=part.part_number, score=score, method=method, reason=reason,
                         candidates=[(part.part_number, score)], **base)

    # -- fuzzy ----------------------------------------------------------------------------------
    def _fuzzy(self, line: BomLine, base: dict) -> LineMatch:
        note = ""
        if line.part_number.strip():
            note = f"part number {line.part_number.strip()!r} is not in the catalog; "
        cats = [c for c in (line.categories or tuple(self.blocks)) if c in self.blocks]
        if not line.categories and line.uncatalogued:
            return LineMatch(status="unmatched", part_number=None, score=0.0, method=None,
                             reason=note + f"{line.refs[0]} is a {line.uncatalogued}; the catalog holds no "
                                           f"{line.uncatalogued}s", **base)
        if not cats:
            wanted = " or ".join(line.categories) if line.categories else "any"
            return LineMatch(status="unmatched", part_number=None, score=0.0, method=None,
                             reason=note + f"the catalog holds no {wanted} parts", **base)
        primary = PRIMARY.get(cats[0]) if len(cats) == 1 else None
        if primary and primary[0] not in line.values and line.value_text.strip():
            return LineMatch(status="unmatched", part_number=None, score=0.0, method=None,
                             reason=note + f"the value {line.value_text.strip()!r} could not be read as a "
                                           f"{primary[0]}, so no {_CATEGORY_NAMES[cats[0]]} can be chosen by "
                                           "value; correct the cell, add a part number or pin the reference",
                             **base)
        query = _query_text(line)
        scored: list[tuple[float, float, str, int]] = []  # (score, text score, category, part index)
        for cat in cats:
            scored.extend(self._score_block(cat, line, query))
        scored.sort(key=lambda s: (-s[0], self.parts[s[3]].part_number))
        candidates = [(self.parts[i].part_number, round(s, 1)) for s, _t, _c, i in scored[:5]]
        wanted = _wanted_words(line, cats)
        if not scored or scored[0][0] < self.threshold:
            conflict = self._copied_description(line, cats)
            if conflict is not None:
                part, tscore = conflict
                base["category"] = part.category
                return LineMatch(status="conflict", part_number=part.part_number, score=round(tscore, 1),
                                 method="fuzzy",
                                 reason=note + f"the description is that of {part.part_number}, but "
                                        + "; ".join(_disagreements(line, part)),
                                 candidates=[(part.part_number, round(tscore, 1))] + candidates, **base)
            if not scored:
                closest = self._closest_text(query, cats, line)
                reason = note + f"no {wanted} in the catalog"
                if closest:
                    reason += f"; closest by text: {closest[0][0]} ({self._summary(closest[0][0])})"
                return LineMatch(status="unmatched", part_number=None, score=0.0, method=None, reason=reason,
                                 candidates=closest, **base)
            best = scored[0]
            return LineMatch(status="unmatched", part_number=None, score=round(best[0], 1), method=None,
                             reason=note + f"the best {wanted} is {self.parts[best[3]].part_number} at "
                                    f"{best[0]:.1f}, below the threshold {self.threshold:g}",
                             candidates=candidates, **base)
        best = scored[0]
        part = self.parts[best[3]]
        base["category"] = part.category
        code_note = ""
        if len(scored) > 1 and best[0] - scored[1][0] <= self.ambiguity_gap:
            close = [c for c in scored if best[0] - c[0] <= self.ambiguity_gap]
            single = self._singled_out(query, close)
            if single is not None:
                best, (code, others) = single
                part = self.parts[best[3]]
                base["category"] = part.category
                code_note = f"; the code {code!r} appears only in {part.part_number} among {others + 1} close candidates"
        if not code_note and len(scored) > 1 and best[0] - scored[1][0] <= self.ambiguity_gap:
            names = [self.parts[c[3]].part_number for c in close]
            shown = ", ".join(f"{n} ({c[0]:.1f})" for n, c in zip(names[:4], close[:4]))
            return LineMatch(status="ambiguous", part_number=None, score=round(best[0], 1), method="fuzzy",
                             reason=note + f"{len(close)} candidates score within {self.ambiguity_gap:g} points: "
                                    f"{shown}; add the part number, voltage or package, or pin the reference",
                             candidates=[(n, round(c[0], 1)) for n, c in zip(names, close)][:max(5, len(close))],
                             **base)
        agree = _agreement_words(line, part)
        what = f"description and {agree} agree" if agree else "description agrees"
        reason = note + f"{what} with {part.part_number} (text {best[1]:.0f}/100)" + code_note
        runner_up = next((c for c in scored if c[3] != best[3]), None)
        if runner_up is not None and not code_note:
            reason += f"; next best {self.parts[runner_up[3]].part_number} scores {runner_up[0]:.1f}"
        return LineMatch(status="matched", part_number=part.part_number, score=round(best[0], 1), method="fuzzy",
                         reason=reason, candidates=candidates, **base)

    def _candidate_rows(self, b: _Block, line: BomLine, hard: list[tuple[str, int]]) -> np.ndarray | None:
        """The smallest superset of the rows that can pass the hard filters (None: the whole block).

        A range search on the sorted nominal value, or the rows of one package/subtype/dielectric
        code (plus the rows that do not state it), keeps the vectorised filters to a few rows.
        """
        options = []
        if b.primary is not None:
            bkey, sorted_vals, order, nan_rows = b.primary
            want = line.values.get(bkey)
            if want is not None and want > 0:
                tol = line.values.get("tolerance") or b.max_tolerance
                tol = max(tol, 0.005) + 1e-9
                lo = np.searchsorted(sorted_vals, want * (1 - tol), side="left")
                hi = np.searchsorted(sorted_vals, want * (1 + tol), side="right")
                options.append(np.concatenate((order[lo:hi], nan_rows)))
        for name, code in hard:
            groups, unknown = b.by_code[name]
            options.append(np.concatenate((groups.get(code, np.empty(0, dtype=np.int64)), unknown)))
        if not options:
            return None
        return min(options, key=len)

    def _score_block(self, cat: str, line: BomLine, query: str) -> list[tuple[float, float, str, int]]:
        b = self.blocks[cat]
        checks = []  # (kind, BOM text or None, block array name, hard)
        for text, name, hard in ((line.package, "package", line.package in _IMPERIAL),
                                 (line.dielectric if cat == "capacitor" else None, "dielectric", True),
                                 ("sub:" + line.subtype_hint if line.subtype_hint else None, "subtype",
                                  cat in _HARD_SUBTYPE)):
            if not text:
                continue
            code = self._codes.get(text, -2)
            if name == "subtype" and code == -2:
                continue  # no part in the catalog states this subtype: it cannot decide anything
            checks.append((name, code, hard))
        rows = self._candidate_rows(b, line, [(n, c) for n, c, h in checks if h])
        if rows is None:
            rows = np.arange(len(b.keys))
        if rows.size == 0:
            return []
        n = rows.size
        ok = np.ones(n, dtype=bool)
        credit_sum = np.zeros(n, dtype=float)
        n_attrs = np.zeros(n, dtype=float)  # per part: the line's attributes the part states too
        for bkey, fname, mode, _kind in SPECS.get(cat, ()):
            want = line.values.get(bkey)
            if want is None or want <= 0:
                continue
            have = b.ratings[fname][rows]
            known = ~np.isnan(have)
            n_attrs += known
            with np.errstate(invalid="ignore", divide="ignore"):
                if mode == "nominal":
                    tol = line.values.get("tolerance")
                    part_tol = b.tolerance[rows]
                    tol_arr = np.full(n, tol) if tol else np.where(np.isnan(part_tol), 0.05, part_tol)
                    rel = np.abs(have - want) / want
                    agree = rel <= np.maximum(tol_arr, 0.005) + 1e-9
                    credit = np.where(rel <= 0.005, 1.0, 0.6)
                elif mode == "min":
                    ratio = have / want
                    agree = ratio >= 1.0 - 1e-6
                    credit = 1.0 - 0.5 * np.clip(ratio - 1.0, 0.0, 1.0)
                elif mode == "max":
                    ratio = have / want
                    agree = ratio <= 1.0 + 1e-6
                    credit = np.where(ratio >= 1.0 - 1e-6, 1.0, 0.7)
                else:  # near
                    rel = np.abs(have - want) / want
                    agree = rel <= 0.10
                    credit = 1.0 - 4.0 * np.clip(rel, 0.0, 0.1)
            ok &= ~known | agree
            credit_sum += np.where(known & agree, credit, 0.0)
        for name, code, hard in checks:
            arr = getattr(b, name)[rows]
            n_attrs += arr >= 0
            same = arr == code
            if hard:
                ok &= same | (arr < 0)
            credit_sum += same
        keep_rows = np.flatnonzero(ok)
        if keep_rows.size == 0:
            return []
        survivors = rows[keep_rows]
        credit = credit_sum[keep_rows]
        den = n_attrs[keep_rows]
        value_part = np.where(den > 0, 55.0 * credit / np.maximum(den, 1.0), 0.0)
        weight = np.where(den > 0, 0.45, 1.0)
        # Text is scored in chunks, best value agreement first; a chunk whose best possible total
        # (text 100) falls short of the leader by more than the ambiguity gap cannot change the
        # outcome, so the rest is skipped (exact pruning: the same winner and near-ties).
        order = np.argsort(-(weight * 100.0 + value_part), kind="stable")
        ceiling = (weight * 100.0 + value_part)[order]
        totals: list[np.ndarray] = []
        texts: list[np.ndarray] = []
        picked: list[np.ndarray] = []
        leader = -1.0
        for start in range(0, order.size, _CHUNK):
            if ceiling[start] < leader - self.ambiguity_gap - 1e-9:
                break
            chunk = order[start:start + _CHUNK]
            choices = b.keys_array[survivors[chunk]].tolist()
            workers = -1 if len(choices) > 2000 else 1
            t_set = process.cdist([query], choices, scorer=fuzz.token_set_ratio, workers=workers, dtype=np.float32)[0]
            t_sort = process.cdist([query], choices, scorer=fuzz.token_sort_ratio, workers=workers,
                                   dtype=np.float32)[0]
            text_score = 0.5 * (t_set.astype(float) + t_sort.astype(float))
            total = weight[chunk] * text_score + value_part[chunk]
            leader = max(leader, float(total.max()))
            totals.append(total)
            texts.append(text_score)
            picked.append(chunk)
        total = np.concatenate(totals)
        text_score = np.concatenate(texts)
        chosen = np.concatenate(picked)
        keep = min(len(total), _PER_BLOCK)
        best = np.argpartition(-total, keep - 1)[:keep] if len(total) > keep else np.arange(len(total))
        return [(float(total[j]), float(text_score[j]), cat, int(b.idx[survivors[chosen[j]]])) for j in best]

    def _singled_out(self, query: str, close: list[tuple[float, float, str, int]]):
        """The one near-tied candidate carrying a code of the line (letters and digits, ``m924``) that no
        other near-tied candidate carries; None when there is no such single candidate.

        Ratings that agree equally leave the description to decide; a type or series code written
        on the BOM is the part of the description that identifies a part.
        """
        if len(close) >= _PER_BLOCK:
            return None  # the near-tie may run past the candidates kept; do not guess
        codes = [t for t in dict.fromkeys(query.split()) if _CODE_TOKEN.fullmatch(t)]
        if not codes:
            return None
        keys = [set(_part_key(self.parts[c[3]]).split()) for c in close]
        owners: dict[int, str] = {}
        for code in codes:
            have = [k for k, toks in enumerate(keys) if code in toks]
            if len(have) == 1:
                owners.setdefault(have[0], code)
        if len(owners) != 1:
            return None
        (k, code), = owners.items()
        return close[k], (code, len(close) - 1)

    def _copied_description(self, line: BomLine, cats: list[str]):
        desc = normalise_text(line.description)
        if len(desc) < 8:
            return None
        best = None
        for cat in cats:
            b = self.blocks[cat]
            hit = process.extractOne(desc, b.descriptions, scorer=fuzz.token_sort_ratio, score_cutoff=CONFLICT_TEXT)
            if hit and (best is None or hit[1] > best[1]):
                best = (self.parts[int(b.idx[hit[2]])], float(hit[1]))
        if best and _disagreements(line, best[0]):
            return best
        return None

    def _closest_text(self, query: str, cats: list[str], line: BomLine) -> list[tuple[str, float]]:
        """The three parts nearest by text, among those near the line's nominal value when it has one."""
        found: list[tuple[str, float]] = []
        for cat in cats:
            b = self.blocks[cat]
            rows = self._candidate_rows(b, line, [])
            if rows is None or rows.size == 0:
                rows = np.arange(len(b.keys))
            scores = process.cdist([query], b.keys_array[rows].tolist(), scorer=fuzz.token_set_ratio,
                                   workers=-1 if rows.size > 2000 else 1, dtype=np.float32)[0]
            top = np.argsort(-scores, kind="stable")[:3]
            found.extend((self.parts[int(b.idx[rows[j]])].part_number, round(float(scores[j]), 1)) for j in top)
        found.sort(key=lambda c: -c[1])
        return found[:3]

    def _summary(self, part_number: str) -> str:
        part = self.parts[self.by_number[part_number]]
        words = []
        for _bkey, fname, _mode, kind in SPECS.get(part.category, ()):
            v = _attr(part, fname)
            if v is not None:
                words.append(format_quantity(v, kind))
        pkg = _part_package(part)
        if pkg:
            words.append(pkg)
        return ", ".join(words) or part.category


# --------------------------------------------------------------------------------------------
# Words
# --------------------------------------------------------------------------------------------

def _num(v: Any) -> float:
    return float(v) if isinstance(v, (int, float)) and not isinstance(v, bool) else math.nan


def _query_text(line: BomLine) -> str:
    words = [line.value_text, line.description, line.part_number, line.package_text or "", line.voltage_text,
             line.dielectric or "", (line.subtype_hint or "").replace("_", " ")]
    for key, kind in (("capacitance", "F"), ("resistance", "ohm"), ("inductance", "H"), ("v_rated", "V"),
                      ("i_rated", "A"), ("p_rated", "W")):
        if key in line.values:
            words.append(quantity_token(line.values[key], kind))
    if line.package:
        words.append(line.package)
    return normalise_text(" ".join(w for w in words if w))


def _tol_words(line: BomLine, part: Any) -> float:
    tol = line.values.get("tolerance") or _attr(part, "tolerance") or 0.05
    return max(float(tol), 0.005)


def _disagreements(line: BomLine, part: Any) -> list[str]:
    """Every value the line states that the part contradicts, in words."""
    problems = []
    cats = line.categories
    if cats and part.category not in cats:
        problems.append(f"{'/'.join(line.refs[:3]) or 'the line'} is a {' or '.join(cats)} by its reference or "
                        f"description, and {part.part_number} is a {part.category}")
        return problems
    for bkey, fname, mode, kind in SPECS.get(part.category, ()):
        want = line.values.get(bkey)
        have = _num(_attr(part, fname))
        if want is None or math.isnan(have) or want <= 0:
            continue
        if mode == "nominal":
            tol = _tol_words(line, part)
            if abs(have - want) / want > tol + 1e-9:
                problems.append(f"the BOM says {format_quantity(want, kind)} and the part is "
                                f"{format_quantity(have, kind)} (more than {format_quantity(tol, '%')} apart)")
        elif mode == "min":
            if have < want * (1 - 1e-6):
                problems.append(f"the BOM says {format_quantity(want, kind)} and the part is rated only "
                                f"{format_quantity(have, kind)}")
        elif mode == "max":
            if have > want * (1 + 1e-6):
                problems.append(f"the BOM says ±{format_quantity(want, kind)} and the part is only "
                                f"±{format_quantity(have, kind)}")
        elif abs(have - want) / want > 0.10:
            problems.append(f"the BOM says {format_quantity(want, kind)} and the part is "
                            f"{format_quantity(have, kind)}")
    pkg = _part_package(part)
    if line.package in _IMPERIAL and pkg in _IMPERIAL and pkg != line.package:
        problems.append(f"the BOM says case {line.package} and the part is {pkg}")
    pd_ = dielectric_key(_attr(part, "dielectric"))
    if part.category == "capacitor" and line.dielectric and pd_ and pd_ != line.dielectric:
        problems.append(f"the BOM says {line.dielectric} and the part is {pd_}")
    sub = _attr(part, "subtype")
    if line.subtype_hint and sub and part.category in _HARD_SUBTYPE and sub != line.subtype_hint:
        problems.append(f"the BOM says {line.subtype_hint.replace('_', ' ')} and the part is "
                        f"{sub.replace('_', ' ')}")
    return problems


def _agreement_words(line: BomLine, part: Any) -> str:
    """``"10 µF / 25 V / X7R / 1206"``: the line's stated values that the part agrees with."""
    words = []
    for bkey, fname, _mode, kind in SPECS.get(part.category, ()):
        if bkey in line.values and _attr(part, fname) is not None:
            words.append(format_quantity(line.values[bkey], kind))
    if line.dielectric and part.category == "capacitor" and _attr(part, "dielectric"):
        words.append(line.dielectric)
    if line.package and _part_package(part) == line.package:
        words.append(line.package)
    return " / ".join(words)


def _wanted_words(line: BomLine, cats: list[str]) -> str:
    """``"ceramic capacitor within 10 % of 22 µF, rated ≥ 25 V, case 1206"``."""
    noun = " or ".join(_CATEGORY_NAMES.get(c, c) for c in cats)
    if line.subtype_hint:
        noun = f"{line.subtype_hint.replace('_', ' ')} {noun}"
    bits = []
    specs = SPECS.get(cats[0], ()) if len(cats) == 1 else ()
    for bkey, _fname, mode, kind in specs:
        if bkey in line.values and mode != "max":
            v = format_quantity(line.values[bkey], kind)
            if mode == "nominal":
                tol = line.values.get("tolerance")
                bits.append(f"within {format_quantity(tol, '%')} of {v}" if tol else f"of {v} within tolerance")
            else:
                bits.append(_RATING_WORDS[mode] + v)
    if line.dielectric and "capacitor" in cats:
        bits.append(line.dielectric)
    if line.package:
        bits.append(f"case {line.package}")
    return noun + (" " + ", ".join(bits) if bits else "")


# --------------------------------------------------------------------------------------------
# Whole BOMs
# --------------------------------------------------------------------------------------------

def match_bom(bom: Bom, parts: list[Any] | Matcher, pins: dict[str, str] | None = None, *,
              threshold: float = DEFAULT_THRESHOLD, ambiguity_gap: float = DEFAULT_AMBIGUITY_GAP,
              progress: Callable[[int, int], None] | None = None) -> list[LineMatch]:
    """Match every line of ``bom`` against ``parts`` (catalog records, or a prepared :class:`Matcher`).

    ``progress(lines done, lines)`` is called every 500 lines and at the end (a progress bar's hook).
    """
    matcher = parts if isinstance(parts, Matcher) else Matcher(parts, threshold=threshold,
                                                                ambiguity_gap=ambiguity_gap)
    if progress is None:
        return [matcher.match_line(line, pins) for line in bom.lines]
    out = []
    total = len(bom.lines)
    for i, line in enumerate(bom.lines, 1):
        out.append(matcher.match_line(line, pins))
        if i % 500 == 0 or i == total:
            progress(i, total)
    return out


@dataclass
class MatchReport:
    """A BOM, its line matches, and the exit code the command returns."""

    bom: Bom
    matches: list[LineMatch]

    @property
    def ok(self) -> bool:
        """True when every fitted line is matched."""
        return all(m.status in ("matched", "not_fitted") for m in self.matches)

    @property
    def exit_code(self) -> int:
        return 0 if self.ok else 1

    def counts(self) -> dict[str, int]:
        return {s: sum(1 for m in self.matches if m.status == s) for s in STATUSES}

    def to_dict(self) -> dict[str, Any]:
        return {"bom": self.bom.path, "lines": [m.to_dict() for m in self.matches], "notices": list(self.bom.notices),
                "columns": dict(self.bom.column_map), "counts": self.counts()}


def parse_pins(items: Iterable[str] | None) -> dict[str, str]:
    """``["C5=CAP-1", "R1=RES-2"]`` → ``{"C5": "CAP-1", ...}``; a malformed pin is a BomError."""
    pins: dict[str, str] = {}
    for item in items or ():
        if "=" not in item:
            raise BomError(f"--pin {item!r} is not REF=PART (for example C5=CAP-10U-25V-1206)")
        ref, pn = (s.strip() for s in item.split("=", 1))
        if not ref or not pn:
            raise BomError(f"--pin {item!r} needs both a reference and a part number")
        pins[ref] = pn
    return pins


def match_bom_file(path: str | PathLike[str], *, db: str | None = None, catalog: Any = None,
                   pins: dict[str, str] | None = None, columns: dict[str, str] | None = None,
                   sheet: str | None = None, decimal_comma: bool | None = None,
                   progress: Callable[[int, int], None] | None = None) -> MatchReport:
    """Read a BOM file and match it against a catalog (``catalog`` object, or opened from ``db``)."""
    bom = read_bom(path, sheet=sheet, columns=columns, decimal_comma=decimal_comma)
    if catalog is None:
        from ..catalog.store import open_catalog

        with open_catalog(db, create=False) as cat:
            parts = cat.parts()
    else:
        parts = catalog.parts()
    return MatchReport(bom=bom, matches=match_bom(bom, parts, pins, progress=progress))
