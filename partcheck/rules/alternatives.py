"""What to order instead: approved catalog parts that would pass where a fitted part fails.

:func:`rank_alternatives` filters the candidates (same category and subtype, approved,
compatible value, same or higher ratings), asks the caller to re-run the part-level stresses
and the rules for each survivor (``evaluate_candidate``: a different ESR changes a capacitor's
share of the bank's ripple current, a different RDS(on) its junction temperature), keeps those
whose findings all pass or warn, and ranks them by their smallest margin, largest first.

Parts are duck-typed: any object with the :class:`~partcheck.catalog.models.PartRecord`
attribute names works (``part_number``, ``category``, ``subtype``, ``status``, ``package``,
``capacitance``, ``tolerance``, ``resistance``, ``lm`` and the rating columns).
"""

from __future__ import annotations

from collections.abc import Callable, Iterable
from dataclasses import dataclass, field
from typing import Any, Final

from .evaluate import Finding

#: Rating columns that must be the same or higher on a candidate, per category (a column either
#: part leaves empty is not compared).  The policy's rules decide the rest.
HIGHER_RATINGS: Final[dict[str, tuple[str, ...]]] = {
    "switch": ("vds_max", "id_max", "tj_max"),
    "diode": ("vrrm", "if_avg", "tj_max"),
    "clamp": ("p_max", "p_pulse", "tj_max"),
    "capacitor": ("v_rated", "ripple_current", "life_hours", "t_max"),
    "resistor": ("p_rated", "v_max", "t_max"),
    "magnetic": ("isat", "v_isolation", "t_max"),
    "optocoupler": ("if_max", "vceo", "v_isolation", "tj_max"),
    "reference": ("vka_max", "ika_max", "tj_max"),
}

#: Value columns that must agree within the failing part's tolerance, per category.
VALUE_COLUMNS: Final[dict[str, str]] = {"capacitor": "capacitance", "resistor": "resistance", "magnetic": "lm"}

#: Tolerance assumed when the failing part's record gives none: ±20 % for capacitors and
#: magnetics, ±1 % for resistors (common practice: the usual default grades).
DEFAULT_TOLERANCE: Final[dict[str, float]] = {"capacitor": 0.20, "resistor": 0.01, "magnetic": 0.20}

_OK: Final = ("pass", "warn", "info")


@dataclass(frozen=True)
class Alternative:
    """One suggested part with its worst margin under the same computed stresses."""

    part_number: str
    description: str
    min_margin: float
    worst_parameter: str
    package: str | None = None
    same_package: bool = True
    findings: tuple[Finding, ...] = field(default=(), compare=False, repr=False)

    def to_dict(self) -> dict[str, Any]:
        return {"part_number": self.part_number, "description": self.description, "min_margin": self.min_margin,
                "worst_parameter": self.worst_parameter, "package": self.package,
                "same_package": self.same_package}


def is_approved(part: Any) -> bool:
    """Approved for use: ``status`` empty or ``approved`` (the catalog's convention)."""
    status = getattr(part, "status", None)
    return status is None or str(status).strip().lower() in ("", "approved")


def compatible_value(failing: Any, candidate: Any) -> bool:
    """Same nominal value within the failing part's tolerance (capacitance, resistance, inductance).

    Categories without a value column (switches, diodes ...) are always compatible; so is a
    failing part whose record gives no value.
    """
    category = getattr(failing, "category", None)
    column = VALUE_COLUMNS.get(category)
    if column is None:
        return True
    nominal = getattr(failing, column, None)
    if nominal is None:
        return True
    value = getattr(candidate, column, None)
    if value is None:
        return False
    tolerance = getattr(failing, "tolerance", None)
    if tolerance is None:
        tolerance = DEFAULT_TOLERANCE.get(category, 0.0)
    return abs(value - nominal) <= tolerance * abs(nominal) * (1 + 1e-9)


def ratings_not_lower(failing: Any, candidate: Any) -> bool:
    """Every rating in :data:`HIGHER_RATINGS` that both parts give is the same or higher."""
    for column in HIGHER_RATINGS.get(getattr(failing, "category", None), ()):
        mine, theirs = getattr(failing, column, None), getattr(candidate, column, None)
        if mine is not None and theirs is not None and theirs < mine:
            return False
    return True


def candidates_for(failing: Any, candidates: Iterable[Any]) -> list[Any]:
    """The candidates that survive the filters (everything but the re-run of the stresses)."""
    out = []
    for part in candidates:
        if part.part_number == failing.part_number:
            continue
        if getattr(part, "category", None) != getattr(failing, "category", None):
            continue
        if getattr(part, "subtype", None) != getattr(failing, "subtype", None):
            continue
        if not is_approved(part) or not compatible_value(failing, part) or not ratings_not_lower(failing, part):
            continue
        out.append(part)
    return out


def rank_alternatives(failing_part: Any, candidates: Iterable[Any],
                      evaluate_candidate: Callable[[Any], list[Finding]], *, limit: int = 3) -> list[Alternative]:
    """Up to ``limit`` approved parts that pass every rule in the failing part's place.

    Candidates in the failing part's package come first; parts in other packages are offered
    only when no same-package part passes.  Within a group the ranking is by the smallest
    margin over the candidate's findings, largest first (ties: part number).  A candidate whose
    findings include anything but pass, warn or info — or that yields no findings at all —
    is dropped.
    """
    package = getattr(failing_part, "package", None)
    same: list[Alternative] = []
    other: list[Alternative] = []
    for part in candidates_for(failing_part, candidates):
        findings = list(evaluate_candidate(part))
        if not findings or any(f.status not in _OK for f in findings):
            continue
        measured = [f for f in findings if f.margin is not None]
        if not measured:
            continue
        worst = min(measured, key=lambda f: f.margin)
        part_package = getattr(part, "package", None)
        same_package = package is None or part_package == package
        alt = Alternative(part_number=part.part_number, description=getattr(part, "description", None) or "",
                          min_margin=worst.margin, worst_parameter=worst.parameter, package=part_package,
                          same_package=same_package, findings=tuple(findings))
        (same if same_package else other).append(alt)
    chosen = same if same else other
    chosen.sort(key=lambda a: (-a.min_margin, a.part_number))
    return chosen[:limit]


__all__ = [
    "DEFAULT_TOLERANCE",
    "HIGHER_RATINGS",
    "VALUE_COLUMNS",
    "Alternative",
    "candidates_for",
    "compatible_value",
    "is_approved",
    "rank_alternatives",
    "ratings_not_lower",
]
