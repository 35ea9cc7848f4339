"""The check's result as plain, JSON-serialisable data.

:func:`partcheck.pipeline.check` produces a :class:`CheckResult`; everything downstream (the
terminal table, ``--format json``, the HTML report, the annotated BOM) reads only this.  The
sections are plain dicts and lists so that a saved JSON file renders the same report months
later (``partcheck report RESULT.json``).

Keys of each section (values in SI units, °C for temperatures, hours for life):

``findings``  one per part × parameter at that parameter's worst corner::

    {"refs": ["C5"], "part_number": "...", "role": "output_cap:5V", "category": "capacitor",
     "parameter": "voltage", "unit": "V", "stress": 12.1, "rating": 25.0, "limit": 12.5,
     "utilization": 0.968, "margin": 0.032, "corner": "vin_max-full",
     "status": "pass|warn|fail|waived|not_assessed|unmatched|out_of_scope|info", "rule": "capacitor.ceramic.voltage",
     "source": "...", "detail": "...", "waiver": {...} | null,
     "alternatives": [{"part_number": "...", "description": "...", "min_margin": 0.21,
                       "worst_parameter": "voltage"}]}

``parts``  one per BOM part (refs sharing a line and role)::

    {"refs": [...], "part_number": ..., "description": ..., "role": ..., "category": ...,
     "status": <worst finding status>, "worst_utilization": 0.83, "worst_parameter": "voltage",
     "bom_line": 7, "match": {"method": ..., "score": ..., "reason": ...}}

``bom_lines``  the matcher's lines (``partcheck match --format json`` shape).
``corners``    the engine's corners (``partcheck stress --format json`` shape).
``part_stresses``  per-part stresses (``partcheck stress --bom`` JSON ``parts`` shape).
``waveforms``  ``{"switch": {"corner": id, "t": [s...], "y": [A...], "label": ...}, ...}``.
``sweep``      ``{"vin": [V...], "series": [{"key": "switch.v_peak", "label": ..., "unit": "V",
               "values": [...], "limit": 80.0 | null, "limit_label": ...}]}``.
``bank_split`` ``{"output_cap:5V": {"corner": id, "harmonics": 240,
               "caps": [{"ref": "C5", "part_number": ..., "i_rms": 1.2, "c_eff": ..., "esr": ...}]}}``.
``policy_rules`` the effective rules with sources; ``waivers``; ``assumptions`` (approximations
used: generic DC-bias model, thermal defaults); ``notes`` (operating-point remarks);
``bom_warnings`` what the BOM reader noticed, one sentence each naming the line
(``"BOM line 7 (C3): quantity says 2 but 1 reference is listed"``).
``trace``      ``{"tool_version", "date", "command", "design_path", "design_sha256",
               "bom_path", "bom_sha256", "policy", "policy_sha256", "catalog", "catalog_sha256"}``.
"""

from __future__ import annotations

import json
from dataclasses import asdict, dataclass, field
from pathlib import Path
from typing import Any

#: Statuses in the order a reviewer wants to see them (worst first).
STATUS_ORDER: tuple[str, ...] = ("fail", "unmatched", "not_assessed", "warn", "waived", "out_of_scope", "info", "pass")

#: Caution printed on every report and in the README.
CAUTION = (
    "partcheck checks component stress against a derating policy. It is no substitute for "
    "safety-agency insulation, creepage and clearance rules, for bench verification of the built "
    "converter, or for review by a qualified engineer under local codes and licensed practice. "
    "Converters can store lethal energy and run from dangerous voltages."
)


@dataclass
class CheckResult:
    """Everything one check found, as plain data (see the module docstring for each section)."""

    design: str
    policy: str
    policy_origin: str  # "default" (shipped preset, nothing asked), "design" (named in the design file), "option"
    verdict: str  # "pass" | "fail"
    findings: list[dict[str, Any]] = field(default_factory=list)
    parts: list[dict[str, Any]] = field(default_factory=list)
    bom_lines: list[dict[str, Any]] = field(default_factory=list)
    corners: list[dict[str, Any]] = field(default_factory=list)
    part_stresses: list[dict[str, Any]] = field(default_factory=list)
    waveforms: dict[str, dict[str, Any]] = field(default_factory=dict)
    sweep: dict[str, Any] = field(default_factory=dict)
    bank_split: dict[str, dict[str, Any]] = field(default_factory=dict)
    policy_rules: list[dict[str, Any]] = field(default_factory=list)
    waivers: list[dict[str, Any]] = field(default_factory=list)
    assumptions: list[str] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    bom_warnings: list[str] = field(default_factory=list)
    trace: dict[str, Any] = field(default_factory=dict)
    caution: str = CAUTION

    def counts(self) -> dict[str, int]:
        """Number of findings per status, every status present (zero when none)."""
        counts = {status: 0 for status in STATUS_ORDER}
        for finding in self.findings:
            counts[finding["status"]] = counts.get(finding["status"], 0) + 1
        return counts

    def to_dict(self) -> dict[str, Any]:
        data = asdict(self)
        data["counts"] = self.counts()
        return data

    def to_json(self, **kwargs: Any) -> str:
        return json.dumps(self.to_dict(), indent=kwargs.pop("indent", 1), ensure_ascii=False, allow_nan=False, **kwargs)

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> "CheckResult":
        known = {f for f in cls.__dataclass_fields__}
        return cls(**{k: v for k, v in data.items() if k in known})

    @classmethod
    def load(cls, path: str | Path) -> "CheckResult":
        """Read a result saved with ``partcheck check --format json``."""
        from .errors import InputError

        path = Path(path)
        try:
            data = json.loads(path.read_text(encoding="utf-8"))
        except FileNotFoundError:
            raise InputError("no such file", file=path) from None
        except (UnicodeDecodeError, json.JSONDecodeError) as exc:
            line = getattr(exc, "lineno", None)
            raise InputError(f"not a partcheck JSON result ({exc.__class__.__name__})", file=path, line=line) from None
        missing = [k for k in ("design", "policy", "verdict", "findings") if not isinstance(data, dict) or k not in data]
        if missing:
            raise InputError(f"not a partcheck JSON result: missing keys {', '.join(missing)}", file=path)
        return cls.from_dict(data)
