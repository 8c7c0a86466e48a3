"""Systematics a reviewer must weigh, each with what in this run bears on it.

Every caution is a title and a few sentences of HTML, and is computed from
the bundle: the posterior correlation of mass and distance from the
samples, which star drives f_SP and f_z (largest periapsis advance and
redshift signal), which stars pass close to one another on the sky (from
the best sample's tracks over the data span), how the frame and velocity
zero-point terms compare with their priors, and how well the evidence
estimates agree.  Order-of-magnitude estimates are marked as such.
"""

import math
from dataclasses import dataclass
from itertools import combinations

import numpy as np

from . import curves
from .cells import MINUS, Measure, html as cell_html
from .quantities import quantity

CONFUSION_MAS = 60.0     # about lambda/D at 2.2 micron for an 8-m aperture (common practice)
TRACK_STEP_YR = 0.01


@dataclass
class Caution:
    key: str
    title: str
    body: list            # paragraphs, HTML


def _m(summary, scale=1.0):
    return cell_html(Measure.from_summary(summary, scale)) if summary else "n/a"


def sym(name):
    """The HTML symbol of a parameter (e.g. <i>x</i><sub>0</sub>)."""
    return quantity(name).html


F_SP, F_Z = sym("f_sp"), sym("f_z")


def _derived(bundle, star, name):
    return bundle.variants[bundle.reference]["derived"][star].get(name, {})


def _median(summary):
    if not summary:
        return math.nan
    return summary.get("median", summary.get("fixed", math.nan))


def _driver(bundle, name):
    """The star with the largest median of a derived quantity."""
    vals = {s: _median(_derived(bundle, s, name)) for s in bundle.stars}
    vals = {s: x for s, x in vals.items() if math.isfinite(x)}
    return max(vals, key=vals.get) if vals else None


def _passages(bundle, star):
    """Periapsis passages (best sample, reference variant) within the star's data."""
    table = bundle.samples(bundle.reference)
    best = curves.best_row(table, bundle.variants[bundle.reference])
    first, last = next((s["first_yr"], s["last_yr"]) for s in bundle.campaign["stars"]
                       if s["name"] == star)
    t_p = float(table[f"{star}.t_p_yr"][best])
    p_r = float(table[f"{star}.radial_period_yr"][best])
    k0, k1 = math.ceil((first - t_p) / p_r), math.floor((last - t_p) / p_r)
    return [t_p + k * p_r for k in range(k0, k1 + 1)]


def close_approaches(bundle, limit=CONFUSION_MAS):
    """[(star a, star b, separation mas, epoch)] of pairs closer than `limit` on
    the sky within the data span, closest first, from the best sample's tracks."""
    table = bundle.samples(bundle.reference)
    best = curves.best_row(table, bundle.variants[bundle.reference])
    span = bundle.campaign["time_span"]
    t = np.arange(span["first_yr"], span["last_yr"] + TRACK_STEP_YR, TRACK_STEP_YR)
    tracks = {s: curves.observables(table, best, s, t, bundle.t_ref, bundle.dynamics)
              for s in bundle.stars}
    out = []
    for a, b in combinations(bundle.stars, 2):
        sep = np.hypot(tracks[a].x_mas - tracks[b].x_mas, tracks[a].y_mas - tracks[b].y_mas)
        k = int(np.argmin(sep))
        if sep[k] < limit:
            out.append((a, b, float(sep[k]), float(t[k])))
    g = curves.sample_globals(table, best, bundle.t_ref)
    centre = []
    for s in bundle.stars:
        sep = np.hypot(tracks[s].x_mas - g["x0_mas"] - g["vx0_mas_yr"] * (t - bundle.t_ref),
                       tracks[s].y_mas - g["y0_mas"] - g["vy0_mas_yr"] * (t - bundle.t_ref))
        k = int(np.argmin(sep))
        centre.append((s, float(sep[k]), float(t[k])))
    return sorted(out, key=lambda r: r[2]), sorted(centre, key=lambda r: r[1])


def _prior_sigma(prior):
    if isinstance(prior, dict):
        if prior.get("kind") == "gaussian":
            return prior["b"]
        if prior.get("kind") in ("uniform", "log-uniform"):
            return (prior["b"] - prior["a"]) / math.sqrt(12.0)
    return None


def frame_tie(bundle, priors):
    ref = bundle.reference
    glob = bundle.variants[ref]["globals"]
    parts, ratios = [], []
    for name, unit in (("x0_mas", "mas"), ("y0_mas", "mas"), ("vx0_mas_yr", "mas/yr"),
                       ("vy0_mas_yr", "mas/yr")):
        s = glob.get(name, {})
        if "std" not in s:
            parts.append(f"{sym(name)} fixed at {s.get('fixed', 'n/a')}")
            continue
        sig = _prior_sigma(priors.get(ref, {}).get(name))
        text = f"{sym(name)} = {_m(s)} {unit}"
        if sig:
            ratios.append(s["std"] / sig)
            text += f" (posterior/prior width {ratios[-1]:.2f})"
        parts.append(text)
    if not ratios:
        verdict = ("The bundle does not record the frame priors, so their influence cannot be "
                   "judged here.")
    elif max(ratios) > 0.5:
        verdict = ("Some frame terms are prior-dominated (posterior width above half the "
                   "prior's): their values, and everything correlated with them, inherit the "
                   "prior.")
    else:
        verdict = "The data constrain every frame term well inside its prior."
    return Caution("frame", "Reference-frame tie", [
        "The astrometric origin and its drift are fitted with priors that stand for the tie of "
        "the images to an external reference frame. A bias in that tie moves the mass and the "
        "distance through their correlation with the frame terms.",
        f"In this run ({ref}): " + "; ".join(parts) + ". " + verdict])


def confusion(bundle):
    pairs, centre = close_approaches(bundle)
    body = ["Near a close passage on the sky the images of two stars blend, and a star near "
            "the central mass may blend with faint emission or unresolved stars there: the "
            "astrometry of those epochs can be pulled toward the neighbour. Such epochs deserve "
            "a look in the residuals and, if need be, down-weighting."]
    if pairs:
        listed = "; ".join(f"{a} and {b}, {sep:.0f} mas apart in {t:.1f}" for a, b, sep, t in pairs[:6])
        body.append(f"In this run, pairs closer than {CONFUSION_MAS:.0f} mas (about the K-band "
                    f"diffraction limit of an 8-m telescope) during the data span: {listed}.")
    else:
        body.append(f"In this run no two stars come closer than {CONFUSION_MAS:.0f} mas on the "
                    "sky during the data span (best-sample tracks).")
    near = "; ".join(f"{s} {sep:.1f} mas in {t:.1f}" for s, sep, t in centre[:3])
    body.append(f"Closest projected approaches to the central mass: {near}.")
    return Caution("confusion", "Source confusion near close passages", body)


def mass_distance(bundle):
    ref = bundle.reference
    glob = bundle.variants[ref]["globals"]
    if "std" not in glob.get("mass_msun", {}) or "std" not in glob.get("distance_pc", {}):
        return Caution("mass-distance", "Mass-distance correlation", [
            "The mass or the distance is fixed in the reference variant, so their correlation "
            "does not arise here."])
    m, r = bundle.column(ref, "mass_msun"), bundle.column(ref, "distance_pc")
    rho = float(np.corrcoef(m, r)[0, 1])
    slope = float(np.polyfit(np.log(r), np.log(m), 1)[0])
    frac_m = glob["mass_msun"]["std"] / glob["mass_msun"]["median"]
    frac_r = glob["distance_pc"]["std"] / glob["distance_pc"]["median"]
    return Caution("mass-distance", "Mass-distance correlation", [
        "Astrometry alone measures the angular size of the orbits and their periods, hence "
        "<i>M</i>/<i>R</i><sub>0</sub><sup>3</sup> through Kepler's third law; the velocities "
        "set the physical scale. The two parameters are "
        "therefore strongly correlated and should be quoted together, with the correlation.",
        f"In this run ({ref}) the posterior correlation coefficient of <i>M</i> and "
        f"<i>R</i><sub>0</sub> is <b>{rho:.3f}</b>, and along the degeneracy <i>M</i> scales as "
        f"<i>R</i><sub>0</sub><sup>{slope:.2f}</sup> (fractional errors {100 * frac_m:.2f}% in "
        f"<i>M</i>, {100 * frac_r:.2f}% in <i>R</i><sub>0</sub>). A systematic error in "
        "<i>R</i><sub>0</sub> (e.g. from a velocity zero point) carries over to <i>M</i> with "
        "that power."])


def velocity_zero_points(bundle):
    ref = bundle.reference
    v = bundle.variants[ref]
    vz0 = v["globals"].get("vz0_km_s", {})
    zps = {n: s for n, s in v["nuisances"].items() if n.endswith(".zero_point_km_s")}
    refs = [i["name"] for i in bundle.campaign["instruments"]
            if i["kind"] == "velocity" and i["reference"]]
    driver = _driver(bundle, "redshift_signal_km_s")
    body = ["The velocities are taken as c z already corrected by the observers to the "
            "barycentre or the local standard of rest; an error in that correction or in an "
            "instrument's zero point shifts the velocities of a season and is absorbed partly "
            f"by the systemic velocity, partly by <i>R</i><sub>0</sub> and {F_Z}.",
            f"In this run ({ref}): systemic velocity {sym('vz0_km_s')} = {_m(vz0)} km/s, defined by the "
            f"reference spectrograph {', '.join(refs) or 'n/a'}"
            + ("; fitted zero points: " + "; ".join(f"{n.split('.')[0]} {_m(s)} km/s"
                                                    for n, s in zps.items()) if zps else "")
            + "."]
    if driver:
        sig = _median(_derived(bundle, driver, "redshift_signal_km_s"))
        body.append(f"The largest relativistic redshift signal at periapsis is that of {driver}, "
                    f"{sig:.0f} km/s: a zero-point error of 1 km/s is {100 / sig:.2f}% of it.")
    return Caution("zero-points", "Velocity zero points and the barycentric correction", body)


def relativity_priors(bundle, priors):
    free = bundle.free_relativity_variant()
    if free is None:
        return Caution("relativity-priors", "Prior sensitivity of f_SP and f_z", [
            f"No fitted variant leaves {F_SP} or {F_Z} free, so this run gives no direct constraint "
            "on them; the Bayes factors between variants with fixed values carry no prior-width "
            "penalty, but depend on every other prior."])
    glob = bundle.variants[free]["globals"]
    body = [f"Bayes factors of a variant with free {F_SP} and {F_Z} against one with fixed values "
            "depend on the prior width: as long as the posterior lies well inside the prior, "
            "doubling the width of a uniform prior lowers ln <i>Z</i> of the free variant by ln 2 = 0.69 "
            "(the Occam factor), while the posterior hardly changes."]
    parts = []
    for name in ("f_sp", "f_z"):
        s = glob.get(name, {})
        if "std" not in s:
            continue
        p = priors.get(free, {}).get(name)
        if isinstance(p, dict) and p.get("kind") == "uniform":
            width = p["b"] - p["a"]
            inside = p["a"] < s["lo95"] and s["hi95"] < p["b"]
            bounds = f"[{p['a']:g}, {p['b']:g}]".replace("-", MINUS)
            parts.append(f"{sym(name)} = {_m(s)} with a uniform prior on {bounds}: "
                         f"the 68% interval spans {100 * (s['hi68'] - s['lo68']) / width:.0f}% "
                         "of the prior" + ("" if inside else
                                            ", and the 95% interval reaches a prior bound, so "
                                            "the posterior is prior-limited"))
        else:
            parts.append(f"{sym(name)} = {_m(s)} (prior: {p if isinstance(p, str) else 'see the table'})")
    body.append(f"In this run (variant {free}): " + "; ".join(parts) + ".")
    return Caution("relativity-priors", "Prior sensitivity of f_SP and f_z", body)


def extended_mass(bundle):
    driver = _driver(bundle, "gr_advance_arcmin")
    body = ["An extended mass inside the orbits (faint stars, remnants, dark matter) makes "
            "periapses precess backwards, against the forward Schwarzschild precession: a fit "
            f"with a point mass measures their sum, so {F_SP} is degenerate with any extended "
            "mass. A point-mass model is assumed throughout."]
    if driver:
        adv = _derived(bundle, driver, "gr_advance_arcmin")
        passages = _passages(bundle, driver)
        when = ", ".join(f"{t:.1f}" for t in passages) or "none"
        nxt = _median(_derived(bundle, driver, "next_periapsis_yr"))
        body.append(f"In this run the precession signal comes mostly from {driver}, whose "
                    f"periapsis advances by {_m(adv)} arcmin per orbit in GR (the largest of all "
                    f"stars); its periapsis passages within the data: {when}; next: "
                    f"{nxt:.2f}. Both {F_SP} and any extended mass are constrained by this star's "
                    "orbit before and after each passage.")
    return Caution("extended-mass", "Extended mass and Schwarzschild precession", body)


def left_out(bundle):
    ref = bundle.reference
    star = min(bundle.stars, key=lambda s: _median(_derived(bundle, s, "periapsis_rs"))
               if math.isfinite(_median(_derived(bundle, s, "periapsis_rs"))) else math.inf)
    rs = _median(_derived(bundle, star, "periapsis_rs"))
    e = _median(bundle.variants[ref]["stars"][star].get("e", {}))
    vp = _median(_derived(bundle, star, "periapsis_speed_km_s"))
    body = ["The model is a test particle in the first post-Newtonian field of a non-rotating "
            "point mass, with the Roemer delay and the special- and general-relativistic "
            "redshift. It leaves out the spin of the mass (frame dragging) and its quadrupole, "
            "the Shapiro delay, the lensing of the star's light, perturbations by other stars, "
            "and it assumes Gaussian errors (with the stated error scale, jitter and outlier "
            "terms)."]
    if math.isfinite(rs):
        rg_p = 1.0 / (2.0 * rs * (1.0 + e))          # G M / (c^2 a (1 - e^2))
        body.append(f"Order-of-magnitude estimates (from memory) for the star that comes closest, "
                    f"{star} (periapsis at {rs:.0f} Schwarzschild radii): frame dragging changes "
                    "the precession by at most about &chi;&#8201;[<i>GM</i>/<i>c</i><sup>2</sup>"
                    f"<i>a</i>(1{MINUS}<i>e</i><sup>2</sup>)]<sup>1/2</sup> = "
                    f"{100 * math.sqrt(rg_p):.1f}% of the Schwarzschild term, times the "
                    "dimensionless spin &chi;; the Shapiro delay changes the apparent velocity "
                    "near periapsis by at most about <i>v</i><sub>p</sub> <i>R</i><sub>S</sub>/"
                    f"<i>r</i><sub>p</sub> = {vp / rs:.0f} km/s, usually far less given the "
                    "geometry. Compare both with the velocity errors and the uncertainty of "
                    f"{F_SP} before reading a deviation from GR into the data.")
    res = bundle.variants[ref]["residuals"]
    high = [f"{n} (&chi;<sup>2</sup>/<i>N</i> = {r['reduced_chi2']:.2f})" for n, r in res.items()
            if r.get("reduced_chi2") and r["reduced_chi2"] > 1.5]
    scales = {n: s for n, s in bundle.variants[ref]["nuisances"].items()
              if n.endswith(".error_scale") or n.endswith(".outlier_fraction")}
    text = "; ".join(f"{n.split('.')[0]} {quantity(n).description.lower()} {sym(n)} = {_m(s)}"
                     for n, s in scales.items())
    body.append("Non-Gaussian errors: " + (f"the fitted error model gives {text}. " if text else "")
                + (f"Instruments with &chi;<sup>2</sup>/<i>N</i> above 1.5 against the best "
                   f"sample: {', '.join(high)}; their errors as modelled are too small or the "
                   "model misses something at their epochs." if high else
                   "No instrument has &chi;<sup>2</sup>/<i>N</i> above 1.5."))
    return Caution("left-out", "What the model leaves out", body)


def sampler(bundle):
    body = ["The evidence from nested sampling has a statistical error and, on posteriors like "
            "these, can be biased by several nats with stock settings; every run is therefore "
            "cross-checked against the Laplace approximation at the prefit mode and against "
            "importance sampling from it."]
    for name, v in bundle.variants.items():
        ev = v.get("evidence_checks", {})
        parts = [f"ln <i>Z</i> = {v['log_z']:.2f} ± {v['log_z_err']:.2f}"]
        if ev.get("laplace_log_z") is not None:
            parts.append(f"Laplace {ev['laplace_log_z']:.2f} (difference "
                         f"{v['log_z'] - ev['laplace_log_z']:+.2f})")
        if ev.get("importance_log_z") is not None:
            ess = ev.get("importance_ess") or 0
            parts.append(f"importance sampling {ev['importance_log_z']:.2f} ± "
                         f"{ev.get('importance_log_z_err') or 0:.2f} with ESS {ess:.1f} of "
                         f"{ev.get('importance_draws')} draws"
                         + (" (too few to be a check)" if ess < 50 else ""))
        if ev.get("proposal_tail_fraction") is not None:
            parts.append(f"proposal tail fraction {100 * ev['proposal_tail_fraction']:.2f}%")
        body.append(f"{name}: " + "; ".join(parts) + ".")
    comp = bundle.doc["model_comparison"]
    rows = [(n, r) for n, r in comp["against_reference"].items() if n != comp["reference"]]
    if rows:
        body.append("Bayes factors against the reference: " + "; ".join(
            f"{n} ln <i>B</i> = {r['ln_bayes_factor']:+.2f} ± {r['ln_bayes_factor_err']:.2f}"
            for n, r in rows) + ". Differences smaller than the spread of the evidence "
            "estimates above are not significant.")
    return Caution("sampler", "The sampler's own uncertainty", body)


def coverage(bundle):
    ref = bundle.reference
    rows = []
    for s in bundle.stars:
        c = _median(_derived(bundle, s, "coverage"))
        if math.isfinite(c) and c < 0.5:
            rows.append(f"{s} ({100 * c:.0f}% of its orbit)")
    mirrors = bundle.variants[ref].get("mirror_ambiguity", {})
    body = []
    if rows:
        body.append("Partly covered orbits: " + ", ".join(rows) + ". Their period, "
                    "eccentricity and periapsis epoch are strongly correlated and their "
                    "posteriors far from Gaussian; they add little to the mass but much to the "
                    "parameter count, and their orbital elements must not be read on their own.")
    for s, info in mirrors.items():
        fr = " and ".join(f"{100 * m['fraction']:.0f}%" for m in info["modes"])
        body.append(f"{s} has no velocities: its orbit is known only up to the mirror ambiguity "
                    f"(Omega + 180 deg, omega + 180 deg); the samples split {fr} between the "
                    "modes. Its elements are given per mode; one velocity measurement would "
                    "decide between them (the modes predict opposite velocities, see its figure).")
    if not body:
        return None
    return Caution("coverage", "Orbit coverage and the mirror ambiguity", body)


def cautions(bundle, priors):
    out = [frame_tie(bundle, priors), confusion(bundle), mass_distance(bundle),
           velocity_zero_points(bundle), relativity_priors(bundle, priors), extended_mass(bundle),
           left_out(bundle), sampler(bundle), coverage(bundle)]
    return [c for c in out if c is not None]
