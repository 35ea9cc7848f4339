"""Fuzzing the input edges: no input makes them fail with anything but the project's own error.

* :func:`partcheck.units.parse_quantity`, every unit kind: any text, or quantity-shaped text, or
  a number of any size → a finite float or :class:`~partcheck.errors.QuantityError`.
* :func:`partcheck.bom.read.read_bom`: generated CSV-like text (random delimiter, header words
  from the synonym table or anything, cells with quotes, newlines, units, formula starts), and
  raw bytes, written to a file → a :class:`~partcheck.bom.read.Bom` or a
  :class:`~partcheck.errors.PartcheckError`.
* :func:`partcheck.design.design_from_dict`: valid designs with keys replaced, removed or added
  and values of every TOML type → a :class:`~partcheck.design.Design` or a PartcheckError; and
  :func:`partcheck.design.load_design` on TOML-ish text.

Fuzz budget (hypothesis ``max_examples`` per strategy, ``deadline=None``, derandomized so a run
is repeatable; about 20 s in all on a shared 2-core machine):

=====================================  ========
strategy                               examples
=====================================  ========
parse_quantity, arbitrary text          300
parse_quantity, quantity-shaped text    300
parse_quantity, numbers of any size     200
read_bom, generated CSV text            250
read_bom, raw bytes                     150
design_from_dict, mutated designs       300
load_design, TOML-ish text              200
=====================================  ========
"""

from __future__ import annotations

import datetime as dt
import math
import tempfile
from pathlib import Path

from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from partcheck.bom.columns import SYNONYMS
from partcheck.bom.read import Bom, read_bom
from partcheck.design import Design, design_from_dict, load_design
from partcheck.errors import PartcheckError, QuantityError
from partcheck.units import PREFIXES, UNIT_ALIASES, parse_quantity

KINDS = [None, *UNIT_ALIASES]


def budget(n: int) -> settings:
    return settings(max_examples=n, deadline=None, derandomize=True, database=None,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])


# ---- the quantity parser ------------------------------------------------------------------------

NUMBER_TEXT = st.one_of(
    st.from_regex(r"\A[+-]?\d{1,6}([.,]\d{0,6})?([eE][+-]?\d{1,4})?\Z"),
    st.sampled_from(["nan", "inf", "-inf", "NaN", "Infinity", "1e309", "-1e309", "1e-400", "0", ".5", ",5",
                     "1" * 120, "4k7", "R47", "3V3", "470R", "0R", "2A5", "4n7", "1M5", "±10", "+/-5"]),
)
SUFFIX_TEXT = st.one_of(
    st.just(""),
    st.sampled_from(sorted(PREFIXES)),
    st.sampled_from(sorted({a for aliases in UNIT_ALIASES.values() for a in aliases})),
    st.tuples(st.sampled_from(sorted(PREFIXES)),
              st.sampled_from(sorted({a for aliases in UNIT_ALIASES.values() for a in aliases}))).map("".join),
    st.text(max_size=4),
)
QUANTITY_TEXT = st.tuples(st.sampled_from(["", " ", "  ", "\t", "\u00a0"]), NUMBER_TEXT,
                          st.sampled_from(["", " ", "\u2009"]), SUFFIX_TEXT,
                          st.sampled_from(["", " ", "%", "/W", "\n"])).map("".join)


def _finite_or_quantity_error(value, kind, decimal_comma) -> None:
    try:
        result = parse_quantity(value, kind, decimal_comma=decimal_comma)
    except QuantityError as exc:
        assert exc.message  # says what was wrong
        return
    assert isinstance(result, float) and math.isfinite(result), (value, kind, result)


@budget(300)
@given(text=st.text(max_size=60), kind=st.sampled_from(KINDS), decimal_comma=st.booleans())
def test_parse_quantity_arbitrary_text(text, kind, decimal_comma):
    _finite_or_quantity_error(text, kind, decimal_comma)


@budget(300)
@given(text=QUANTITY_TEXT, kind=st.sampled_from(KINDS), decimal_comma=st.booleans())
def test_parse_quantity_quantity_shaped_text(text, kind, decimal_comma):
    _finite_or_quantity_error(text, kind, decimal_comma)


@budget(200)
@given(value=st.one_of(st.floats(), st.integers(), st.integers(min_value=10**300, max_value=10**1000),
                       st.booleans(), st.none(), st.lists(st.integers(), max_size=2), st.binary(max_size=4)),
       kind=st.sampled_from(KINDS))
def test_parse_quantity_numbers_of_any_size_and_other_types(value, kind):
    _finite_or_quantity_error(value, kind, False)


# ---- the BOM reader -----------------------------------------------------------------------------

HEADER_WORDS = sorted({name for names in SYNONYMS.values() for name in names})
CELL = st.one_of(
    st.text(max_size=12),
    st.sampled_from(["C1", "C1-C4", "R1,R2", "C4-C1", "C1-R3", "R1-R99999", "Q1 D1", "C7-9", "", " ", "DNF",
                     "10uF", "4k7", "100n", "25V", "-10uF", "NaN", "inf", "1e999", "X7R", "0603", "±10%",
                     "4,7µF", '"', '""', "'", "\n", "\r", "\r\n", "=1+1", "+cmd|' /C calc'!A0", "@x", "-2",
                     "<script>", "\x00", "\ufeff", "1" * 300]),
    QUANTITY_TEXT,
)
HEADER = st.one_of(st.sampled_from(HEADER_WORDS), st.text(max_size=10))


@st.composite
def bom_text(draw) -> tuple[str, str]:
    rnd = draw(st.randoms(use_true_random=False))
    delimiter = rnd.choice([",", ";", "\t", "|", ",", ";", " ", ":"])
    width = draw(st.integers(1, 6))
    rows = []
    for _ in range(draw(st.integers(0, 3))):  # title rows above the header
        rows.append([draw(st.text(max_size=15))])
    header = [rnd.choice(HEADER_WORDS) if rnd.random() < 0.7 else draw(HEADER) for _ in range(width)]
    if rnd.random() < 0.8:  # most BOMs have a reference column somewhere
        header[rnd.randrange(width)] = rnd.choice(SYNONYMS["ref"])
    rows.append(header)
    for _ in range(draw(st.integers(0, 8))):
        rows.append([draw(CELL) for _ in range(draw(st.integers(0, width + 2)))])
    quote = draw(st.booleans())

    def cell(c: str) -> str:
        if quote or delimiter in c or '"' in c or "\n" in c:
            return '"' + c.replace('"', '""') + '"' if draw(st.booleans()) else c
        return c

    newline = draw(st.sampled_from(["\n", "\r\n", "\r"]))
    text = newline.join(delimiter.join(cell(c) for c in row) for row in rows)
    if draw(st.booleans()):
        text = text[: draw(st.integers(0, len(text)))]  # truncated anywhere
    return text, draw(st.sampled_from(["utf-8", "utf-8-sig", "utf-16", "cp1252", "latin-1"]))


def _read_bom_bytes(data: bytes, suffix: str) -> None:
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / f"fuzz{suffix}"
        path.write_bytes(data)
        try:
            bom = read_bom(path)
        except PartcheckError as exc:
            assert exc.file is not None and str(path) in str(exc), str(exc)  # names the file
            return
        assert isinstance(bom, Bom)
        for line in bom.lines:
            assert all(isinstance(v, float) and math.isfinite(v) for v in line.values.values()), line
            assert all(v >= 0 for v in line.values.values()), line


@budget(250)
@given(generated=bom_text())
def test_read_bom_generated_csv(generated):
    text, encoding = generated
    try:
        data = text.encode(encoding)
    except UnicodeEncodeError:
        data = text.encode("utf-8")
    _read_bom_bytes(data, ".csv")


@budget(150)
@given(data=st.one_of(st.binary(max_size=600),
                      st.tuples(st.sampled_from([b"PK\x03\x04", b"\xef\xbb\xbf", b"\xff\xfe", b"\xfe\xff",
                                                 b"%PDF", b"\xd0\xcf\x11\xe0", b"\x89PNG"]),
                                st.binary(max_size=300)).map(b"".join)),
       suffix=st.sampled_from([".csv", ".xlsx", ".txt"]))
def test_read_bom_raw_bytes(data, suffix):
    _read_bom_bytes(data, suffix)


# ---- the design loader --------------------------------------------------------------------------

BASE_DESIGN = {
    "name": "fuzz base",
    "converter": {"switching": "fixed", "fsw": "100 kHz", "efficiency": 0.85, "max_duty": 0.7},
    "input": {"vin_min": "18 V", "vin_max": "32 V"},
    "output": [{"vout": "5 V", "iout": "1 A", "vf": "0.4 V"}],
    "transformer": {"lm": "100 uH", "turns_ratio": 4, "llk": "1 uH"},
    "clamp": {"kind": "zener", "vclamp": "40 V"},
    "environment": {"ambient_max": "60 degC"},
    "roles": {"switch": "Q1", "output_cap": ["C5", "C6"]},
    "pins": {"Q1": "SW-1"},
    "extra_stress": [{"refs": ["R4"], "voltage": "26 V"}],
    "tolerances": {"lm": "10%"},
    "requirements": {"life_hours": "60000 h"},
    "waiver": [{"ref": "Q1", "parameter": "voltage", "reason": "r", "approved_by": "a", "date": "2026-01-01"}],
    "feedback": {"v_aux": "14 V"},
}

SCALAR = st.one_of(
    st.text(max_size=10), QUANTITY_TEXT, st.floats(), st.integers(), st.integers(10**300, 10**400),
    st.booleans(), st.dates(), st.datetimes(), st.times(),
    st.sampled_from(["Q1", "C5", "zener", "rcd", "fixed", "boundary", "optocoupler", "2026-13-45", "switch",
                     "-1 V", "0 Hz", "1e-300 H", "1e300 A", "nan", "inf V", "150 %", "22uF"]),
)
VALUE = st.recursive(SCALAR, lambda inner: st.one_of(st.lists(inner, max_size=3),
                                                     st.dictionaries(st.text(max_size=6), inner, max_size=3)),
                     max_leaves=6)


def _paths(doc, prefix=()):
    """Every (path, value) inside a nested dict/list document."""
    yield prefix, doc
    if isinstance(doc, dict):
        for k, v in doc.items():
            yield from _paths(v, prefix + (k,))
    elif isinstance(doc, list):
        for i, v in enumerate(doc):
            yield from _paths(v, prefix + (i,))


def _copy(doc):
    if isinstance(doc, dict):
        return {k: _copy(v) for k, v in doc.items()}
    if isinstance(doc, list):
        return [_copy(v) for v in doc]
    return doc


@st.composite
def mutated_design(draw) -> dict:
    doc = _copy(BASE_DESIGN)
    rnd = draw(st.randoms(use_true_random=False))  # spreads the mutations over the whole document
    for _ in range(draw(st.integers(1, 4))):
        paths = [p for p, _v in _paths(doc) if p]
        if not paths:
            break
        path = rnd.choice(paths)
        parent = doc
        for step in path[:-1]:
            parent = parent[step]
        action = rnd.choice(["replace", "replace", "delete", "add"])
        if action == "replace":
            parent[path[-1]] = draw(VALUE)
        elif action == "delete" and isinstance(parent, dict):
            del parent[path[-1]]
        elif isinstance(parent, dict):
            parent[draw(st.one_of(st.text(max_size=8), st.sampled_from(["vin_nom", "vin_surge", "cout", "esr",
                                                                         "valley", "current_limit", "ae"])))] = \
                draw(VALUE)
    return doc


def _with(section: str, key: str, value) -> dict:
    doc = _copy(BASE_DESIGN)
    doc[section][key] = value
    return doc


@budget(300)
@given(doc=mutated_design())
@example(doc=_with("feedback", "v_aux", 10**400))  # once an OverflowError (found by a longer fuzz run)
@example(doc=_with("transformer", "ae", 10**400))
@example(doc=_with("feedback", "v_aux", float("nan")))
def test_design_from_dict_mutated(doc):
    try:
        design = design_from_dict(doc, file="fuzz.toml")
    except PartcheckError as exc:
        assert exc.file == "fuzz.toml" and exc.message, str(exc)
        return
    assert isinstance(design, Design)
    assert design.input.vin_min <= design.input.vin_max
    assert 0 < design.converter.efficiency <= 1


TOML_KEY = st.one_of(st.sampled_from(["name", "fsw", "vin_min", "vin_max", "lm", "llk", "vout", "iout",
                                      "efficiency", "kind", "vclamp", "ambient_max", "turns_ratio", "bom"]),
                     st.from_regex(r"\A[A-Za-z_][A-Za-z0-9_]{0,8}\Z"), st.text(max_size=6))
TOML_VALUE = st.one_of(
    QUANTITY_TEXT.map(lambda s: '"' + s.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n") + '"'),
    st.sampled_from(["nan", "inf", "-inf", "true", "false", "1979-05-27", "0x1F", "1_000", "1e400",
                     "1" + "0" * 5000, "[]", "[1, [2, [3]]]", "{a = 1}", '"""', "'''", '"unterminated',
                     "[" * 600 + "]" * 600, "{ x = " * 300 + "1" + " }" * 300]),
    st.text(max_size=10),
    st.floats().map(repr), st.integers().map(str),
)
TOML_LINE = st.one_of(
    st.tuples(TOML_KEY, st.sampled_from([" = ", "=", " "]), TOML_VALUE).map("".join),
    st.sampled_from(["[converter]", "[input]", "[[output]]", "[transformer]", "[clamp]", "[environment]",
                     "[roles]", "[[waiver]]", "[tolerances]", "[converter", "[[output]", "# comment", ""]),
    st.text(max_size=20),
)


@budget(200)
@given(lines=st.lists(TOML_LINE, max_size=14), prefix=st.sampled_from(["", 'name = "fuzz"\n']),
       encoding=st.sampled_from(["utf-8", "utf-16", "utf-16-le", "latin-1"]))
def test_load_design_tomlish_text(lines, prefix, encoding):
    text = prefix + "\n".join(lines)
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "fuzz.toml"
        try:
            path.write_bytes(text.encode(encoding))
        except UnicodeEncodeError:
            path.write_bytes(text.encode("utf-8"))
        try:
            design = load_design(path)
        except PartcheckError as exc:
            assert exc.file == str(path), str(exc)
            return
    assert isinstance(design, Design)


def test_the_generated_designs_include_valid_ones():
    """The mutation strategy starts from a design that loads: the fuzz reaches past the first check."""
    design = design_from_dict(_copy(BASE_DESIGN), file="fuzz.toml")
    assert design.converter.fsw == 100e3 and design.waivers[0]["date"] == dt.date(2026, 1, 1)
