"""The catalogue check's findings: each a `Problem` located in the file.

A rule reports one row at a time or every row it finds at once; the
findings are kept as arrays (row, column, severity, message) and made into
`Problem` objects only when someone reads them, in file order. A million-part
catalogue may carry a few hundred thousand warnings (every end-of-life
part); loading it for `choose` needs only the rows with errors.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from picker.errors import one_line

SEVERITIES = ("error", "warning")  # sorted this way where line and column are equal


@dataclass(frozen=True)
class Problem:
    """One finding of the catalogue check, located in the file."""

    severity: str  # 'error' or 'warning'
    file: str
    line: int | None
    column: int | None
    message: str
    column_name: str | None = None

    def __str__(self) -> str:
        where = ":".join(str(p) for p in (self.file, self.line, self.column) if p is not None)
        return one_line(f"{where}: {self.severity}: {self.message}")


class Findings:
    """Findings gathered rule by rule, by row position (None: the header).

    `add(severity, rows, column, message, name)`: `rows` one position or an
    array of them; `message` one text for all, or one per row (a sequence,
    or a pyarrow string array)."""

    def __init__(self, path: str, lines: np.ndarray, header_line: int) -> None:
        self.path = path
        self.lines = np.asarray(lines, dtype=np.int64)
        self.header_line = header_line
        self._batches: list[tuple[int, np.ndarray | None, int, str | None, object]] = []

    def add(self, severity: str, rows, column: int | None, message, name: str | None = None
            ) -> None:
        code = SEVERITIES.index(severity)
        if rows is None:
            self._batches.append((code, None, column or 0, name, [message]))
            return
        rows = np.atleast_1d(np.asarray(rows, dtype=np.int64))
        if rows.size:
            self._batches.append((code, rows, column or 0, name, message))

    def error_rows(self) -> np.ndarray:
        """Positions of the rows with an error, ascending, each once."""
        found = [rows for code, rows, *_ in self._batches if code == 0 and rows is not None]
        return np.unique(np.concatenate(found)) if found else np.zeros(0, dtype=np.int64)

    def problems(self) -> "ProblemList":
        """Every finding, sorted by line, column and severity (a stable sort:
        equal keys keep the order the rules found them in)."""
        if not self._batches:
            return ProblemList.empty(self.path)
        severity, line, column, names, texts = [], [], [], [], []
        for code, rows, col, name, message in self._batches:
            k = 1 if rows is None else rows.size
            severity.append(np.full(k, code, dtype=np.int8))
            line.append(np.array([self.header_line]) if rows is None else self.lines[rows])
            column.append(np.full(k, col, dtype=np.int64))
            names.append(np.full(k, name, dtype=object))
            texts.append(_texts(message, k))
        severity, line = np.concatenate(severity), np.concatenate(line)
        column, names = np.concatenate(column), np.concatenate(names)
        order = np.lexsort((severity, column, line))
        messages = [m for batch in texts for m in batch]
        return ProblemList(self.path, severity[order], line[order], column[order],
                           names[order], [messages[i] for i in order.tolist()])


def _texts(message, k: int) -> list[str]:
    if isinstance(message, str):
        return [message] * k
    if hasattr(message, "to_pylist"):
        return message.to_pylist()
    return list(message)


class ProblemList(Sequence):
    """The findings in file order as a read-only list of `Problem`, made
    into objects on first use; `errors()` and `error_count` need none."""

    def __init__(self, path: str, severity: np.ndarray, line: np.ndarray, column: np.ndarray,
                 names: np.ndarray, messages: list[str]) -> None:
        self.path = path
        self.severity, self.line, self.column = severity, line, column
        self.names, self.messages = names, messages
        self._items: list[Problem] | None = None

    @classmethod
    def empty(cls, path: str) -> "ProblemList":
        none = np.zeros(0, dtype=np.int64)
        return cls(path, none.astype(np.int8), none, none, np.zeros(0, dtype=object), [])

    @classmethod
    def of(cls, problems: list[Problem]) -> "ProblemList":
        """The same for Problem objects made elsewhere (kept as given)."""
        out = cls(problems[0].file if problems else "",
                  np.array([SEVERITIES.index(p.severity) for p in problems], dtype=np.int8),
                  np.array([p.line or 0 for p in problems], dtype=np.int64),
                  np.array([p.column or 0 for p in problems], dtype=np.int64),
                  np.array([p.column_name for p in problems], dtype=object),
                  [p.message for p in problems])
        out._items = list(problems)
        return out

    def _all(self) -> list[Problem]:
        if self._items is None:
            files = self.path
            self._items = [Problem(SEVERITIES[s], files, int(ln) if ln else None,
                                   int(c) if c else None, m, n)
                           for s, ln, c, n, m in zip(self.severity.tolist(), self.line.tolist(),
                                                     self.column.tolist(), self.names.tolist(),
                                                     self.messages)]
        return self._items

    def __len__(self) -> int:
        return len(self.severity)

    def __getitem__(self, i):
        return self._all()[i]

    def __iter__(self):
        return iter(self._all())

    def __eq__(self, other) -> bool:
        if isinstance(other, (ProblemList, list, tuple)):
            return list(self) == list(other)
        return NotImplemented

    def __repr__(self) -> str:
        return repr(self._all())

    def of_severity(self, severity: str) -> list[Problem]:
        """The findings of one severity, in file order."""
        code = SEVERITIES.index(severity)
        if self._items is not None:
            return [p for p in self._items if p.severity == severity]
        rows = np.flatnonzero(self.severity == code).tolist()
        return [Problem(severity, self.path, int(self.line[i]) if self.line[i] else None,
                        int(self.column[i]) if self.column[i] else None, self.messages[i],
                        self.names[i]) for i in rows]

    def count(self, severity: str) -> int:  # type: ignore[override]
        return int(np.count_nonzero(self.severity == SEVERITIES.index(severity)))

    # -- the cache stores the findings as columns ------------------------------------------

    def to_arrow(self):
        import pyarrow as pa

        return pa.table({"severity": pa.array(self.severity, pa.int8()),
                         "line": pa.array(self.line, pa.int64()),
                         "column": pa.array(self.column, pa.int64()),
                         "name": pa.array(self.names.tolist(), pa.string()),
                         "message": pa.array(self.messages, pa.string())})

    @classmethod
    def from_arrow(cls, path: str, table) -> "ProblemList":
        return cls(path, table.column("severity").to_numpy().astype(np.int8),
                   table.column("line").to_numpy(), table.column("column").to_numpy(),
                   np.array(table.column("name").to_pylist(), dtype=object),
                   table.column("message").to_pylist())
