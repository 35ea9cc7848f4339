"""Derating policies: load the rules file (TOML), resolve ``extends``, select a rule for a stress.

The file format is our own and is documented, with a commented grammar, in
``docs/policy-format.md``.  In short::

    name = "my-policy"            # policy-level settings first (all optional)
    extends = "industrial"        # a shipped preset by name, or a file path relative to this file
    warn = 0.9                    # default warn band: utilisation above 0.9 of the limit is "warn"
    fail_unassessed = true        # a part that cannot be assessed fails the design
    fail_unmatched = true         # a BOM line that matched no catalog part fails the design

    [lifecycle]                   # what an obsolete or restricted catalog part does to the design
    obsolete = "fail"             # "fail" (default) or "warn"
    restricted = "fail"

    [rules.switch-voltage]        # one table per rule, keyed by its id
    category = "switch"           # + optional subtype = "...", dielectric = "..."
    parameter = "voltage"
    fraction = 0.8                # limit = 0.8 x the default rating (vds_max); or max/offset/min...
    source = "common practice"
    confidence = "common practice"

Every limit is kept in SI (°C for temperatures, hours for life, fractions for ratios).  Errors
are :class:`~partcheck.errors.PolicyError` naming the file, the line and the dotted key.
"""

from __future__ import annotations

import difflib
import re
import tomllib
from collections.abc import Iterable
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path
from typing import Any, Final

from ..catalog.models import CATEGORIES as _CATALOG_CATEGORIES
from ..catalog.models import FIELDS as _FIELDS
from ..errors import NotFoundError, PolicyError, QuantityError
from ..units import KIND_NAMES, format_quantity, parse_quantity

#: Stress parameters a rule may limit, with the unit kind of their stress and limit.
PARAMETERS: Final[dict[str, str]] = {
    "voltage": "V",
    "current_rms": "A",
    "current_peak": "A",
    "current_avg": "A",
    "power": "W",
    "temperature": "degC",
    "ripple_current": "A",
    "capacitance": "F",
    "life": "h",
    "saturation": "A",
    "flux_density": "T",
}

#: Parameters where a larger stress is better (the stress is what the part delivers and the
#: limit what the policy requires); for all others the stress must stay below the limit.
LARGER_IS_BETTER: Final = frozenset({"capacitance", "life"})

#: Part categories and their subtypes: the catalog's own list, so the two can never disagree.
CATEGORIES: Final[dict[str, tuple[str, ...]]] = _CATALOG_CATEGORIES

#: The catalog column a rule's fraction or offset applies to when the rule names none
#: (``rating = "..."`` overrides).  The pipeline reads this column of the part into
#: ``StressItem.rating``.
DEFAULT_RATINGS: Final[dict[tuple[str, str], str]] = {
    ("switch", "voltage"): "vds_max",
    ("switch", "current_rms"): "id_max",
    ("switch", "current_avg"): "id_max",
    ("switch", "current_peak"): "id_pulse",
    ("switch", "temperature"): "tj_max",
    ("diode", "voltage"): "vrrm",
    ("diode", "current_avg"): "if_avg",
    # repetitive peak forward current, not ifsm (the non-repetitive surge rating, for inrush and
    # start-up only): the rectifier carries its peak current every switching cycle
    ("diode", "current_peak"): "i_frm",
    ("diode", "temperature"): "tj_max",
    ("clamp", "power"): "p_max",
    ("clamp", "temperature"): "tj_max",
    ("capacitor", "voltage"): "v_rated",
    ("capacitor", "ripple_current"): "ripple_current",
    ("capacitor", "current_rms"): "ripple_current",
    ("capacitor", "capacitance"): "capacitance",
    ("capacitor", "life"): "life_hours",
    ("capacitor", "temperature"): "t_max",
    ("resistor", "power"): "p_rated",
    ("resistor", "voltage"): "v_max",
    ("resistor", "temperature"): "t_max",
    ("magnetic", "saturation"): "isat",
    ("magnetic", "flux_density"): "b_sat",
    ("magnetic", "voltage"): "v_isolation",
    ("magnetic", "temperature"): "t_max",
    ("optocoupler", "current_avg"): "if_max",
    ("optocoupler", "voltage"): "vceo",
    ("optocoupler", "temperature"): "tj_max",
    ("reference", "current_avg"): "ika_max",
    ("reference", "voltage"): "vka_max",
    ("reference", "power"): "p_max",
    ("reference", "temperature"): "tj_max",
}

#: Confidence markers a rule may carry.
CONFIDENCES: Final = (
    "read",
    "from memory (high)",
    "from memory (medium)",
    "from memory (low)",
    "common practice",
)

#: The preset used when neither the command line nor the design file names a policy.
DEFAULT_POLICY: Final = "industrial"

#: Catalog ``status`` values the ``[lifecycle]`` table rules on (``approved`` or empty never
#: makes a finding), and what each may do to the design.
LIFECYCLE_STATUSES: Final = ("obsolete", "restricted")
LIFECYCLE_ACTIONS: Final = ("fail", "warn")
#: ``[lifecycle]`` when no policy in the ``extends`` chain sets it.
DEFAULT_LIFECYCLE: Final[dict[str, str]] = {"obsolete": "fail", "restricted": "fail"}

POLICY_KEYS: Final = ("name", "description", "extends", "warn", "fail_unassessed", "fail_unmatched", "lifecycle",
                      "rules")
SELECTOR_KEYS: Final = ("category", "subtype", "dielectric", "parameter")
#: Keys that set the limit.  An override that gives any of them replaces all of the parent's.
LIMIT_KEYS: Final = ("fraction", "max", "offset", "derate_above", "min", "min_fraction",
                     "design_requirement", "default_requirement", "min_rating", "rating")
RULE_KEYS: Final = SELECTOR_KEYS + LIMIT_KEYS + ("warn", "source", "confidence", "note", "enabled")

_UPPER_LIMIT_KEYS: Final = ("fraction", "max", "offset", "derate_above", "min_rating")
_LOWER_LIMIT_KEYS: Final = ("min", "min_fraction", "design_requirement", "default_requirement")

_PRESET_DIR: Final = "presets"


@dataclass(frozen=True)
class Rule:
    """One derating rule: which stress of which parts, the limit, and where the numbers come from.

    Upper-bound parameters (everything but ``capacitance`` and ``life``): the limit is the
    smallest of ``fraction × rating`` (times the linear derating factor above ``derate_above``),
    ``rating − offset`` and ``max``.  Lower-bound parameters: the limit is the largest of
    ``min_fraction × rating``, ``min`` and (with ``design_requirement``) the design's own
    requirement, or ``default_requirement`` when the design states none (see
    :meth:`requirement`).  ``min_rating`` names a catalog column the stress must also stay at or above
    (a shunt reference's minimum cathode current).

    Temperatures are in °C, ``offset`` in K, life in hours, everything else SI.
    ``derate_above`` is a temperature in °C, or ``"part"`` for the part's own knee (``t_knee``).
    """

    id: str
    category: str
    parameter: str
    source: str
    confidence: str
    subtype: str | None = None
    dielectric: str | None = None
    rating: str | None = None
    fraction: float | None = None
    max: float | None = None
    offset: float | None = None
    derate_above: float | str | None = None
    min: float | None = None
    min_fraction: float | None = None
    design_requirement: bool = False
    default_requirement: float | None = None
    min_rating: str | None = None
    warn: float | None = None
    note: str = ""
    origin: str = ""  # the file (or preset) that last set this rule

    @property
    def kind(self) -> str:
        """Unit kind of the stress and the limit (``"V"``, ``"degC"``, ``"h"`` ...)."""
        return PARAMETERS[self.parameter]

    @property
    def larger_is_better(self) -> bool:
        return self.parameter in LARGER_IS_BETTER

    @property
    def specificity(self) -> int:
        """3 category+subtype+dielectric, 2 category+subtype, 1 category+dielectric, 0 category."""
        return (2 if self.subtype else 0) + (1 if self.dielectric else 0)

    @property
    def rating_name(self) -> str | None:
        """The catalog column the fraction/offset applies to (``None`` when none is needed)."""
        if self.rating:
            return self.rating
        if self.fraction is None and self.offset is None and self.min_fraction is None:
            return None
        return DEFAULT_RATINGS.get((self.category, self.parameter))

    def requirement(self, design_required: float | None) -> float | None:
        """The required life [h] this rule takes from the design, or ``None``.

        With ``design_requirement`` the design's own figure (``[requirements] life_hours``,
        ``design_required``) when it states one, else ``default_requirement`` (``None`` when the
        rule has none).  Without ``design_requirement``: ``None``.  The limit of a life rule is the
        largest of this, ``min`` and ``min_fraction × rating``.
        """
        if not self.design_requirement:
            return None
        return design_required if design_required is not None else self.default_requirement

    def selector(self) -> str:
        """``capacitor/ceramic/X7R`` style text of what the rule applies to."""
        return "/".join(p for p in (self.category, self.subtype, self.dielectric) if p)

    def matches(self, category: str, subtype: str | None, dielectric: str | None, parameter: str) -> bool:
        if self.category != category or self.parameter != parameter:
            return False
        if self.subtype is not None and self.subtype != (subtype or "").lower():
            return False
        if self.dielectric is not None and (dielectric or "").upper() != self.dielectric:
            return False
        return True

    def describe(self) -> str:
        """The limit in words: ``≤ 0.8 × vds_max``, ``≤ tj_max − 25 K``, ``≥ 60 000 h``."""
        kind = self.kind
        rating = self.rating_name or "rating"
        parts: list[str] = []
        if self.larger_is_better:
            if self.min_fraction is not None:
                parts.append(f"≥ {self.min_fraction:g} × {rating}")
            if self.min is not None:
                parts.append(f"≥ {format_quantity(self.min, kind)}")
            if self.design_requirement:
                text = "≥ the design's requirement"
                if self.default_requirement is not None:
                    text += f", else ≥ {format_quantity(self.default_requirement, kind)}"
                parts.append(text)
            return " and ".join(parts)
        if self.fraction is not None:
            text = f"≤ {self.fraction:g} × {rating}"
            if self.derate_above == "part":
                text += ", derated linearly above the part's knee (t_knee) to zero at its maximum temperature"
            elif self.derate_above is not None:
                text += (f", derated linearly above {format_quantity(self.derate_above, 'degC')} "
                         "to zero at the part's maximum temperature")
            parts.append(text)
        if self.offset is not None:
            parts.append(f"≤ {rating} − {format_quantity(self.offset, 'K')}" if self.offset else f"≤ {rating}")
        if self.max is not None:
            parts.append(f"≤ {format_quantity(self.max, kind)}")
        text = " and ".join(parts)
        if self.min_rating:
            text += f"; ≥ {self.min_rating}"
        return text

    def to_dict(self) -> dict[str, Any]:
        data: dict[str, Any] = {"id": self.id, "category": self.category, "subtype": self.subtype,
                                "dielectric": self.dielectric, "parameter": self.parameter,
                                "rating": self.rating_name}
        for key in ("fraction", "max", "offset", "derate_above", "min", "min_fraction", "min_rating", "warn"):
            value = getattr(self, key)
            if value is not None:
                data[key] = value
        if self.design_requirement:
            data["design_requirement"] = True
        if self.default_requirement is not None:
            data["default_requirement"] = self.default_requirement
        data.update(limit=self.describe(), unit=self.kind, source=self.source, confidence=self.confidence,
                    note=self.note, origin=self.origin)
        return data


@dataclass(frozen=True)
class Policy:
    """The effective policy after ``extends``: settings and rules in file order."""

    name: str
    description: str = ""
    rules: tuple[Rule, ...] = ()
    warn: float | None = None
    fail_unassessed: bool = True
    fail_unmatched: bool = True
    #: ``[lifecycle]``: catalog status (``obsolete``, ``restricted``) → ``"fail"`` or ``"warn"``;
    #: both keys always present.
    lifecycle: dict[str, str] = field(default_factory=lambda: dict(DEFAULT_LIFECYCLE), hash=False)
    origin: str = ""  # the file or "preset NAME" this policy was read from
    chain: tuple[str, ...] = field(default=())  # this file first, then what it extends, ...

    def rule(self, rule_id: str) -> Rule:
        """The rule with id ``rule_id`` (``NotFoundError`` naming the closest id otherwise)."""
        for rule in self.rules:
            if rule.id == rule_id:
                return rule
        raise NotFoundError(f"no rule {rule_id!r} in policy {self.name!r}{_suggest(rule_id, [r.id for r in self.rules])}")

    def rule_for(self, category: str, parameter: str, subtype: str | None = None,
                 dielectric: str | None = None) -> Rule | None:
        """The most specific rule for this stress, or ``None`` when the policy does not limit it.

        Precedence: category+subtype+dielectric > category+subtype > category+dielectric >
        category.  Loading guarantees at most one rule per selector.
        """
        best: Rule | None = None
        for rule in self.rules:
            if rule.matches(category, subtype, dielectric, parameter):
                if best is None or rule.specificity > best.specificity:
                    best = rule
        return best

    def lifecycle_for(self, status: str | None) -> str | None:
        """``"fail"`` or ``"warn"`` for a part whose catalog status is ``status``; ``None`` for
        an approved part (``approved``, empty or ``None``).  Compared case-insensitively."""
        return self.lifecycle.get((status or "").strip().lower())

    def warn_for(self, rule: Rule) -> float | None:
        """The warn band of ``rule`` (its own, else the policy default; ``None`` for no band)."""
        return rule.warn if rule.warn is not None else self.warn

    def to_dict(self) -> dict[str, Any]:
        return {"name": self.name, "description": self.description, "origin": self.origin,
                "extends": list(self.chain[1:]), "warn": self.warn, "fail_unassessed": self.fail_unassessed,
                "fail_unmatched": self.fail_unmatched, "lifecycle": dict(self.lifecycle),
                "rules": [rule.to_dict() for rule in self.rules]}


# --------------------------------------------------------------------------------------------
# Loading
# --------------------------------------------------------------------------------------------


def list_presets() -> list[str]:
    """Names of the shipped presets, sorted."""
    folder = resources.files(__package__).joinpath(_PRESET_DIR)
    return sorted(p.name[: -len(".toml")] for p in folder.iterdir() if p.name.endswith(".toml"))


def _preset_text(name: str) -> tuple[str, str]:
    entry = resources.files(__package__).joinpath(_PRESET_DIR, f"{name}.toml")
    if not entry.is_file():
        raise NotFoundError(f"no shipped policy preset {name!r}{_suggest(name, list_presets())}; "
                            f"presets: {', '.join(list_presets())} (or give a path to a .toml file)")
    return entry.read_text(encoding="utf-8"), str(entry)


def load_preset(name: str) -> Policy:
    """The shipped preset ``name`` (see :func:`list_presets`)."""
    text, path = _preset_text(name)
    return _load(text, file=path, base_dir=Path(path).parent, chain=(f"preset {name}",))


def load_policy(spec: str | Path | None = None) -> Policy:
    """A preset by name, or a policy file by path; ``None`` gives :data:`DEFAULT_POLICY`.

    A ``spec`` that names an existing file, contains a path separator or ends in ``.toml`` is a
    file; anything else is a preset name.
    """
    if spec is None:
        return load_preset(DEFAULT_POLICY)
    if _looks_like_path(str(spec)):
        return load_policy_file(spec)
    return load_preset(str(spec))


def load_policy_file(path: str | Path) -> Policy:
    """Read and validate the policy file ``path`` (resolving ``extends``)."""
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise PolicyError("no such policy file", file=path) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise PolicyError(f"cannot read the policy file ({exc.__class__.__name__}: {exc})", file=path) from None
    return _load(text, file=str(path), base_dir=path.parent, chain=(str(path.resolve()),))


def loads_policy(text: str, *, file: str = "<policy>", base_dir: str | Path = ".") -> Policy:
    """Parse policy text (``extends`` paths are relative to ``base_dir``)."""
    return _load(text, file=file, base_dir=Path(base_dir), chain=(file,))


def _looks_like_path(spec: str) -> bool:
    return spec.endswith(".toml") or "/" in spec or "\\" in spec or Path(spec).is_file()


def _load(text: str, *, file: str, base_dir: Path, chain: tuple[str, ...]) -> Policy:
    src = _Source(text, file, label=chain[0] if chain[0].startswith("preset ") else file)
    if "\x00" in text:
        raise PolicyError("contains NUL characters: UTF-16 text without a byte-order mark, or a binary file; "
                          "save the policy file as UTF-8 text", file=file)
    try:
        doc = tomllib.loads(text)
    except RecursionError:  # tomllib recurses once per nested array or inline table
        raise PolicyError("not valid TOML for a policy file: arrays or inline tables nested too deeply",
                          file=file) from None
    except tomllib.TOMLDecodeError as exc:
        m = re.search(r"\(at line (\d+), column (\d+)\)", str(exc))
        line = int(m.group(1)) if m else None
        msg = re.sub(r"\s*\(at line \d+, column \d+\)", "", str(exc)) if m else str(exc)
        raise PolicyError(f"not valid TOML: {msg}", file=file, line=line) from None
    except ValueError as exc:  # an integer of more than 4300 digits ("Exceeds the limit ...")
        raise PolicyError(f"not valid TOML for a policy file: {exc}", file=file) from None

    for key in doc:
        if key not in POLICY_KEYS:
            raise src.error(f"unknown policy setting {key!r}{_suggest(key, POLICY_KEYS)}; "
                            f"expected one of {', '.join(POLICY_KEYS)}", key)

    parent: Policy | None = None
    if "extends" in doc:
        parent = _load_parent(doc["extends"], src, base_dir, chain)

    name = _string(doc, "name", src, default=Path(file).stem)
    description = _string(doc, "description", src, default=parent.description if parent else "")
    warn = parent.warn if parent else None
    if "warn" in doc:
        warn = _warn_value(doc["warn"], src, "warn")
    fail_unassessed = _bool(doc, "fail_unassessed", src, parent.fail_unassessed if parent else True)
    fail_unmatched = _bool(doc, "fail_unmatched", src, parent.fail_unmatched if parent else True)
    lifecycle = _lifecycle(doc, src, parent.lifecycle if parent else DEFAULT_LIFECYCLE)

    rules: dict[str, Rule] = {r.id: r for r in parent.rules} if parent else {}
    raw_rules = doc.get("rules", {})
    if not isinstance(raw_rules, dict):
        raise src.error("'rules' must be a set of tables: [rules.<id>]", "rules")
    for rule_id, table in raw_rules.items():
        built = _build_rule(rule_id, table, rules.get(rule_id), src)
        if built is None:
            rules.pop(rule_id, None)
        else:
            rules[rule_id] = built

    _check_unique_selectors(list(rules.values()), set(raw_rules), src)
    return Policy(name=name, description=description, rules=tuple(rules.values()), warn=warn,
                  fail_unassessed=fail_unassessed, fail_unmatched=fail_unmatched, lifecycle=lifecycle,
                  origin=src.label,
                  chain=parent.chain if parent else chain)


def _load_parent(spec: Any, src: _Source, base_dir: Path, chain: tuple[str, ...]) -> Policy:
    if not isinstance(spec, str) or not spec.strip():
        raise src.error("'extends' must be a preset name or a path to a policy file, as a string", "extends")
    if _looks_like_path(spec) or (base_dir / spec).is_file():
        path = (base_dir / spec) if not Path(spec).is_absolute() else Path(spec)
        ident = str(path.resolve())
        if ident in chain:
            raise src.error(f"cyclic extends: {' → '.join(_short(c) for c in chain + (ident,))}", "extends")
        try:
            text = path.read_text(encoding="utf-8")
        except FileNotFoundError:
            raise src.error(f"extends {spec!r}: no such policy file ({path})", "extends") from None
        return _load(text, file=str(path), base_dir=path.parent, chain=chain + (ident,))
    ident = f"preset {spec}"
    if ident in chain:
        raise src.error(f"cyclic extends: {' → '.join(_short(c) for c in chain + (ident,))}", "extends")
    if spec not in list_presets():
        raise src.error(f"extends {spec!r}: no such preset{_suggest(spec, list_presets())}; presets: "
                        f"{', '.join(list_presets())} (a file path needs '/' or '.toml')", "extends")
    text, path = _preset_text(spec)
    return _load(text, file=path, base_dir=Path(path).parent, chain=chain + (ident,))


def _short(ident: str) -> str:
    return ident if ident.startswith("preset ") else Path(ident).name


def _build_rule(rule_id: str, table: Any, inherited: Rule | None, src: _Source) -> Rule | None:
    where = f"rules.{rule_id}"
    if not isinstance(table, dict):
        raise src.error(f"rule {rule_id!r} must be a table: [rules.{rule_id}]", where)
    if not re.fullmatch(r"[A-Za-z0-9_.-]+", rule_id):
        raise src.error(f"rule id {rule_id!r} may only hold letters, digits, '-', '_' and '.'", where)
    for key in table:
        if key not in RULE_KEYS:
            raise src.error(f"unknown rule key {key!r}{_suggest(key, RULE_KEYS)}; expected one of "
                            f"{', '.join(RULE_KEYS)}", f"{where}.{key}")
    if "enabled" in table:
        if not isinstance(table["enabled"], bool):
            raise src.error("'enabled' must be true or false", f"{where}.enabled")
        if not table["enabled"]:
            if inherited is None and not ({"category", "parameter"} <= set(table)):
                raise src.error(f"'enabled = false' but no inherited rule {rule_id!r} to switch off", f"{where}.enabled")
            return None

    values: dict[str, Any] = {}
    # selectors: new rules need them, overrides may restate but not change them
    for key in SELECTOR_KEYS:
        if key in table:
            values[key] = _selector_value(key, table, values, src, where)
            if inherited is not None and getattr(inherited, key) != values[key]:
                raise src.error(f"rule {rule_id!r} is inherited with {key} = {getattr(inherited, key)!r}; "
                                f"an override cannot change it (give the rule a new id)", f"{where}.{key}")
        elif inherited is not None:
            values[key] = getattr(inherited, key)
        elif key in ("category", "parameter"):
            raise src.error(f"rule {rule_id!r} needs {key!r} (one of "
                            f"{', '.join(CATEGORIES if key == 'category' else PARAMETERS)})", where)
        else:
            values[key] = None
    category, parameter = values["category"], values["parameter"]
    kind = PARAMETERS[parameter]
    lower = parameter in LARGER_IS_BETTER

    sets_limit = any(k in table for k in LIMIT_KEYS)
    if inherited is not None and not sets_limit:
        for key in LIMIT_KEYS:
            values[key] = getattr(inherited, key)
    else:
        allowed = _LOWER_LIMIT_KEYS if lower else _UPPER_LIMIT_KEYS
        for key in LIMIT_KEYS:
            if key in table and key != "rating" and key not in allowed:
                hint = (f"a {parameter} rule sets a minimum: use {' / '.join(_LOWER_LIMIT_KEYS)}" if lower
                        else f"a {parameter} rule sets a maximum: use {' / '.join(_UPPER_LIMIT_KEYS)}")
                raise src.error(f"{key!r} does not apply here; {hint}", f"{where}.{key}")
        values["fraction"] = _fraction(table, "fraction", src, where)
        values["min_fraction"] = _fraction(table, "min_fraction", src, where)
        values["max"] = _quantity(table, "max", kind, src, where)
        values["min"] = _quantity(table, "min", kind, src, where)
        values["offset"] = _quantity(table, "offset", "K", src, where)
        if values["offset"] is not None and values["offset"] < 0:
            raise src.error(f"offset must be ≥ 0 K (it is subtracted from the rating), got {table['offset']!r}",
                            f"{where}.offset")
        values["derate_above"] = None
        if "derate_above" in table:
            if table["derate_above"] == "part":
                values["derate_above"] = "part"
            else:
                values["derate_above"] = _quantity(table, "derate_above", "degC", src, where)
            if values["fraction"] is None:
                raise src.error("'derate_above' needs a 'fraction' to derate", f"{where}.derate_above")
        if parameter == "temperature" and values["fraction"] is not None:
            raise src.error("a temperature limit is not a fraction of °C: use offset = \"25 K\" (rating minus "
                            "an offset) or max = \"125 degC\"", f"{where}.fraction")
        if values["offset"] is not None and parameter != "temperature":
            raise src.error("'offset' applies to temperature rules only", f"{where}.offset")
        values["design_requirement"] = _bool(table, "design_requirement", src, False, f"{where}.design_requirement")
        if values["design_requirement"] and parameter != "life":
            raise src.error("'design_requirement' applies to life rules only", f"{where}.design_requirement")
        values["default_requirement"] = _quantity(table, "default_requirement", "h", src, where)
        if values["default_requirement"] is not None:
            dotted = f"{where}.default_requirement"
            if parameter != "life":
                raise src.error("'default_requirement' applies to life rules only", dotted)
            if values["default_requirement"] <= 0:
                raise src.error(f"default_requirement must be a life above 0 h, got {table['default_requirement']!r}",
                                dotted)
            if not values["design_requirement"]:
                raise src.error("'default_requirement' is the life required when the design states none, so it "
                                "needs design_requirement = true; for a fixed minimum whatever the design says, "
                                "use min = \"...\"", dotted)
        values["rating"] = _string(table, "rating", src, None, f"{where}.rating")
        values["min_rating"] = _string(table, "min_rating", src, None, f"{where}.min_rating")
        for key in ("rating", "min_rating"):
            if values[key] is not None:
                _check_column(key, values[key], category, parameter, src, f"{where}.{key}")
        if values["rating"] is not None:
            uses_rating = (any(values[k] is not None for k in ("fraction", "offset", "min_fraction"))
                           or (not lower and values["max"] is None and values["min_rating"] is not None))
            if not uses_rating:
                uses = "min_fraction" if lower else "fraction or offset"
                raise src.error(f"rating {values['rating']!r} is the column a {uses} applies to, and this rule "
                                f"gives none; drop 'rating' or give {uses}", f"{where}.rating")
        # "is not": an offset of 0 K is a limit (the rating itself), though 0.0 == False
        if not any(values[k] is not None and values[k] is not False
                   for k in ("fraction", "max", "offset", "min", "min_fraction", "design_requirement", "min_rating")):
            expected = ("min_fraction, min or design_requirement" if lower
                        else "fraction, max, offset or min_rating")
            raise src.error(f"rule {rule_id!r} sets no limit; give {expected}", where)
        needs_rating = any(values[k] is not None for k in ("fraction", "offset", "min_fraction"))
        if needs_rating and values["rating"] is None and (category, parameter) not in DEFAULT_RATINGS:
            raise src.error(f"no default rating for {category} {parameter}; name the catalog column with "
                            f"rating = \"...\"", where)
        for key in ("source", "confidence"):
            if key not in table:
                raise src.error(f"rule {rule_id!r} sets a limit but no {key!r}; every number says where it comes "
                                f"from (source = document, table or section; confidence = one of "
                                f"{', '.join(CONFIDENCES)})", where)

    values["warn"] = inherited.warn if inherited is not None else None
    if "warn" in table:
        values["warn"] = _warn_value(table["warn"], src, f"{where}.warn")
    values["source"] = _string(table, "source", src, inherited.source if inherited else None, f"{where}.source")
    values["confidence"] = _string(table, "confidence", src, inherited.confidence if inherited else None,
                                   f"{where}.confidence")
    if values["confidence"] not in CONFIDENCES:
        raise src.error(f"confidence {values['confidence']!r} is not one of: {', '.join(CONFIDENCES)}"
                        f"{_suggest(values['confidence'], CONFIDENCES)}", f"{where}.confidence")
    if not values["source"] or not values["source"].strip():
        raise src.error("'source' must name the document, table or section (or 'common practice')", f"{where}.source")
    values["note"] = _string(table, "note", src, inherited.note if inherited else "", f"{where}.note")
    return Rule(id=rule_id, origin=src.label, **values)


def _check_unique_selectors(rules: list[Rule], local_ids: set[str], src: _Source) -> None:
    seen: dict[tuple, Rule] = {}
    for rule in rules:
        sel = (rule.category, rule.subtype, rule.dielectric, rule.parameter)
        if sel in seen:
            other = seen[sel]
            culprit = rule if rule.id in local_ids else other
            kept = other if culprit is rule else rule
            raise src.error(f"rules {kept.id!r} and {culprit.id!r} both apply to {rule.selector()} {rule.parameter}; "
                            f"override {kept.id!r} by its id instead", f"rules.{culprit.id}")
        seen[sel] = rule


# --------------------------------------------------------------------------------------------
# Value checks
# --------------------------------------------------------------------------------------------


def _selector_value(key: str, table: dict, values: dict, src: _Source, where: str) -> str:
    value = table[key]
    dotted = f"{where}.{key}"
    if not isinstance(value, str) or not value.strip():
        raise src.error(f"{key!r} must be a string", dotted)
    if key == "category":
        if value not in CATEGORIES:
            raise src.error(f"unknown category {value!r}{_suggest(value, CATEGORIES)}; expected one of "
                            f"{', '.join(CATEGORIES)}", dotted)
    elif key == "parameter":
        if value not in PARAMETERS:
            raise src.error(f"unknown parameter {value!r}{_suggest(value, PARAMETERS)}; expected one of "
                            f"{', '.join(PARAMETERS)}", dotted)
    elif key == "subtype":
        category = table.get("category", values.get("category"))
        subtypes = CATEGORIES.get(category, ())
        if value not in subtypes:
            raise src.error(f"unknown {category} subtype {value!r}{_suggest(value, subtypes)}; expected one of "
                            f"{', '.join(subtypes)}", dotted)
    elif key == "dielectric":
        if table.get("category", values.get("category")) != "capacitor":
            raise src.error("'dielectric' applies to capacitors only", dotted)
        if not re.fullmatch(r"[A-Za-z0-9]{2,6}", value):
            raise src.error(f"dielectric {value!r} is not an EIA code such as X7R or C0G", dotted)
        return value.upper()
    return value


def _check_column(key: str, column: str, category: str, parameter: str, src: _Source, dotted: str) -> None:
    """``rating`` / ``min_rating`` must name a numeric catalog column of the rule's category
    whose unit kind is the parameter's (``catalog.models.FIELDS``)."""
    kind = PARAMETERS[parameter]
    wanted = KIND_NAMES.get(kind, kind)
    fitting = [n for n, f in _FIELDS.items() if not f.text and category in f.categories and f.kind == kind]
    default = DEFAULT_RATINGS.get((category, parameter))
    if default in fitting:
        fitting.remove(default)
        fitting.insert(0, default)
    such_as = (f"such as {fitting[0]}" if fitting
               else f"(the catalog has no {category} column of that kind)")
    spec = _FIELDS.get(column)
    if spec is None or spec.text:
        if spec is None:
            numeric = [n for n, f in _FIELDS.items() if not f.text]
            hint = _suggest(column, fitting) or _suggest(column, numeric)
            what = f"{key} names an unknown catalog column {column!r}{hint}"
        else:
            what = f"{key} {column!r} is a text column of the catalog, not a rating"
        raise src.error(f"{what}; a {category} {parameter} rule needs {wanted} column {such_as}", dotted)
    if category not in spec.categories:
        raise src.error(f"{key} {column!r} is a column of {', '.join(spec.categories)} parts, not of {category} "
                        f"parts; a {category} {parameter} rule needs {wanted} column {such_as}", dotted)
    if spec.kind != kind:
        raise src.error(f"{key} {column!r} is {KIND_NAMES.get(spec.kind, spec.kind)} column; a {parameter} rule "
                        f"needs {wanted} column {such_as}", dotted)


def _lifecycle(doc: dict, src: _Source, inherited: dict[str, str]) -> dict[str, str]:
    """The ``[lifecycle]`` table over the inherited settings (both keys always present)."""
    result = dict(DEFAULT_LIFECYCLE)
    result.update(inherited)
    if "lifecycle" not in doc:
        return result
    table = doc["lifecycle"]
    if not isinstance(table, dict):
        raise src.error("'lifecycle' must be a table: [lifecycle] with obsolete = \"fail\" | \"warn\" and "
                        "restricted = \"fail\" | \"warn\"", "lifecycle")
    for key, value in table.items():
        dotted = f"lifecycle.{key}"
        if key not in LIFECYCLE_STATUSES:
            raise src.error(f"unknown lifecycle status {key!r}{_suggest(key, LIFECYCLE_STATUSES)}; expected one of "
                            f"{', '.join(LIFECYCLE_STATUSES)} (an approved part never makes a lifecycle finding)",
                            dotted)
        if value not in LIFECYCLE_ACTIONS:
            raise src.error(f"lifecycle {key} must be \"fail\" or \"warn\", got {value!r}"
                            f"{_suggest(value, LIFECYCLE_ACTIONS) if isinstance(value, str) else ''}", dotted)
        result[key] = value
    return result


def _fraction(table: dict, key: str, src: _Source, where: str) -> float | None:
    if key not in table:
        return None
    raw = table[key]
    value = _number(raw, src, f"{where}.{key}", "a fraction such as 0.8 or \"80 %\"")
    if not 0.0 < value <= 1.0:
        raise src.error(f"{key} must be > 0 and ≤ 1 (a fraction of the rating), got {raw!r}", f"{where}.{key}")
    return value


def _warn_value(raw: Any, src: _Source, dotted: str) -> float:
    value = _number(raw, src, dotted, "a fraction of the limit such as 0.9")
    if not 0.0 < value < 1.0:
        raise src.error(f"warn must be > 0 and < 1 (a fraction of the limit), got {raw!r}", dotted)
    return value


def _number(raw: Any, src: _Source, dotted: str, expected: str) -> float:
    if isinstance(raw, bool):
        raise src.error(f"expected {expected}, got {raw!r}", dotted)
    if isinstance(raw, (int, float)):
        try:
            return float(raw)
        except OverflowError:  # TOML integers have no size limit
            raise src.error(f"expected {expected}, got an integer too large to be a number", dotted) from None
    if isinstance(raw, str):
        try:
            return parse_quantity(raw, "%") if "%" in raw else parse_quantity(raw, None)
        except QuantityError as exc:
            raise src.error(f"{exc.message}; expected {expected}", dotted) from None
    raise src.error(f"expected {expected}, got {raw!r}", dotted)


def _quantity(table: dict, key: str, kind: str, src: _Source, where: str) -> float | None:
    if key not in table:
        return None
    raw = table[key]
    dotted = f"{where}.{key}"
    example = {"degC": "\"125 degC\"", "K": "\"25 K\"", "h": "\"60000 h\"", "V": "\"40 V\"", "A": "\"2 A\"",
               "W": "\"0.25 W\"", "F": "\"10 uF\"", "T": "\"0.3 T\""}.get(kind, "a quantity with its unit")
    if not isinstance(raw, str):
        raise src.error(f"{key} must be a quantity with its unit as a string, such as {example}; got {raw!r}", dotted)
    try:
        return parse_quantity(raw, kind)
    except QuantityError as exc:
        raise src.error(f"{exc.message}; {key} expects such as {example}", dotted) from None


def _string(table: dict, key: str, src: _Source, default: Any, dotted: str | None = None) -> Any:
    if key not in table:
        return default
    value = table[key]
    if not isinstance(value, str):
        raise src.error(f"{key!r} must be a string, got {value!r}", dotted or key)
    return value


def _bool(table: dict, key: str, src: _Source, default: bool, dotted: str | None = None) -> bool:
    if key not in table:
        return default
    value = table[key]
    if not isinstance(value, bool):
        raise src.error(f"{key!r} must be true or false, got {value!r}", dotted or key)
    return value


def _suggest(word: str, choices: Iterable[str]) -> str:
    choices = list(choices)
    close = difflib.get_close_matches(str(word), choices, n=1, cutoff=0.6)
    if not close:
        close = [c for c in choices if str(word) and c.startswith(str(word))][:1]
    return f" (did you mean {close[0]!r}?)" if close else ""


class _Source:
    """The policy text, to find the line of a table or key (tomllib gives no positions)."""

    _HEADER = re.compile(r"^\s*\[\s*([^\[\]]+?)\s*\]\s*(#.*)?$")

    def __init__(self, text: str, file: str, label: str | None = None) -> None:
        self.file = file
        self.label = label or file
        self.lines = text.splitlines()

    @staticmethod
    def _norm(header: str) -> str:
        return ".".join(part.strip().strip("\"'") for part in header.split("."))

    def line_of(self, dotted: str | None) -> int | None:
        """1-based line of ``dotted`` (``rules.switch-voltage.fraction``, ``warn``), or None."""
        if not dotted:
            return None
        parts = dotted.split(".")
        # top-level key: before the first table header
        if len(parts) == 1:
            for no, line in enumerate(self.lines, 1):
                if self._HEADER.match(line):
                    break
                if re.match(rf"^\s*[\"']?{re.escape(parts[0])}[\"']?\s*=", line):
                    return no
            return None
        if parts[0] != "rules":  # a policy-level table: [lifecycle] obsolete = ...
            return self._line_in_table(parts[0], parts[1])
        table, key = (".".join(parts[:2]), parts[2]) if len(parts) > 2 else (dotted, None)
        start = self._header_line(table)
        if start is None:
            # dotted keys or inline tables: the first line naming the id
            rule_id = parts[1]
            for no, line in enumerate(self.lines, 1):
                if re.search(rf"(^|[.\s\"']){re.escape(rule_id)}([\"'.\s=]|$)", line):
                    return no
            return None
        if key is None:
            return start
        return self._key_below(start, key) or start

    def _header_line(self, table: str) -> int | None:
        """1-based line of the header ``[table]``, or None."""
        for no, line in enumerate(self.lines, 1):
            m = self._HEADER.match(line)
            if m and self._norm(m.group(1)) == table:
                return no
        return None

    def _key_below(self, start: int, key: str) -> int | None:
        """1-based line of ``key = ...`` in the table whose header is on line ``start``, or None."""
        for no in range(start + 1, len(self.lines) + 1):
            line = self.lines[no - 1]
            if self._HEADER.match(line):
                break
            if re.match(rf"^\s*[\"']?{re.escape(key)}[\"']?\s*=", line):
                return no
        return None

    def _line_in_table(self, table: str, key: str) -> int | None:
        """Line of ``key`` in the top-level table ``[table]`` (or of ``table.key = ...`` / an inline
        ``table = {...}`` before the first header)."""
        start = self._header_line(table)
        if start is not None:
            return self._key_below(start, key) or start
        for no, line in enumerate(self.lines, 1):
            if self._HEADER.match(line):
                break
            if re.match(rf"^\s*[\"']?{re.escape(table)}[\"']?\s*(\.\s*[\"']?{re.escape(key)}[\"']?\s*)?=", line):
                return no
        return None

    def error(self, message: str, dotted: str | None) -> PolicyError:
        return PolicyError(message, file=self.file, line=self.line_of(dotted), key=dotted)


def effective_rules_table(policy: Policy) -> list[dict[str, Any]]:
    """Rows for ``partcheck policy show``: id, applies to, parameter, limit, warn, source, confidence."""
    rows = []
    for rule in policy.rules:
        warn = policy.warn_for(rule)
        rows.append({"id": rule.id, "applies_to": rule.selector(), "parameter": rule.parameter,
                     "limit": rule.describe(), "warn": f"{warn:g}" if warn is not None else "—",
                     "source": rule.source, "confidence": rule.confidence, "note": rule.note})
    return rows


__all__ = [
    "CATEGORIES", "CONFIDENCES", "DEFAULT_LIFECYCLE", "DEFAULT_POLICY", "DEFAULT_RATINGS", "LARGER_IS_BETTER",
    "LIFECYCLE_ACTIONS", "LIFECYCLE_STATUSES", "PARAMETERS", "POLICY_KEYS", "RULE_KEYS", "Policy", "Rule",
    "effective_rules_table", "list_presets", "load_policy", "load_policy_file", "load_preset", "loads_policy",
]
