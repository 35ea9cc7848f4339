"""Waivers: an approved, dated exception for one reference designator and one stress parameter.

Waivers live in the design file as ``[[waiver]]`` tables; the design loader keeps them as dicts
and :func:`parse_waivers` validates them::

    [[waiver]]
    ref = "D3"
    parameter = "voltage"
    reason = "rectifier sees 82 % of VRRM at the 40 V surge only; surge lasts < 100 ms"
    approved_by = "reliability board"
    date = 2026-03-02          # TOML date or "YYYY-MM-DD"
    expires = 2027-03-02       # optional

:func:`partcheck.rules.evaluate.evaluate` applies them: a finding whose every reference is
covered keeps its numbers and shows ``waived``; when a covering waiver has expired
(``expires < today``) the finding fails and its detail says so.  A waiver dated after the
check's date is refused when it is read: nobody can have approved it yet.
"""

from __future__ import annotations

import datetime as _dt
import difflib
from collections.abc import Iterable
from dataclasses import dataclass
from typing import Any, Final

from ..errors import PolicyError
from ..units import as_date
from .policy import PARAMETERS

WAIVER_KEYS: Final = ("ref", "parameter", "reason", "approved_by", "date", "expires")
#: What a waiver may cover: every limited stress, ``lifecycle`` (the finding for an obsolete
#: or restricted part, made by the evaluator from the policy's ``[lifecycle]`` table) and
#: ``insulation`` (never assessed by partcheck: a waiver records who reviewed it and where).
WAIVER_PARAMETERS: Final = (*PARAMETERS, "lifecycle", "insulation")
_REQUIRED: Final = ("ref", "parameter", "reason", "approved_by", "date")


@dataclass(frozen=True)
class Waiver:
    """One waiver.  ``expires`` is ``None`` for a waiver without an end date."""

    ref: str
    parameter: str
    reason: str
    approved_by: str
    date: _dt.date
    expires: _dt.date | None = None

    def expired(self, today: _dt.date) -> bool:
        """True when ``expires`` is before ``today`` (a waiver is valid on its expiry day)."""
        return self.expires is not None and self.expires < today

    def covers(self, ref: str, parameter: str) -> bool:
        return self.ref.upper() == ref.upper() and self.parameter == parameter

    def to_dict(self) -> dict[str, Any]:
        return {"ref": self.ref, "parameter": self.parameter, "reason": self.reason,
                "approved_by": self.approved_by, "date": self.date.isoformat(),
                "expires": self.expires.isoformat() if self.expires else None}


def parse_waivers(raw: Iterable[dict[str, Any]] | None, *, file: str | None = None,
                  today: _dt.date | None = None) -> list[Waiver]:
    """Validate the design file's ``[[waiver]]`` tables.

    ``today`` is the check's date (``None``: today's date); a waiver dated after it is an error,
    as is one that expires before its date.  Errors are :class:`PolicyError` with
    ``key = "waiver[N].<key>"`` (N counts from 0 in file order) and say what was expected.
    """
    today = today if today is not None else _dt.date.today()
    waivers: list[Waiver] = []
    for index, entry in enumerate(raw or ()):
        where = f"waiver[{index}]"
        if not isinstance(entry, dict):
            raise PolicyError("a waiver must be a table ([[waiver]])", file=file, key=where)
        for key in entry:
            if key not in WAIVER_KEYS:
                close = difflib.get_close_matches(str(key), WAIVER_KEYS, n=1)
                hint = f" (did you mean {close[0]!r}?)" if close else ""
                raise PolicyError(f"unknown waiver key {key!r}{hint}; expected {', '.join(WAIVER_KEYS)}",
                                  file=file, key=f"{where}.{key}")
        for key in _REQUIRED:
            if key not in entry or entry[key] in (None, ""):
                raise PolicyError(f"a waiver needs {key!r} ({', '.join(_REQUIRED)} are required; expires is "
                                  "optional)", file=file, key=f"{where}.{key}")
        for key in ("ref", "parameter", "reason", "approved_by"):
            if not isinstance(entry[key], str) or not entry[key].strip():
                raise PolicyError(f"{key!r} must be a non-empty string, got {entry[key]!r}", file=file,
                                  key=f"{where}.{key}")
        parameter = entry["parameter"].strip()
        if parameter not in WAIVER_PARAMETERS:
            close = difflib.get_close_matches(parameter, list(WAIVER_PARAMETERS), n=1)
            hint = f" (did you mean {close[0]!r}?)" if close else ""
            raise PolicyError(f"unknown parameter {parameter!r}{hint}; expected one of {', '.join(WAIVER_PARAMETERS)}",
                              file=file, key=f"{where}.parameter")
        date = _date(entry["date"], file, f"{where}.date")
        if date > today:
            raise PolicyError(f"waiver for {entry['ref'].strip()} {parameter} is dated {date.isoformat()}, after the "
                              f"check's date {today.isoformat()}: a waiver cannot be approved in the future",
                              file=file, key=f"{where}.date")
        expires = _date(entry["expires"], file, f"{where}.expires") if entry.get("expires") not in (None, "") else None
        if expires is not None and expires < date:
            raise PolicyError(f"expires {expires.isoformat()} is before the approval date {date.isoformat()}",
                              file=file, key=f"{where}.expires")
        waivers.append(Waiver(ref=entry["ref"].strip(), parameter=parameter, reason=entry["reason"].strip(),
                              approved_by=entry["approved_by"].strip(), date=date, expires=expires))
    return waivers


def _date(value: Any, file: str | None, key: str) -> _dt.date:
    date = as_date(value)
    if date is not None:
        return date
    raise PolicyError(f"{value!r} is not an ISO date; expected YYYY-MM-DD such as 2026-03-02", file=file, key=key)


def find_waivers(waivers: Iterable[Waiver], refs: Iterable[str], parameter: str) -> list[Waiver | None]:
    """For each of ``refs``, the waiver covering it and ``parameter`` (``None`` where none does)."""
    waivers = list(waivers)
    found: list[Waiver | None] = []
    for ref in refs:
        match = [w for w in waivers if w.covers(ref, parameter)]
        # a valid waiver beats an expired one; among equals the latest approval
        match.sort(key=lambda w: (w.expires is None, w.expires or _dt.date.max, w.date))
        found.append(match[-1] if match else None)
    return found
