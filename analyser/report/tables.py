"""The report's tables, built from results.json, and their CSV form.

Each builder returns a `Table`: columns (with units in the header), rows of
cells (see cells.py) and a caption.  The same object is rendered into the
HTML page by the template, into LaTeX by latex.py and into CSV here, so the
three never disagree.  Star tables describe the reference variant; the
parameter tables have one column per variant.
"""

import csv
import html as _html
import io
from dataclasses import dataclass, field

from .cells import Measure, Rich, latex_escape, csv_fields
from .priors import prior_cell
from .quantities import QUANTITIES, UNITS, quantity


def text(plain):
    """Plain text as a Rich cell, escaped for HTML and LaTeX."""
    return Rich(plain, _html.escape(plain), latex_escape(plain))


@dataclass
class Column:
    plain: str
    html: str
    latex: str
    align: str = "r"
    wrap: bool = False       # long text: may wrap on the page


def column(plain, html=None, latex=None, align="r", wrap=False):
    return Column(plain, html or _html.escape(plain), latex or latex_escape(plain), align, wrap)


def quantity_column(name, label=None):
    """A column headed by a quantity's symbol and unit."""
    q = QUANTITIES[name]
    return Column(q.label_plain(label or name), q.label_html(), q.label_latex())


@dataclass
class Table:
    key: str              # file stem and HTML anchor
    title: str
    caption: Rich
    columns: list
    rows: list
    notes: list = field(default_factory=list)     # Rich
    number: int = 0       # set by the renderer, in order of appearance

    def measure_columns(self):
        return [any(isinstance(r[k], Measure) for r in self.rows) for k in range(len(self.columns))]


def write_csv(table):
    """CSV text: a measured column becomes value, minus and plus fields."""
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    wide = table.measure_columns()
    header = []
    for col, w in zip(table.columns, wide):
        header += [col.plain, col.plain + " minus", col.plain + " plus"] if w else [col.plain]
    writer.writerow(header)
    for row in table.rows:
        fields = []
        for cell, w in zip(row, wide):
            f = csv_fields(cell)
            fields += (f + ["", ""])[:3] if w else f[:1]
        writer.writerow(fields)
    return out.getvalue()


def _measure(summary, name):
    if summary is None:
        return None
    return Measure.from_summary(summary, quantity(name).scale)


def _derived(summary, name):
    """A derived quantity: constant over the samples is not 'fixed', just exact."""
    m = _measure(summary, name)
    return Measure(m.value) if m is not None and m.fixed else m


def _parameter_label(name):
    """Row label of a parameter: description, symbol and unit."""
    q = quantity(name)
    unit = UNITS[q.unit]
    owner = name.rsplit(".", 1)[0] + " " if "." in name else ""
    # CSV: the parameter's own name, as in results.json and the sample tables
    plain = name + (f" [{unit.plain}]" if unit.plain else "")
    html = f"{_html.escape(owner)}{q.description}, {q.html}" + (f" ({unit.html})" if unit.html else "")
    latex = f"{latex_escape(owner)}{latex_escape(q.description)}, {q.latex}" + \
        (f" ({unit.latex})" if unit.latex else "")
    return Rich(plain, html, latex)


def _prior_of(priors, variants, name, scale):
    """The prior of `name` where it is free (the same in every such variant),
    else the fixed value's prior; "differs by variant" if they disagree."""
    free = [priors[v].get(name) for v in variants
            if isinstance(priors[v].get(name), (str, dict))
            and not (isinstance(priors[v][name], dict) and priors[v][name].get("kind") == "fixed")]
    choices = free or [priors[v].get(name) for v in variants]
    cells = [prior_cell(p, scale) for p in choices]
    if len({c.plain for c in cells}) > 1:
        return text("differs by variant")
    return cells[0] if cells else text("n/a")


def parameter_table(bundle, key, section, names, priors, title, caption):
    """Rows = parameters of results.json[variants][v][section], a column per variant."""
    variants = list(bundle.variants)
    cols = [column("Parameter", align="l"), column("Prior", align="l")]
    cols += [column(v) for v in variants]
    rows = []
    for name in names:
        scale = quantity(name).scale
        row = [_parameter_label(name), _prior_of(priors, variants, name, scale)]
        row += [_measure(bundle.variants[v][section].get(name), name) for v in variants]
        rows.append(row)
    return Table(key, title, caption, cols, rows)


def global_table(bundle, priors, prior_source):
    from .curves import GLOBALS
    return parameter_table(
        bundle, "globals", "globals", GLOBALS, priors, "Global parameters",
        text("Posterior medians with 68% central intervals of the central mass, its distance, "
             "the reference-frame terms at the reference epoch "
             f"{bundle.t_ref:.1f} and the relativistic factors, per model variant. "
             "Gaussian(mean, sigma); ranges are [min, max] in the unit of the row. "
             + prior_source))


def nuisance_table(bundle, priors, prior_source):
    names = [n for i in bundle.campaign["instruments"] for n in i["nuisances"]]
    return parameter_table(
        bundle, "nuisances", "nuisances", names, priors, "Instrument parameters",
        text("Instrument terms relative to the reference instruments (offsets, zero points) "
             "and error models, per variant. " + prior_source))


def data_table(bundle):
    insts = bundle.instruments
    cols = [column("Star", align="l")] + [column(i) for i in insts]
    cols += [column("First [yr]", "First (yr)", "First (yr)"),
             column("Last [yr]", "Last (yr)", "Last (yr)"),
             column("Span [yr]", "Span (yr)", "Span (yr)"), column("Data points")]
    rows = []
    for s in bundle.campaign["stars"]:
        name = s["name"] + ("" if s["has_velocities"] else " *")
        rows.append([text(name)] + [str(s["epochs"].get(i, 0)) for i in insts]
                    + [_year(s["first_yr"]), _year(s["last_yr"]), f"{s['span_yr']:.1f}",
                       str(s["data_points"])])
    span = bundle.campaign["time_span"]
    rows.append([text("All")] + [str(sum(s["epochs"].get(i, 0) for s in bundle.campaign["stars"]))
                                 for i in insts]
                + [_year(span["first_yr"]), _year(span["last_yr"]), f"{span['span_yr']:.1f}",
                   str(sum(s["data_points"] for s in bundle.campaign["stars"]))])
    kinds = {i["name"]: i["kind"] for i in bundle.campaign["instruments"]}
    astro = ", ".join(i for i in insts if kinds[i] == "astrometry")
    vel = ", ".join(i for i in insts if kinds[i] == "velocity")
    return Table("data", "Data", text(
        f"Epochs per star and instrument (astrometry: {astro}; line-of-sight velocities: "
        f"{vel}). Data points count x and y separately. * no velocities (mirror ambiguity)."),
        cols, rows)


def _year(value):
    return "n/a" if value is None else f"{value:.2f}"


ELEMENT_ROWS = (("a_mas", "stars"), ("a_au", "derived"), ("e", "stars"), ("i_deg", "stars"),
                ("Omega_deg", "stars"), ("omega_deg", "stars"), ("t_p_yr", "stars"),
                ("period_yr", "stars"), ("radial_period_yr", "derived"))


def element_table(bundle):
    v = bundle.variants[bundle.reference]
    cols = [column("Star", align="l")] + [quantity_column(n) for n, _ in ELEMENT_ROWS]
    cols += [quantity_column("coverage"), column("Notes", align="l")]
    rows = []
    for star in bundle.stars:
        mirror = v.get("mirror_ambiguity", {}).get(star)
        coverage = _derived(v["derived"][star].get("coverage"), "coverage")
        if not mirror:
            rows.append([text(star)] + [_derived(v[sec][star].get(n), n) for n, sec in ELEMENT_ROWS]
                        + [coverage, None])
            continue
        for k, mode in enumerate(mirror["modes"]):
            label = text(f"{star} mode {k + 1}")
            pct = f"{100 * mode['fraction']:.0f}% of samples"
            params = mode.get("parameters")
            if not params:
                rows.append([label] + [None] * len(ELEMENT_ROWS) + [None, text(
                    f"mirror mode (Omega+180 deg, omega+180 deg): {pct}, not summarised")])
                continue
            cells = [_derived(params.get(n) if sec == "stars" else v[sec][star].get(n), n)
                     for n, sec in ELEMENT_ROWS]
            rows.append([label] + cells + [coverage, text(f"mirror ambiguity: {pct}")])
    return Table("elements", "Orbital elements", text(
        f"Orbital elements of every star in the reference variant ({bundle.reference}): "
        "osculating elements at the periapsis passage t_p (the last one before the reference "
        f"epoch {bundle.t_ref:.1f}), Keplerian period P and the periapsis-to-periapsis "
        "(radial) period P_r of the relativistic orbit. Stars without velocities are listed "
        "per mirror mode (Omega+180 deg, omega+180 deg give the same sky track up to the "
        "light-travel time across the orbit). "
        "'covered' is the fraction of one radial period spanned by the data."), cols, rows)


DERIVED_ROWS = ("periapsis_au", "periapsis_rs", "periapsis_light_hours", "periapsis_speed_km_s",
                "periapsis_beta", "gr_advance_arcmin", "redshift_signal_km_s",
                "next_periapsis_yr")


def derived_table(bundle):
    v = bundle.variants[bundle.reference]
    cols = [column("Star", align="l")] + [quantity_column(n) for n in DERIVED_ROWS]
    rows = [[text(star)] + [_derived(v["derived"][star].get(n), n) for n in DERIVED_ROWS]
            for star in bundle.stars]
    return Table("derived", "Periapsis quantities", text(
        f"Derived per-star quantities in the reference variant ({bundle.reference}), "
        "from every posterior sample: periapsis distance (in AU, Schwarzschild radii and "
        "light hours), speed at periapsis, the Schwarzschild periapsis advance per orbit "
        "predicted by general relativity, the relativistic (transverse Doppler plus "
        "gravitational) redshift at periapsis, and the next periapsis passage after the "
        "last data epoch."), cols, rows)


def comparison_table(bundle):
    comp = bundle.doc["model_comparison"]
    ref = comp["reference"]
    cols = [column("Variant", align="l"), column("Description", align="l", wrap=True),
            column("Free parameters"),
            column("ln Z", "ln&#8239;<i>Z</i>", r"$\ln Z$"),
            column(f"ln B vs {ref}", f"ln&#8239;<i>B</i> vs {ref}", rf"$\ln B$ vs {latex_escape(ref)}"),
            column("Evidence (Kass & Raftery)", align="l", wrap=True),
            column("Favours", align="l")]
    rows = []
    for name, v in bundle.variants.items():
        row = comp["against_reference"][name]
        b = Measure(row["ln_bayes_factor"], row["ln_bayes_factor_err"],
                    row["ln_bayes_factor_err"])
        rows.append([text(name + (" (reference)" if name == ref else "")),
                     text(v.get("description", "")), str(len(v.get("free_parameters", []))),
                     Measure(v["log_z"], v["log_z_err"], v["log_z_err"]),
                     None if name == ref else b,
                     text("reference" if name == ref else row["strength"]),
                     text("" if name == ref else row["favours"])])
    return Table("comparison", "Model comparison", text(
        f"Evidence ln Z of each variant (nested sampling, with its statistical error) and "
        f"the ln Bayes factor against the reference variant {ref}; positive values favour "
        f"the variant. Preferred by the evidence: {comp['preferred']}. Verbal scale: "
        f"{comp.get('scale', 'Kass & Raftery (1995)')}."), cols, rows)


def residual_table(bundle):
    v = bundle.variants[bundle.reference]
    cols = [column("Instrument", align="l"), column("Kind", align="l"), column("N points"),
            column("chi2", "&chi;<sup>2</sup>", r"$\chi^2$"),
            column("chi2/N", "&chi;<sup>2</sup>/<i>N</i>", r"$\chi^2/N$"),
            column("RMS x [mas]", "RMS <i>x</i> (mas)", "RMS $x$ (mas)"),
            column("RMS y [mas]", "RMS <i>y</i> (mas)", "RMS $y$ (mas)"),
            column("RMS v [km/s]", f"RMS <i>v</i> ({UNITS['km/s'].html})",
                   f"RMS $v$ ({UNITS['km/s'].latex})"),
            column("Outliers")]
    rows = []
    for inst in bundle.instruments:
        r = v["residuals"].get(inst)
        if r is None:
            continue
        rms = [f"{x:.3g}" for x in r["rms"]]
        astro = r["kind"] == "astrometry"
        rows.append([text(inst), r["kind"], str(r["n_points"]), f"{r['chi2']:.1f}",
                     "n/a" if r["reduced_chi2"] is None else f"{r['reduced_chi2']:.2f}",
                     rms[0] if astro and rms else None, rms[1] if astro and len(rms) > 1 else None,
                     rms[0] if not astro and rms else None, str(len(r["outliers"]))])
    return Table("residuals", "Residuals per instrument", text(
        f"Residuals of every data point against the best (maximum-posterior) sample of the "
        f"reference variant ({bundle.reference}), with the errors as modelled (scaled or with "
        "jitter added). N counts x and y separately; chi2/N is per data point, not per degree "
        "of freedom. Outliers: points with outlier probability above 0.5 under the outlier "
        "mixture, or beyond 4 sigma without one."), cols, rows)


def outlier_table(bundle):
    v = bundle.variants[bundle.reference]
    cols = [column("Instrument", align="l"), column("Star", align="l"),
            column("Epoch [yr]", "Epoch (yr)", "Epoch (yr)"),
            column("Residual [sigma]", "Residual (&sigma;)", r"Residual ($\sigma$)"),
            column("Outlier probability")]
    rows = []
    for inst in bundle.instruments:
        for o in v["residuals"].get(inst, {}).get("outliers", []):
            p = o.get("outlier_probability")
            rows.append([text(inst), text(o["star"]), f"{o['epoch_yr']:.3f}",
                         f"{o['residual_sigma']:.1f}", "n/a" if p is None else f"{p:.3f}"])
    return Table("outliers", "Flagged data points", text(
        f"Data points flagged as outliers in the reference variant ({bundle.reference}). "
        "They stay in the fit (the outlier mixture down-weights them); residual in units of "
        "the modelled error."), cols, rows)


def sampler_table(bundle):
    cols = [column("Variant", align="l"), column("Engine", align="l"), column("Live points"),
            column("Iterations"), column("Likelihood calls"),
            column("Efficiency [%]", "Efficiency (%)", r"Efficiency (\%)"),
            column("ESS"), column("Sampling [s]", "Sampling (s)", "Sampling (s)"),
            column("Prefit [s]", "Prefit (s)", "Prefit (s)")]
    rows = []
    for name, v in bundle.variants.items():
        rows.append([text(name), text(str(v.get("engine", ""))), str(v.get("live_points")),
                     str(v.get("iterations")), f"{v.get('likelihood_calls', 0):,}",
                     f"{v.get('efficiency_percent', 0):.2f}",
                     f"{v.get('effective_sample_size', 0):.0f}",
                     f"{v.get('wall_seconds', 0):.0f}", f"{v.get('prefit_seconds', 0):.0f}"])
    return Table("sampler", "Sampler runs", text(
        "Nested-sampling runs: live points, iterations, likelihood calls, sampling efficiency "
        "(accepted / proposed), effective sample size of the weighted posterior, and wall "
        "time of the sampling and of the prefit."), cols, rows)


def evidence_check_table(bundle):
    cols = [column("Variant", align="l"),
            column("ln Z nested", "ln&#8239;<i>Z</i> nested", r"$\ln Z$ nested"),
            column("ln Z Laplace", "ln&#8239;<i>Z</i> Laplace", r"$\ln Z$ Laplace"),
            column("ln Z importance", "ln&#8239;<i>Z</i> importance", r"$\ln Z$ importance"),
            column("Importance ESS / draws", "Importance ESS / draws",
                   "Importance ESS / draws"),
            column("Tail fraction [%]", "Proposal tail fraction (%)",
                   r"Proposal tail fraction (\%)"),
            column("Information [nats]", "Information (nats)", "Information (nats)")]
    rows = []
    for name, v in bundle.variants.items():
        ev = v.get("evidence_checks", {})
        imp_err = ev.get("importance_log_z_err")
        rows.append([text(name), Measure(v["log_z"], v["log_z_err"], v["log_z_err"]),
                     _fmt(ev.get("laplace_log_z"), ".2f"),
                     None if ev.get("importance_log_z") is None else
                     Measure(ev["importance_log_z"], imp_err or 0.0, imp_err or 0.0),
                     f"{_fmt(ev.get('importance_ess'), '.1f')} / {ev.get('importance_draws', 'n/a')}",
                     _fmt(None if ev.get("proposal_tail_fraction") is None
                          else 100 * ev["proposal_tail_fraction"], ".2f"),
                     _fmt(v.get("information_nats"), ".1f")])
    return Table("evidence", "Evidence cross-checks", text(
        "The nested-sampling evidence against two independent estimates: the Laplace "
        "approximation at the prefit mode and importance sampling from a heavy-tailed proposal "
        "around it (reliable only when its effective sample size is large). The tail fraction "
        "is the posterior weight found in the far tails of the sampler's proposal prior."),
        cols, rows)


def _fmt(x, spec):
    return "n/a" if x is None else format(x, spec)


def change_tables(bundle):
    """The parameter shifts and gate outcomes of comparison.json (if any)."""
    comp = bundle.comparison
    if not comp:
        return []
    cols = [column("Parameter", align="l"), column("This run"), column("Baseline"),
            column("Shift [sigma]", "Shift (&sigma;)", r"Shift ($\sigma$)"),
            column("Beyond limit", align="l")]
    rows = []
    for p in comp.get("parameters", []):
        name = p["name"]
        scale = quantity(name).scale if "." not in name or name.rsplit(".", 1)[-1] in QUANTITIES else 1.0
        rows.append([_parameter_label(name),
                     Measure(p["new_median"] / scale, p["new_std"] / scale, p["new_std"] / scale),
                     Measure(p["old_median"] / scale, p["old_std"] / scale, p["old_std"] / scale),
                     f"{p['shift_sigma']:+.2f}", text("yes" if p.get("exceeds") else "no")])
    params = Table("change", "Change since the baseline", text(
        f"Posterior medians and standard deviations of this run and of the baseline "
        f"{comp.get('baseline', '')}; shift in combined standard deviations."), cols, rows)
    gcols = [column("Gate", align="l"), column("Kind", align="l"), column("Outcome", align="l"),
             column("Value"), column("Limit"), column("Detail", align="l")]
    grows = [[text(g["name"]), text(g["kind"]), text("passed" if g["passed"] else "FAILED"),
              _fmt(g.get("value"), ".3g"), _fmt(g.get("limit"), ".3g"),
              text(str(g.get("detail", "")))] for g in comp.get("gates", [])]
    gates = Table("gates", "Gates", text("Automatic checks of this run against the baseline "
                                         "and of the sampler's health."), gcols, grows)
    return [params, gates]
