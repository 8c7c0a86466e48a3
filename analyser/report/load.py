"""Reading a results bundle for the report, and saying plainly what is wrong with it.

`load_bundle(dir)` checks that results.json exists, parses and has the
expected schema and keys, and that every file it names (samples, residuals,
the fitted data) is there; it raises BundleError with a one-line message
otherwise.  Tables are read lazily and cached, since not every figure needs
every table.
"""

import json
from dataclasses import dataclass, field
from functools import cached_property
from pathlib import Path

import numpy as np

SCHEMA_PREFIX = "analyser-results/"
REQUIRED_KEYS = ("campaign", "variants", "model_comparison", "software", "reference_epoch_yr")
VARIANT_KEYS = ("log_z", "log_z_err", "globals", "stars", "derived", "residuals",
                "samples_file", "residuals_file")


class BundleError(Exception):
    """The folder is not a usable results bundle; the message says why, in one line."""


@dataclass
class Bundle:
    path: Path
    doc: dict
    comparison: dict = None          # comparison.json, when a season comparison wrote one
    _tables: dict = field(default_factory=dict)

    # ---- the campaign and its variants
    @property
    def campaign(self):
        return self.doc["campaign"]

    @property
    def variants(self):
        return self.doc["variants"]

    @property
    def reference(self):
        """The variant the report's star tables and figures describe: the
        campaign's reference variant (the one Bayes factors are quoted against)."""
        return self.doc["model_comparison"]["reference"]

    @property
    def stars(self):
        return [s["name"] for s in self.campaign["stars"]]

    @property
    def instruments(self):
        return [i["name"] for i in self.campaign["instruments"]]

    @property
    def t_ref(self):
        return float(self.doc["reference_epoch_yr"])

    @property
    def dynamics(self):
        return self.campaign["dynamics"]

    def free_relativity_variant(self):
        """A variant in which f_SP and/or f_z are free, preferring both free."""
        best = None
        for name, v in self.variants.items():
            free = [p for p in ("f_sp", "f_z") if "fixed" not in v["globals"].get(p, {"fixed": 0})]
            if len(free) == 2:
                return name
            if free and best is None:
                best = name
        return best

    # ---- tables
    def _table(self, rel):
        if rel not in self._tables:
            from astropy.table import Table
            self._tables[rel] = Table.read(self.path / rel, format="ascii.ecsv")
        return self._tables[rel]

    def samples(self, variant):
        return self._table(self.variants[variant]["samples_file"])

    def residuals(self, variant):
        return self._table(self.variants[variant]["residuals_file"])

    @cached_property
    def astrometry(self):
        return self._table("data/astrometry.ecsv")

    @cached_property
    def velocities(self):
        return self._table("data/velocities.ecsv")

    def column(self, variant, name):
        return np.asarray(self.samples(variant)[name], dtype=float)


def load_bundle(bundle_dir):
    """The Bundle in `bundle_dir`, or BundleError saying what is missing or broken."""
    path = Path(bundle_dir)
    if not path.is_dir():
        raise BundleError(f"{path}: no such folder")
    results = path / "results.json"
    if not results.is_file():
        raise BundleError(f"{path}: not a results bundle (no results.json); "
                          "run `analyser fit CAMPAIGN --out DIR` first")
    try:
        doc = json.loads(results.read_text())
    except (ValueError, UnicodeDecodeError) as exc:
        raise BundleError(f"{results}: not valid JSON ({exc})") from None
    if not isinstance(doc, dict) or not str(doc.get("schema", "")).startswith(SCHEMA_PREFIX):
        raise BundleError(f"{results}: unknown schema {doc.get('schema') if isinstance(doc, dict) else None!r} "
                          f"(expected {SCHEMA_PREFIX}...)")
    missing = [k for k in REQUIRED_KEYS if k not in doc]
    if missing:
        raise BundleError(f"{results}: missing {', '.join(missing)}")
    if not doc["variants"]:
        raise BundleError(f"{results}: no fitted variants")
    for name, v in doc["variants"].items():
        lacking = [k for k in VARIANT_KEYS if k not in v]
        if lacking:
            raise BundleError(f"{results}: variant {name!r} lacks {', '.join(lacking)}")
        for key in ("samples_file", "residuals_file"):
            if not (path / v[key]).is_file():
                raise BundleError(f"{path}: variant {name!r} names {v[key]}, which is missing")
    for rel in ("data/astrometry.ecsv", "data/velocities.ecsv"):
        if not (path / rel).is_file():
            raise BundleError(f"{path}: {rel} is missing (the fitted data)")
    comparison = None
    if (path / "comparison.json").is_file():
        try:
            comparison = json.loads((path / "comparison.json").read_text())
        except ValueError as exc:
            raise BundleError(f"{path / 'comparison.json'}: not valid JSON ({exc})") from None
    return Bundle(path=path, doc=doc, comparison=comparison)
