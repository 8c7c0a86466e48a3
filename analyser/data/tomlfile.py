"""The campaign file: its TOML values, the line each key is on, and typed access.

tomllib returns values without positions, so a light scan of the text records
the line of every table header and key.  A problem about a value then points
at the line where the user wrote it, and a missing key at its table's header.
The getters check each value's type, record a problem when it is wrong and
return a default, so reading always goes on to find the next problem.
"""

from __future__ import annotations

import math
import re
from typing import Any, Callable, NamedTuple

try:
    import tomllib
except ModuleNotFoundError:  # Python 3.10
    import tomli as tomllib

from .files import InputFile
from .problems import Problems

_KEY = r'[A-Za-z0-9_-]+|"(?:[^"\\]|\\.)*"|\'[^\']*\''
_KEY_PART = re.compile(_KEY)
_HEADER = re.compile(rf'^\s*(\[\[?)\s*((?:{_KEY})(?:\s*\.\s*(?:{_KEY}))*)\s*\]\]?\s*(?:#.*)?$')
_ASSIGNMENT = re.compile(rf'^\s*((?:{_KEY})(?:\s*\.\s*(?:{_KEY}))*)\s*=')
_BARE = re.compile(r"^[A-Za-z0-9_-]+$")
_STRING = re.compile(r'"(?:[^"\\]|\\.)*"|\'[^\']*\'')
_INLINE_KEY = re.compile(rf'[{{,]\s*((?:{_KEY})(?:\s*\.\s*(?:{_KEY}))*)\s*=')


class Kind(NamedTuple):
    words: str
    test: Callable[[Any], bool]


def _is_number(v) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)


STRING = Kind("a string", lambda v: isinstance(v, str))
NUMBER = Kind("a finite number", _is_number)
INTEGER = Kind("an integer", lambda v: isinstance(v, int) and not isinstance(v, bool))
BOOL = Kind("true or false", lambda v: isinstance(v, bool))
TABLE = Kind("a table", lambda v: isinstance(v, dict))
LIST = Kind("a list", lambda v: isinstance(v, list))

REQUIRED = object()


def render_key(path: tuple) -> str:
    """A key path as the user would write it: priors."HALO.error_scale", gates[2].limit."""
    out = ""
    for part in path:
        if isinstance(part, int):
            out += f"[{part + 1}]"
        else:
            name = part if _BARE.match(part) else '"' + part.replace('"', '\\"') + '"'
            out += ("." if out else "") + name
    return out


def short_repr(value, width: int = 40) -> str:
    text = repr(value)
    return text if len(text) <= width else text[:width - 3] + "..."


def _key_parts(text: str) -> tuple[str, ...]:
    return tuple(p[1:-1] if p[0] in "\"'" else p for p in _KEY_PART.findall(text))


def _code(line: str) -> str:
    """The line without its strings and comment, for counting brackets."""
    return _STRING.sub('""', line).split("#", 1)[0]


def index_key_lines(text: str) -> dict[tuple, int]:
    """Map every table header and key path to its 1-based line.  Arrays of tables
    get their element's 0-based index in the path: ("tables", 1, "file"); so do the
    inline tables of an array written one element per line (tables = [ {...}, ...])."""
    lines: dict[tuple, int] = {}
    arrays: dict[tuple, int] = {}   # path of an array of tables -> its last index
    table: tuple = ()
    open_quote = None               # inside a multi-line string
    open_array = None               # (path, next element index) of a multi-line array
    for number, line in enumerate(text.splitlines(), 1):
        if open_quote:
            if line.count(open_quote) % 2:
                open_quote = None
            continue
        if open_array:
            path, index = open_array
            code = _code(line)
            if line.lstrip().startswith("{"):
                lines.setdefault(path + (index,), number)
                for key in _INLINE_KEY.findall(line):
                    lines.setdefault(path + (index,) + _key_parts(key), number)
                index += 1
            open_array = (path, index) if code.count("]") <= code.count("[") else None
            continue
        header = _HEADER.match(line)
        if header:
            parts = _key_parts(header.group(2))
            path: list = []
            for part in parts[:-1]:
                path.append(part)
                if tuple(path) in arrays:
                    path.append(arrays[tuple(path)])
            path.append(parts[-1])
            if header.group(1) == "[[":
                index = arrays.get(tuple(path), -1) + 1
                arrays[tuple(path)] = index
                path.append(index)
            table = tuple(path)
            lines.setdefault(table, number)
            continue
        assignment = _ASSIGNMENT.match(line)
        if assignment:
            key = table + _key_parts(assignment.group(1))
            lines.setdefault(key, number)
            code = _code(line[assignment.end():])
            if code.count("[") > code.count("]"):
                open_array = (key, 0)
            for quote in ('"""', "'''"):
                if line.count(quote) % 2:
                    open_quote = quote
    return lines


class CampaignFile:
    """A parsed campaign file that records problems against its own lines."""

    def __init__(self, source: InputFile, data: dict, problems: Problems):
        self.source = source
        self.display = source.display
        self.data = data
        self.problems = problems
        self._lines = index_key_lines(source.text)

    @classmethod
    def parse(cls, source: InputFile, problems: Problems) -> "CampaignFile | None":
        try:
            data = tomllib.loads(source.text)
        except tomllib.TOMLDecodeError as err:
            text = str(err)
            where = re.search(r"\(at line (\d+), column (\d+)\)", text)
            message = re.sub(r"\s*\(at line \d+, column \d+\)", "", text)
            if where:
                problems.add(source.display, f"not valid TOML: {message} (column {where.group(2)})",
                             int(where.group(1)))
            else:
                problems.add(source.display, f"not valid TOML: {message}")
            return None
        return cls(source, data, problems)

    def line(self, path: tuple) -> int:
        """The line of `path`, else of its nearest enclosing table, else of the first
        key inside it (a table defined only through sub-tables); 0 if unknown."""
        for end in range(len(path), 0, -1):
            if path[:end] in self._lines:
                return self._lines[path[:end]]
        inside = [n for key, n in self._lines.items() if key[:len(path)] == path]
        return min(inside, default=0)

    def problem(self, path: tuple, message: str) -> None:
        text = f"{render_key(path)}: {message}" if path else message
        self.problems.add(self.display, text, self.line(path))

    def get(self, table: dict, path: tuple, key: str, kind: Kind, default=REQUIRED):
        """table[key] if it is of `kind`; otherwise record a problem and return
        `default` (None for a required key)."""
        if key not in table:
            if default is REQUIRED:
                self.problem(path + (key,), "is missing")
                return None
            return default
        value = table[key]
        if not kind.test(value):
            self.problem(path + (key,), f"must be {kind.words}, not {short_repr(value)}")
            return None if default is REQUIRED else default
        return value

    def section(self, key: str) -> dict:
        """A top-level table (empty if absent or not a table)."""
        return self.get(self.data, (), key, TABLE, {})

    def only_keys(self, table: dict, path: tuple, allowed) -> None:
        for key in table:
            if key not in allowed:
                self.problem(path + (key,),
                             f"unknown key (expected {', '.join(sorted(allowed))})")
