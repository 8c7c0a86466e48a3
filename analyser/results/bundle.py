"""The results bundle: one folder per run, readable without refitting.

    results.json         the machine-readable summary (schema in docs/results.md)
    samples/<v>.ecsv     equal-weight posterior samples of variant v, with units
    raw/<v>.npz          dynesty's weighted samples, weights and evidence track
    data/*.ecsv          the fitted data in internal units (astrometry, velocities)
    residuals/<v>.ecsv   every data point against variant v's best sample
    checkpoints/         sampler checkpoints (resume) and prefits
    report.html, report.pdf, figures/, tables/   written by the report stage

Every file is written to a temporary name and renamed into place, so a
reader never sees a half-written file.
"""

import json
import math
import os
import platform
import sys
import time
from datetime import datetime, timezone
from functools import partial
from pathlib import Path

import numpy as np

from .. import __version__
from ..campaign import GLOBAL_PARAMETERS
from ..data.summary import campaign_summary
from ..inference.prefit import mode_evidences
from .derived import ELEMENT_COLUMNS, posterior_table, DERIVED_UNITS
from .summaries import PERIODS, kass_raftery, mirror_modes, summarise

SCHEMA = "analyser-results/1"
OUTLIER_PROBABILITY = 0.5       # flag a point as an outlier above this posterior probability
OUTLIER_SIGMA = 4.0             # ... or, without a mixture, beyond this many sigma


def write_atomic(path, data):
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    tmp = path.with_name(path.name + ".tmp")
    with open(tmp, "wb" if isinstance(data, bytes) else "w") as fh:
        fh.write(data)
    os.replace(tmp, path)


def _json_default(obj):
    if isinstance(obj, (np.floating, np.integer)):
        return obj.item()
    if isinstance(obj, np.ndarray):
        return obj.tolist()
    if isinstance(obj, np.bool_):
        return bool(obj)
    raise TypeError(f"cannot serialise {type(obj)}")


def _clean(obj):
    """Replace NaN/inf (not valid JSON) with None, recursively."""
    if isinstance(obj, dict):
        return {k: _clean(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_clean(v) for v in obj]
    if isinstance(obj, (float, np.floating)) and not math.isfinite(obj):
        return None
    return obj


def software_versions():
    out = {"analyser": __version__, "python": sys.version.split()[0],
           "platform": platform.platform()}
    for name in ("numpy", "scipy", "numba", "dynesty", "astropy", "matplotlib", "jinja2",
                 "weasyprint"):
        try:
            out[name] = __import__(name).__version__
        except Exception:        # optional at this stage (e.g. no PDF engine)
            out[name] = None
    return out


def _unit_of(table, name):
    unit = table[name].unit
    return "" if unit is None else unit.to_string()


def _summaries(table, names, best):
    out = {}
    for name in names:
        base = name.rsplit(".", 1)[-1]
        col = np.asarray(table[name], dtype=float)
        if np.ptp(col) == 0.0:
            out[name] = {"fixed": float(col[0]), "unit": _unit_of(table, name)}
            continue
        out[name] = dict(summarise(col, best, PERIODS.get(base, 0.0)), unit=_unit_of(table, name))
    return out


def _residuals(model, theta):
    """Per instrument residual statistics and flagged outliers at theta."""
    d = model.data
    full = model.full(theta)
    names = list(model.campaign.instruments)
    stats = {n: {"chi2": 0.0, "n": 0, "sq": [], "outliers": []} for n in names}
    camp = model.campaign
    rows = []
    for s, star in enumerate(camp.stars):
        mx, my, mv = model.predictions(theta, s)
        for k in range(d.astro_first[s + 1] - d.astro_first[s]):
            r = d.astro_first[s] + k
            inst = names[d.ainst[r]]
            sx = _effective_error(d, d.ainst[r], d.asx[r], full)
            sy = _effective_error(d, d.ainst[r], d.asy[r], full)
            dx, dy = d.ax[r] - mx[k], d.ay[r] - my[k]
            rho = d.arho[r]
            q = ((dx / sx) ** 2 - 2 * rho * dx * dy / (sx * sy) + (dy / sy) ** 2) / (1 - rho**2)
            prob = _outlier_probability(d, d.ainst[r], q, 2, full)
            _record(stats[inst], q, 2, [dx, dy], star, camp.astrometry.epoch_yr[r], prob)
            rows.append((star, inst, "astrometry", camp.astrometry.epoch_yr[r], mx[k], my[k],
                         math.nan, dx, dy, math.nan, sx, sy, math.nan, math.sqrt(q / 2),
                         math.nan if prob is None else prob))
        for k in range(d.vel_first[s + 1] - d.vel_first[s]):
            r = d.vel_first[s] + k
            inst = names[d.vinst[r]]
            sv = _effective_error(d, d.vinst[r], d.vs[r], full)
            dv = d.vv[r] - mv[k]
            prob = _outlier_probability(d, d.vinst[r], (dv / sv) ** 2, 1, full)
            _record(stats[inst], (dv / sv) ** 2, 1, [dv], star, camp.velocities.epoch_yr[r], prob)
            rows.append((star, inst, "velocity", camp.velocities.epoch_yr[r], math.nan,
                         math.nan, mv[k], math.nan, math.nan, dv, math.nan, math.nan, sv,
                         abs(dv) / sv, math.nan if prob is None else prob))
    out = {}
    for n in names:
        st = stats[n]
        kind = camp.instruments[n].kind
        sq = np.array(st["sq"]) if st["sq"] else np.zeros((0, 1))
        rms = np.sqrt(np.mean(sq, axis=0)).tolist() if sq.size else []
        out[n] = {"kind": kind, "chi2": st["chi2"], "n_points": st["n"],
                  "reduced_chi2": st["chi2"] / st["n"] if st["n"] else None,
                  "rms": rms, "rms_unit": "mas" if kind == "astrometry" else "km / s",
                  "outliers": st["outliers"]}
    return out, rows


RESIDUAL_COLUMNS = (("star", None), ("instrument", None), ("kind", None), ("epoch", "yr"),
                    ("model_x", "mas"), ("model_y", "mas"), ("model_v", "km / s"),
                    ("res_x", "mas"), ("res_y", "mas"), ("res_v", "km / s"),
                    ("sigma_x", "mas"), ("sigma_y", "mas"), ("sigma_v", "km / s"),
                    ("normalised", None), ("outlier_probability", None))


def _write_table(table, path):
    tmp = Path(str(path) + ".tmp")
    tmp.parent.mkdir(parents=True, exist_ok=True)
    table.write(tmp, format="ascii.ecsv", overwrite=True)
    os.replace(tmp, path)


def write_data_tables(out_dir, campaign):
    """The fitted data, in internal units, so the report needs nothing else."""
    from astropy.table import Table
    a, v = campaign.astrometry, campaign.velocities
    ta = Table({"star": a.star, "epoch": a.epoch_yr, "x": a.x_mas, "y": a.y_mas,
                "x_err": a.x_err_mas, "y_err": a.y_err_mas, "rho": a.rho,
                "instrument": a.instrument},
               units={"epoch": "yr", "x": "mas", "y": "mas", "x_err": "mas", "y_err": "mas"})
    tv = Table({"star": v.star, "epoch": v.epoch_yr, "v": v.v_km_s, "v_err": v.v_err_km_s,
                "instrument": v.instrument},
               units={"epoch": "yr", "v": "km / s", "v_err": "km / s"})
    _write_table(ta, Path(out_dir) / "data" / "astrometry.ecsv")
    _write_table(tv, Path(out_dir) / "data" / "velocities.ecsv")


def _effective_error(d, inst, sigma, full):
    if d.inst_scale[inst] >= 0:
        sigma = sigma * full[d.inst_scale[inst]]
    if d.inst_jitter[inst] >= 0:
        sigma = math.hypot(sigma, full[d.inst_jitter[inst]])
    return sigma


def _outlier_probability(d, inst, q_form, ndim, full):
    i_q = d.inst_outlier[inst]
    if i_q < 0:
        return None
    q = full[i_q]
    w = d.inst_width[inst]
    core = math.log1p(-q) - 0.5 * q_form if q < 1 else -math.inf
    broad = (math.log(q) - 0.5 * q_form / w**2 - ndim * math.log(w)) if q > 0 else -math.inf
    top = max(core, broad)
    if top == -math.inf:
        return 0.0
    return math.exp(broad - top) / (math.exp(core - top) + math.exp(broad - top))


def _record(st, q_form, ndim, resid, star, epoch, prob):
    st["chi2"] += q_form
    st["n"] += ndim
    st["sq"].append(np.square(resid))
    sigma = math.sqrt(q_form / ndim)
    flagged = prob > OUTLIER_PROBABILITY if prob is not None else sigma > OUTLIER_SIGMA
    if flagged:
        st["outliers"].append({"star": star, "epoch_yr": float(epoch),
                               "residual_sigma": sigma, "outlier_probability": prob})


def variant_results(campaign, fit, out_dir):
    """The results.json entry of one variant; writes its samples and raw files."""
    from ..inference.likelihood import JointModel
    model = JointModel(campaign, fit.variant)
    spans = []
    all_epochs = np.concatenate([campaign.astrometry.epoch_yr, campaign.velocities.epoch_yr])
    last_epoch = float(all_epochs.max())
    for star in campaign.stars:
        ep = np.concatenate([campaign.astrometry.epoch_yr[campaign.astrometry.star == star],
                             campaign.velocities.epoch_yr[campaign.velocities.star == star]])
        spans.append((float(ep.min()), float(ep.max())))
    table = posterior_table(model, fit.theta, last_epoch, spans)
    table.meta["variant"] = fit.variant
    table.meta["comments"] = [f"Equal-weight posterior samples, variant '{fit.variant}' of "
                              f"campaign '{campaign.name}'."]
    out = Path(out_dir)
    _write_table(table, out / "samples" / f"{fit.variant}.ecsv")
    raw_tmp = out / "raw" / f"{fit.variant}.tmp.npz"
    raw_tmp.parent.mkdir(parents=True, exist_ok=True)
    np.savez_compressed(raw_tmp, **fit.raw, free_names=np.array(model.layout.free_names))
    os.replace(raw_tmp, out / "raw" / f"{fit.variant}.npz")

    best = int(np.argmax(fit.log_like + fit.log_prior))
    lay = model.layout
    glob = _summaries(table, GLOBAL_PARAMETERS, best)
    nuis = _summaries(table, lay.nuisance_names, best)
    stars, derived, mirrors = {}, {}, {}
    no_v = set(campaign.stars_without_velocities())
    for s, star in enumerate(campaign.stars):
        names = [f"{star}.{c}" for c in ELEMENT_COLUMNS]
        dnames = [f"{star}.{c}" for c in DERIVED_UNITS]
        stars[star] = {k.split(".", 1)[1]: v for k, v in _summaries(table, names, best).items()}
        derived[star] = {k.split(".", 1)[1]: v for k, v in _summaries(table, dnames, best).items()}
        if star in no_v:
            ref = fit.prefit.star_modes[s][0].values[3] if fit.prefit.star_modes[s] else \
                float(np.median(table[f"{star}.Omega_deg"]))
            mask = mirror_modes(np.asarray(table[f"{star}.Omega_deg"]), ref)
            modes = []
            for sel in (mask, ~mask):
                if sel.sum() < 2:
                    modes.append({"fraction": float(sel.mean()), "parameters": None})
                    continue
                sub = table[sel]
                b = int(np.argmax((fit.log_like + fit.log_prior)[sel]))
                summ = _summaries(sub, names, b)
                modes.append({"fraction": float(sel.mean()),
                              "parameters": {k.split(".", 1)[1]: v for k, v in summ.items()}})
            peaks = _mode_peaks(model, fit.prefit, s)
            laplace = mode_evidences(model, fit.prefit, s) if len(peaks) > 1 else []
            top = max(laplace, default=0.0)
            weights = [math.exp(z - top) for z in laplace]
            mirrors[star] = {"note": "no velocities: the posterior has two mirror modes "
                                     "(Omega + 180 deg, omega + 180 deg); each is summarised "
                                     "on its own; the light-travel time across the orbit "
                                     "(z changes sign) can favour one",
                             "modes": modes, "mode_peak_log_like": peaks,
                             "log_like_difference": (peaks[1] - peaks[0]) if len(peaks) > 1
                             else None,
                             "mode_laplace_log_z": laplace,
                             "laplace_fractions": [w / sum(weights) for w in weights]}
    theta_best = fit.theta[best]
    residual_stats, rows = _residuals(model, theta_best)
    from astropy.table import Table
    res_table = Table(rows=rows, names=[c for c, _ in RESIDUAL_COLUMNS]) if rows else Table()
    for c, unit in RESIDUAL_COLUMNS:
        if unit and c in res_table.colnames:
            res_table[c].unit = unit
    _write_table(res_table, out / "residuals" / f"{fit.variant}.ecsv")
    pf = fit.prefit
    return {
        "description": campaign.variant(fit.variant).description,
        "engine": fit.engine, "seed": fit.seed,
        "free_parameters": list(lay.free_names),
        "fixed_parameters": {n: float(lay.fixed_full[k]) for k, n in enumerate(lay.names)
                             if np.isfinite(lay.fixed_full[k])},
        "log_z": fit.log_z, "log_z_err": fit.log_z_err, "information_nats": fit.information,
        "likelihood_calls": fit.likelihood_calls, "iterations": fit.iterations,
        "live_points": fit.live_points, "efficiency_percent": fit.efficiency,
        "effective_sample_size": fit.ess, "n_samples": int(len(fit.theta)),
        "wall_seconds": fit.wall_seconds, "prefit_seconds": fit.prefit_seconds,
        "resumed": fit.resumed, "sampler": fit.sampler_settings,
        "evidence_checks": {"laplace_log_z": pf.laplace_log_z,
                            "importance_log_z": fit.importance["log_z"],
                            "importance_log_z_err": fit.importance["log_z_err"],
                            "importance_ess": fit.importance["ess"],
                            "importance_draws": fit.importance["n"],
                            "proposal_tail_fraction": fit.importance["tail_fraction"]},
        "prefit": {"log_like": pf.log_like, "laplace_log_z": pf.laplace_log_z,
                   "chi2": pf.chi2,
                   "multimodal_stars": [campaign.stars[s] for s in pf.multimodal],
                   "modes_per_star": {campaign.stars[s]: len(m)
                                      for s, m in enumerate(pf.star_modes)}},
        "priors": {n: {"kind": p.kind, "a": p.a, "b": p.b, "period": p.period}
                   for n, p in zip(lay.names, lay.priors)},
        "best_sample": {"index": best, "log_like": float(fit.log_like[best]),
                        "log_posterior": float(fit.log_like[best] + fit.log_prior[best])},
        "globals": glob, "nuisances": nuis, "stars": stars, "derived": derived,
        "mirror_ambiguity": mirrors,
        "residuals": residual_stats,
        "residuals_file": f"residuals/{fit.variant}.ecsv",
        "samples_file": f"samples/{fit.variant}.ecsv", "raw_file": f"raw/{fit.variant}.npz",
        "warnings": fit.warnings,
    }


def _mode_peaks(model, prefit, s):
    """The star's log-likelihood at the peak of each of its prefit modes, the
    globals at the joint mode."""
    from ..inference.likelihood import star_loglike
    full = model.layout.full_vector(prefit.theta)
    o = model.layout.star_offset(s)
    out = []
    for mode in prefit.star_modes[s]:
        f = full.copy()
        f[o:o + 6] = mode.values
        out.append(float(star_loglike(s, f, model.data)))
    return out


def model_comparison(variants, reference):
    """ln Bayes factors of every variant against the reference, with the
    Kass & Raftery (1995) wording."""
    ref = variants[reference]
    rows = {}
    for name, v in variants.items():
        ln_b = v["log_z"] - ref["log_z"]
        err = math.hypot(v["log_z_err"], ref["log_z_err"])
        rows[name] = {"ln_bayes_factor": ln_b, "ln_bayes_factor_err": err,
                      "favours": name if ln_b > 0 else reference,
                      "strength": kass_raftery(ln_b) if name != reference else "reference"}
    preferred = max(variants, key=lambda n: variants[n]["log_z"])
    return {"reference": reference, "preferred": preferred, "against_reference": rows,
            "scale": "Kass & Raftery (1995): 2 ln B < 2 not worth more than a bare mention, "
                     "2-6 positive, 6-10 strong, > 10 very strong"}


def summariser(campaign, out_dir):
    """`finish` for fit_campaign: each variant's results entry and files,
    made where the variant was fitted."""
    return partial(variant_results, campaign, out_dir=Path(out_dir))


def write_bundle(out_dir, campaign, fits, command_line, started):
    """Write results.json (and the samples/raw files) for fitted variants;
    a fit's entry is made here unless `summariser` already made it."""
    out = Path(out_dir)
    write_data_tables(out, campaign)
    variants = {name: fit.summary if fit.summary is not None
                else variant_results(campaign, fit, out) for name, fit in fits.items()}
    reference = campaign.reference_variant if campaign.reference_variant in variants \
        else next(iter(variants))
    warnings = [f"{name}: {w}" for name, v in variants.items() for w in v["warnings"]]
    doc = {
        "schema": SCHEMA,
        "created_utc": datetime.now(timezone.utc).isoformat(timespec="seconds"),
        "command_line": command_line,
        "software": software_versions(),
        "campaign": campaign_summary(campaign),
        "reference_epoch_yr": campaign.reference_epoch_yr,
        "input_files_sha256": dict(campaign.input_files),
        "seed": campaign.seed,
        "timings": {"total_seconds": time.time() - started,
                    "per_variant_seconds": {n: v["wall_seconds"] + v["prefit_seconds"]
                                            for n, v in variants.items()}},
        "variants": variants,
        "model_comparison": model_comparison(variants, reference),
        "gates": [{"name": g.name, "kind": g.kind, "limit": g.limit, "parameter": g.parameter,
                   "instrument": g.instrument} for g in campaign.gates],
        "warnings": warnings,
    }
    text = json.dumps(_clean(json.loads(json.dumps(doc, default=_json_default))), indent=1)
    write_atomic(out / "results.json", text + "\n")
    return doc


def read_bundle(out_dir):
    """results.json of a bundle as a dict."""
    path = Path(out_dir) / "results.json"
    return json.loads(path.read_text())
