"""BOM column names: the synonym table, header-row detection and ``--columns`` overrides.

A BOM's header row is whatever the schematic tool or a colleague wrote: ``Designator``,
``RefDes``, ``Qty.``, ``Comment``, ``Footprint``, ``Mfr. Part No``.  Every header is normalised
(lower case, punctuation and repeated spaces folded) and looked up in :data:`SYNONYMS`; a longer
header that *contains* a synonym as whole words (``"Rated voltage (V)"``, ``"Manufacturer Part
Number"``) maps as well, with a lower score.

The canonical field names are ``ref qty value description part_number package voltage
dielectric tolerance dnf``.
"""

from __future__ import annotations

import re
from typing import Final

from ..errors import BomError

#: Canonical field → header spellings (already normalised: lower case, single spaces, no dots).
SYNONYMS: Final[dict[str, tuple[str, ...]]] = {
    "ref": ("reference", "references", "designator", "designators", "refdes", "ref des", "ref", "refs",
            "parts", "reference designator", "reference designators", "ref designator", "part reference",
            "position", "pos"),
    "qty": ("quantity", "qty", "count", "qnty", "quant", "pcs", "amount", "no of parts", "number"),
    "value": ("value", "val", "comment", "values", "part value", "nominal", "component value"),
    "description": ("description", "desc", "descr", "part description", "component description", "details",
                    "specification", "spec"),
    "part_number": ("part number", "mpn", "part no", "part nr", "part num", "part", "manufacturer part",
                    "manufacturer part number", "mfr part number", "mfr part no", "mfr part", "mfr pn", "mfg part",
                    "pn", "p n", "partnumber", "part_number", "order code", "internal part number",
                    "article", "article number", "catalog part", "catalogue part",
                    # The manufacturer's part number in the spellings BOM exports use ("Manufacturer P/N",
                    # "Mfr. Part #", "Mfg Part Number", "Mfr #"): "#" reads as "no" (see normalise_header).
                    # "Manufacturer", "Mfr" or "Mfg" alone name the maker and are deliberately absent.
                    "manufacturer p n", "manufacturer part no", "manufacturer part nr", "manufacturer part num",
                    "manufacturer no", "manufacturers part number", "manufacturer s part number",
                    "manufacturer product number", "manuf part number", "manuf part no", "manuf p n",
                    "mfr part num", "mfr part nr", "mfr p n", "mfr no", "mfr number",
                    "mfg part number", "mfg part no", "mfg part num", "mfg p n", "mfg no", "mfg number",
                    "mfgr part number", "mfgr part no", "mfgr p n"),
    "package": ("package", "footprint", "case", "pcb footprint", "case size", "size", "housing", "case package"),
    "voltage": ("voltage", "rated voltage", "voltage rating", "v rated", "working voltage", "v max", "vmax",
                "v_rated", "rating"),
    "dielectric": ("dielectric", "tc", "temperature coefficient", "temp coefficient", "material"),
    "tolerance": ("tolerance", "tol"),
    "dnf": ("dnf", "dnp", "do not fit", "do not populate", "do not place", "fitted", "populate", "populated",
            "fit", "mount", "mounted", "place", "assembly", "nf", "not fitted", "no pop", "nopop"),
}

#: Field names as the user may write them in ``--columns`` (``ref=Designator``).
FIELD_ALIASES: Final[dict[str, str]] = {
    "ref": "ref", "refs": "ref", "reference": "ref", "designator": "ref",
    "qty": "qty", "quantity": "qty",
    "value": "value", "val": "value",
    "description": "description", "desc": "description",
    "part_number": "part_number", "pn": "part_number", "mpn": "part_number", "part": "part_number",
    "package": "package", "footprint": "package",
    "voltage": "voltage",
    "dielectric": "dielectric",
    "tolerance": "tolerance", "tol": "tolerance",
    "dnf": "dnf", "dnp": "dnf", "fitted": "dnf",
}

#: DNF-column headers whose meaning is positive ("Fitted: yes" means the part IS placed).
POSITIVE_FIT_HEADERS: Final = frozenset({"fitted", "populate", "populated", "fit", "mount", "mounted", "place",
                                         "assembly"})

_NON_WORD = re.compile(r"[^0-9a-zµ]+")
_NUMBER_SIGN = re.compile(r"[#№]")


def normalise_header(text: object) -> str:
    """``" Qty. "`` → ``"qty"``; ``"Mfr. Part-No"`` → ``"mfr part no"``; ``"Ref_Des"`` → ``"ref des"``.

    The number sign reads as the word it abbreviates: ``"Mfr. Part #"`` → ``"mfr part no"``, so
    ``"Mfr #"`` (a part number) stays apart from ``"Mfr"`` (the maker).
    """
    if text is None:
        return ""
    return _NON_WORD.sub(" ", _NUMBER_SIGN.sub(" no ", str(text).strip().lower())).strip()


_LOOKUP: Final[dict[str, str]] = {}
for _field, _names in SYNONYMS.items():
    for _name in _names:
        _LOOKUP.setdefault(normalise_header(_name), _field)


def classify_header(text: object) -> tuple[str | None, float]:
    """The canonical field a header names and how sure that is (1.0 exact synonym, 0.6 contained)."""
    norm = normalise_header(text)
    if not norm:
        return None, 0.0
    if norm in _LOOKUP:
        return _LOOKUP[norm], 1.0
    compact = norm.replace(" ", "")
    for name, field in _LOOKUP.items():
        if name.replace(" ", "") == compact:
            return field, 1.0
    padded = f" {norm} "
    # Longest synonym first so that "rated voltage" beats "rating" and "part number" beats "part".
    for name in sorted(_LOOKUP, key=len, reverse=True):
        if len(name) >= 3 and f" {name} " in padded and len(norm) <= 40:
            return _LOOKUP[name], 0.6
    return None, 0.0


def map_header(cells: list[str], overrides: dict[str, str] | None = None) -> tuple[dict[str, int], float]:
    """Map a candidate header row to ``{field: column index}`` and give the row a score.

    ``overrides`` (``{"ref": "Designator"}``) name the header text of a field exactly (case and
    spacing folded); an override wins over the synonym table.  The score counts recognised
    columns (exact synonyms 1, contained 0.6, overrides 1.5) so that the real header row beats a
    title row or a data row that happens to contain the word "Value".
    """
    mapping: dict[str, int] = {}
    certainty: dict[str, float] = {}
    score = 0.0
    override_by_header = {normalise_header(h): f for f, h in (overrides or {}).items()}
    for idx, cell in enumerate(cells):
        norm = normalise_header(cell)
        if not norm:
            continue
        if norm in override_by_header:
            field = override_by_header[norm]
            mapping[field] = idx
            certainty[field] = 2.0
            score += 1.5
            continue
        field, sure = classify_header(cell)
        if field is None or (overrides and field in overrides):
            continue
        if field not in mapping or sure > certainty[field]:
            if field not in mapping:
                score += sure
            mapping[field] = idx
            certainty[field] = sure
    return mapping, score


def parse_column_overrides(text: str | None) -> dict[str, str]:
    """Parse the ``--columns`` option: ``"ref=Designator,value=Val"`` → ``{"ref": "Designator", ...}``.

    Raises
    ------
    BomError
        On a pair without ``=`` or an unknown field name (the message lists the valid ones).
    """
    if not text or not text.strip():
        return {}
    result: dict[str, str] = {}
    for pair in text.split(","):
        if not pair.strip():
            continue
        if "=" not in pair:
            raise BomError(f"--columns: {pair.strip()!r} is not FIELD=HEADER (for example ref=Designator)")
        key, header = (s.strip() for s in pair.split("=", 1))
        field = FIELD_ALIASES.get(key.lower())
        if field is None:
            raise BomError(f"--columns: unknown field {key!r}; expected one of {', '.join(SYNONYMS)}")
        if not header:
            raise BomError(f"--columns: no header name given for {key!r}")
        result[field] = header
    return result


def canonical_overrides(columns: dict[str, str] | None) -> dict[str, str]:
    """Map user field names (``"reference"``, ``"mpn"``) in a ``columns=`` dict to canonical ones."""
    result: dict[str, str] = {}
    for key, header in (columns or {}).items():
        field = FIELD_ALIASES.get(str(key).lower())
        if field is None:
            raise BomError(f"columns: unknown field {key!r}; expected one of {', '.join(SYNONYMS)}")
        result[field] = str(header)
    return result


def merge_overrides(base: dict[str, str] | None, top: dict[str, str] | None) -> dict[str, str]:
    """Column overrides of two sources, ``top`` winning: ``base`` is a design file's, ``top`` the command line's.

    The merge is field by field; a ``base`` entry is dropped when ``top`` gives its field, or gives
    its header to another field (one column holds one field).
    """
    low, high = canonical_overrides(base), canonical_overrides(top)
    taken = {normalise_header(h) for h in high.values()}
    merged = {f: h for f, h in low.items() if f not in high and normalise_header(h) not in taken}
    merged.update(high)
    return merged
