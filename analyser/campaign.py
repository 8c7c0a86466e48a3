"""The campaign: one validated, immutable description of a season's analysis.

A campaign file (TOML, documented in docs/campaign.md) names the data tables,
the instruments, the stars to fit, the priors of every parameter, the model
variants, the dynamics, the sampler settings, the CI gates and the seed.
`load_campaign(path)` reads it and its tables, checks everything and returns
a `Campaign`; every problem found is collected and raised at once as a
`CampaignError` whose `problems` each name the file, line and column.

Everything in a Campaign is in the package's internal units: decimal Julian
years, mas, mas/yr, km/s, M_sun, pc.  Parameter names carry their unit.

Parameter names
  globals     mass_msun, distance_pc, x0_mas, y0_mas, vx0_mas_yr, vy0_mas_yr,
              vz0_km_s, f_sp, f_z
  per star    <star>.period_yr, <star>.e, <star>.cos_i, <star>.Omega_deg,
              <star>.omega_deg, <star>.phase  (phase = fraction of the radial
              period elapsed since the last periapsis passage at the reference
              epoch, periodic; it picks the passage the elements osculate at)
  nuisances   <instrument>.offset_x_mas, <instrument>.offset_y_mas,
              <instrument>.zero_point_km_s, <instrument>.error_scale,
              <instrument>.jitter_mas | <instrument>.jitter_km_s,
              <instrument>.outlier_fraction
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Mapping

import numpy as np

GLOBAL_PARAMETERS = ("mass_msun", "distance_pc", "x0_mas", "y0_mas", "vx0_mas_yr",
                     "vy0_mas_yr", "vz0_km_s", "f_sp", "f_z")
STAR_PARAMETERS = ("period_yr", "e", "cos_i", "Omega_deg", "omega_deg", "phase")
PERIODIC_STAR_PARAMETERS = {"Omega_deg": 360.0, "omega_deg": 360.0, "phase": 1.0}
PRIOR_KINDS = ("uniform", "log-uniform", "gaussian", "fixed")
DYNAMICS = ("kepler", "analytic-1pn", "numerical-1pn")


@dataclass(frozen=True)
class Prior:
    """A one-dimensional prior in the parameter's internal unit.

    kind: "uniform" (a = min, b = max), "log-uniform" (a = min > 0, b = max),
    "gaussian" (a = mean, b = sigma > 0), "fixed" (a = value).
    `period` > 0 marks a periodic parameter (its uniform range is one period).
    """
    kind: str
    a: float
    b: float = math.nan
    period: float = 0.0

    @property
    def is_fixed(self) -> bool:
        return self.kind == "fixed"

    @property
    def centre(self) -> float:
        """A representative value: the value, the mean, or the middle (geometric
        for log-uniform)."""
        if self.kind in ("fixed", "gaussian"):
            return self.a
        if self.kind == "log-uniform":
            return math.sqrt(self.a * self.b)
        return 0.5 * (self.a + self.b)

    def contains(self, value: float) -> bool:
        if self.kind in ("uniform", "log-uniform"):
            return self.a <= value <= self.b
        return math.isfinite(value)

    def describe(self) -> str:
        if self.kind == "fixed":
            return f"fixed at {self.a:g}"
        if self.kind == "gaussian":
            return f"Gaussian({self.a:g}, {self.b:g})"
        return f"{self.kind} [{self.a:g}, {self.b:g}]"


@dataclass(frozen=True)
class Instrument:
    """An instrument and the nuisance parameters it carries.

    kind: "astrometry" or "velocity".  `reference`: the frame (astrometry) or
    velocity zero point is defined by it, so it has no offset.  `offset`: fit an
    astrometric offset (x, y) or a velocity zero point relative to the
    reference.  error_model: "none", "scale" (errors times a free factor) or
    "jitter" (a free term added in quadrature).  `outliers`: a per-point
    outlier mixture whose broad component is `outlier_width` times the error.
    """
    name: str
    kind: str
    reference: bool = False
    offset: bool = False
    error_model: str = "none"
    outliers: bool = False
    outlier_width: float = 10.0

    def nuisance_names(self) -> tuple[str, ...]:
        names = []
        if self.offset:
            if self.kind == "astrometry":
                names += [f"{self.name}.offset_x_mas", f"{self.name}.offset_y_mas"]
            else:
                names.append(f"{self.name}.zero_point_km_s")
        if self.error_model == "scale":
            names.append(f"{self.name}.error_scale")
        elif self.error_model == "jitter":
            unit = "mas" if self.kind == "astrometry" else "km_s"
            names.append(f"{self.name}.jitter_{unit}")
        if self.outliers:
            names.append(f"{self.name}.outlier_fraction")
        return tuple(names)


@dataclass(frozen=True)
class RowSource:
    """Where a data row came from: the file and its 1-based line number."""
    file: str
    line: int


@dataclass(frozen=True)
class AstrometryData:
    """Astrometric epochs, sorted by (star, epoch).  Arrays of equal length."""
    star: np.ndarray        # str
    epoch_yr: np.ndarray    # decimal Julian year (arrival time)
    x_mas: np.ndarray       # East
    y_mas: np.ndarray       # North
    x_err_mas: np.ndarray
    y_err_mas: np.ndarray
    rho: np.ndarray         # x-y error correlation, 0 where not given
    instrument: np.ndarray  # str
    source: tuple[RowSource, ...]

    def __len__(self) -> int:
        return len(self.epoch_yr)


@dataclass(frozen=True)
class VelocityData:
    """Line-of-sight velocities (c z, barycentric/LSR-corrected by the observer),
    sorted by (star, epoch)."""
    star: np.ndarray
    epoch_yr: np.ndarray
    v_km_s: np.ndarray
    v_err_km_s: np.ndarray
    instrument: np.ndarray
    source: tuple[RowSource, ...]

    def __len__(self) -> int:
        return len(self.epoch_yr)


@dataclass(frozen=True)
class ExcludedRow:
    """A row read but not used, and why (e.g. its star is not selected)."""
    source: RowSource
    reason: str


@dataclass(frozen=True)
class Variant:
    """A model variant: the campaign's priors with some replaced (usually f_sp, f_z)."""
    name: str
    priors: Mapping[str, Prior]
    description: str = ""


@dataclass(frozen=True)
class SamplerSettings:
    """Nested-sampling settings.  engine "blocked": the package's compiled
    block-slice engine with a repartitioned prior; "stock": dynesty's own
    rslice sampler on the original prior (for comparisons)."""
    live_points: int = 400
    dlogz: float = 0.1
    engine: str = "blocked"
    bound: str = "single"
    slices: int = 0            # 0: the engine's default
    proposal_widen: float = 2.0
    proposal_dof: float = 3.0
    prefit_starts: int = 12
    checkpoint_seconds: float = 120.0
    max_calls: int = 0         # 0: no limit


@dataclass(frozen=True)
class Gate:
    """A CI gate.  kind: "shift" (|shift| in combined sigma of `parameter`
    against the baseline, `parameter` may end in '*' as a prefix match),
    "reduced_chi2" (per `instrument`), "log_z_err" or "min_ess" (sampler
    health, per variant).  `limit` is the largest (smallest for min_ess)
    acceptable value."""
    name: str
    kind: str
    limit: float
    parameter: str = ""
    instrument: str = ""


@dataclass(frozen=True)
class Campaign:
    name: str
    path: Path
    seed: int
    reference_epoch_yr: float
    dynamics: str
    stars: tuple[str, ...]
    instruments: Mapping[str, Instrument]
    astrometry: AstrometryData
    velocities: VelocityData
    global_priors: Mapping[str, Prior]
    nuisance_priors: Mapping[str, Prior]
    star_priors: Mapping[str, Mapping[str, Prior]]
    variants: tuple[Variant, ...]
    reference_variant: str
    sampler: SamplerSettings = field(default_factory=SamplerSettings)
    gates: tuple[Gate, ...] = ()
    excluded: tuple[ExcludedRow, ...] = ()
    input_files: Mapping[str, str] = field(default_factory=dict)  # path -> SHA-256

    def variant(self, name: str) -> Variant:
        for v in self.variants:
            if v.name == name:
                return v
        raise KeyError(f"campaign {self.name!r} has no variant {name!r}")

    def stars_without_velocities(self) -> tuple[str, ...]:
        with_v = set(self.velocities.star.tolist())
        return tuple(s for s in self.stars if s not in with_v)


@dataclass(frozen=True)
class Problem:
    """One thing wrong with the input, located as precisely as possible."""
    file: str
    message: str
    line: int = 0
    column: str = ""

    def __str__(self) -> str:
        where = self.file
        if self.line:
            where += f", line {self.line}"
        if self.column:
            where += f", column '{self.column}'"
        return f"{where}: {self.message}"


class CampaignError(Exception):
    """Raised with every problem found in a campaign and its tables."""

    def __init__(self, problems):
        self.problems = tuple(problems)
        super().__init__("\n".join(str(p) for p in self.problems))


def load_campaign(path) -> Campaign:
    """Read, validate and return the campaign at `path` (raises CampaignError)."""
    from .data.loader import load
    return load(Path(path))
