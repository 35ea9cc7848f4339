"""The project's exceptions.

Every error a user can cause derives from :class:`PartcheckError`; the CLI turns it into a
one-line message and exit code 2 in exactly one place.  Each subclass also inherits the
matching built-in (``ValueError``, ``LookupError``) so library callers can catch either.

An error knows *where* it happened: the file, and inside it a line, a column or a key.  The
message says what was found and what was expected, so the user can fix the input without
reading the code.
"""

from __future__ import annotations

from os import PathLike


class PartcheckError(Exception):
    """Base of every error partcheck raises on purpose.

    Parameters
    ----------
    message:
        What was wrong and what was expected.
    file:
        The file being read, if any.
    line:
        1-based line (or spreadsheet row) in ``file``.
    column:
        Column name or number in ``file``.
    key:
        Dotted key in a TOML/JSON document (``converter.fsw``).
    """

    exit_code = 2

    def __init__(
        self,
        message: str,
        *,
        file: str | PathLike[str] | None = None,
        line: int | None = None,
        column: str | int | None = None,
        key: str | None = None,
    ) -> None:
        self.message = message
        self.file = str(file) if file is not None else None
        self.line = line
        self.column = column
        self.key = key
        super().__init__(str(self))

    @property
    def location(self) -> str:
        """``file, line 3, column 'vds_max', key 'converter.fsw'`` with absent parts left out."""
        parts = []
        if self.file:
            parts.append(self.file)
        if self.line is not None:
            parts.append(f"line {self.line}")
        if self.column is not None:
            parts.append(f"column {self.column!r}")
        if self.key is not None:
            parts.append(f"key {self.key!r}")
        return ", ".join(parts)

    def located(self, **where) -> "PartcheckError":
        """Fill in location fields that are still empty (used while an error propagates outwards)."""
        for name in ("file", "line", "column", "key"):
            if where.get(name) is not None and getattr(self, name) is None:
                setattr(self, name, str(where[name]) if name == "file" else where[name])
        self.args = (str(self),)
        return self

    def __str__(self) -> str:
        where = self.location
        return f"{where}: {self.message}" if where else self.message


class InputError(PartcheckError, ValueError):
    """Input that cannot be read or does not make sense (exit code 2)."""


class QuantityError(InputError):
    """A text that is not an engineering quantity of the expected unit."""


class DesignError(InputError):
    """A design file that is malformed or describes an impossible operating point."""


class BomError(InputError):
    """A bill of materials that cannot be read."""


class PolicyError(InputError):
    """A derating policy (rules file) that is malformed."""


class CatalogInputError(InputError):
    """A catalog import file or part definition that is malformed; nothing was written."""


class CatalogError(PartcheckError):
    """The catalog database cannot be opened or used (wrong schema version, unreachable server)."""


class NotFoundError(PartcheckError, LookupError):
    """A named thing (part number, preset, reference) does not exist."""
