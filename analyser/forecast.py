"""Next season's ephemerides from a results bundle (`analyser predict`).

For a window of dates, from posterior samples of one variant (default: the
reference): per star and epoch the sky position (mas, East and North) and
line-of-sight velocity (km/s) with their median and 68% band; the stars
passing periapsis in the window (coordinate time, with its 68% interval);
when each star's relativistic redshift signal (the model velocity with
f_z = 1 minus that with f_z = 0, everything else the same) peaks; and the
pairs of stars that come closer on the sky than a separation (confusion
risk), by the median tracks.  Dates are parsed with astropy.time (ISO dates,
'J2027.5', decimal years, 'mjd:61000').  Output: predictions/ephemerides.ecsv,
predictions/events.json and predictions/predictions.svg in the bundle.
"""

import json
import math
from pathlib import Path

import numpy as np
from astropy.table import Table
from astropy.time import Time

from .campaign import GLOBAL_PARAMETERS
from .physics import predict_observables
from .results.bundle import read_bundle, write_atomic

ELEMENTS = ("period_yr", "e", "i_deg", "Omega_deg", "omega_deg", "t_p_yr")


def parse_date(text):
    """Decimal Julian year of a date given as ISO, 'J2027.5', a decimal year or
    'jd:...' / 'mjd:...'."""
    text = str(text).strip()
    for prefix, fmt in (("jd:", "jd"), ("mjd:", "mjd")):
        if text.lower().startswith(prefix):
            return float(Time(float(text[len(prefix):]), format=fmt, scale="tt").jyear)
    if text.upper().startswith("J"):
        return float(Time(text, format="jyear_str", scale="tt").jyear)
    try:
        return float(Time(float(text), format="jyear", scale="tt").jyear)
    except ValueError:
        return float(Time(text, format="iso", scale="tt").jyear)


def _rows(samples, n, seed):
    rng = np.random.default_rng(seed)
    idx = rng.choice(len(samples), size=min(n, len(samples)), replace=False)
    return samples[np.sort(idx)]


def star_tracks(samples, star, epochs, t_ref, dynamics):
    """Model x, y, v of one star at `epochs` for each sample row: (n, 3, m)."""
    out = np.empty((len(samples), 3, epochs.size))
    for j, row in enumerate(samples):
        glob = {k: float(row[k]) for k in GLOBAL_PARAMETERS}
        glob["t_ref_yr"] = t_ref
        el = {k: float(row[f"{star}.{k}"]) for k in ELEMENTS}
        obs = predict_observables(glob, el, epochs, dynamics)
        out[j] = obs.x_mas, obs.y_mas, obs.v_km_s
    return out


def redshift_peak(samples, star, start, stop, t_ref, dynamics, n_grid=400):
    """Epoch of the largest relativistic redshift signal in the window, and its
    size (km/s), for the median sample."""
    row = samples[len(samples) // 2]
    glob = {k: float(np.median(samples[k])) for k in GLOBAL_PARAMETERS}
    glob["t_ref_yr"] = t_ref
    el = {k: float(row[f"{star}.{k}"]) for k in ELEMENTS}
    grid = np.linspace(start, stop, n_grid)
    gr = predict_observables(dict(glob, f_z=1.0), el, grid, dynamics).v_km_s
    newton = predict_observables(dict(glob, f_z=0.0), el, grid, dynamics).v_km_s
    k = int(np.argmax(gr - newton))
    return float(grid[k]), float((gr - newton)[k])


def predict(bundle_dir, start, stop, step_days=10.0, variant=None, separation_mas=5.0,
            n_draws=100, seed=0):
    """Ephemerides and events; writes them into the bundle and returns events."""
    bundle = Path(bundle_dir)
    doc = read_bundle(bundle)
    variant = variant or doc["model_comparison"]["reference"]
    samples = Table.read(bundle / doc["variants"][variant]["samples_file"], format="ascii.ecsv")
    draws = _rows(samples, n_draws, seed)
    t_ref = doc["reference_epoch_yr"]
    dynamics = doc["campaign"]["dynamics"]
    stars = [s["name"] for s in doc["campaign"]["stars"]]
    epochs = np.arange(start, stop + 1e-9, step_days / 365.25)
    table = {"star": [], "epoch": [], "date": []}
    for key in ("x", "y", "v"):
        table.update({f"{key}_median": [], f"{key}_lo68": [], f"{key}_hi68": []})
    medians, events = {}, {"variant": variant, "window": [start, stop], "periapsis": [],
                           "redshift_peaks": [], "close_pairs": []}
    iso = Time(epochs, format="jyear", scale="tt").iso
    for star in stars:
        tracks = star_tracks(draws, star, epochs, t_ref, dynamics)
        q = np.percentile(tracks, [16, 50, 84], axis=0)
        medians[star] = q[1]
        for j, t in enumerate(epochs):
            table["star"].append(star)
            table["epoch"].append(t)
            table["date"].append(iso[j][:10])
            for i, key in enumerate(("x", "y", "v")):
                table[f"{key}_median"].append(q[1, i, j])
                table[f"{key}_lo68"].append(q[0, i, j])
                table[f"{key}_hi68"].append(q[2, i, j])
        # periapsis passages in the window, from every sample
        t_p = np.asarray(samples[f"{star}.t_p_yr"])
        radial = np.asarray(samples[f"{star}.radial_period_yr"])
        k = np.ceil((start - t_p) / radial)
        passage = t_p + k * radial
        inside = passage <= stop
        if np.mean(inside) > 0.5:
            p16, p50, p84 = np.percentile(passage[inside], [16, 50, 84])
            events["periapsis"].append({"star": star, "epoch_yr": p50, "lo68": p16, "hi68": p84,
                                        "date": Time(p50, format="jyear", scale="tt").iso[:10],
                                        "probability_in_window": float(np.mean(inside))})
        peak_t, peak_v = redshift_peak(draws, star, start, stop, t_ref, dynamics)
        events["redshift_peaks"].append({"star": star, "epoch_yr": peak_t, "signal_km_s": peak_v})
    for a_i, a in enumerate(stars):
        for b in stars[a_i + 1:]:
            sep = np.hypot(medians[a][0] - medians[b][0], medians[a][1] - medians[b][1])
            j = int(np.argmin(sep))
            if sep[j] < separation_mas:
                events["close_pairs"].append({"stars": [a, b], "epoch_yr": float(epochs[j]),
                                              "separation_mas": float(sep[j])})
    out = bundle / "predictions"
    out.mkdir(exist_ok=True)
    tab = Table(table)
    tab["epoch"].unit = "yr"
    for key, unit in (("x", "mas"), ("y", "mas"), ("v", "km / s")):
        for suffix in ("median", "lo68", "hi68"):
            tab[f"{key}_{suffix}"].unit = unit
    tmp = out / "ephemerides.ecsv.tmp"
    tab.write(tmp, format="ascii.ecsv", overwrite=True)
    tmp.replace(out / "ephemerides.ecsv")
    write_atomic(out / "events.json", json.dumps(events, indent=1))
    _figure(out / "predictions.svg", stars, medians, epochs, events)
    return events


def _figure(path, stars, medians, epochs, events):
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    palette = ["#0072B2", "#E69F00", "#009E73", "#CC79A7", "#56B4E9", "#D55E00", "#F0E442",
               "#000000"]
    fig, (sky, vel) = plt.subplots(1, 2, figsize=(11, 5))
    for k, star in enumerate(stars):
        c = palette[k % len(palette)]
        sky.plot(medians[star][0], medians[star][1], color=c, lw=1.5, label=star)
        sky.plot(medians[star][0][0], medians[star][1][0], "o", color=c, ms=4)
        vel.plot(epochs, medians[star][2], color=c, lw=1.5, label=star)
    sky.plot(0, 0, "k+", ms=10)
    sky.invert_xaxis()
    sky.set_aspect("equal", adjustable="datalim")
    sky.set_xlabel("offset East (mas)")
    sky.set_ylabel("offset North (mas)")
    sky.set_title("sky tracks in the window (dot: start)")
    vel.set_xlabel("epoch (yr)")
    vel.set_ylabel("line-of-sight velocity (km/s)")
    for p in events["periapsis"]:
        vel.axvline(p["epoch_yr"], color="0.6", lw=0.8, ls=":")
    vel.set_title("velocities (dotted: periapsis passages)")
    sky.legend(fontsize=7, ncol=2)
    fig.tight_layout()
    tmp = Path(str(path) + ".tmp")
    fig.savefig(tmp, format="svg")
    plt.close(fig)
    tmp.replace(path)
