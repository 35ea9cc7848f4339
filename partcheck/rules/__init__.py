"""Derating rules: policies (presets and user files), the evaluation of stresses, waivers and
alternatives.

* :mod:`.policy` — load a policy (``load_policy``), resolve ``extends``, select a rule.
* :mod:`.evaluate` — ``StressItem`` → ``Finding``; the verdict.
* :mod:`.waivers` — ``parse_waivers`` for the design file's ``[[waiver]]`` tables.
* :mod:`.alternatives` — ``rank_alternatives`` for failing parts.

The rules-file format is documented in ``docs/policy-format.md``.
"""

from __future__ import annotations

from .alternatives import Alternative, rank_alternatives
from .evaluate import (
    STATUSES,
    Finding,
    StressItem,
    evaluate,
    not_assessed_finding,
    unmatched_finding,
    unused_waivers,
    verdict,
)
from .policy import (
    DEFAULT_POLICY,
    PARAMETERS,
    Policy,
    Rule,
    list_presets,
    load_policy,
    load_policy_file,
    load_preset,
    loads_policy,
)
from .waivers import Waiver, parse_waivers

__all__ = [
    "DEFAULT_POLICY",
    "PARAMETERS",
    "STATUSES",
    "Alternative",
    "Finding",
    "Policy",
    "Rule",
    "StressItem",
    "Waiver",
    "evaluate",
    "list_presets",
    "load_policy",
    "load_policy_file",
    "load_preset",
    "loads_policy",
    "not_assessed_finding",
    "parse_waivers",
    "rank_alternatives",
    "unmatched_finding",
    "unused_waivers",
    "verdict",
]
