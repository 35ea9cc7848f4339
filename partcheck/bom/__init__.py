"""Bills of materials: read them (:mod:`.read`), match their lines to the catalog (:mod:`.match`)
and write them back annotated (:mod:`.export`)."""

from .export import write_annotated_bom
from .match import (
    LineMatch,
    Matcher,
    MatchReport,
    match_bom,
    match_bom_file,
    normalise_part_number,
    parse_pins,
)
from .read import Bom, BomLine, expand_refs, read_bom

__all__ = [
    "Bom", "BomLine", "LineMatch", "MatchReport", "Matcher", "expand_refs", "match_bom", "match_bom_file",
    "normalise_part_number", "parse_pins", "read_bom", "write_annotated_bom",
]
