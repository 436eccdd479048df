"""Where a problem in the requirements is: a key's line in the file (found by
scanning the text, as tomllib gives no key positions), or the command-line
option that set it."""

from __future__ import annotations

import re
import tomllib

from picker.design.keys import EXAMPLES, TABLE_KEYS
from picker.errors import RequirementError


class _FileWhere:
    """Labels a key path (`[[role]] #2 "latch" load`) and finds its line by scanning the text."""

    _HEADER = re.compile(r"\s*(\[\[?)\s*([^\[\]#]+?)\s*\]")

    def __init__(self, source: str, text: str, doc: dict) -> None:
        self.source, self.doc, self.lines = source, doc, text.split("\n")
        starts, in_string = [("", 0)], None  # (header, 0-based line); "" is the top level
        for n, line in enumerate(self.lines):
            if in_string is None and (name := self._toml_header(line)) is not None:
                starts.append((name, n))
            elif in_string is None and (m := self._HEADER.match(line)):
                starts.append((m.group(1) + re.sub(r"[\s\"']", "", m.group(2)), n))
            in_string = self._open_string(line, in_string)  # skip headers inside them
        ends = [n for _, n in starts[1:]] + [len(self.lines)]
        self.sections = [(h, n, end) for (h, n), end in zip(starts, ends)]

    _TOKENS = re.compile(r'"""|\'\'\'|"(?:[^"\\\n]|\\.)*"|\'[^\'\n]*\'|#')

    @classmethod
    def _open_string(cls, line: str, open_: str | None) -> str | None:
        """The multi-line string (its quotes) still open after `line`, given the
        one open before it: one-line strings and comments are stepped over, so
        quotes inside them do not count."""
        pos = 0
        while True:
            if open_:
                end = line.find(open_, pos)
                if end < 0:
                    return open_
                pos, open_ = end + 3, None
                continue
            m = cls._TOKENS.search(line, pos)
            if m is None or m.group() == "#":
                return None
            if m.group() in ('"""', "'''"):
                open_ = m.group()
            pos = m.end()

    @staticmethod
    def _toml_header(line: str) -> str | None:
        """'[' or '[[' and the dotted name of a table header line, read as TOML
        (so quoted names holding '#', quotes or escapes read as tomllib reads
        them); None when the line is not a header on its own."""
        text = line.strip()
        if not text.startswith("["):
            return None
        try:
            node = tomllib.loads(text)
        except (ValueError, RecursionError):
            return None
        names = []
        while isinstance(node, dict) and len(node) == 1:
            name, node = next(iter(node.items()))
            names.append(name)
        return ("[[" if text.startswith("[[") else "[") + ".".join(names) if names else None

    def label(self, path: tuple) -> str:
        if path[:1] == ("role",) and len(path) > 1:
            name = self.doc["role"][path[1]].get("name")
            head = f"[[role]] #{path[1] + 1}" + (f' "{name}"' if isinstance(name, str) else "")
            return " ".join([head, *path[2:]])
        return " ".join([f"[{path[0]}]", *path[1:]]) if path[:1] and path[0] in TABLE_KEYS else ".".join(path)

    def _find(self, path: tuple) -> tuple[int, int] | None:
        if path[0] == "role" and len(path) > 1:
            roles = [s for s in self.sections if s[0] == "[[role"]
            section, keys = (roles[path[1]] if path[1] < len(roles) else None), path[2:]
        else:
            tables = [s for s in self.sections if s[0] == "[" + path[0]]
            section, keys = (tables[0], path[1:]) if tables else (self.sections[0], path)
        if section is None or not keys:
            return section and (section[1] + 1, 1)
        key = re.compile(r"\s*(%s|\"%s\"|'%s')\s*[=.]" % ((re.escape(keys[0]),) * 3))
        for n in range(section[1] + bool(section[0]), section[2]):
            if key.match(self.lines[n]):
                return n + 1, len(self.lines[n]) - len(self.lines[n].lstrip()) + 1
        for n in range(section[1] + bool(section[0]), section[2]):  # a key written with escapes
            try:
                if "=" in self.lines[n] and keys[0] in tomllib.loads(self.lines[n]):
                    return n + 1, len(self.lines[n]) - len(self.lines[n].lstrip()) + 1
            except (ValueError, RecursionError):  # a line of a multi-line value, or not a key line
                continue
        return None

    def fail(self, path: tuple, message: str, *, at: tuple | None = None):
        at = path if at is None else at
        found = next((f for cut in range(len(at), 0, -1) if (f := self._find(at[:cut]))), (None, None))
        label = self.label(path)  # the key, else the table around it
        raise RequirementError(f"{label}: {message}" if label else message,
                               file=self.source, line=found[0], column=found[1])

    def missing(self, table: tuple, key: str, why: str = ""):
        example = EXAMPLES.get(f"{table[0]}.{key}") or EXAMPLES[key]
        self.fail(table, f"missing key '{key}'" + (f", required{why}" if why else "") + f"; e.g. {key} = {example}")


class _OptionWhere:
    """Labels a key path with the command-line option that sets it (`--max-drop`),
    or, for `picker.design(...)` (`keyword=True`), with its keyword (`max_drop`)."""

    def __init__(self, doc: dict, keyword: bool = False) -> None:
        self.doc, self.keyword = doc, keyword

    def label(self, path: tuple) -> str:
        if not path:
            return "keywords" if self.keyword else "options"
        key = path[-1] if path[-1] not in ("min", "max") else path[0]
        return spell("max_off" if key == "max_off_current" else key, self.keyword)

    def fail(self, path: tuple, message: str, *, at: tuple | None = None):
        raise RequirementError(f"{self.label(path)}: {message}")

    def missing(self, table: tuple, key: str, why: str = ""):
        option = self.label((*table, key))
        example = EXAMPLES[key].strip(chr(34))
        tip = f"{option}={EXAMPLES[key]}" if self.keyword else f"{option} {example}"
        raise RequirementError(f"{option} is required{why}; e.g. {tip}")


def spell(key: str, keyword: bool = False) -> str:
    """An option key as the user wrote it: `--max-drop` on the command line,
    `max_drop` as a keyword of `picker.design(...)`."""
    return key if keyword else "--" + key.replace("_", "-")
