"""partcheck: check every part of a flyback converter's BOM against a derating policy.

The library does the work; the ``partcheck`` command is a thin layer over it.  The public names
are few on purpose: load a design, open a catalog, run the check.
"""

from __future__ import annotations

__version__ = "0.1.0"

__all__ = ["__version__"]
