"""Reading one data table (ECSV or CSV) into checked rows in internal units.

ECSV tables carry their units in the header, which astropy reads; CSV tables
get theirs from the campaign file.  The cells themselves are read here, row by
row, so that every bad cell is reported with its file, its real 1-based line
and its column, and a table with many bad cells yields all of them at once.
Only rows without any problem are returned.
"""

from __future__ import annotations

import csv
import math
import re
from dataclasses import dataclass, field
from pathlib import Path

import astropy.units as u
import numpy as np
from astropy.table import Table

from ..campaign import RowSource
from .epochs import to_jyear
from .files import read_input
from .problems import Problems
from .units import ANGLE, DIMENSIONLESS, SPEED, convert, parse_unit


@dataclass(frozen=True)
class Column:
    """A column a table may have.  role: text | epoch | value | error | correlation."""
    name: str
    role: str
    key: str                 # the name of the converted values in TableRows.values
    unit: u.UnitBase | None = None
    required: bool = True


SCHEMAS = {
    "astrometry": (
        Column("star", "text", "star"),
        Column("epoch", "epoch", "epoch_yr"),
        Column("x", "value", "x_mas", ANGLE),
        Column("y", "value", "y_mas", ANGLE),
        Column("x_err", "error", "x_err_mas", ANGLE),
        Column("y_err", "error", "y_err_mas", ANGLE),
        Column("rho", "correlation", "rho", DIMENSIONLESS, required=False),
        Column("instrument", "text", "instrument"),
    ),
    "velocity": (
        Column("star", "text", "star"),
        Column("epoch", "epoch", "epoch_yr"),
        Column("v", "value", "v_km_s", SPEED),
        Column("v_err", "error", "v_err_km_s", SPEED),
        Column("instrument", "text", "instrument"),
    ),
}
TABLE_KINDS = tuple(SCHEMAS)
TABLE_FORMATS = ("ecsv", "csv")


def a_or_an(word: str) -> str:
    """"an astrometry", "a velocity"."""
    return ("an " if word[:1] in "aeiou" else "a ") + word


@dataclass(frozen=True)
class TableSpec:
    """One [[tables]] entry of the campaign file, already checked."""
    file: str                      # as written in the campaign file
    path: Path
    display: str                   # how problems and row sources name the file
    kind: str
    format: str
    epoch_format: str = "jyear"
    epoch_scale: str = "tt"
    instrument: str | None = None  # the instrument of every row, if the table has no column
    units: dict = field(default_factory=dict)  # CSV: column -> unit string
    campaign_file: str = ""        # where `units` and `instrument` were written
    units_line: int = 0


@dataclass
class TableRows:
    """The good rows of one table: values in internal units and where each came from."""
    kind: str
    file: str
    sha256: str
    values: dict                   # Column.key -> np.ndarray, for every column of the kind
    source: list
    stars_seen: set = field(default_factory=set)   # in any row, good or not

    def __len__(self) -> int:
        return len(self.source)


@dataclass
class _Layout:
    """What the header says: column names, their units and the lines of the rows."""
    names: list
    names_line: int
    rows: list                     # (line number, text)
    delimiter: str = ","
    units: dict = field(default_factory=dict)       # name -> unit string or None
    unit_lines: dict = field(default_factory=dict)  # name -> header line declaring it


def _body_lines(lines) -> list:
    """(1-based line, text) of the lines that are neither blank nor comments."""
    return [(k + 1, text) for k, text in enumerate(lines)
            if text.strip() and not text.lstrip().startswith("#")]


def _ecsv_layout(text: str, display: str, problems: Problems) -> _Layout | None:
    lines = text.splitlines()
    if not lines or not lines[0].startswith("# %ECSV"):
        problems.add(display, "is not an ECSV table: its first line must be '# %ECSV 1.0'", 1)
        return None
    body = _body_lines(lines)
    if not body:
        problems.add(display, "has no line of column names after the ECSV header")
        return None
    names_line, names_text = body[0]
    header = [t for t in lines[:names_line - 1] if t.lstrip().startswith("#")]
    try:
        table = Table.read("\n".join(header + [names_text]), format="ascii.ecsv")
    except Exception as err:  # astropy reports YAML and header errors with several types
        problems.add(display, f"the ECSV header cannot be read: {err}")
        return None
    delimiter = " "
    for t in header:
        found = re.match(r"#\s*delimiter:\s*(['\"]?)(.)\1\s*$", t)
        if found:
            delimiter = found.group(2)
    units, unit_lines = {}, {}
    for name in table.colnames:
        unit = table[name].unit
        units[name] = None if unit is None else str(unit)
        declared = re.compile(rf"name:\s*['\"]?{re.escape(name)}['\"]?\s*[,}}]")
        unit_lines[name] = next((k + 1 for k, t in enumerate(lines[:names_line])
                                 if declared.search(t)), names_line)
    return _Layout(list(table.colnames), names_line, body[1:], delimiter, units, unit_lines)


def _csv_layout(text: str, display: str, problems: Problems) -> _Layout | None:
    body = _body_lines(text.splitlines())
    if not body:
        problems.add(display, "is empty: a CSV table needs a line of column names")
        return None
    names_line, names_text = body[0]
    names = [n.strip() for n in next(csv.reader([names_text]))]
    return _Layout(names, names_line, body[1:], ",")


def _split(text: str, delimiter: str) -> list:
    text = text.strip()
    return [c.strip() for c in next(csv.reader([text], delimiter=delimiter,
                                                skipinitialspace=True))]


def _number(text: str) -> tuple[float, str]:
    if text == "":
        return math.nan, "missing value"
    try:
        value = float(text)
    except ValueError:
        return math.nan, f"not a number: '{text}'"
    if not math.isfinite(value):
        return math.nan, f"not a finite number: '{text}'"
    return value, ""


def _check_number(role: str, value: float) -> str:
    if role == "error" and not value > 0:
        return f"an error must be positive, not {value:g}"
    if role == "correlation" and not -1 < value < 1:
        return f"a correlation must lie strictly between -1 and 1, not {value:g}"
    return ""


class _TableReader:
    """Reads one table; holds what is needed to report problems precisely."""

    def __init__(self, spec: TableSpec, instrument_kinds: dict, problems: Problems):
        self.spec = spec
        self.instrument_kinds = instrument_kinds
        self.problems = problems
        self.schema = {c.name: c for c in SCHEMAS[spec.kind]}

    def cell_problem(self, line: int, column: str, message: str) -> None:
        self.problems.add(self.spec.display, message, line, column)

    def read(self) -> TableRows | None:
        spec = self.spec
        source = read_input(spec.path, spec.display, self.problems)
        if source is None:
            return None
        layout_of = _ecsv_layout if spec.format == "ecsv" else _csv_layout
        layout = layout_of(source.text, spec.display, self.problems)
        if layout is None:
            return None
        columns = self._check_columns(layout)
        units = self._units(layout, columns)
        lines, cells = self._cells(layout, columns)
        good = np.ones(len(lines), dtype=bool)
        values = {}
        for column in columns:
            values[column.key], ok = self._convert(column, lines, cells[column.name],
                                                   units.get(column.name))
            good &= ok
        if spec.instrument is not None:
            values["instrument"] = np.array([spec.instrument] * len(lines), dtype=object)
        elif "instrument" in values:
            good &= self._check_instruments(lines, values["instrument"])
        for column in self.schema.values():
            if column.key not in values:       # only rho may be absent from good rows
                values[column.key] = np.zeros(len(lines))
                if column.required:
                    good[:] = False
        kept = {key: array[good] for key, array in values.items()}
        sources = [RowSource(spec.display, line) for line, ok in zip(lines, good) if ok]
        stars_seen = {s for s in values.get("star", ()) if s}
        return TableRows(spec.kind, spec.file, source.sha256, kept, sources, stars_seen)

    def _check_columns(self, layout: _Layout) -> list:
        """The schema's columns present in the table, after reporting unknown,
        repeated and missing ones."""
        line = layout.names_line
        seen = set()
        for name in layout.names:
            if name in seen:
                self.cell_problem(line, name, f"column '{name}' appears twice")
            seen.add(name)
            if name not in self.schema:
                expected = ", ".join(self.schema)
                self.cell_problem(line, name, f"unknown column '{name}' for "
                                              f"{a_or_an(self.spec.kind)} table (its columns "
                                              f"are {expected})")
        for column in self.schema.values():
            named_elsewhere = column.name == "instrument" and self.spec.instrument is not None
            if column.name in seen and named_elsewhere:
                self.cell_problem(line, "instrument",
                                  f"has an 'instrument' column, but the campaign file names the "
                                  f"table's instrument ('{self.spec.instrument}'): keep one")
            elif column.name not in seen and column.required and not named_elsewhere:
                hint = (" (or name the table's instrument in the campaign file)"
                        if column.name == "instrument" else "")
                self.cell_problem(line, column.name, f"missing column '{column.name}'{hint}")
        return [self.schema[n] for n in dict.fromkeys(layout.names)
                if n in self.schema and not (n == "instrument" and self.spec.instrument)]

    def _units(self, layout: _Layout, columns: list) -> dict:
        """The astropy unit of every quantity column whose unit is known and right."""
        spec = self.spec
        from_campaign = spec.format == "csv"
        present = {c.name for c in columns}
        if from_campaign:
            for name in spec.units:
                column = self.schema.get(name)
                if name not in present:
                    self._unit_problem(f"units names column '{name}', which {spec.display} "
                                             "does not have")
                elif column.unit is None:
                    self._unit_problem(f"column '{name}' takes no unit")
        units = {}
        for column in columns:
            if column.unit is None:
                continue
            text = spec.units.get(column.name) if from_campaign else layout.units.get(column.name)
            if text is None:
                if column.unit == DIMENSIONLESS:
                    units[column.name] = DIMENSIONLESS
                elif from_campaign:
                    self._unit_problem(f"no unit given for column '{column.name}' of "
                                                    f"{spec.display}: add it to units = {{ ... }}")
                else:
                    self.cell_problem(layout.unit_lines.get(column.name, layout.names_line),
                                      column.name,
                                      f"column '{column.name}' has no unit in the ECSV header")
                continue
            unit, why = parse_unit(text, column.unit)
            if unit is not None:
                units[column.name] = unit
            elif from_campaign:
                self._unit_problem(f"column '{column.name}' of {spec.display}: {why}")
            else:
                self.cell_problem(layout.unit_lines.get(column.name, layout.names_line),
                                  column.name, why)
        return units

    def _unit_problem(self, message: str) -> None:
        self.problems.add(self.spec.campaign_file, message, self.spec.units_line)

    def _cells(self, layout: _Layout, columns: list):
        """Line numbers of the rows with the right number of cells, and the cell
        strings of each known column."""
        lines, cells = [], {c.name: [] for c in columns}
        position = {name: k for k, name in reversed(list(enumerate(layout.names)))}
        for line, text in layout.rows:
            try:
                row = _split(text, layout.delimiter)
            except csv.Error as err:
                self.cell_problem(line, "", f"cannot split the row into cells: {err}")
                continue
            if len(row) != len(layout.names):
                self.cell_problem(line, "", f"has {len(row)} values, but the table has "
                                            f"{len(layout.names)} columns")
                continue
            lines.append(line)
            for c in columns:
                cells[c.name].append(row[position[c.name]])
        return lines, cells

    def _convert(self, column: Column, lines: list, texts: list, unit):
        """The column's values in internal units and a mask of the good cells."""
        ok = np.ones(len(texts), dtype=bool)
        if column.role == "text":
            for k, text in enumerate(texts):
                if not text:
                    ok[k] = False
                    self.cell_problem(lines[k], column.name, "missing value")
            return np.array(texts, dtype=object), ok
        if column.role == "epoch":
            years, reasons = to_jyear(texts, self.spec.epoch_format, self.spec.epoch_scale)
            for k, reason in enumerate(reasons):
                if reason:
                    ok[k] = False
                    self.cell_problem(lines[k], column.name, reason)
            return years, ok
        numbers = np.full(len(texts), math.nan)
        for k, text in enumerate(texts):
            numbers[k], reason = _number(text)
            reason = reason or _check_number(column.role, numbers[k])
            if reason:
                ok[k] = False
                self.cell_problem(lines[k], column.name, reason)
        if unit is None:          # already reported; the rows cannot be used
            return numbers, np.zeros(len(texts), dtype=bool)
        return np.atleast_1d(convert(numbers, unit, column.unit)), ok

    def _check_instruments(self, lines: list, names) -> np.ndarray:
        ok = np.ones(len(names), dtype=bool)
        for k, name in enumerate(names):
            if not name:
                continue            # reported as a missing value
            if name not in self.instrument_kinds:
                ok[k] = False
                self.cell_problem(lines[k], "instrument", f"unknown instrument '{name}' "
                                  "(instruments are declared under [instruments])")
            elif self.instrument_kinds[name] not in (None, self.spec.kind):
                ok[k] = False
                self.cell_problem(lines[k], "instrument",
                                  f"instrument '{name}' is {a_or_an(self.instrument_kinds[name])} "
                                  f"instrument, but this is {a_or_an(self.spec.kind)} table")
        return ok


def read_table(spec: TableSpec, instrument_kinds: dict, problems: Problems) -> TableRows | None:
    """The good rows of the table `spec` describes; its problems go to `problems`.
    `instrument_kinds` maps each declared instrument to its kind (None if unknown)."""
    return _TableReader(spec, instrument_kinds, problems).read()
