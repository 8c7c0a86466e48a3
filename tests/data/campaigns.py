"""Small invented campaigns written to a folder, for the loader and `check` tests.

`good_campaign(folder)` describes a valid campaign (three fitted stars and one
that is not selected; four instruments; an ECSV and a CSV table of each kind,
with epochs as jyear, iso, mjd and jd and units as arcsec, uas, mas, m/s and
km/s).  Its `truth` holds every row in internal units, so tests can check
what the loader makes of the written text.  Tests change the description
(a cell, a unit, a prior) before writing it.

The expected line of a row is computed from the written text, independently
of the loader: the first line that is neither blank nor a comment holds the
column names, and rows follow one per line.
"""

from __future__ import annotations

import copy
import csv
import io
import math
import tomllib
from dataclasses import dataclass, field
from pathlib import Path

J2000_JD = 2451545.0      # JD of J2000.0 (TT), IAU definition of the Julian epoch
MJD_OFFSET = 2400000.5    # MJD = JD - 2400000.5 (definition)


class Inline(dict):
    """A table written inline: { uniform = [0, 1] }."""


def _key(name: str) -> str:
    bare = name and all(c.isalnum() or c in "_-" for c in name)
    return name if bare else '"' + name.replace('"', '\\"') + '"'


def _value(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, str):
        return '"' + v.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(v, float) and not math.isfinite(v):
        return "nan" if math.isnan(v) else ("inf" if v > 0 else "-inf")
    if isinstance(v, (int, float)):
        return repr(v)
    if isinstance(v, list):
        return "[" + ", ".join(_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{ " + ", ".join(f"{_key(k)} = {_value(x)}" for k, x in v.items()) + " }"
    raise TypeError(v)


def _ecsv_cell(text: str) -> str:
    """A cell of a space-delimited ECSV row: quoted when empty or holding spaces or quotes."""
    if text == "" or any(c in text for c in ' "'):
        return '"' + text.replace('"', '""') + '"'
    return text


def _is_table(v) -> bool:
    return isinstance(v, dict) and not isinstance(v, Inline)


def _is_table_array(v) -> bool:
    return isinstance(v, list) and bool(v) and all(_is_table(x) for x in v)


def toml_text(data: dict) -> str:
    """A minimal TOML writer for the structures these tests build."""
    lines: list[str] = []

    def write(path: tuple, table: dict, array: bool = False):
        if path:
            name = ".".join(_key(p) for p in path)
            lines.append(f"[[{name}]]" if array else f"[{name}]")
        for k, v in table.items():
            if not _is_table(v) and not _is_table_array(v):
                lines.append(f"{_key(k)} = {_value(v)}")
        for k, v in table.items():
            if _is_table(v):
                write(path + (k,), v)
            elif _is_table_array(v):
                for item in v:
                    write(path + (k,), item, array=True)
        lines.append("")

    write((), data)
    return "\n".join(lines)


@dataclass
class Table:
    """A data table to write: its cells as text, and its units."""
    file: str
    kind: str
    names: list
    rows: list                       # lists of cell strings
    units: dict                      # ECSV: written in the header; CSV: in the campaign file
    entry: dict = field(default_factory=dict)   # further [[tables]] keys
    comments: list = field(default_factory=list)  # CSV: comment lines before the names
    blank_line_before_rows: bool = False

    @property
    def is_ecsv(self) -> bool:
        return self.file.endswith(".ecsv")

    def text(self) -> str:
        out = io.StringIO()
        if self.is_ecsv:
            out.write("# %ECSV 1.0\n# ---\n# datatype:\n")
            for name in self.names:
                unit = f", unit: '{self.units[name]}'" if name in self.units else ""
                dtype = "string" if name in ("star", "instrument") or \
                    self.entry.get("epoch_format") == "iso" and name == "epoch" else "float64"
                out.write(f"# - {{name: {name}{unit}, datatype: {dtype}}}\n")
            out.write("# schema: astropy-2.0\n")
        else:
            for c in self.comments:
                out.write(f"# {c}\n")
        if self.is_ecsv:
            for row in [self.names] + self.rows:
                out.write(" ".join(_ecsv_cell(c) for c in row) + "\n")
                if row is self.names and self.blank_line_before_rows:
                    out.write("\n")
        else:
            writer = csv.writer(out, lineterminator="\n")
            writer.writerow(self.names)
            if self.blank_line_before_rows:
                out.write("\n")
            writer.writerows(self.rows)
        return out.getvalue()

    def row_line(self, text: str, k: int) -> int:
        """The 1-based line of row k in the written `text`."""
        body = [n for n, t in enumerate(text.splitlines(), 1)
                if t.strip() and not t.lstrip().startswith("#")]
        return body[1 + k]

    def names_line(self, text: str) -> int:
        return next(n for n, t in enumerate(text.splitlines(), 1)
                    if t.strip() and not t.lstrip().startswith("#"))

    def cell(self, k: int, column: str) -> str:
        return self.rows[k][self.names.index(column)]

    def set_cell(self, k: int, column: str, value: str) -> None:
        self.rows[k][self.names.index(column)] = value

    def drop_column(self, column: str) -> None:
        j = self.names.index(column)
        del self.names[j]
        for row in self.rows:
            del row[j]
        self.units.pop(column, None)


@dataclass
class CampaignFiles:
    folder: Path
    config: dict
    tables: list
    truth: dict = field(default_factory=dict)
    written: dict = field(default_factory=dict)   # file name -> text

    @property
    def path(self) -> Path:
        return self.folder / "campaign.toml"

    def table(self, file: str) -> Table:
        return next(t for t in self.tables if t.file == file)

    def write(self) -> Path:
        self.folder.mkdir(parents=True, exist_ok=True)
        config = copy.deepcopy(self.config)
        entries = []
        for t in self.tables:
            entry = {"file": t.file, "kind": t.kind, **t.entry}
            if not t.is_ecsv and t.units:
                entry["units"] = Inline(t.units)
            entries.append(entry)
        if entries:
            config["tables"] = entries + config.get("tables", [])
        order = ["campaign", "tables", "instruments", "priors", "star_priors", "variants",
                 "sampler", "gates"]
        config = {k: config[k] for k in order if k in config} | \
            {k: v for k, v in config.items() if k not in order}
        text = toml_text(config)
        tomllib.loads(text)   # the writer must produce valid TOML
        self.path.write_text(text)
        self.written = {"campaign.toml": text}
        for t in self.tables:
            self.written[t.file] = t.text()
            (self.folder / t.file).write_text(self.written[t.file])
        return self.path

    def campaign_line(self, start: str, after: str = "") -> int:
        """The first line of the campaign file that begins with `start` (after the
        first line that begins with `after`)."""
        lines = self.written["campaign.toml"].splitlines()
        first = next(n for n, t in enumerate(lines) if t.startswith(after)) if after else 0
        return next(n + 1 for n, t in enumerate(lines) if n >= first and t.startswith(start))

    def display(self, file: str) -> str:
        return str(self.folder / file)


def jyear_to_jd(t: float) -> float:
    return J2000_JD + (t - 2000.0) * 365.25


# Julian epochs and the same instants as ISO dates (TT), by calendar arithmetic from
# J2000.0 = 2000-01-01 12:00 TT: four Julian years are four calendar years with one leap
# day, so J2016.0 and J2020.0 fall on Jan 1 12:00; J2017.0 = J2016.0 + 365.25 d after the
# leap year 2016, J2018.0 = J2016.0 + 730.5 d.
ISO_EPOCHS = {2016.0: "2016-01-01T12:00:00", 2017.0: "2016-12-31 18:00:00",
              2018.0: "2018-01-01", 2020.0: "2020-01-01T12:00:00"}


def good_campaign(folder: Path) -> CampaignFiles:
    """A valid campaign; `truth` has the rows in internal units (mas, km/s, jyear)."""
    orca = [  # star, epoch (jyear), x mas, y mas, x_err mas, y_err mas, rho
        ("QV-1", 2010.25, 12.5, -40.0, 0.5, 0.6, 0.1),
        ("QV-1", 2012.5, 30.25, -20.5, 0.4, 0.4, -0.2),
        ("QV-1", 2014.75, 45.0, 5.125, 0.5, 0.5, 0.0),
        ("QV-2", 2011.0, -100.0, 250.0, 1.0, 1.5, 0.3),
        ("QV-3", 2013.5, 80.0, 80.0, 0.7, 0.7, 0.0),
        ("QV-3", 2015.5, 82.0, 78.0, 0.7, 0.8, 0.0),
        ("QV-9", 2012.0, 500.0, 500.0, 2.0, 2.0, 0.0),
        ("QV-1", 2011.0, 20.0, -30.0, 0.5, 0.5, 0.05),     # out of time order on purpose
    ]
    pike = [  # star, epoch (jyear, written as ISO), x mas, y mas, x_err mas, y_err mas
        ("QV-1", 2016.0, 50.0, 10.0, 0.8, 0.9),
        ("QV-1", 2017.0, 52.5, 15.0, 0.8, 0.9),
        ("QV-2", 2018.0, -98.0, 248.0, 1.2, 1.2),
        ("QV-3", 2020.0, 90.0, 70.0, 0.6, 0.6),
    ]
    moth = [  # star, epoch (jyear, written as MJD), v km/s, v_err km/s, instrument
        ("QV-1", 2012.5, 1234.5, 25.0, "MOTH"),
        ("QV-1", 2016.0, -850.25, 30.0, "NEWT"),
        ("QV-2", 2018.0, 310.0, 40.0, "MOTH"),
        ("QV-9", 2014.0, 55.0, 20.0, "MOTH"),
    ]
    newt = [  # star, epoch (jyear, written as JD), v km/s, v_err km/s
        ("QV-1", 2017.0, -600.0, 15.0),
        ("QV-2", 2020.0, 290.0, 18.0),
    ]
    tables = [
        Table("astrometry.ecsv", "astrometry",
              ["star", "epoch", "x", "y", "x_err", "y_err", "rho", "instrument"],
              [[s, repr(t), repr(x / 1000), repr(y / 1000), repr(ex), repr(ey), repr(r), "ORCA"]
               for s, t, x, y, ex, ey, r in orca],
              {"x": "arcsec", "y": "arcsec", "x_err": "mas", "y_err": "mas"},
              {"epoch_format": "jyear"}),
        Table("pike.csv", "astrometry", ["star", "epoch", "x", "y", "x_err", "y_err"],
              [[s, ISO_EPOCHS[t], repr(x), repr(y), repr(ex * 1000), repr(ey * 1000)]
               for s, t, x, y, ex, ey in pike],
              {"x": "mas", "y": "mas", "x_err": "uas", "y_err": "uas"},
              {"epoch_format": "iso", "instrument": "PIKE"},
              comments=["astrometry of the second camera", "offsets toward East and North"]),
        Table("velocities.csv", "velocity", ["star", "epoch", "v", "v_err", "instrument"],
              [[s, repr(jyear_to_jd(t) - MJD_OFFSET), repr(v * 1000), repr(e * 1000), i]
               for s, t, v, e, i in moth],
              {"v": "m/s", "v_err": "m/s"}, {"epoch_format": "mjd"},
              blank_line_before_rows=True),
        Table("newt.ecsv", "velocity", ["star", "epoch", "v", "v_err"],
              [[s, repr(jyear_to_jd(t)), repr(v), repr(e)] for s, t, v, e in newt],
              {"v": "km / s", "v_err": "km / s"}, {"epoch_format": "jd", "instrument": "NEWT"}),
    ]
    truth = {
        "astrometry": sorted(
            [(s, t, x, y, ex, ey, r, "ORCA") for s, t, x, y, ex, ey, r in orca]
            + [(s, t, x, y, ex, ey, 0.0, "PIKE") for s, t, x, y, ex, ey in pike]),
        "velocity": sorted([(s, t, v, e, i) for s, t, v, e, i in moth]
                           + [(s, t, v, e, "NEWT") for s, t, v, e in newt]),
    }
    config = {
        "campaign": {"name": "Test field, season one", "reference_epoch": 2016.0, "seed": 7,
                     "dynamics": "kepler", "stars": ["QV-1", "QV-2", "QV-3"]},
        "instruments": {
            "ORCA": {"kind": "astrometry", "reference": True, "error_model": "scale"},
            "PIKE": {"kind": "astrometry", "offset": True},
            "MOTH": {"kind": "velocity", "reference": True},
            "NEWT": {"kind": "velocity", "offset": True, "error_model": "jitter",
                     "outliers": True},
        },
        "priors": {
            "mass_msun": Inline({"log-uniform": [1e6, 1e7]}),
            "distance_pc": Inline({"uniform": [5, 12], "unit": "kpc"}),
            "PIKE.offset_x_mas": Inline({"gaussian": [0, 0.5]}),
        },
        "star_priors": {
            "default": {"period_yr": Inline({"log-uniform": [2, 2000]})},
            "QV-1": {"period_yr": Inline({"log-uniform": [3652.5, 36525], "unit": "d"}),
                     "Omega_deg": Inline({"uniform": [0, 2 * math.pi], "unit": "rad"})},
        },
    }
    return CampaignFiles(folder, config, tables, truth)
