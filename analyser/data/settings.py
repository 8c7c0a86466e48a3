"""The campaign file's plain settings: [campaign], [[tables]], [instruments],
[sampler] and [[gates]].

Each reader checks types, allowed values and unknown keys, records every
problem against the line it was written on, and returns what it could read.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

from ..campaign import DYNAMICS, Gate, Instrument, SamplerSettings
from .epochs import EPOCH_FORMATS, TIME_SCALES, epoch_to_jyear
from .tables import TABLE_FORMATS, TABLE_KINDS, TableSpec, a_or_an
from .tomlfile import (BOOL, INTEGER, LIST, NUMBER, REQUIRED, STRING, TABLE, CampaignFile,
                       short_repr)

SECTIONS = ("campaign", "tables", "instruments", "priors", "star_priors", "variants",
            "sampler", "gates")
INSTRUMENT_KINDS = ("astrometry", "velocity")
ERROR_MODELS = ("none", "scale", "jitter")
GATE_KINDS = ("shift", "reduced_chi2", "log_z_err", "min_ess")
DEFAULT_DYNAMICS = "analytic-1pn"


def _one_of(doc: CampaignFile, table: dict, path: tuple, key: str, choices, default=REQUIRED):
    """A string that must be one of `choices` (None, after a problem, if it is not)."""
    value = doc.get(table, path, key, STRING, default)
    if value is not None and value not in choices:
        doc.problem(path + (key,), f"'{value}' is not one of {', '.join(choices)}")
        return None
    return value


@dataclass(frozen=True)
class CampaignSettings:
    name: str
    reference_epoch_yr: float
    seed: int
    dynamics: str
    stars: object            # "all" or a list of names


def read_campaign_section(doc: CampaignFile) -> CampaignSettings:
    path = ("campaign",)
    if "campaign" not in doc.data:
        doc.problem((), "the [campaign] table is missing")
    table = doc.section("campaign")
    doc.only_keys(table, path, ("name", "reference_epoch", "seed", "dynamics", "stars"))
    name = doc.get(table, path, "name", STRING, doc.source.path.stem)
    reference_epoch = math.nan
    if "reference_epoch" in table:
        reference_epoch, why = epoch_to_jyear(table["reference_epoch"])
        if why:
            doc.problem(path + ("reference_epoch",), why)
    else:
        doc.problem(path + ("reference_epoch",), "is missing (a decimal Julian year such as "
                                                 "2016.0 or an ISO date)")
    seed = doc.get(table, path, "seed", INTEGER, 0)
    if not 0 <= seed < 2**63:
        doc.problem(path + ("seed",), f"must be a non-negative integer below 2**63, not {seed}")
        seed = 0
    dynamics = _one_of(doc, table, path, "dynamics", DYNAMICS, DEFAULT_DYNAMICS) or \
        DEFAULT_DYNAMICS
    stars = table.get("stars", "all")
    if stars != "all":
        good_list = isinstance(stars, list) and all(isinstance(s, str) and s for s in stars)
        if not good_list:
            doc.problem(path + ("stars",), f'must be "all" or a list of star names, '
                                           f"not {short_repr(stars)}")
            stars = "all"
        else:
            for s in {s for s in stars if stars.count(s) > 1}:
                doc.problem(path + ("stars",), f"star '{s}' is listed more than once")
            stars = list(dict.fromkeys(stars))
    return CampaignSettings(name, reference_epoch, seed, dynamics, stars)


def read_instruments(doc: CampaignFile) -> tuple[dict, dict]:
    """The well-formed instruments, and the kind of every declared one (None when
    its kind is invalid, so that its rows are not reported a second time)."""
    section = doc.section("instruments")
    instruments, kinds = {}, {}
    for name, table in section.items():
        path = ("instruments", name)
        kinds[name] = None
        if doc.get(section, ("instruments",), name, TABLE) is None:
            continue
        doc.only_keys(table, path, ("kind", "reference", "offset", "error_model", "outliers",
                                    "outlier_width"))
        kind = _one_of(doc, table, path, "kind", INSTRUMENT_KINDS)
        reference = doc.get(table, path, "reference", BOOL, False)
        offset = doc.get(table, path, "offset", BOOL, False)
        error_model = _one_of(doc, table, path, "error_model", ERROR_MODELS, "none") or "none"
        outliers = doc.get(table, path, "outliers", BOOL, False)
        width = doc.get(table, path, "outlier_width", NUMBER, 10.0)
        if not width > 1:
            doc.problem(path + ("outlier_width",), f"must exceed 1 (it is in units of the quoted "
                                                   f"error), not {width:g}")
        if reference and offset:
            doc.problem(path + ("offset",), "a reference instrument defines the frame and "
                                            "has no offset")
        kinds[name] = kind
        if kind is not None:
            instruments[name] = Instrument(name, kind, reference, offset and not reference,
                                           error_model, outliers, float(width))
    if not section:
        doc.problem(("instruments",), "no instruments are declared: add [instruments.<name>] "
                                      "tables")
    for kind in INSTRUMENT_KINDS:
        of_kind = [i for i in instruments.values() if i.kind == kind]
        references = [i.name for i in of_kind if i.reference]
        if of_kind and not references:
            doc.problem(("instruments", of_kind[0].name),
                        f"no {kind} instrument is the reference: mark one with reference = true")
        elif len(references) > 1:
            doc.problem(("instruments", references[1]),
                        f"several {kind} instruments are marked reference "
                        f"({', '.join(references)}); exactly one may be")
    return instruments, kinds


def read_table_specs(doc: CampaignFile, instrument_kinds: dict) -> tuple[list, bool]:
    """The tables to read, and whether that is every table the file lists (an entry
    too broken to read means some stars' rows are unknown)."""
    entries = doc.get(doc.data, (), "tables", LIST, [])
    if not entries:
        doc.problem(("tables",), "no data tables: add [[tables]] entries")
    folder = doc.source.path.parent
    specs, seen = [], {}
    complete = True
    for k, table in enumerate(entries):
        spec = _table_spec(doc, ("tables", k), table, folder, instrument_kinds)
        if spec is None:
            complete = False
        elif spec.path.resolve() in seen:
            doc.problem(("tables", k, "file"), f"{spec.display} is already listed (line "
                                               f"{doc.line(seen[spec.path.resolve()])})")
        else:
            seen[spec.path.resolve()] = ("tables", k, "file")
            specs.append(spec)
    return specs, complete


def _table_spec(doc: CampaignFile, path: tuple, table, folder: Path,
                instrument_kinds: dict) -> TableSpec | None:
    if not isinstance(table, dict):
        doc.problem(path, "each entry of tables must be a table ([[tables]])")
        return None
    doc.only_keys(table, path, ("file", "kind", "format", "epoch_format", "epoch_scale",
                                "instrument", "units"))
    file = doc.get(table, path, "file", STRING)
    kind = _one_of(doc, table, path, "kind", TABLE_KINDS)
    epoch_format = _one_of(doc, table, path, "epoch_format", EPOCH_FORMATS, "jyear")
    epoch_scale = _one_of(doc, table, path, "epoch_scale", TIME_SCALES, "tt")
    usable = None not in (file, kind, epoch_format, epoch_scale)
    format_ = table.get("format", Path(file or "").suffix.lstrip(".").lower())
    if file is not None and format_ not in TABLE_FORMATS:
        doc.problem(path + ("format",) if "format" in table else path + ("file",),
                    f"unknown table format '{format_}': use a .ecsv or .csv file, or say "
                    'format = "ecsv" or "csv"')
        usable = False
    instrument = doc.get(table, path, "instrument", STRING, None)
    if instrument is not None:
        declared = instrument_kinds.get(instrument, "undeclared")
        if declared == "undeclared":
            doc.problem(path + ("instrument",), f"unknown instrument '{instrument}'")
            usable = False
        elif kind is not None and declared not in (None, kind):
            doc.problem(path + ("instrument",),
                        f"instrument '{instrument}' is {a_or_an(declared)} instrument, "
                        f"but this is {a_or_an(kind)} table")
            usable = False
    elif "instrument" in table:
        usable = False
    units = doc.get(table, path, "units", TABLE, {})
    if units and format_ == "ecsv":
        doc.problem(path + ("units",), "an ECSV table carries its units in its header; "
                                       "remove units here")
        units = {}
    for column, text in units.items():
        if not isinstance(text, str):
            doc.problem(path + ("units", column), f"a unit must be a string, not "
                                                  f"{short_repr(text)}")
    if not usable:
        return None
    units = {c: t for c, t in units.items() if isinstance(t, str)}
    return TableSpec(file, folder / file, str(folder / file), kind, format_, epoch_format,
                     epoch_scale, instrument, units, doc.display, doc.line(path + ("units",)))


# [sampler] key -> (type, check, what the check asks for); one per SamplerSettings field
SAMPLER_RULES = {
    "live_points": (INTEGER, lambda v: v >= 10, "at least 10"),
    "dlogz": (NUMBER, lambda v: v > 0, "positive"),
    "engine": (STRING, lambda v: v in ("blocked", "stock"), "blocked or stock"),
    "bound": (STRING, lambda v: v in ("none", "single", "multi", "balls", "cubes"),
              "none, single, multi, balls or cubes"),
    "slices": (INTEGER, lambda v: v >= 0, "0 (the engine's default) or more"),
    "proposal_widen": (NUMBER, lambda v: v > 0, "positive"),
    "proposal_dof": (NUMBER, lambda v: v in (2, 3), "2 or 3 (Student-t degrees of freedom with closed forms)"),
    "prefit_starts": (INTEGER, lambda v: v >= 1, "at least 1"),
    "checkpoint_seconds": (NUMBER, lambda v: v > 0, "positive"),
    "max_calls": (INTEGER, lambda v: v >= 0, "0 (no limit) or more"),
}


def read_sampler(doc: CampaignFile) -> SamplerSettings:
    path = ("sampler",)
    table = doc.section("sampler")
    doc.only_keys(table, path, SAMPLER_RULES)
    values = {}
    for key, (kind, ok, words) in SAMPLER_RULES.items():
        value = doc.get(table, path, key, kind, None)
        if value is None:
            continue
        if not ok(value):
            doc.problem(path + (key,), f"must be {words}, not {short_repr(value)}")
            continue
        values[key] = float(value) if kind is NUMBER else value
    return SamplerSettings(**values)


def read_gates(doc: CampaignFile, parameter_names: list, instruments: dict) -> tuple:
    entries = doc.get(doc.data, (), "gates", LIST, [])
    gates, names = [], set()
    for k, table in enumerate(entries):
        path = ("gates", k)
        if not isinstance(table, dict):
            doc.problem(path, "each entry of gates must be a table ([[gates]])")
            continue
        doc.only_keys(table, path, ("name", "kind", "limit", "parameter", "instrument"))
        name = doc.get(table, path, "name", STRING)
        kind = _one_of(doc, table, path, "kind", GATE_KINDS)
        limit = doc.get(table, path, "limit", NUMBER)
        if name in names:
            doc.problem(path + ("name",), f"another gate is already named '{name}'")
        names.add(name)
        if limit is not None and not limit > 0:
            doc.problem(path + ("limit",), f"must be positive, not {limit:g}")
            limit = None
        parameter = doc.get(table, path, "parameter", STRING, "")
        instrument = doc.get(table, path, "instrument", STRING, "")
        needs = {"shift": "parameter", "reduced_chi2": "instrument"}.get(kind)
        for key in ("parameter", "instrument"):
            if kind is not None and key in table and key != needs:
                doc.problem(path + (key,), f"a {kind} gate takes no {key}")
        if needs and needs not in table:
            doc.problem(path + (needs,), f"is missing (a {kind} gate needs one)")
        if parameter and needs == "parameter" and not _matches(parameter, parameter_names):
            doc.problem(path + ("parameter",), f"'{parameter}' matches no parameter of the "
                                               "campaign ('*' may end a prefix)")
        if instrument and needs == "instrument" and instrument not in instruments:
            doc.problem(path + ("instrument",), f"unknown instrument '{instrument}'")
        if None not in (name, kind, limit):
            gates.append(Gate(name, kind, float(limit), parameter, instrument))
    return tuple(gates)


def _matches(pattern: str, names: list) -> bool:
    if pattern.endswith("*") and "*" not in pattern[:-1]:
        return any(n.startswith(pattern[:-1]) for n in names)
    return pattern in names
