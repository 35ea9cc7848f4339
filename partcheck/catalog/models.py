"""The catalog's schema: the exchange-column registry, the database tables and the record view.

Three layers, one source of truth:

* :data:`FIELDS` — every exchange column (name, unit kind, the categories it belongs to, a
  one-line doc).  It drives import validation, the export column order and the docs.
* :class:`Part`, :class:`CurvePoint`, :class:`CatalogMeta`, :class:`CatalogMigration` — the
  SQLModel tables.  ``Part`` is one wide table (a column per exchange column, NULL when empty,
  plus the provenance columns ``updated_at`` and ``part_number_key``); a test checks that its
  columns are exactly :data:`FIELDS`, ``updated_at`` and ``part_number_key``.
* :class:`PartRecord` — the plain, frozen view of one part that every other module receives.

Values are SI floats (°C for temperatures, hours for life, fractions for percentages).
"""

from __future__ import annotations

import unicodedata
from dataclasses import dataclass, field
from dataclasses import fields as dc_fields
from typing import Final

from sqlalchemy import Index, UniqueConstraint
from sqlmodel import Field, SQLModel

#: Categories and their subtypes (``optocoupler`` and ``reference`` are the feedback parts).
CATEGORIES: Final[dict[str, tuple[str, ...]]] = {
    "switch": ("mosfet", "gan", "integrated"),
    "diode": ("schottky", "ultrafast", "standard", "sic"),
    "clamp": ("zener", "tvs"),
    "capacitor": ("ceramic", "aluminium_electrolytic", "polymer", "tantalum", "film"),
    "resistor": ("thick_film", "thin_film", "metal_film", "wirewound", "current_sense"),
    "magnetic": ("transformer", "inductor"),
    "optocoupler": ("transistor",),
    "reference": ("shunt",),
}

#: Allowed ``status`` values; an empty cell means ``approved``.  Only approved parts are
#: offered as alternatives.
STATUSES: Final = ("approved", "restricted", "obsolete")

#: EIA ceramic dielectric codes accepted in ``dielectric`` (ceramic capacitors only).
DIELECTRICS: Final = ("C0G", "X7R", "X5R", "X7S", "X6S", "Y5V")

_ALL: Final = tuple(CATEGORIES)


def part_number_key(part_number: str) -> str:
    """The normalised form under which two spellings are one part number.

    NFKC then case folding: part numbers that differ only in letter case or Unicode form
    (composed or decomposed accents, the micro sign U+00B5 and the Greek mu U+03BC, full-width
    forms) have the same key.  Stored in ``part.part_number_key`` (schema version 3); a change
    here needs a migration that recomputes the stored keys.
    """
    return unicodedata.normalize("NFKC", part_number).casefold()


@dataclass(frozen=True)
class FieldSpec:
    """One exchange column.

    ``kind`` is the unit kind given to :func:`partcheck.units.parse_quantity` (``None`` with
    ``text=False`` is a plain number, such as a turns ratio).  ``minimum``/``maximum`` bound the
    parsed SI value; ``positive`` rejects zero and negative values (ratings where they make no
    sense).
    """

    name: str
    kind: str | None
    categories: tuple[str, ...]
    doc: str
    text: bool = False
    positive: bool = False
    minimum: float | None = None
    maximum: float | None = None
    required: bool = False

    @property
    def common(self) -> bool:
        """True for the columns every category has (part number, description ...)."""
        return self.categories == _ALL


def _text(name: str, doc: str, categories: tuple[str, ...] = _ALL, required: bool = False) -> FieldSpec:
    return FieldSpec(name, None, categories, doc, text=True, required=required)


def _rating(name: str, kind: str | None, categories: tuple[str, ...], doc: str, **limits) -> FieldSpec:
    return FieldSpec(name, kind, categories, doc, positive=limits.pop("positive", True), **limits)


def _temp(name: str, categories: tuple[str, ...], doc: str) -> FieldSpec:
    # Temperatures may be negative; nothing is colder than absolute zero.
    return FieldSpec(name, "degC", categories, doc, minimum=-273.15)


_SEMI = ("switch", "diode", "clamp", "reference")
_FIELD_LIST: Final[tuple[FieldSpec, ...]] = (
    # common
    _text("part_number", "the team's own part number (unique)", required=True),
    _text("category", "part category: " + ", ".join(CATEGORIES), required=True),
    _text("subtype", "subtype within the category (see CATEGORIES)"),
    _text("description", "free text shown in lists and used by fuzzy search"),
    _text("package", "package or footprint name"),
    _text("notes", "free text"),
    _text("status", "approved | restricted | obsolete (empty = approved)"),
    # switch
    _rating("vds_max", "V", ("switch",), "drain-source voltage rating [V]"),
    _rating("id_max", "A", ("switch",), "continuous drain current rating [A]"),
    _rating("id_pulse", "A", ("switch",), "pulsed drain current rating [A]"),
    _rating("rds_on", "ohm", ("switch",), "on-resistance at 25 °C [Ω]"),
    _rating("rds_on_125", "ohm", ("switch",), "on-resistance at Tj = 125 °C [Ω]"),
    _rating("coss", "F", ("switch",), "output capacitance [F]"),
    _rating("qg", "C", ("switch",), "total gate charge [C]"),
    _rating("e_as", "J", ("switch",), "single-pulse avalanche energy rating [J]"),
    _rating("e_ar", "J", ("switch",), "repetitive avalanche energy rating [J]"),
    # diode
    _rating("vrrm", "V", ("diode",), "repetitive peak reverse voltage [V]"),
    _rating("if_avg", "A", ("diode",), "average forward current rating [A]"),
    _rating("ifsm", "A", ("diode",), "non-repetitive surge forward current (inrush, start-up) [A]"),
    _rating("i_frm", "A", ("diode",), "repetitive peak forward current rating [A]"),
    _rating("vf", "V", ("diode",), "forward voltage at vf_current [V]"),
    _rating("vf_current", "A", ("diode",), "current at which vf is given [A]"),
    _rating("trr", "s", ("diode",), "reverse recovery time [s]"),
    _rating("qrr", "C", ("diode",), "reverse recovery charge [C]"),
    _rating("cj", "F", ("diode",), "junction capacitance [F]"),
    # clamp
    _rating("v_breakdown", "V", ("clamp",), "breakdown (zener) voltage [V]"),
    _rating("v_clamp", "V", ("clamp",), "clamping voltage at the rated pulse current [V]"),
    _rating("p_max", "W", ("clamp", "reference"), "continuous power rating [W]"),
    _rating("p_pulse", "W", ("clamp",), "peak pulse power rating [W]"),
    # capacitor
    _rating("capacitance", "F", ("capacitor",), "nominal capacitance [F]"),
    _rating("tolerance", "%", ("capacitor", "resistor"), "tolerance as a fraction (±10 % = 0.1) [-]", maximum=1.0),
    _rating("v_rated", "V", ("capacitor",), "rated DC voltage [V]"),
    _text("dielectric", "EIA dielectric code of a ceramic: " + ", ".join(DIELECTRICS), ("capacitor",)),
    _rating("esr", "ohm", ("capacitor",), "equivalent series resistance [Ω]"),
    _rating("esl", "H", ("capacitor",), "equivalent series inductance [H]"),
    _rating("ripple_current", "A", ("capacitor",), "rated ripple current (RMS) [A]"),
    _rating("ripple_freq", "Hz", ("capacitor",), "frequency at which ripple_current is rated [Hz]"),
    _temp("ripple_temp", ("capacitor",), "temperature at which ripple_current is rated [°C]"),
    _rating("ripple_rise", "K", ("capacitor",), "core temperature rise at rated ripple [K]"),
    _rating("life_hours", "h", ("capacitor",), "rated life at life_temp [h]"),
    _temp("life_temp", ("capacitor",), "temperature at which life_hours is rated [°C]"),
    _text("case_size", "case size (0805, 1206, 8x11.5 ...)", ("capacitor", "resistor", "magnetic")),
    # resistor
    _rating("resistance", "ohm", ("resistor",), "nominal resistance [Ω]"),
    _rating("p_rated", "W", ("resistor",), "rated power at or below t_knee [W]"),
    _temp("t_knee", ("resistor",), "temperature above which the power rating is derated [°C]"),
    _rating("v_max", "V", ("resistor",), "maximum working voltage [V]"),
    # magnetic
    _rating("lm", "H", ("magnetic",), "magnetising (or main) inductance [H]"),
    _rating("turns_ratio", None, ("magnetic",), "Np/Ns of the first secondary [-]"),
    _rating("llk", "H", ("magnetic",), "leakage inductance referred to the primary [H]"),
    _rating("isat", "A", ("magnetic",), "saturation current [A]"),
    _rating("b_sat", "T", ("magnetic",),
            "saturation flux density of the core at its hot temperature (datasheet value at 100 °C) [T]",
            maximum=3.0),
    _rating("dcr_pri", "ohm", ("magnetic",), "primary winding DC resistance [Ω]"),
    _rating("dcr_sec", "ohm", ("magnetic",), "secondary winding DC resistance [Ω]"),
    _rating("v_isolation", "V", ("magnetic", "optocoupler"), "isolation test voltage [V]"),
    # optocoupler
    _rating("ctr_min", "%", ("optocoupler",), "minimum current transfer ratio as a fraction [-]", maximum=100.0),
    _rating("ctr_max", "%", ("optocoupler",), "maximum current transfer ratio as a fraction [-]", maximum=100.0),
    _rating("if_max", "A", ("optocoupler",), "LED forward current rating [A]"),
    _rating("vceo", "V", ("optocoupler",), "collector-emitter voltage rating [V]"),
    _rating("ic_max", "A", ("optocoupler",), "collector current rating [A]"),
    # reference
    _rating("v_ref", "V", ("reference",), "reference voltage [V]"),
    _rating("vka_max", "V", ("reference",), "cathode-anode voltage rating [V]"),
    _rating("ika_max", "A", ("reference",), "cathode current rating [A]"),
    _rating("ika_min", "A", ("reference",), "minimum cathode current for regulation [A]"),
    # shared thermal columns
    _temp("tj_max", _SEMI + ("optocoupler",), "maximum junction temperature [°C]"),
    _rating("rth_ja", "K/W", _SEMI, "junction-to-ambient thermal resistance [K/W]"),
    _temp("t_max", ("capacitor", "resistor", "magnetic"), "maximum operating (hot-spot) temperature [°C]"),
)

#: Every exchange column by name, in export order.
FIELDS: Final[dict[str, FieldSpec]] = {spec.name: spec for spec in _FIELD_LIST}

#: Names of the numeric columns (stored as floats).
NUMERIC_FIELDS: Final = tuple(name for name, spec in FIELDS.items() if not spec.text)

#: Columns each category may fill, in export order.
CATEGORY_FIELDS: Final[dict[str, tuple[str, ...]]] = {
    cat: tuple(name for name, spec in FIELDS.items() if cat in spec.categories) for cat in CATEGORIES
}

#: The headline ratings shown for each category in lists.
SUMMARY_FIELDS: Final[dict[str, tuple[str, ...]]] = {
    "switch": ("vds_max", "id_max", "rds_on"),
    "diode": ("vrrm", "if_avg", "vf"),
    "clamp": ("v_breakdown", "v_clamp", "p_max"),
    "capacitor": ("capacitance", "v_rated", "dielectric", "ripple_current"),
    "resistor": ("resistance", "p_rated", "tolerance"),
    "magnetic": ("lm", "turns_ratio", "isat", "v_isolation"),
    "optocoupler": ("ctr_min", "vceo", "v_isolation"),
    "reference": ("v_ref", "vka_max", "ika_max"),
}


@dataclass(frozen=True)
class CurveSpec:
    """A curve kind: what its x and y mean and which categories may carry it."""

    name: str
    x_kind: str
    categories: tuple[str, ...]
    doc: str


#: Curves a part may carry (x unit kind, y is a plain number).
CURVES: Final[dict[str, CurveSpec]] = {
    "dc_bias": CurveSpec("dc_bias", "V", ("capacitor",), "x DC bias [V], y capacitance / nominal [-]"),
    "ripple_freq": CurveSpec("ripple_freq", "Hz", ("capacitor",), "x frequency [Hz], y ripple-current multiplier [-]"),
    "ripple_temp": CurveSpec("ripple_temp", "degC", ("capacitor",), "x temperature [°C], y ripple-current multiplier [-]"),
    "power_derating": CurveSpec(
        "power_derating", "degC", ("resistor", "clamp"), "x temperature [°C], y fraction of rated power [-]"
    ),
}

#: Columns of the curve side file (``X.curves.csv`` beside ``X.csv``).
CURVE_COLUMNS: Final = ("part_number", "curve", "x", "y")


# --------------------------------------------------------------------------------------------
# Tables
# --------------------------------------------------------------------------------------------


class Part(SQLModel, table=True):
    """One part: the common columns and every rating column (NULL when not given)."""

    __tablename__ = "part"
    __table_args__ = (
        Index("ix_part_category_subtype", "category", "subtype"),
    )

    id: int | None = Field(default=None, primary_key=True)
    part_number: str = Field(index=True, unique=True)
    category: str = Field(index=True)
    subtype: str | None = Field(default=None, index=True)
    description: str | None = None
    package: str | None = None
    notes: str | None = None
    status: str | None = None
    vds_max: float | None = None
    id_max: float | None = None
    id_pulse: float | None = None
    rds_on: float | None = None
    rds_on_125: float | None = None
    coss: float | None = None
    qg: float | None = None
    e_as: float | None = None
    e_ar: float | None = None
    vrrm: float | None = None
    if_avg: float | None = None
    ifsm: float | None = None
    i_frm: float | None = None
    vf: float | None = None
    vf_current: float | None = None
    trr: float | None = None
    qrr: float | None = None
    cj: float | None = None
    v_breakdown: float | None = None
    v_clamp: float | None = None
    p_max: float | None = None
    p_pulse: float | None = None
    capacitance: float | None = None
    tolerance: float | None = None
    v_rated: float | None = None
    dielectric: str | None = None
    esr: float | None = None
    esl: float | None = None
    ripple_current: float | None = None
    ripple_freq: float | None = None
    ripple_temp: float | None = None
    ripple_rise: float | None = None
    life_hours: float | None = None
    life_temp: float | None = None
    case_size: str | None = None
    resistance: float | None = None
    p_rated: float | None = None
    t_knee: float | None = None
    v_max: float | None = None
    lm: float | None = None
    turns_ratio: float | None = None
    llk: float | None = None
    isat: float | None = None
    b_sat: float | None = None
    dcr_pri: float | None = None
    dcr_sec: float | None = None
    v_isolation: float | None = None
    ctr_min: float | None = None
    ctr_max: float | None = None
    if_max: float | None = None
    vceo: float | None = None
    ic_max: float | None = None
    v_ref: float | None = None
    vka_max: float | None = None
    ika_max: float | None = None
    ika_min: float | None = None
    tj_max: float | None = None
    rth_ja: float | None = None
    t_max: float | None = None
    #: Provenance, not an exchange column (schema version 2): when the part was last written,
    #: UTC ISO 8601; NULL for parts written before version 2.  Not exported.
    updated_at: str | None = Field(default=None, max_length=32)
    #: Provenance, not an exchange column (schema version 3): :func:`part_number_key` of
    #: ``part_number``, so that imports find part-number twins by an indexed lookup.  The index
    #: is not unique: a catalog written before version 3 may hold twins.  Not exported.
    part_number_key: str | None = Field(default=None, index=True)


class CurvePoint(SQLModel, table=True):
    """One point of a part's curve; ``seq`` keeps the points in order (x strictly increasing)."""

    __tablename__ = "curve_point"
    __table_args__ = (UniqueConstraint("part_id", "curve", "seq", name="uq_curve_point"),)

    id: int | None = Field(default=None, primary_key=True)
    part_id: int = Field(foreign_key="part.id", ondelete="CASCADE", index=True)
    curve: str
    seq: int
    x: float
    y: float


class CatalogMeta(SQLModel, table=True):
    """Key/value facts about the catalog itself; ``schema_version`` is the one that matters."""

    __tablename__ = "catalog_meta"

    key: str = Field(primary_key=True)
    value: str


class CatalogMigration(SQLModel, table=True):
    """Which migrations have been applied, and when (UTC, ISO 8601)."""

    __tablename__ = "catalog_migration"

    version: int = Field(primary_key=True)
    name: str
    applied_at: str


# --------------------------------------------------------------------------------------------
# The record everyone else uses
# --------------------------------------------------------------------------------------------

Curve = tuple[tuple[float, float], ...]


@dataclass(frozen=True)
class PartRecord:
    """One catalog part as plain data: one attribute per exchange column (``None`` when empty).

    Numbers are SI floats (°C, hours, fractions).  ``curves`` maps a curve name of
    :data:`CURVES` to its points ``((x, y), ...)`` with x strictly increasing.
    """

    part_number: str
    category: str
    subtype: str | None = None
    description: str | None = None
    package: str | None = None
    notes: str | None = None
    status: str | None = None
    vds_max: float | None = None
    id_max: float | None = None
    id_pulse: float | None = None
    rds_on: float | None = None
    rds_on_125: float | None = None
    coss: float | None = None
    qg: float | None = None
    e_as: float | None = None
    e_ar: float | None = None
    vrrm: float | None = None
    if_avg: float | None = None
    ifsm: float | None = None
    i_frm: float | None = None
    vf: float | None = None
    vf_current: float | None = None
    trr: float | None = None
    qrr: float | None = None
    cj: float | None = None
    v_breakdown: float | None = None
    v_clamp: float | None = None
    p_max: float | None = None
    p_pulse: float | None = None
    capacitance: float | None = None
    tolerance: float | None = None
    v_rated: float | None = None
    dielectric: str | None = None
    esr: float | None = None
    esl: float | None = None
    ripple_current: float | None = None
    ripple_freq: float | None = None
    ripple_temp: float | None = None
    ripple_rise: float | None = None
    life_hours: float | None = None
    life_temp: float | None = None
    case_size: str | None = None
    resistance: float | None = None
    p_rated: float | None = None
    t_knee: float | None = None
    v_max: float | None = None
    lm: float | None = None
    turns_ratio: float | None = None
    llk: float | None = None
    isat: float | None = None
    b_sat: float | None = None
    dcr_pri: float | None = None
    dcr_sec: float | None = None
    v_isolation: float | None = None
    ctr_min: float | None = None
    ctr_max: float | None = None
    if_max: float | None = None
    vceo: float | None = None
    ic_max: float | None = None
    v_ref: float | None = None
    vka_max: float | None = None
    ika_max: float | None = None
    ika_min: float | None = None
    tj_max: float | None = None
    rth_ja: float | None = None
    t_max: float | None = None
    curves: dict[str, Curve] = field(default_factory=dict, hash=False)

    @property
    def approved(self) -> bool:
        """True when the part may be used and suggested (status empty or ``approved``)."""
        return self.status in (None, "approved")

    def rating(self, name: str) -> float | str | None:
        """The value of exchange column ``name`` (``None`` when the catalog has no value).

        Raises ``KeyError`` naming the closest column when ``name`` is not an exchange column.
        """
        if name not in FIELDS:
            from difflib import get_close_matches

            close = get_close_matches(name, list(FIELDS), n=1)
            hint = f"; did you mean {close[0]!r}?" if close else ""
            raise KeyError(f"{name!r} is not a catalog column{hint}")
        return getattr(self, name)

    def curve(self, name: str) -> Curve:
        """The points of curve ``name`` (empty when the part has none)."""
        return self.curves.get(name, ())

    def values(self) -> dict[str, float | str | None]:
        """All exchange columns in :data:`FIELDS` order."""
        return {name: getattr(self, name) for name in FIELDS}

    @classmethod
    def _fast(cls, values: dict, curves: dict[str, Curve] | None = None) -> PartRecord:
        """Build a record from a complete column mapping without the per-field ``__init__`` cost.

        Used by bulk reads (100,000 parts); ``values`` must hold every column of :data:`FIELDS`.
        """
        record = object.__new__(cls)
        record.__dict__.update(values)
        record.__dict__["curves"] = curves if curves is not None else {}
        return record


assert tuple(f.name for f in dc_fields(PartRecord))[:-1] == tuple(FIELDS), "PartRecord and FIELDS disagree"
