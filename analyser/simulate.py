"""Synthetic campaigns from a scenario: the demo's data and the tests' injections.

A scenario (TOML) gives the true central mass, distance, frame terms and
relativistic factors, every star's elements, and per instrument how it
observes: years of operation, nights per season, quoted errors and their
spread, the true error scale, jitter, offsets or zero point, and an outlier
rate.  The field is observable for part of each year (season_start_day,
season_length_days), so the epochs come in uneven seasonal clumps.  The
forward model is the package's own physics, with the scenario's dynamics.

Written to the output folder: campaign.toml (the scenario's [campaign]
section plus the tables and instruments), astrometry.ecsv, velocities.ecsv
and truth.json with every true parameter, in the fit's parametrisation
(cos_i, and phase at the reference epoch with t_p the passage just before it).

Scenario layout:

    [scenario]   name, seed, reference_epoch, dynamics, season_start_day,
                 season_length_days
    [truth]      mass_msun, distance_pc, x0_mas, y0_mas, vx0_mas_yr,
                 vy0_mas_yr, vz0_km_s, f_sp, f_z
    [stars.<name>]      period_yr, e, i_deg, Omega_deg, omega_deg, t_p_yr,
                        velocities (default true), missing_fraction (0)
    [observing.<instrument>]  kind, first_year, last_year, nights_per_season,
                        error_mas | error_km_s, error_spread (0.2),
                        error_scale (1), jitter (0), offset_x_mas, offset_y_mas,
                        zero_point_km_s, correlation (0), outlier_fraction (0),
                        outlier_width (10), stars_per_night (all)
    [campaign]   copied into campaign.toml: instruments, priors,
                 star_priors, variants, sampler, gates
"""

import json
import math
import os
import sys
from pathlib import Path

import numpy as np
from astropy import units as u
from astropy.table import Table

from . import __version__
from .physics import periapsis_passage, predict_observables

try:
    import tomllib
except ModuleNotFoundError:  # Python 3.10
    import tomli as tomllib

import tomli_w

TRUTH_GLOBALS = ("mass_msun", "distance_pc", "x0_mas", "y0_mas", "vx0_mas_yr", "vy0_mas_yr",
                 "vz0_km_s", "f_sp", "f_z")
ELEMENT_KEYS = ("period_yr", "e", "i_deg", "Omega_deg", "omega_deg", "t_p_yr")


class ScenarioError(ValueError):
    pass


def _require(table, key, where):
    if key not in table:
        raise ScenarioError(f"{where}: missing '{key}'")
    return table[key]


def fit_parametrisation(glob, elements, reference_epoch, dynamics):
    """Elements at the last periapsis passage at or before the reference epoch,
    with cos_i and phase added (the fit's parametrisation: phase is the
    fraction of the radial period elapsed since that passage)."""
    _, radial = periapsis_passage(glob, elements, 0, dynamics)
    n = math.floor((reference_epoch - elements["t_p_yr"]) / radial)
    el, _ = periapsis_passage(glob, elements, n, dynamics)
    out = {k: float(el[k]) for k in ELEMENT_KEYS}
    out["cos_i"] = math.cos(math.radians(el["i_deg"]))
    out["phase"] = float((reference_epoch - el["t_p_yr"]) / radial) % 1.0
    out["radial_period_yr"] = float(radial)
    return out


def _season_nights(rng, year, n_nights, start_day, length_days):
    days = np.sort(rng.uniform(start_day, start_day + length_days, n_nights))
    # decimal Julian years with the Julian-year length, as everywhere in the package
    return year + days / 365.25 + rng.uniform(-0.1, 0.1, n_nights) / 365.25


def simulate(scenario):
    """(campaign document, astrometry Table, velocity Table, truth dict)."""
    sc = _require(scenario, "scenario", "scenario file")
    rng = np.random.default_rng(int(sc.get("seed", 0)))
    t_ref = float(_require(sc, "reference_epoch", "[scenario]"))
    dynamics = sc.get("dynamics", "analytic-1pn")
    start_day = float(sc.get("season_start_day", 60.0))
    length_days = float(sc.get("season_length_days", 150.0))
    truth_table = _require(scenario, "truth", "scenario file")
    glob = {k: float(_require(truth_table, k, "[truth]")) for k in TRUTH_GLOBALS}
    glob["t_ref_yr"] = t_ref
    stars = _require(scenario, "stars", "scenario file")
    observing = _require(scenario, "observing", "scenario file")

    astro_rows, vel_rows, outliers = [], [], []
    nuisance_truth = {}
    for name, ins in observing.items():
        kind = _require(ins, "kind", f"[observing.{name}]")
        where = f"[observing.{name}]"
        scale = float(ins.get("error_scale", 1.0))
        jitter = float(ins.get("jitter", 0.0))
        spread = float(ins.get("error_spread", 0.2))
        out_frac = float(ins.get("outlier_fraction", 0.0))
        out_width = float(ins.get("outlier_width", 10.0))
        first, last = int(_require(ins, "first_year", where)), int(_require(ins, "last_year", where))
        n_nights = int(ins.get("nights_per_season", 4))
        names = [s for s in stars if kind == "astrometry" or stars[s].get("velocities", True)]
        per_night = int(ins.get("stars_per_night", len(names)))
        for year in range(first, last + 1):
            for night in _season_nights(rng, year, n_nights, start_day, length_days):
                chosen = rng.choice(len(names), size=min(per_night, len(names)), replace=False)
                for star in (names[k] for k in sorted(chosen)):
                    if rng.uniform() < float(stars[star].get("missing_fraction", 0.0)):
                        continue
                    is_outlier = rng.uniform() < out_frac
                    row = (star, night, is_outlier)
                    (astro_rows if kind == "astrometry" else vel_rows).append((name,) + row)
        if kind == "astrometry":
            nuisance_truth[f"{name}.offset_x_mas"] = float(ins.get("offset_x_mas", 0.0))
            nuisance_truth[f"{name}.offset_y_mas"] = float(ins.get("offset_y_mas", 0.0))
            nuisance_truth[f"{name}.jitter_mas"] = jitter
        else:
            nuisance_truth[f"{name}.zero_point_km_s"] = float(ins.get("zero_point_km_s", 0.0))
            nuisance_truth[f"{name}.jitter_km_s"] = jitter
        nuisance_truth[f"{name}.error_scale"] = scale
        nuisance_truth[f"{name}.outlier_fraction"] = out_frac
        ins["_noise"] = (scale, jitter, spread, out_width)

    truth_stars = {}
    model = {}
    for star, el_table in stars.items():
        el = {k: float(_require(el_table, k, f"[stars.{star}]")) for k in ELEMENT_KEYS}
        truth_stars[star] = fit_parametrisation(glob, el, t_ref, dynamics)
        epochs = sorted({r[2] for r in astro_rows + vel_rows if r[1] == star})
        if epochs:
            obs = predict_observables(glob, el, np.array(epochs), dynamics)
            model[star] = {t: (obs.x_mas[k], obs.y_mas[k], obs.v_km_s[k])
                           for k, t in enumerate(epochs)}

    astro = {k: [] for k in ("star", "epoch", "x", "y", "x_err", "y_err", "rho", "instrument")}
    for inst, star, t, is_out in sorted(astro_rows, key=lambda r: (r[1], r[2], r[0])):
        ins = observing[inst]
        scale, jitter, spread, width = ins["_noise"]
        sig = float(_require(ins, "error_mas", f"[observing.{inst}]"))
        sx, sy = sig * rng.lognormal(0, spread, 2)
        rho = float(ins.get("correlation", 0.0))
        tx = math.hypot(sx * scale, jitter) * (width if is_out else 1.0)
        ty = math.hypot(sy * scale, jitter) * (width if is_out else 1.0)
        z1, z2 = rng.standard_normal(2)
        mx, my, _ = model[star][t]
        astro["star"].append(star)
        astro["epoch"].append(t)
        astro["x"].append(mx + ins.get("offset_x_mas", 0.0) + tx * z1)
        astro["y"].append(my + ins.get("offset_y_mas", 0.0)
                          + ty * (rho * z1 + math.sqrt(1 - rho * rho) * z2))
        astro["x_err"].append(sx)
        astro["y_err"].append(sy)
        astro["rho"].append(rho)
        astro["instrument"].append(inst)
        if is_out:
            outliers.append({"star": star, "epoch": t, "instrument": inst})
    vel = {k: [] for k in ("star", "epoch", "v", "v_err", "instrument")}
    for inst, star, t, is_out in sorted(vel_rows, key=lambda r: (r[1], r[2], r[0])):
        ins = observing[inst]
        scale, jitter, spread, width = ins["_noise"]
        sig = float(_require(ins, "error_km_s", f"[observing.{inst}]")) * rng.lognormal(0, spread)
        true_sig = math.hypot(sig * scale, jitter) * (width if is_out else 1.0)
        vel["star"].append(star)
        vel["epoch"].append(t)
        vel["v"].append(model[star][t][2] + ins.get("zero_point_km_s", 0.0)
                        + true_sig * rng.standard_normal())
        vel["v_err"].append(sig)
        vel["instrument"].append(inst)
        if is_out:
            outliers.append({"star": star, "epoch": t, "instrument": inst})

    astro_table = Table(astro)
    vel_table = Table(vel)
    for tab, units in ((astro_table, {"epoch": u.yr, "x": u.mas, "y": u.mas, "x_err": u.mas,
                                      "y_err": u.mas}),
                       (vel_table, {"epoch": u.yr, "v": u.km / u.s, "v_err": u.km / u.s})):
        for col, unit in units.items():
            tab[col].unit = unit
    astro_table.meta["comments"] = [
        f"Synthetic astrometry of scenario '{sc.get('name', '')}'; x toward East, y toward "
        "North, epochs as decimal Julian years (arrival times)."]
    vel_table.meta["comments"] = [
        f"Synthetic line-of-sight velocities (c z, barycentric) of scenario "
        f"'{sc.get('name', '')}'."]

    template = dict(scenario.get("campaign", {}))
    doc = {"campaign": {"name": sc.get("name", "synthetic campaign"), "reference_epoch": t_ref,
                        "seed": int(sc.get("seed", 0)),
                        "dynamics": template.pop("dynamics", dynamics),
                        "stars": template.pop("stars", "all")},
           "tables": [{"file": "astrometry.ecsv", "kind": "astrometry", "epoch_format": "jyear"},
                      {"file": "velocities.ecsv", "kind": "velocity", "epoch_format": "jyear"}]}
    doc.update(template)
    truth = {"scenario": sc.get("name", ""), "generated_by": f"analyser {__version__}",
             "dynamics": dynamics, "reference_epoch": t_ref,
             "globals": {k: glob[k] for k in TRUTH_GLOBALS}, "nuisances": nuisance_truth,
             "stars": truth_stars, "outliers": outliers}
    return doc, astro_table, vel_table, truth


def _write_atomic(path, text):
    tmp = Path(str(path) + ".tmp")
    tmp.write_text(text)
    os.replace(tmp, path)


def write_campaign(out_dir, doc, astro_table, vel_table, truth):
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    for name, table in (("astrometry.ecsv", astro_table), ("velocities.ecsv", vel_table)):
        tmp = out / (name + ".tmp")
        table.write(tmp, format="ascii.ecsv", overwrite=True)
        os.replace(tmp, out / name)
    _write_atomic(out / "truth.json", json.dumps(truth, indent=2) + "\n")
    header = ("# Campaign written by `analyser simulate` from a scenario; see truth.json for\n"
              "# the parameters the data were made with.\n")
    _write_atomic(out / "campaign.toml", header + tomli_w.dumps(doc))


def simulate_command(scenario_path, out_dir):
    path = Path(scenario_path)
    try:
        scenario = tomllib.loads(path.read_text())
        doc, astro, vel, truth = simulate(scenario)
    except FileNotFoundError:
        print(f"{path}: file not found", file=sys.stderr)
        return 2
    except (tomllib.TOMLDecodeError, ScenarioError, ValueError, KeyError, TypeError) as exc:
        print(f"{path}: {exc}", file=sys.stderr)
        return 2
    write_campaign(out_dir, doc, astro, vel, truth)
    print(f"wrote {len(astro)} astrometric and {len(vel)} velocity rows of "
          f"{len(truth['stars'])} stars to {out_dir}/ (campaign.toml, truth.json)")
    return 0
