"""Engineering quantities: parse text such as ``"4k7"`` or ``"22 µF"`` into SI floats and back.

Inside partcheck every quantity is a plain ``float`` in SI units (V, A, W, Hz, F, H, Ω, s) with
three exceptions that engineers never write in SI: temperatures are in °C, durations of
capacitor life in hours, and percentages are returned as fractions (``"±10%"`` → ``0.10``).
Parsing and formatting happen only at the edges (files, command line, screen).

Grammar accepted by :func:`parse_quantity`::

    quantity   := sign? number space? prefix? unit?        "22 uF", "-4 V", "1.5e-3 A", "250kHz"
                | sign? digits? letter digits unit?         IEC 60062 code: "4k7", "R47", "4n7", "3V3"
                | digits "R"                                "470R", "0R" (resistance only)
                | ("±" | "+/-")? number space? "%"          "±10%" (percentage kind only)
    sign       := "+" | "-"
    number     := digits ("." digits)? (("e" | "E") sign? digits)?   decimal comma on request
    prefix     := f p n u µ μ m k K M G T meg                          (K = kilo, as BOMs write it)
    unit       := one symbol of the expected kind (see UNIT_ALIASES)

A unit of another kind (``"22uF"`` where a voltage is expected) is an error, as is any text
that does not fit the grammar.  Temperatures, hours, percentages and thermal resistances take
no prefix.
"""

from __future__ import annotations

import datetime as _dt
import math
import re
from decimal import Decimal, InvalidOperation
from typing import Final

from .errors import QuantityError

#: SI prefixes by the symbols BOMs and datasheets use.  ``M`` is mega and ``m`` milli (not the
#: SPICE convention); ``meg`` is accepted as the unambiguous spelling of mega.
PREFIXES: Final[dict[str, float]] = {
    "f": 1e-15,
    "p": 1e-12,
    "n": 1e-9,
    "u": 1e-6,
    "µ": 1e-6,  # U+00B5 MICRO SIGN
    "μ": 1e-6,  # U+03BC GREEK SMALL LETTER MU
    "m": 1e-3,
    "k": 1e3,
    "K": 1e3,
    "M": 1e6,
    "meg": 1e6,
    "MEG": 1e6,
    "Meg": 1e6,
    "G": 1e9,
    "T": 1e12,
}

#: Symbols accepted for each unit kind.  The key is the kind's canonical name.
UNIT_ALIASES: Final[dict[str, tuple[str, ...]]] = {
    "V": ("V", "v", "volt", "volts", "Vdc", "VDC"),
    "A": ("A", "amp", "amps"),
    "W": ("W", "watt", "watts"),
    "Hz": ("Hz", "hz", "HZ"),
    "F": ("F",),
    "H": ("H",),
    "ohm": ("Ω", "Ω", "ohm", "Ohm", "ohms", "Ohms", "OHM", "OHMS"),
    "degC": ("°C", "ºC", "degC", "deg C", "C"),
    "K": ("K", "kelvin"),
    "s": ("s", "sec"),
    "h": ("h", "hr", "hrs", "hours", "hour"),
    "K/W": ("K/W", "°C/W", "degC/W", "C/W"),
    "%": ("%",),
    "T": ("T", "tesla"),
    "J": ("J", "joule"),
    "C": ("C",),  # electric charge (gate charge, recovered charge); "C" alone is °C where a temperature is expected
}

#: What each kind is called in messages.
KIND_NAMES: Final[dict[str | None, str]] = {
    "V": "a voltage (V)",
    "A": "a current (A)",
    "W": "a power (W)",
    "Hz": "a frequency (Hz)",
    "F": "a capacitance (F)",
    "H": "an inductance (H)",
    "ohm": "a resistance (Ω)",
    "degC": "a temperature (°C)",
    "K": "a temperature difference (K)",
    "s": "a time (s)",
    "h": "a duration in hours (h)",
    "K/W": "a thermal resistance (K/W)",
    "%": "a percentage (%)",
    "C": "a charge (C)",
    "T": "a flux density (T)",
    "J": "an energy (J)",
    None: "a plain number",
}

#: Kinds written without SI prefixes.
_NO_PREFIX: Final = frozenset({"degC", "K", "h", "K/W", "%"})

#: Letters that may stand for the decimal point in an IEC 60062 style code, per unit kind.
#: ``R``/``L`` are the resistance letters of IEC 60062 (R = 10^0, L = 10^-3); the unit letters
#: ``V`` and ``A`` as decimal point ("3V3", "2A5") are common practice on schematics.
_CODE_LETTERS: Final[dict[str, dict[str, float]]] = {
    "ohm": {"L": 1e-3, "R": 1.0, "r": 1.0, "k": 1e3, "K": 1e3, "M": 1e6, "G": 1e9, "T": 1e12},
    "F": {"p": 1e-12, "n": 1e-9, "u": 1e-6, "µ": 1e-6, "μ": 1e-6, "m": 1e-3, "F": 1.0},
    "H": {"p": 1e-12, "n": 1e-9, "u": 1e-6, "µ": 1e-6, "μ": 1e-6, "m": 1e-3},
    "V": {"V": 1.0, "v": 1.0, "m": 1e-3, "k": 1e3},
    "A": {"A": 1.0, "m": 1e-3, "u": 1e-6, "µ": 1e-6},
    "W": {"W": 1.0, "m": 1e-3},
    "Hz": {"k": 1e3, "M": 1e6},
}

_UNIT_KINDS: Final[dict[str, tuple[str, ...]]] = {}
for _kind, _aliases in UNIT_ALIASES.items():
    for _alias in _aliases:
        _UNIT_KINDS[_alias] = _UNIT_KINDS.get(_alias, ()) + (_kind,)
#: The first kind a symbol belongs to (for messages); ``_kind_of`` resolves shared symbols.
_UNIT_TO_KIND: Final[dict[str, str]] = {alias: kinds[0] for alias, kinds in _UNIT_KINDS.items()}


def _kind_of(symbol: str, expected: str | None) -> str:
    """The kind of a unit symbol, preferring the expected kind when the symbol is shared ("C")."""
    kinds = _UNIT_KINDS[symbol]
    return expected if expected in kinds else kinds[0]
# Longest symbols first so that "mOhm" is read as m + Ohm, not as "m" + "Ohm" failing on "O".
_UNITS_BY_LENGTH: Final = sorted(_UNIT_TO_KIND, key=len, reverse=True)
_PREFIXES_BY_LENGTH: Final = sorted(PREFIXES, key=len, reverse=True)

_NUMBER = r"[+-]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][+-]?\d+)?"
_NUMBER_RE: Final = re.compile(rf"^\s*({_NUMBER})\s*(.*?)\s*$", re.DOTALL)
_CODE_RE: Final = re.compile(r"^\s*([+-]?)(\d*)([A-Za-zµμ])(\d+)\s*([A-Za-zΩΩ]*)\s*$")
_R_SUFFIX_RE: Final = re.compile(r"^\s*(\d+)[Rr]\s*$")
_DIGIT_GROUPS: Final = re.compile(r"(?<=\d)[ \u2009\u202f](?=\d{3}(?!\d))")
_PERCENT_RE: Final = re.compile(rf"^\s*(?:±|\+/-|\+-)?\s*({_NUMBER})\s*%\s*$")


def _expected(kind: str | None) -> str:
    return KIND_NAMES.get(kind, kind or "a plain number")


def _fail(text: object, kind: str | None, why: str = "") -> QuantityError:
    detail = f" ({why})" if why else ""
    return QuantityError(f"{str(text)!r} is not {_expected(kind)}{detail}")


def _to_float(number: str, text: object, kind: str | None, decimal_comma: bool) -> float:
    if "," in number:
        if not decimal_comma:
            raise _fail(text, kind, "a comma is not a decimal point here; use '.' or read the file with decimal commas")
        if "." in number:
            raise _fail(text, kind, "both '.' and ',' in one number")
        number = number.replace(",", ".")
    return float(number)


def _scaled(number: float | str, scale: float) -> float:
    """``number * scale`` rounded once, so that "4n7" is exactly the float nearest 4.7e-9."""
    if scale == 1.0:
        return float(number)
    try:
        exponent = round(math.log10(scale))
        if 10.0**exponent == scale:
            return float(Decimal(str(number)).scaleb(exponent))
    except (InvalidOperation, ValueError, OverflowError):
        pass
    return float(number) * scale


def _check_finite(value: float, text: object, kind: str | None) -> float:
    if not math.isfinite(value):
        raise _fail(text, kind, "the value must be finite")
    return value


def parse_quantity(text: str | float | int, kind: str | None = None, *, decimal_comma: bool = False) -> float:
    """Parse an engineering quantity into an SI float.

    Parameters
    ----------
    text:
        The text as written (``"4k7"``, ``"22 µF"``, ``"±10%"``), or a number already in SI units.
    kind:
        The expected unit kind, a key of :data:`UNIT_ALIASES` (``"V"``, ``"ohm"``, ``"degC"``...)
        or ``None`` for a plain number.  A unit symbol in ``text`` must belong to this kind.
    decimal_comma:
        Accept ``,`` as the decimal point (European spreadsheets and BOMs).

    Returns
    -------
    float
        The value in SI units; °C for temperatures, hours for ``"h"``, a fraction for ``"%"``.

    Raises
    ------
    QuantityError
        Quoting the text and saying what was expected.
    """
    if kind is not None and kind not in UNIT_ALIASES:
        raise ValueError(f"unknown unit kind {kind!r}; expected one of {', '.join(UNIT_ALIASES)}")
    if isinstance(text, bool):
        raise _fail(text, kind, "a true/false value is not a number")
    if isinstance(text, (int, float)):
        try:
            value = float(text)
        except OverflowError:  # an integer beyond the float range (TOML and JSON integers have no limit)
            digits = int(text.bit_length() * 0.30103) + 1  # str() of a huge int may itself be refused
            raise QuantityError(f"an integer of about {digits} digits is too large to be {_expected(kind)} "
                                "(the value must be finite)") from None
        return _check_finite(value, text, kind)
    if not isinstance(text, str):
        raise _fail(text, kind, f"got a {type(text).__name__}")
    if not text.strip():
        raise _fail(text, kind, "the text is empty")
    if len(text) > 100:
        raise QuantityError(f"{text[:40]!r}... ({len(text)} characters) is too long to be {_expected(kind)}")

    if kind == "%":
        m = _PERCENT_RE.match(text)
        if m:
            return _check_finite(_scaled(_to_float(m.group(1), text, kind, decimal_comma), 0.01), text, kind)

    # Digit groups of three separated by a space or thin space ("60 000 h", as format_quantity
    # writes hours) are one number.
    text = _DIGIT_GROUPS.sub("", text)
    m = _NUMBER_RE.match(text)
    if m:
        value = _to_float(m.group(1), text, kind, decimal_comma)
        suffix = m.group(2)
        if not suffix:
            return _check_finite(value, text, kind)
        # Something follows the number that does not fit the unit grammar: maybe an IEC code.
        if not (suffix[0].isalpha() or suffix[0] in "µμΩΩ°º%/") and kind != "%":
            raise _fail(text, kind, f"unexpected {suffix!r} after the number")
        scale = _split_suffix(suffix, text, kind)
        if scale is not None:
            return _check_finite(_scaled(value, scale), text, kind)
    coded = _parse_code(text, kind)
    if coded is not None:
        return _check_finite(coded, text, kind)
    raise _fail(text, kind, _hint(kind))


def _hint(kind: str | None) -> str:
    if kind is None:
        return "expected a number such as 0.85 or 1e-3"
    if kind == "%":
        return "expected a number with %, such as ±10%"
    units = "/".join(UNIT_ALIASES[kind][:2])
    if kind in _NO_PREFIX:
        return f"expected a number with an optional unit {units}, such as 70 {UNIT_ALIASES[kind][0]}"
    return f"expected a number with an optional SI prefix and unit {units}, such as 4.7k or 22 m{UNIT_ALIASES[kind][0]}"


def _split_suffix(suffix: str, text: str, kind: str | None) -> float | None:
    """Scale factor of ``prefix? unit?`` in ``suffix``; None when the suffix is not of that form."""
    unit_kind = None
    rest = suffix
    for symbol in _UNITS_BY_LENGTH:
        if suffix.endswith(symbol):
            candidate_rest = suffix[: -len(symbol)].rstrip()
            if candidate_rest == "" or candidate_rest in PREFIXES:
                unit_kind = _kind_of(symbol, kind)
                # A bare "K", "M", "m" may be a prefix rather than a unit (kelvin, ...).
                if candidate_rest == "" and symbol in PREFIXES and unit_kind != kind:
                    if kind == "degC" and unit_kind == "K":  # "300 K": kelvin, not the kilo prefix
                        raise _fail(text, kind, "temperatures are written in °C here, not kelvin")
                    unit_kind = None
                    break
                rest = candidate_rest
                break
    if unit_kind is not None and unit_kind != kind:
        if kind == "degC" and unit_kind == "K":
            raise _fail(text, kind, "temperatures are written in °C here, not kelvin")
        raise _fail(text, kind, f"the unit says {_expected(unit_kind)}")
    if rest == "":
        return 1.0
    if rest in PREFIXES:
        if kind in _NO_PREFIX:
            raise _fail(text, kind, f"no SI prefix is used with {_expected(kind)}")
        if unit_kind is None and rest not in PREFIXES:
            return None
        return PREFIXES[rest]
    return None


def _parse_code(text: str, kind: str | None) -> float | None:
    """IEC 60062 letter-and-digit code (``4k7``, ``R47``, ``4n7``, ``3V3``), or ``470R``."""
    if kind is None:
        return None
    m = _R_SUFFIX_RE.match(text)
    if m:
        if kind != "ohm":
            raise _fail(text, kind, "the R code is for resistances")
        return float(m.group(1))
    m = _CODE_RE.match(text)
    if not m:
        return None
    sign, whole, letter, frac, unit = m.groups()
    letters = _CODE_LETTERS.get(kind, {})
    if letter not in letters:
        if letter in ("R", "r", "L") and kind != "ohm":
            raise _fail(text, kind, "the R code is for resistances")
        return None
    if unit and (unit not in _UNIT_KINDS or _kind_of(unit, kind) != kind):
        if unit in _UNIT_TO_KIND:
            raise _fail(text, kind, f"the unit says {_expected(_UNIT_TO_KIND[unit])}")
        return None
    value = _scaled(f"{whole or '0'}.{frac}", letters[letter])
    return -value if sign == "-" else value


# --------------------------------------------------------------------------------------------
# Formatting
# --------------------------------------------------------------------------------------------

_DISPLAY_UNIT: Final[dict[str | None, str]] = {
    "ohm": "Ω",
    "degC": "°C",
    None: "",
}
_FORMAT_PREFIXES: Final = {-15: "f", -12: "p", -9: "n", -6: "µ", -3: "m", 0: "", 3: "k", 6: "M", 9: "G", 12: "T"}


def _trim(mantissa: float, digits: int) -> str:
    text = f"{mantissa:.{digits}g}"
    if "e+" in text:  # .g fell back to exponent form (e.g. 1e+03): spell out the rounded value
        text = format(Decimal(text), "f")
    return text


def format_quantity(value: float | None, kind: str | None = None, digits: int = 3) -> str:
    """Format an SI value for a person: ``4700, "ohm"`` → ``"4.7 kΩ"``; ``2.2e-5, "F"`` → ``"22 µF"``.

    ``digits`` significant digits, trailing zeros dropped.  ``None`` (a missing value) is ``"—"``.
    Temperatures, hours and percentages are written without prefixes (``"70 °C"``,
    ``"60000 h"``, ``"12.5 %"``).
    """
    if value is None:
        return "—"
    if isinstance(value, float) and math.isnan(value):
        return "n/a"
    if math.isinf(value):
        return "∞" if value > 0 else "-∞"
    unit = _DISPLAY_UNIT.get(kind, kind or "")
    if kind == "%":
        return f"{_trim(value * 100.0, digits)} %"
    if kind in _NO_PREFIX:
        if kind == "h" and abs(value) >= 1000:
            return f"{value:,.0f} h".replace(",", " ")
        return f"{_trim(value, digits)} {unit}"
    if value == 0:
        return f"0 {unit}".rstrip()
    exponent = int(math.floor(math.log10(abs(value)) / 3.0) * 3)
    exponent = max(-15, min(12, exponent))
    mantissa = value / 10.0**exponent
    if abs(float(f"{mantissa:.{digits}g}")) >= 1000 and exponent < 12:
        exponent += 3
        mantissa = value / 10.0**exponent
    return f"{_trim(mantissa, digits)} {_FORMAT_PREFIXES[exponent]}{unit}".rstrip()


def as_date(value: object) -> _dt.date | None:
    """A TOML date, datetime or ``YYYY-MM-DD`` text as a date; ``None`` when it is none of these
    (the caller raises its own error, naming its file and key)."""
    if isinstance(value, _dt.datetime):
        return value.date()
    if isinstance(value, _dt.date):
        return value
    if isinstance(value, str):
        try:
            return _dt.date.fromisoformat(value.strip())
        except ValueError:
            return None
    return None
