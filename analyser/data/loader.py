"""Loading a campaign: the campaign file and its tables -> one validated Campaign.

The steps run in order (settings, instruments, tables, stars, priors and
variants, sampler, gates), and each goes on after a problem, so one run
reports everything wrong at once.  Only when nothing is wrong are the rows of
all tables merged, sorted by (star, epoch), split into the fitted stars and
the excluded rest, and returned with the SHA-256 of every input file.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ..campaign import AstrometryData, Campaign, ExcludedRow, VelocityData
from .files import read_input
from .priors import ParameterSpace, read_priors
from .problems import Problems
from .settings import (SECTIONS, read_campaign_section, read_gates, read_instruments,
                       read_sampler, read_table_specs)
from .tables import SCHEMAS, TableRows, read_table
from .tomlfile import CampaignFile

# Two rows of one star and instrument closer in time than this are the same epoch.
DUPLICATE_SECONDS = 1.0
_YEAR_SECONDS = 365.25 * 86400.0


def load(path: Path) -> Campaign:
    """Read, check and return the campaign at `path`; raise CampaignError listing
    every problem found in it and its tables."""
    path = Path(path)
    problems = Problems(lead_file=str(path))
    source = read_input(path, str(path), problems)
    doc = CampaignFile.parse(source, problems) if source else None
    if doc is None:
        problems.raise_if_any()
    doc.only_keys(doc.data, (), SECTIONS)

    settings = read_campaign_section(doc)
    instruments, instrument_kinds = read_instruments(doc)
    specs, specs_complete = read_table_specs(doc, instrument_kinds)
    tables = [read_table(spec, instrument_kinds, problems) for spec in specs]
    complete = specs_complete and None not in tables
    tables = [t for t in tables if t is not None]
    rows = {kind: _merge(kind, [t for t in tables if t.kind == kind]) for kind in SCHEMAS}
    for kind_rows in rows.values():
        _report_duplicates(kind_rows, problems)

    data_stars = frozenset().union(*(t.stars_seen for t in tables))
    stars = _select_stars(doc, settings.stars, data_stars, complete)
    for clash in sorted(set(stars) & set(instruments)):
        doc.problem(("instruments", clash), f"'{clash}' names both a star and an instrument")
    if complete and not any(t.kind == "astrometry" for t in tables):
        doc.problem(("tables",), "there is no astrometry table; orbits need sky positions")

    space = ParameterSpace(tuple(stars), data_stars, instruments, complete)
    priors = read_priors(doc, space)
    sampler = read_sampler(doc)
    gates = read_gates(doc, space.names(), instruments)
    problems.raise_if_any()

    astrometry, excluded_a = _split_rows(rows["astrometry"], stars)
    velocities, excluded_v = _split_rows(rows["velocity"], stars)
    excluded = sorted(excluded_a + excluded_v, key=lambda r: (r.source.file, r.source.line))
    hashes = {path.name: source.sha256, **{t.file: t.sha256 for t in tables}}
    return Campaign(
        name=settings.name, path=path, seed=settings.seed,
        reference_epoch_yr=settings.reference_epoch_yr, dynamics=settings.dynamics,
        stars=tuple(stars), instruments=instruments,
        astrometry=AstrometryData(**astrometry), velocities=VelocityData(**velocities),
        global_priors=priors.global_priors, nuisance_priors=priors.nuisance_priors,
        star_priors=priors.star_priors, variants=priors.variants,
        reference_variant=priors.reference_variant, sampler=sampler, gates=gates,
        excluded=tuple(excluded), input_files=hashes)


def _merge(kind: str, tables: list[TableRows]) -> dict:
    """The rows of several tables of one kind, as one set of arrays plus sources."""
    merged = {c.key: np.concatenate([t.values[c.key] for t in tables] or [np.array([])])
              for c in SCHEMAS[kind]}
    merged["source"] = [s for t in tables for s in t.source]
    return merged


def _report_duplicates(rows: dict, problems: Problems) -> None:
    """Rows of the same star and instrument at the same epoch, naming both lines."""
    sources = rows["source"]
    if not sources:
        return
    order = sorted(range(len(sources)), key=lambda k: (rows["star"][k], rows["instrument"][k],
                                                       rows["epoch_yr"][k]))
    tolerance = DUPLICATE_SECONDS / _YEAR_SECONDS
    for first, second in zip(order, order[1:]):
        same = (rows["star"][first] == rows["star"][second]
                and rows["instrument"][first] == rows["instrument"][second]
                and abs(rows["epoch_yr"][first] - rows["epoch_yr"][second]) < tolerance)
        if same:
            a, b = sorted((sources[first], sources[second]), key=lambda s: (s.file, s.line))
            where = f"line {a.line}" if a.file == b.file else f"{a.file}, line {a.line}"
            problems.add(b.file, f"duplicate row: star '{rows['star'][second]}', instrument "
                                 f"'{rows['instrument'][second]}' at this epoch is already "
                                 f"in {where}", b.line)


def _select_stars(doc: CampaignFile, wanted, data_stars: frozenset, complete: bool) -> list:
    if wanted == "all":
        stars = sorted(data_stars)
    else:
        stars = [s for s in wanted if s in data_stars]
        if complete:
            for s in wanted:
                if s not in data_stars:
                    doc.problem(("campaign", "stars"),
                                f"unknown star '{s}': it is selected but no table has rows for it")
    if complete and not stars:
        doc.problem(("campaign", "stars"), "no stars to fit")
    return stars


def _split_rows(rows: dict, stars: list) -> tuple[dict, list]:
    """The rows of the selected stars sorted by (star, epoch), as the fields of
    AstrometryData / VelocityData, and the other rows as ExcludedRow."""
    sources = rows.pop("source", [])
    selected = set(stars)
    star = rows.get("star", np.array([], dtype=object))
    keep = [k for k in range(len(sources)) if star[k] in selected]
    keep.sort(key=lambda k: (star[k], rows["epoch_yr"][k], rows["instrument"][k],
                             sources[k].file, sources[k].line))
    excluded = [ExcludedRow(sources[k], f"star '{star[k]}' is not selected")
                for k in range(len(sources)) if star[k] not in selected]
    fields = {}
    for key, values in rows.items():
        picked = values[keep] if len(values) else values
        array = picked.astype(str) if key in ("star", "instrument") else picked.astype(float)
        array.flags.writeable = False      # a Campaign is immutable
        fields[key] = array
    fields["source"] = tuple(sources[k] for k in keep)
    return fields, excluded
