"""Model curves from posterior samples, computed with the physics core.

One row of a variant's sample table holds every global parameter and every
star's elements, so it is a complete model: `sample_globals` and
`sample_elements` turn a row into what `analyser.physics.predict_observables`
takes.  Epoch grids are dense near periapsis (uniform in eccentric anomaly)
as well as uniform in time, so that a passage lasting days is not drawn as a
kink.  The data are brought onto the reference instrument's frame and zero
point with the best sample's offsets before they are plotted against curves.
"""

import math

import numpy as np

from ..physics import predict_observables
from ..results.summaries import mirror_modes

GLOBALS = ("mass_msun", "distance_pc", "x0_mas", "y0_mas", "vx0_mas_yr", "vy0_mas_yr",
           "vz0_km_s", "f_sp", "f_z")
ELEMENTS = ("period_yr", "e", "i_deg", "Omega_deg", "omega_deg", "t_p_yr")
DRAWS = 30                # posterior draws per star figure
DRAW_SEED = 20240101      # fixed, so a report rebuilt from the same bundle is the same


def sample_globals(table, row, t_ref):
    out = {k: float(table[k][row]) for k in GLOBALS}
    out["t_ref_yr"] = float(t_ref)
    return out


def sample_elements(table, row, star):
    return {k: float(table[f"{star}.{k}"][row]) for k in ELEMENTS}


def best_row(table, variant_doc):
    """Index of the maximum-posterior sample, as recorded in results.json
    (older bundles: the row whose values match the 'map' entries)."""
    index = variant_doc.get("best_sample", {}).get("index")
    if index is not None and 0 <= index < len(table):
        return int(index)
    score = np.zeros(len(table))
    used = 0
    for name, summ in variant_doc["globals"].items():
        if "map" in summ and summ.get("std"):
            score += np.abs(np.asarray(table[name], dtype=float) - summ["map"]) / summ["std"]
            used += 1
    return int(np.argmin(score)) if used else 0


def draw_rows(n_rows, k=DRAWS, seed=DRAW_SEED):
    rng = np.random.default_rng(seed)
    return np.sort(rng.choice(n_rows, size=min(k, n_rows), replace=False))


def mode_masks(bundle, variant, star):
    """Boolean masks of the samples in each mirror mode of `star` (None if the
    star has no mirror ambiguity in this variant)."""
    info = bundle.variants[variant].get("mirror_ambiguity", {}).get(star)
    if not info:
        return None
    first = info["modes"][0].get("parameters") or {}
    table = bundle.samples(variant)
    omega = np.asarray(table[f"{star}.Omega_deg"], dtype=float)
    ref = first.get("Omega_deg", {}).get("median", float(np.median(omega)))
    mask = mirror_modes(omega, ref)
    return mask, ~mask


def orbit_epochs(elements, radial_period, t0, t1, n=500):
    """Epochs in [t0, t1]: a uniform grid plus, for every orbit touching the
    interval, points uniform in eccentric anomaly (dense near periapsis)."""
    e, t_p = elements["e"], elements["t_p_yr"]
    big_e = np.linspace(0.0, 2.0 * math.pi, n, endpoint=False)
    frac = (big_e - e * np.sin(big_e)) / (2.0 * math.pi)
    grids = [np.linspace(t0, t1, n)]
    first = math.floor((t0 - t_p) / radial_period) - 1
    last = math.ceil((t1 - t_p) / radial_period) + 1
    if last - first > 60:           # very short periods: the uniform grid is plenty dense
        first, last = first, first + 60
    for k in range(first, last + 1):
        grids.append(t_p + (k + frac) * radial_period)
    t = np.concatenate(grids)
    return np.unique(t[(t >= t0) & (t <= t1)])


def one_orbit(elements, radial_period, centre):
    """Epochs of one full radial period around `centre`, closed at the ends."""
    t0 = centre - 0.5 * radial_period
    return orbit_epochs(elements, radial_period, t0, t0 + radial_period)


def observables(table, row, star, epochs, t_ref, dynamics):
    """(x_mas, y_mas, v_km_s) of one sample at arrival epochs."""
    return predict_observables(sample_globals(table, row, t_ref),
                               sample_elements(table, row, star), np.asarray(epochs),
                               dynamics)


def instrument_terms(table, row):
    """{instrument: (dx_mas, dy_mas, dv_km_s)} of one sample (zeros where the
    instrument carries no such term): what the model adds for each instrument."""
    out = {}
    for name in table.colnames:
        if "." not in name:
            continue
        owner, base = name.rsplit(".", 1)
        slot = {"offset_x_mas": 0, "offset_y_mas": 1, "zero_point_km_s": 2}.get(base)
        if slot is not None:
            terms = out.setdefault(owner, [0.0, 0.0, 0.0])
            terms[slot] = float(table[name][row])
    return {k: tuple(v) for k, v in out.items()}


def corrected_astrometry(bundle, table, row):
    """The astrometric data with each instrument's offset (of sample `row`)
    removed, as arrays keyed like the data table."""
    data = bundle.astrometry
    terms = instrument_terms(table, row)
    dx = np.array([terms.get(i, (0, 0, 0))[0] for i in data["instrument"]])
    dy = np.array([terms.get(i, (0, 0, 0))[1] for i in data["instrument"]])
    return {"star": np.asarray(data["star"]), "epoch": np.asarray(data["epoch"], float),
            "x": np.asarray(data["x"], float) - dx, "y": np.asarray(data["y"], float) - dy,
            "x_err": np.asarray(data["x_err"], float), "y_err": np.asarray(data["y_err"], float),
            "instrument": np.asarray(data["instrument"])}


def corrected_velocities(bundle, table, row):
    data = bundle.velocities
    terms = instrument_terms(table, row)
    dv = np.array([terms.get(i, (0, 0, 0))[2] for i in data["instrument"]])
    return {"star": np.asarray(data["star"]), "epoch": np.asarray(data["epoch"], float),
            "v": np.asarray(data["v"], float) - dv, "v_err": np.asarray(data["v_err"], float),
            "instrument": np.asarray(data["instrument"])}
