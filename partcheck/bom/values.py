"""Read the engineering content of a BOM line: ``"10uF 25V X7R 1206"`` → values, dielectric, package.

This module is a *tokenizer*: it splits cell text into words and asks
:func:`partcheck.units.parse_quantity` what each word is.  It never parses a number itself.

It also infers the part category a line can be, from the reference prefix (``C`` capacitor,
``R`` resistor, ``D`` diode or clamp, ``Q`` switch, ``T``/``L`` magnetic, ``U`` integrated
parts ...) and from keywords in the description (``schottky``, ``zener``, ``MLCC``), so that
the matcher never compares a capacitor line with a diode.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from functools import lru_cache
from typing import Final

from ..errors import QuantityError
from ..units import format_quantity, parse_quantity

#: Reference prefix → categories the part may belong to (most likely first).  Common practice
#: (IEEE 315 / IEC 81346 letter codes as schematic tools use them).
REF_PREFIX_CATEGORIES: Final[dict[str, tuple[str, ...]]] = {
    "C": ("capacitor",), "CE": ("capacitor",), "CX": ("capacitor",), "CY": ("capacitor",), "EC": ("capacitor",),
    "R": ("resistor",), "RS": ("resistor",), "RSENSE": ("resistor",), "RSNS": ("resistor",),
    "D": ("diode", "clamp"), "CR": ("diode", "clamp"), "V": ("diode", "clamp"),
    "Z": ("clamp",), "ZD": ("clamp",), "DZ": ("clamp",), "TVS": ("clamp",),
    "Q": ("switch",), "M": ("switch",),
    "T": ("magnetic",), "TR": ("magnetic",), "TX": ("magnetic",), "TF": ("magnetic",), "XFMR": ("magnetic",),
    "L": ("magnetic",), "FL": ("magnetic",), "LF": ("magnetic",),
    "U": ("switch", "optocoupler", "reference"), "IC": ("switch", "optocoupler", "reference"),
    "N": ("switch", "optocoupler", "reference"),
    "OK": ("optocoupler",), "ISO": ("optocoupler",), "OC": ("optocoupler",), "PC": ("optocoupler",),
    "OPTO": ("optocoupler",), "VR": ("reference",), "REF": ("reference",),
}

#: Prefixes of parts the catalog does not hold (fuses, connectors, test points, ...).
UNCATALOGUED_PREFIXES: Final[dict[str, str]] = {
    "F": "fuse", "FU": "fuse", "J": "connector", "P": "connector", "X": "connector", "CN": "connector",
    "CON": "connector", "K": "relay", "TP": "test point", "H": "mounting hole", "MH": "mounting hole",
    "FID": "fiducial", "LED": "LED", "Y": "crystal", "XTAL": "crystal", "BT": "battery", "NTC": "thermistor",
    "RT": "thermistor", "RV": "varistor", "FB": "ferrite bead", "JP": "jumper",
}

#: Description keyword (regular expression, lower case) → (category, subtype or None).
#: Checked in order; the first hit of each category counts.
KEYWORDS: Final[tuple[tuple[str, str, str | None], ...]] = (
    (r"shunt (?:regulator|reference)|voltage reference|\bvref\b|\breference\b", "reference", None),
    (r"\bopto|photo-?coupler|optocoupler|opto-?isolator", "optocoupler", None),
    (r"\bzener\b", "clamp", "zener"),
    (r"\btvs\b|transient|suppressor", "clamp", "tvs"),
    (r"\bschottky\b", "diode", "schottky"),
    (r"ultra-?fast|fast recovery|\bfred\b", "diode", "ultrafast"),
    (r"\bsic diode|silicon carbide diode|\bsic\b.*\bdiode", "diode", "sic"),
    (r"\bdiode\b|\brectifier\b|\bbridge\b", "diode", None),
    (r"\bgan\b", "switch", "gan"),
    (r"\bmosfet\b|\bfet\b|\btransistor\b|\bigbt\b|\bn-?ch|\bp-?ch", "switch", "mosfet"),
    (r"integrated (?:switch|mosfet)|\bswitcher\b|\bcontroller\b", "switch", "integrated"),
    (r"\btransformer\b|\bxfmr\b|\bflyback\b.*\b(?:xfmr|transformer)|\bcoupled inductor", "magnetic", "transformer"),
    (r"\binductor\b|\bchoke\b", "magnetic", "inductor"),
    (r"\bmlcc\b|\bceramic\b|\bcer\b", "capacitor", "ceramic"),
    (r"electrolytic|\belko\b|\be-?cap\b|\balu(?:minium|minum)?\b", "capacitor", "aluminium_electrolytic"),
    (r"\bpolymer\b", "capacitor", "polymer"),
    (r"\btantalum\b|\btant\b", "capacitor", "tantalum"),
    (r"\bfilm cap|\bfilm capacitor|\bmkp\b|\bmkt\b|\bx2\b|\by1\b|\by2\b", "capacitor", "film"),
    (r"\bcap\b|\bcapacitor\b|\bcond\b", "capacitor", None),
    (r"current sense|\bsense resistor|\bshunt\b", "resistor", "current_sense"),
    (r"thick film", "resistor", "thick_film"),
    (r"thin film", "resistor", "thin_film"),
    (r"metal film", "resistor", "metal_film"),
    (r"wire-?wound", "resistor", "wirewound"),
    (r"\bres\b|\bresistor\b", "resistor", None),
)
_KEYWORDS_RE: Final = tuple((re.compile(p), c, s) for p, c, s in KEYWORDS)

#: The value a category is identified by, with its unit kind.
PRIMARY: Final[dict[str, tuple[str, str]]] = {
    "capacitor": ("capacitance", "F"),
    "resistor": ("resistance", "ohm"),
    "magnetic": ("inductance", "H"),
}

_DIELECTRIC_RE: Final = re.compile(r"^(C0G|COG|NP0|NPO|X5R|X6S|X7R|X7S|X7T|X8R|X8L|Y5V|Z5U|U2J)$", re.IGNORECASE)
_DIELECTRIC_CANON: Final = {"COG": "C0G", "NP0": "C0G", "NPO": "C0G"}

_IMPERIAL: Final = ("01005", "0201", "0402", "0603", "0805", "1008", "1206", "1210", "1806", "1808", "1812",
                    "2010", "2220", "2225", "2512")
_IMPERIAL_RE: Final = re.compile(r"(?<![0-9])(" + "|".join(_IMPERIAL) + r")(?![0-9])")
_PACKAGE_RE: Final = re.compile(
    r"^(?:SOD|SOT|SOIC|SO|TO|DO|SMA|SMB|SMC|SMP|DPAK|D2PAK|IPAK|QFN|DFN|VSON|MSOP|TSSOP|SSOP|TSOT|DIP|PDIP|"
    r"SIP|EFD|EE|EF|EP|RM|PQ|ETD|POWERPAK|PQFN|LFPAK|MELF|MINIMELF|RADIAL|AXIAL|"
    r"TO-?\d+)[-_A-Z0-9.x]*$",
    re.IGNORECASE,
)
_TOLERANCE_RE: Final = re.compile(r"(?:±|\+/-|\+-)?\s*(\d+(?:[.,]\d+)?)\s*%")
#: Fractional power ratings, "1/4W", "1/10 W", "1/8 Watt" (common practice for leaded and chip resistors).
_FRACTION_WATT_RE: Final = re.compile(r"(?<![\d.])(\d+)\s*/\s*(\d+)\s*(?:W|w|[Ww]atts?)\b")
#: The same written with a Unicode vulgar fraction: "¼W", "⅛ W".
_VULGAR_WATT_RE: Final = re.compile(r"(?<![\d.])(\d*)([¼½¾⅛⅜⅝⅞⅒⅕])\s*(?:W|w|[Ww]atts?)\b")
_VULGAR: Final = {"¼": 1 / 4, "½": 1 / 2, "¾": 3 / 4, "⅛": 1 / 8, "⅜": 3 / 8, "⅝": 5 / 8, "⅞": 7 / 8, "⅒": 1 / 10,
                  "⅕": 1 / 5}
#: A decimal number with a trailing R for ohms: "1.5R", "0.1R", "1,5R" (with decimal commas).  Common
#: practice, not IEC 60062: the IEC 60062 code writes the R in place of the decimal point ("1R5",
#: "R47", "4R7", "10R"), which :func:`partcheck.units.parse_quantity` reads itself.
_TRAILING_R_RE: Final = re.compile(r"^([+-]?(?:\d+[.,]\d+|[.,]\d+))\s*[Rr]$")
_SPLIT_DECIMAL_COMMA_RE: Final = re.compile(r"[\s/|;()\[\]_]+|,(?!\d)|(?<!\d),")
_NUMBER_ONLY_RE: Final = re.compile(r"^[+-]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][+-]?\d+)?$")

#: Unit kinds a token is tried against, with the values dict key it fills.
_KIND_KEYS: Final = (("F", "capacitance"), ("H", "inductance"), ("ohm", "resistance"), ("V", "v_rated"),
                     ("A", "i_rated"), ("W", "p_rated"))
_KIND_OF_KEY: Final = {key: kind for kind, key in _KIND_KEYS} | {"tolerance": "%"}


def package_key(text: object) -> str | None:
    """A comparable package code: ``"C_1206_3216Metric"`` → ``"1206"``, ``"SOD-123F"`` → ``"SOD123F"``."""
    if text is None:
        return None
    raw = str(text).strip()
    if not raw:
        return None
    m = _IMPERIAL_RE.search(raw)
    if m:
        return m.group(1)
    key = re.sub(r"[^A-Z0-9]", "", raw.upper())
    return key or None


def dielectric_key(text: object) -> str | None:
    """``"x7r"`` → ``"X7R"``, ``"NP0"``/``"COG"`` → ``"C0G"``; other text upper-cased."""
    if text is None or not str(text).strip():
        return None
    t = str(text).strip().upper()
    return _DIELECTRIC_CANON.get(t, t)


@lru_cache(maxsize=65536)
def quantity_token(value: float, kind: str) -> str:
    """The canonical word for a quantity in fuzzy keys: ``1e-5, "F"`` → ``"10uf"``."""
    return format_quantity(value, kind).replace(" ", "").replace("µ", "u").replace("Ω", "ohm").lower()


def ref_prefix(ref: str) -> str:
    """Leading letters of a reference, upper case: ``"C12"`` → ``"C"``, ``"TVS1"`` → ``"TVS"``."""
    m = re.match(r"[A-Za-z]+", ref)
    return m.group(0).upper() if m else ""


@dataclass
class LineContent:
    """What a BOM line says about its part (see :func:`read_content`)."""

    categories: tuple[str, ...] = ()
    subtype_hint: str | None = None
    uncatalogued: str | None = None  # "fuse", "connector"... when the reference names such a part
    values: dict[str, float] = field(default_factory=dict)
    dielectric: str | None = None
    package: str | None = None
    warnings: list[str] = field(default_factory=list)


def infer_categories(refs: tuple[str, ...], text: str) -> tuple[tuple[str, ...], str | None, str | None, list[str]]:
    """Categories a line may belong to, a subtype hint, an uncatalogued kind, and warnings."""
    warnings: list[str] = []
    prefixes = sorted({ref_prefix(r) for r in refs if ref_prefix(r)})
    ref_cats: tuple[str, ...] | None = None
    uncatalogued = None
    if prefixes:
        known = [REF_PREFIX_CATEGORIES[p] for p in prefixes if p in REF_PREFIX_CATEGORIES]
        if known:
            ref_cats = tuple(dict.fromkeys(c for cats in known for c in cats))
        elif all(p in UNCATALOGUED_PREFIXES for p in prefixes):
            uncatalogued = UNCATALOGUED_PREFIXES[prefixes[0]]
    low = text.lower()
    kw_cats: list[str] = []
    subtype = None
    for rx, cat, sub in _KEYWORDS_RE:
        if rx.search(low):
            if cat not in kw_cats:
                kw_cats.append(cat)
            if sub and subtype is None:
                subtype = sub
    if ref_cats is not None and kw_cats:
        both = tuple(c for c in kw_cats if c in ref_cats)
        if both:
            return both, subtype, None, warnings
        warnings.append(
            f"reference prefix {'/'.join(prefixes)} means {' or '.join(ref_cats)}, but the description reads "
            f"like a {kw_cats[0]}; matching as {' or '.join(ref_cats)}"
        )
        return ref_cats, None, None, warnings
    if ref_cats is not None:
        return ref_cats, subtype, None, warnings
    if kw_cats:
        return tuple(kw_cats), subtype, None, warnings
    return (), subtype, uncatalogued, warnings


def _tokens(text: str, decimal_comma: bool) -> list[str]:
    # A comma between digits is never a separator: with decimal commas it is the decimal point,
    # without them "0,47" must fail loudly rather than read as 0 and 47.
    raw = [t for t in _SPLIT_DECIMAL_COMMA_RE.split(text) if t]
    merged: list[str] = []
    i = 0
    while i < len(raw):
        tok = raw[i]
        # "10 uF", "4,7 µF": a bare number followed by a unit word is one quantity.
        if _NUMBER_ONLY_RE.match(tok) and i + 1 < len(raw) and _is_unit_word(raw[i + 1]):
            merged.append(tok + raw[i + 1])
            i += 2
            continue
        merged.append(tok)
        i += 1
    return merged


def _is_unit_word(word: str) -> bool:
    if not word or not (word[0].isalpha() or word[0] in "µμΩΩ"):
        return False
    for kind, _key in _KIND_KEYS:
        try:
            parse_quantity("1" + word, kind)
            return True
        except QuantityError:
            continue
    return False


def ohm_text(token: str) -> str:
    """``"1.5R"`` → ``"1.5Ω"``, ``"1,5R"`` → ``"1,5Ω"``: a trailing R after a decimal number is the ohm sign.

    Other text is returned unchanged, IEC 60062 codes (``"4R7"``, ``"R47"``, ``"10R"``) included:
    the quantity parser reads those as they are.  Whether a comma is a decimal point is left to
    the parser (``decimal_comma``), so ``"1,5R"`` without decimal commas is refused like ``"0,47"``.
    """
    m = _TRAILING_R_RE.match(token.strip())
    return f"{m.group(1)}Ω" if m else token


def _kinds_of(token: str, decimal_comma: bool) -> dict[str, float]:
    """Every unit kind the token parses as, with its value."""
    found: dict[str, float] = {}
    for kind, _key in _KIND_KEYS:
        try:
            found[kind] = parse_quantity(ohm_text(token) if kind == "ohm" else token, kind,
                                         decimal_comma=decimal_comma)
        except QuantityError:
            continue
    return found


def _fraction_watts(text: str, values: dict[str, float]) -> str:
    """Take ``"1/4W"``, ``"1/10 W"``, ``"¼W"`` out of ``text`` into ``values["p_rated"]`` [W]."""
    for m in _FRACTION_WATT_RE.finditer(text):
        if int(m.group(2)):
            values.setdefault("p_rated", int(m.group(1)) / int(m.group(2)))
    text = _FRACTION_WATT_RE.sub(" ", text)
    for m in _VULGAR_WATT_RE.finditer(text):
        values.setdefault("p_rated", (int(m.group(1)) if m.group(1) else 0) + _VULGAR[m.group(2)])
    return _VULGAR_WATT_RE.sub(" ", text)


def scan_text(text: str, primary_kind: str | None, decimal_comma: bool) -> tuple[dict[str, float], str | None,
                                                                                   str | None, list[str]]:
    """Quantities, dielectric and package in a free text; also the words that were read as nothing.

    A token with a unit (``25V``) fills that unit's slot; a token without one (``100n``,
    ``4k7``, ``0,47``) fills the category's primary slot (``primary_kind``) when it parses as
    that kind.  The first token of each slot wins.
    """
    values: dict[str, float] = {}
    dielectric = package = None
    bare: list[str] = []
    if not text:
        return values, dielectric, package, bare
    text = text.replace("\u2009", " ").replace("\u00a0", " ")
    for m in _TOLERANCE_RE.finditer(text):
        try:
            values.setdefault("tolerance", abs(parse_quantity(m.group(1) + "%", "%", decimal_comma=decimal_comma)))
        except QuantityError:
            pass
    text = _TOLERANCE_RE.sub(" ", text)
    text = _fraction_watts(text, values)
    for tok in _tokens(text, decimal_comma):
        if dielectric is None and _DIELECTRIC_RE.match(tok):
            dielectric = dielectric_key(tok)
            continue
        if package is None and (_IMPERIAL_RE.fullmatch(tok) or _PACKAGE_RE.match(tok)):
            package = package_key(tok)
            continue
        if not any(ch.isdigit() for ch in tok):
            continue
        kinds = _kinds_of(tok, decimal_comma)
        if not kinds:
            continue
        if len(kinds) == 1:
            kind = next(iter(kinds))
        elif primary_kind in kinds:
            kind = primary_kind
            if _NUMBER_ONLY_RE.match(tok) and primary_kind in ("F", "H"):
                bare.append(tok)  # "0,47" for a capacitor: µF or pF? say so instead of guessing
                continue
        else:
            bare.append(tok)
            continue
        key = dict(_KIND_KEYS)[kind]
        values.setdefault(key, kinds[kind])
    return values, dielectric, package, bare


def read_content(
    refs: tuple[str, ...],
    *,
    value_text: str = "",
    description: str = "",
    voltage_text: str = "",
    tolerance_text: str = "",
    dielectric_text: str = "",
    package_text: str = "",
    part_number: str = "",
    decimal_comma: bool = False,
) -> LineContent:
    """Everything a BOM line says about its part, with a warning for each cell that could not be read.

    Dedicated columns win over the value cell, which wins over words in the description.
    """
    cats, subtype, uncatalogued, warnings = infer_categories(refs, f"{value_text} {description}")
    primary = PRIMARY.get(cats[0]) if len(cats) == 1 else None
    primary_key, primary_kind = primary if primary else (None, None)
    content = LineContent(categories=cats, subtype_hint=subtype, uncatalogued=uncatalogued, warnings=warnings)

    v_vals, v_diel, v_pack, v_bare = scan_text(value_text, primary_kind, decimal_comma)
    d_vals, d_diel, d_pack, _ = scan_text(description, primary_kind, decimal_comma)
    values = dict(d_vals)
    values.update(v_vals)
    if not cats:
        # Without a category the unit tells: a farad value is a capacitor, an ohm value a resistor.
        for key, cat in (("capacitance", "capacitor"), ("resistance", "resistor"), ("inductance", "magnetic")):
            if key in values:
                content.categories = (cat,)
                break
    if voltage_text.strip():
        try:
            values["v_rated"] = parse_quantity(voltage_text.strip(), "V", decimal_comma=decimal_comma)
        except QuantityError as exc:
            warnings.append(f"voltage {voltage_text.strip()!r} could not be read: {exc}")
    if tolerance_text.strip():
        tol = tolerance_text.strip()
        try:
            values["tolerance"] = abs(parse_quantity(tol if "%" in tol else tol + "%", "%",
                                                     decimal_comma=decimal_comma))
        except QuantityError as exc:
            warnings.append(f"tolerance {tol!r} could not be read: {exc}")
    if "tolerance" in values and not tolerance_text.strip() and not set(content.categories) & {"capacitor", "resistor"}:
        del values["tolerance"]  # "CTR 100%" on an optocoupler is not a tolerance
    for key in [k for k, v in values.items() if v < 0]:  # "-10uF": no part has a negative value or rating
        label = {"v_rated": "voltage rating", "i_rated": "current rating", "p_rated": "power rating"}.get(key, key)
        warnings.append(f"{label} {format_quantity(values.pop(key), _KIND_OF_KEY.get(key))} "
                        "is negative; no part value or rating is, so it was not used")
    content.values = values
    content.dielectric = dielectric_key(dielectric_text) or v_diel or d_diel
    content.package = package_key(package_text) or v_pack or d_pack

    if primary_key and primary_key not in values and value_text.strip():
        shown = value_text.strip()
        if v_bare and primary_kind in ("F", "H"):
            unit = "µF" if primary_kind == "F" else "µH"
            warnings.append(
                f"value {v_bare[0]!r} has no unit; write it with one (for example {v_bare[0]}{unit}) "
                f"so the {primary_key} is not a guess"
            )
        elif part_number.strip():
            warnings.append(f"no {primary_key} found in the value {shown!r}; matching by part number")
        else:
            try:
                parse_quantity(shown, primary_kind, decimal_comma=decimal_comma)
            except QuantityError as exc:
                warnings.append(f"value {shown!r}: no {primary_key} could be read ({exc.message})")
    return content
