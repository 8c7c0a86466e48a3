"""Priors and model variants from the campaign file.

A prior is written { uniform = [min, max] }, { log-uniform = [min, max] },
{ gaussian = [mean, sigma] } or { fixed = value }, with an optional
unit = "..." converted to the parameter's own unit.  [priors] holds globals
and instrument nuisances, [star_priors.default] and [star_priors."<star>"]
the per-star elements, and each [variants.<name>] replaces some of them.
Anything not given takes the default of parameters.py.  Each Variant holds
the complete set of priors it is fitted with.

Besides each prior's own checks, a value one variant fixes must lie inside the
range another variant gives the same parameter, so that the fixed variants
(Newtonian, GR) are special cases of the free one.
"""

from __future__ import annotations

import difflib
import math
import re
from dataclasses import dataclass

from ..campaign import GLOBAL_PARAMETERS, PRIOR_KINDS, STAR_PARAMETERS, Prior, Variant
from .parameters import (DEFAULT_GLOBAL_PRIORS, DEFAULT_NUISANCE_PRIORS, DEFAULT_REFERENCE_VARIANT,
                         DEFAULT_STAR_PRIORS, DEFAULT_VARIANTS, NUISANCE_PARAMETERS,
                         allowed_range, base_name, internal_unit, period_of, unit_label)
from .tomlfile import NUMBER, STRING, TABLE, CampaignFile, short_repr
from .units import convert, parse_unit

_VARIANT_NAME = re.compile(r"^[A-Za-z0-9_-]+$")
_KINDS_TEXT = "uniform, log-uniform, gaussian or fixed"


@dataclass(frozen=True)
class ParameterSpace:
    """Which parameters a campaign has: globals, per selected star, per instrument."""
    stars: tuple
    data_stars: frozenset            # every star with rows, selected or not
    instruments: dict                # name -> Instrument
    data_complete: bool = True       # False when a table could not be read at all

    def names(self) -> list:
        names = list(GLOBAL_PARAMETERS)
        names += [f"{s}.{p}" for s in self.stars for p in STAR_PARAMETERS]
        for instrument in self.instruments.values():
            names += instrument.nuisance_names()
        return names

    def why_not(self, name: str, stars_allowed: bool = True) -> str:
        """"" if `name` is a parameter of this campaign, else what is wrong with it."""
        if name in GLOBAL_PARAMETERS:
            return ""
        if "." not in name:
            return f"unknown parameter '{name}'{self.suggest(name)}"
        owner, base = name.rsplit(".", 1)
        if owner in self.instruments:
            carried = self.instruments[owner].nuisance_names()
            if name in carried:
                return ""
            if base in NUISANCE_PARAMETERS:
                has = ", ".join(base_name(n) for n in carried) or "none"
                return (f"instrument '{owner}' has no parameter '{base}' (it has: {has}; "
                        "its offset, error_model and outliers settings decide)")
            return f"unknown parameter '{base}' of instrument '{owner}'{self.suggest(name)}"
        if owner in self.stars or owner in self.data_stars:
            if base not in STAR_PARAMETERS:
                return f"unknown star parameter '{base}'{self.suggest(base, STAR_PARAMETERS)}"
            if not stars_allowed:
                return f"star priors go under [star_priors.\"{owner}\"]"
            return ""
        if not self.data_complete and base in STAR_PARAMETERS:
            return ""                # its table may be the one that could not be read
        return f"unknown star or instrument '{owner}'"

    def is_fitted(self, name: str) -> bool:
        """False for the parameters of a star that has data but is not selected."""
        owner = name.rsplit(".", 1)[0] if "." in name else ""
        return not (owner in self.data_stars and owner not in self.stars)

    def suggest(self, name: str, choices=None) -> str:
        """'; did you mean ...?' for the closest known name, if one is close."""
        close = difflib.get_close_matches(name, choices or self.names(), n=1)
        return f"; did you mean '{close[0]}'?" if close else ""


def parse_prior(doc: CampaignFile, path: tuple, name: str, spec) -> Prior | None:
    """The Prior written at `path` for parameter `name`, or None after recording why not."""
    if not isinstance(spec, dict):
        doc.problem(path, f"a prior is written like {{ uniform = [0, 1] }} or {{ fixed = 1 }}, "
                          f"not {short_repr(spec)}")
        return None
    kinds = [k for k in spec if k != "unit"]
    unknown = [k for k in kinds if k not in PRIOR_KINDS]
    for k in unknown:
        doc.problem(path + (k,), f"unknown prior kind '{k}' (expected {_KINDS_TEXT})")
    if unknown:
        return None
    if len(kinds) != 1:
        doc.problem(path, f"give exactly one prior kind ({_KINDS_TEXT})")
        return None
    kind = kinds[0]
    target = internal_unit(name)
    unit = target
    if "unit" in spec:
        unit, why = parse_unit(spec["unit"], target)
        if unit is None:
            doc.problem(path + ("unit",), why)
            return None
    raw = spec[kind]
    if kind == "fixed":
        if not NUMBER.test(raw):
            doc.problem(path + (kind,), f"must be a finite number, not {short_repr(raw)}")
            return None
        numbers = [raw]
    elif not (isinstance(raw, list) and len(raw) == 2 and all(NUMBER.test(v) for v in raw)):
        shape = "[mean, sigma]" if kind == "gaussian" else "[min, max]"
        doc.problem(path + (kind,), f"must be two finite numbers {shape}, not {short_repr(raw)}")
        return None
    else:
        numbers = raw
    values = [convert(v, unit, target) for v in numbers]
    if not all(math.isfinite(v) for v in values):
        doc.problem(path, f"is not finite in{unit_label(name)}")
        return None
    why = _prior_problem(name, kind, values)
    if why:
        doc.problem(path, why)
        return None
    period = period_of(name)
    if kind == "uniform" and period and math.isclose(values[1] - values[0], period):
        return Prior(kind, values[0], values[1], period=period)
    return Prior(kind, *values)


def _prior_problem(name: str, kind: str, values: list) -> str:
    """What is wrong with a prior of `kind` and `values` (internal unit) for `name`."""
    units = unit_label(name)
    allowed = allowed_range(name)
    period = period_of(name)
    if kind == "fixed":
        if not allowed.contains(values[0]):
            return (f"fixed value {values[0]:g}{units} lies outside the allowed range "
                    f"{allowed.describe()} of {base_name(name)}")
        return ""
    a, b = values
    if kind == "gaussian":
        if not b > 0:
            return f"the Gaussian's sigma must be positive, not {b:g}"
        if not allowed.contains(a):
            return (f"the Gaussian's mean {a:g}{units} lies outside the allowed range "
                    f"{allowed.describe()} of {base_name(name)}")
        return ""
    if not a < b:
        return f"min ({a:g}) must be less than max ({b:g})"
    if kind == "log-uniform" and not a > 0:
        return f"a log-uniform prior needs positive bounds, not [{a:g}, {b:g}]"
    if not allowed.contains_interval(a, b):
        return (f"[{a:g}, {b:g}]{units} reaches outside the allowed range "
                f"{allowed.describe()} of {base_name(name)}")
    if period and kind == "log-uniform":
        return f"{base_name(name)} is periodic: give it a uniform, Gaussian or fixed prior"
    if period and b - a > period * (1 + 1e-12):
        return (f"a uniform prior on {base_name(name)} may span at most one period "
                f"({period:g}{units})")
    return ""


@dataclass(frozen=True)
class _Given:
    """A prior as the fit uses it, and where the campaign file wrote it (path () for
    a default)."""
    prior: Prior
    where: str = "the defaults"
    path: tuple = ()


@dataclass(frozen=True)
class PriorSet:
    global_priors: dict
    nuisance_priors: dict
    star_priors: dict                # star -> {parameter: Prior}
    variants: tuple
    reference_variant: str


class _PriorReader:
    def __init__(self, doc: CampaignFile, space: ParameterSpace):
        self.doc = doc
        self.space = space
        self.base: dict[str, _Given] = {}            # every parameter's campaign prior
        self.variants_given: list[tuple[str, str, dict]] = []  # name, description, overrides

    def read_base(self) -> None:
        """[priors] and [star_priors] over the defaults."""
        doc, space = self.doc, self.space
        self.base = {n: _Given(p) for n, p in DEFAULT_GLOBAL_PRIORS.items()}
        self.base.update({f"{s}.{p}": _Given(prior) for s in space.stars
                          for p, prior in DEFAULT_STAR_PRIORS.items()})
        self.base.update({n: _Given(DEFAULT_NUISANCE_PRIORS[base_name(n)])
                          for i in space.instruments.values() for n in i.nuisance_names()})
        for name, spec in doc.section("priors").items():
            path = ("priors", name)
            why = space.why_not(name, stars_allowed=False)
            if why:
                doc.problem(path, why)
                continue
            prior = parse_prior(doc, path, name, spec)
            if prior is not None:
                self.base[name] = _Given(prior, "[priors]", path)
        self._read_star_priors()

    def _read_star_priors(self) -> None:
        doc, space = self.doc, self.space
        section = doc.section("star_priors")
        specific = []        # star-specific entries apply after the defaults
        for owner, table in section.items():
            path = ("star_priors", owner)
            if owner != "default" and owner not in space.data_stars:
                if space.data_complete:
                    doc.problem(path, f"unknown star '{owner}': no table has rows for it")
                continue
            if doc.get(section, ("star_priors",), owner, TABLE) is None:
                continue
            for parameter, spec in table.items():
                if parameter not in STAR_PARAMETERS:
                    doc.problem(path + (parameter,), f"unknown star parameter '{parameter}'"
                                f"{space.suggest(parameter, STAR_PARAMETERS)}")
                    continue
                name = parameter if owner == "default" else f"{owner}.{parameter}"
                prior = parse_prior(doc, path + (parameter,), name, spec)
                if prior is None:
                    continue
                given = _Given(prior, f"[star_priors.{owner}]", path + (parameter,))
                if owner == "default":
                    self.base.update({f"{star}.{parameter}": given for star in space.stars})
                elif owner in space.stars:   # else: a star left out of this fit
                    specific.append((name, given))
        self.base.update(specific)

    def read_variants(self) -> str:
        """The [variants] tables (or the defaults); returns the reference variant's name."""
        doc = self.doc
        section = doc.section("variants")
        reference = doc.get(section, ("variants",), "reference", STRING, "")
        for name, table in section.items():
            if name == "reference":
                continue
            path = ("variants", name)
            if not _VARIANT_NAME.match(name):
                doc.problem(path, "a variant name may hold only letters, digits, '-' and '_'")
            if doc.get(section, ("variants",), name, TABLE) is None:
                continue
            description = doc.get(table, path, "description", STRING, "")
            overrides = {}
            for parameter, spec in table.items():
                if parameter == "description":
                    continue
                why = self.space.why_not(parameter)
                if why:
                    doc.problem(path + (parameter,), why)
                    continue
                prior = parse_prior(doc, path + (parameter,), parameter, spec)
                if prior is not None and self.space.is_fitted(parameter):
                    overrides[parameter] = _Given(prior, f"variant '{name}'", path + (parameter,))
            self.variants_given.append((name, description, overrides))
        if not self.variants_given:
            self.variants_given = [(name, description, {n: _Given(p) for n, p in priors.items()})
                                   for name, description, priors in DEFAULT_VARIANTS]
            reference = reference or DEFAULT_REFERENCE_VARIANT
        names = [name for name, _, _ in self.variants_given]
        if not reference:
            if len(names) == 1:
                return names[0]
            doc.problem(("variants",), f'say which variant is the reference: '
                                       f'reference = "{names[0]}"')
        elif reference not in names:
            doc.problem(("variants", "reference"), f"reference variant '{reference}' is not "
                                                   f"defined (variants: {', '.join(names)})")
        return reference

    def check_nesting(self) -> None:
        """A value one variant fixes must lie in the range another variant gives the
        same parameter, where at least one of the two was written in the file."""
        reported = set()
        for name, base in self.base.items():
            used = [overrides.get(name, base) for _, _, overrides in self.variants_given]
            for fixed in (g for g in used if g.prior.is_fixed):
                for ranged in (g for g in used if g.prior.kind in ("uniform", "log-uniform")):
                    where = fixed.path or ranged.path
                    if ranged.prior.contains(fixed.prior.a) or not where or \
                            (fixed.path, ranged.path) in reported:
                        continue
                    reported.add((fixed.path, ranged.path))
                    self.doc.problem(where, (
                        f"{name} is fixed at {fixed.prior.a:g} in {fixed.where}, outside the "
                        f"range [{ranged.prior.a:g}, {ranged.prior.b:g}] it has in "
                        f"{ranged.where}; the fixed model would not be a special case of the "
                        "free one"))

    def prior_set(self, reference: str) -> PriorSet:
        base = {name: given.prior for name, given in self.base.items()}
        globals_ = {n: base[n] for n in GLOBAL_PARAMETERS}
        stars = {s: {p: base[f"{s}.{p}"] for p in STAR_PARAMETERS} for s in self.space.stars}
        nuisances = {n: base[n] for i in self.space.instruments.values()
                     for n in i.nuisance_names()}
        variants = tuple(
            Variant(name, {**base, **{n: g.prior for n, g in overrides.items()}}, description)
            for name, description, overrides in self.variants_given)
        return PriorSet(globals_, nuisances, stars, variants, reference)


def read_priors(doc: CampaignFile, space: ParameterSpace) -> PriorSet:
    reader = _PriorReader(doc, space)
    reader.read_base()
    reference = reader.read_variants()
    reader.check_nesting()
    return reader.prior_set(reference)
