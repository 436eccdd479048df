"""The error hierarchy: every problem the user can fix is a `PickerError`.

Each error stores where it happened (file, line, column) and builds its one-line
message from those fields, so the CLI can print it as is and exit 2.
"""

import re

# Line breaks and other control characters a message may quote from the user's
# file (a quoted cell may hold a line break; a cell may hold an escape sequence
# a terminal would act on): written as escapes, so a message stays one line.
_CONTROL = re.compile(r"[\x00-\x08\x0a-\x1f\x7f-\x9f\u2028\u2029]")


def one_line(text: str) -> str:
    """`text` with line breaks and control characters written as escapes ('\\n')."""
    return _CONTROL.sub(lambda m: repr(m.group())[1:-1], text)


class PickerError(Exception):
    """Base of every error picker reports to the user (exit code 2)."""

    def __init__(
        self,
        message: str,
        *,
        file: str | None = None,
        line: int | None = None,
        column: int | str | None = None,
        hint: str | None = None,
    ) -> None:
        self.message = message
        self.file = file
        self.line = line
        self.column = column
        self.hint = hint
        super().__init__(str(self))

    def where(self) -> str:
        """`file:line:column` as far as it is known ('' when nothing is)."""
        parts = [str(p) for p in (self.file, self.line, self.column) if p is not None]
        return ":".join(parts)

    def __str__(self) -> str:
        where = self.where()
        text = f"{where}: {self.message}" if where else self.message
        return one_line(f"{text} ({self.hint})" if self.hint else text)

    def located(self, *, file=None, line=None, column=None) -> "PickerError":
        """Fill in the location fields that are still unknown; returns self."""
        self.file = self.file if self.file is not None else file
        self.line = self.line if self.line is not None else line
        self.column = self.column if self.column is not None else column
        self.args = (str(self),)
        return self


class QuantityError(PickerError, ValueError):
    """A value with units that cannot be read, or whose dimension is wrong."""


class CatalogError(PickerError, ValueError):
    """A catalogue that cannot be read, or (with --strict) has an invalid row."""


class RequirementError(PickerError, ValueError):
    """A requirement file or option that does not describe a valid design."""


class BomError(PickerError, ValueError):
    """A bill of materials that cannot be read."""


class MappingError(PickerError, ValueError):
    """An import mapping file that cannot be read or names an unknown column."""


class UsageError(PickerError, ValueError):
    """A command used with options that do not fit together."""


class WriteRefused(PickerError, OSError):
    """A write that would lose data: the target exists, or changed on disk."""


class TooLarge(PickerError, ValueError):
    """An input beyond the bounds picker accepts: tabular.MAX_BYTES and MAX_ROWS
    (catalogues, BOMs, raw tables), bom.MAX_REFS, importer.MAX_MAPPING_BYTES;
    requirement files have theirs in picker.design.requirements."""
