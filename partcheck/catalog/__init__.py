"""The parts catalog: generic part records with their ratings and curves, in SQLite or PostgreSQL.

``open_catalog(url)`` returns a :class:`Catalog`; every other module reads parts as
:class:`PartRecord` (plain frozen data, SI floats).  ``FIELDS`` is the registry of exchange
columns, ``CATEGORIES`` the categories and their subtypes.
"""

from .models import CATEGORIES, CURVES, FIELDS, FieldSpec, PartRecord
from .store import Catalog, CopyReport, ExportReport, ImportReport, default_location, open_catalog

__all__ = [
    "CATEGORIES",
    "CURVES",
    "FIELDS",
    "Catalog",
    "CopyReport",
    "ExportReport",
    "FieldSpec",
    "ImportReport",
    "PartRecord",
    "default_location",
    "open_catalog",
]
