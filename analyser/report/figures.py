"""The report's figures, from the bundle's samples, data and residuals.

  sky         every star's orbit on the sky with the data (best sample)
  star-<s>    per star: sky orbit, velocity curve and residuals, with
              posterior draws (coloured by mirror mode where there is one)
  corner      the global parameters of the reference variant
  relativity  f_SP and f_z where a variant leaves them free
  residuals   residuals against time, per instrument

Every function returns `Figure` records; the files are written by style.save
as SVG (for the page) and PDF (for papers).  Data of instruments with an
offset or zero point are shifted onto the reference instrument with the best
sample's values, so they sit on curves that do not carry those terms.
"""

from dataclasses import dataclass

import numpy as np

from . import style  # noqa: F401  (first: it selects the file-only Agg backend)
import matplotlib.pyplot as plt  # noqa: E402
from matplotlib.ticker import MaxNLocator  # noqa: E402

from ..physics import mirror, predict_observables
from . import curves
from .cells import Measure, measure_parts
from .corner import contour_panel, corner, marginal_panel
from .quantities import quantity
from .style import (FULL_WIDTH, GR_COLOUR, GREY, MODE_COLOURS, NEWTON_COLOUR, OKABE_ITO,
                    compass, figure_style, save, sky_axes, star_style)

INSTRUMENT_COLOURS = [OKABE_ITO[k] for k in ("black", "vermillion", "green", "purple",
                                             "orange", "sky")]
INSTRUMENT_MARKERS = ["o", "s", "D", "^", "v", "P"]
DRAW_COLOUR = OKABE_ITO["blue"]


@dataclass
class Figure:
    key: str
    title: str
    caption: str          # HTML
    files: dict           # {"figures/<key>.svg": path, "figures/<key>.pdf": path}

    @property
    def svg(self):
        return next(k for k in self.files if k.endswith(".svg"))

    @property
    def pdf(self):
        return next(k for k in self.files if k.endswith(".pdf"))


def _instrument_style(bundle, name):
    k = bundle.instruments.index(name) if name in bundle.instruments else 0
    return INSTRUMENT_COLOURS[k % len(INSTRUMENT_COLOURS)], INSTRUMENT_MARKERS[k % len(INSTRUMENT_MARKERS)]


def _star_span(bundle, star):
    s = next(x for x in bundle.campaign["stars"] if x["name"] == star)
    return s["first_yr"], s["last_yr"]


def _radial_period(table, row, star):
    return float(table[f"{star}.radial_period_yr"][row])


def _orbit_window(table, row, star, first, last):
    """Epochs for drawing a star's orbit: one full radial period when the data
    cover most of it, else the data span with a margin on either side."""
    el = curves.sample_elements(table, row, star)
    p_r = _radial_period(table, row, star)
    span = max(last - first, 1e-3)
    if p_r <= 1.25 * span:
        return curves.one_orbit(el, p_r, 0.5 * (first + last)), True
    margin = min(0.2 * span, 0.5 * (p_r - span))
    return curves.orbit_epochs(el, p_r, first - margin, last + margin), False


# ---------------------------------------------------------------- all stars on the sky

def _square_limits(ax, x, y, pad=0.06):
    """Equal ranges in x and y around the points, East (larger x) on the left."""
    x, y = np.asarray(x, float), np.asarray(y, float)
    x, y = x[np.isfinite(x)], y[np.isfinite(y)]
    half = 0.5 * max(np.ptp(x), np.ptp(y), 1.0) * (1 + 2 * pad)
    cx, cy = 0.5 * (x.max() + x.min()), 0.5 * (y.max() + y.min())
    ax.set_xlim(cx + half, cx - half)
    ax.set_ylim(cy - half, cy + half)


def sky_figure(bundle, out_dir):
    v = bundle.reference
    table = bundle.samples(v)
    best = curves.best_row(table, bundle.variants[v])
    data = curves.corrected_astrometry(bundle, table, best)
    g = curves.sample_globals(table, best, bundle.t_ref)
    tracks, closed = [], []
    for star in bundle.stars:
        first, last = _star_span(bundle, star)
        el = curves.sample_elements(table, best, star)
        p_r = _radial_period(table, best, star)
        o = curves.observables(table, best, star, curves.one_orbit(el, p_r, 0.5 * (first + last)),
                               bundle.t_ref, bundle.dynamics)
        tracks.append(o)
        closed.append(p_r <= 1.25 * (last - first))
    # the whole field, and a zoom on the stars whose orbits the data close
    inner = [k for k, c in enumerate(closed) if c]
    full_x = np.r_[data["x"], np.concatenate([tracks[k].x_mas for k in inner] or [[g["x0_mas"]]])]
    full_y = np.r_[data["y"], np.concatenate([tracks[k].y_mas for k in inner] or [[g["y0_mas"]]])]
    zoom = None
    if inner and len(inner) < len(tracks):
        zx = np.concatenate([tracks[k].x_mas for k in inner])
        zy = np.concatenate([tracks[k].y_mas for k in inner])
        if max(np.ptp(zx), np.ptp(zy)) < 0.5 * max(np.ptp(full_x), np.ptp(full_y)):
            zoom = (np.r_[zx, g["x0_mas"]], np.r_[zy, g["y0_mas"]])
    with figure_style():
        ncol = 2 if zoom else 1
        fig, axes = plt.subplots(1, ncol, figsize=(FULL_WIDTH, 3.9 if zoom else 5.4))
        axes = np.atleast_1d(axes)
        for n, ax in enumerate(axes):
            for k, star in enumerate(bundle.stars):
                colour, marker, ls = star_style(k)
                sel = data["star"] == star
                ax.errorbar(data["x"][sel], data["y"][sel], xerr=data["x_err"][sel],
                            yerr=data["y_err"][sel], fmt=marker, ms=2.0, mew=0, lw=0.4,
                            color=colour, alpha=0.8, label=star, zorder=3)
                ax.plot(tracks[k].x_mas, tracks[k].y_mas, color=colour, lw=0.8, ls=ls, zorder=2)
            ax.plot(g["x0_mas"], g["y0_mas"], marker="+", color="k", ms=9, mew=1.2, zorder=4,
                    ls="none", label="central mass")
            if n == 0:
                _square_limits(ax, full_x, full_y)
            else:
                _square_limits(ax, *zoom)
                ax.set_title("inner orbits", fontsize=8)
            sky_axes(ax)
            compass(ax)
        if zoom:
            axes[0].set_title("all stars", fontsize=8)
            handles, labels = axes[0].get_legend_handles_labels()
            fig.legend(handles, labels, loc="lower center", ncol=min(len(labels), 9),
                       bbox_to_anchor=(0.5, -0.01), handletextpad=0.3, columnspacing=0.9,
                       markerscale=1.6)
            fig.tight_layout(rect=(0, 0.06, 1, 1), w_pad=2.0)
        else:
            axes[0].legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), borderaxespad=0,
                           handletextpad=0.3, markerscale=1.6)
        files = save(fig, out_dir, "sky")
    return Figure("sky", "The stars on the sky", (
        f"Astrometry of every star with its orbit for the best sample of the reference "
        f"variant ({v}), drawn over one radial period; the cross marks the central mass at "
        f"the reference epoch {bundle.t_ref:.1f}. Data of instruments with a fitted offset "
        "are shifted onto the reference frame. North is up and East to the left. Orbits "
        "longer than the data span are extrapolations beyond the data."
        + (" Right: the inner orbits enlarged." if zoom else "")), files)


# ---------------------------------------------------------------- one star

def _draw_groups(bundle, variant, star, n_rows):
    """[(rows, colour, label)] of posterior draws, split by mirror mode if any."""
    masks = curves.mode_masks(bundle, variant, star)
    rows = curves.draw_rows(n_rows)
    if masks is None:
        return [(rows, DRAW_COLOUR, "posterior draws")]
    groups = []
    for k, mask in enumerate(masks):
        chosen = rows[mask[rows]]
        if chosen.size == 0 and mask.any():          # a small mode: draw from it directly
            chosen = np.flatnonzero(mask)[:3]
        frac = mask.mean()
        groups.append((chosen, MODE_COLOURS[k], f"mode {k + 1} ({100 * frac:.0f}%)"))
    return groups


def _residual_panel(ax, res, bundle, kind, component, unit):
    for inst in bundle.instruments:
        sel = (res["instrument"] == inst) & (res["kind"] == kind)
        if not sel.any():
            continue
        colour, marker = _instrument_style(bundle, inst)
        r = np.asarray(res[f"res_{component}"][sel], float)
        s = np.asarray(res[f"sigma_{component}"][sel], float)
        t = np.asarray(res["epoch"][sel], float)
        ax.errorbar(t, r, yerr=s, fmt=marker, ms=2.2, mew=0, lw=0.4, color=colour, alpha=0.85)
        out = _flagged(res, sel)
        if out.any():
            ax.plot(t[out], r[out], "o", ms=6, mfc="none", mec=OKABE_ITO["vermillion"], mew=0.8)
    ax.axhline(0, color=GREY, lw=0.6)
    # two lines: the residual panels are too short for label and unit on one
    ax.set_ylabel(f"\u0394{component}\n({unit})", fontsize=7, linespacing=1.0)
    _symmetric_ylim(ax, res, kind, component)


def _flagged(res, sel):
    p = np.asarray(res["outlier_probability"][sel], float)
    z = np.asarray(res["normalised"][sel], float)
    return np.where(np.isfinite(p), p > 0.5, z > 4.0)


def _symmetric_ylim(ax, res, kind, component):
    """Limits that show the bulk of the residuals; outliers may leave the panel."""
    sel = res["kind"] == kind
    r = np.abs(np.asarray(res[f"res_{component}"][sel], float))
    s = np.asarray(res[f"sigma_{component}"][sel], float)
    lim = np.nanpercentile(r + s, 99) * 1.15 if r.size else 1.0
    ax.set_ylim(-lim, lim)


def star_figure(bundle, star, out_dir):
    v = bundle.reference
    table = bundle.samples(v)
    best = curves.best_row(table, bundle.variants[v])
    astro = curves.corrected_astrometry(bundle, table, best)
    vel = curves.corrected_velocities(bundle, table, best)
    res_all = bundle.residuals(v)
    res = res_all[np.asarray(res_all["star"]) == star]
    has_v = bool(np.any(vel["star"] == star))
    first, last = _star_span(bundle, star)
    groups = _draw_groups(bundle, v, star, len(table))
    mirror_info = bundle.variants[v].get("mirror_ambiguity", {}).get(star)
    with figure_style():
        fig = plt.figure(figsize=(FULL_WIDTH, 3.9))
        heights = [2.2, 0.8, 0.8, 0.8] if has_v else [2.2, 0.9, 0.9]
        gs = fig.add_gridspec(len(heights), 2, width_ratios=[1.0, 1.05], height_ratios=heights,
                              wspace=0.32, hspace=0.08)
        sky = fig.add_subplot(gs[:, 0])
        vax = fig.add_subplot(gs[0, 1])
        rax = [fig.add_subplot(gs[k, 1], sharex=vax) for k in range(1, len(heights))]

        # posterior draws: sky track and velocity curve
        t_v0, t_v1 = first - 0.03 * (last - first), last + 0.03 * (last - first)
        for rows, colour, label in groups:
            for n, row in enumerate(rows):
                t_sky, _ = _orbit_window(table, row, star, first, last)
                o = curves.observables(table, row, star, t_sky, bundle.t_ref, bundle.dynamics)
                sky.plot(o.x_mas, o.y_mas, color=colour, lw=0.5, alpha=0.35,
                         label=label if n == 0 else None)
                el = curves.sample_elements(table, row, star)
                t_v = curves.orbit_epochs(el, _radial_period(table, row, star), t_v0, t_v1)
                o = curves.observables(table, row, star, t_v, bundle.t_ref, bundle.dynamics)
                vax.plot(t_v, o.v_km_s, color=colour, lw=0.5, alpha=0.35)
        # the best sample, and for a mirror mode nobody sampled, its mirror image
        t_sky, closed = _orbit_window(table, best, star, first, last)
        o = curves.observables(table, best, star, t_sky, bundle.t_ref, bundle.dynamics)
        sky.plot(o.x_mas, o.y_mas, color="k", lw=0.8, label="best sample")
        el = curves.sample_elements(table, best, star)
        t_v = curves.orbit_epochs(el, _radial_period(table, best, star), t_v0, t_v1)
        o = curves.observables(table, best, star, t_v, bundle.t_ref, bundle.dynamics)
        vax.plot(t_v, o.v_km_s, color="k", lw=0.8)
        if mirror_info and any(not m.get("parameters") for m in mirror_info["modes"]):
            g = curves.sample_globals(table, best, bundle.t_ref)
            om = predict_observables(g, mirror(el), t_v, bundle.dynamics)
            vax.plot(t_v, om.v_km_s, color=MODE_COLOURS[1], lw=0.9, ls="--",
                     label="mirror of best (not sampled)")
        if not closed:
            t_full = curves.one_orbit(el, _radial_period(table, best, star), 0.5 * (first + last))
            o = curves.observables(table, best, star, t_full, bundle.t_ref, bundle.dynamics)
            sky.plot(o.x_mas, o.y_mas, color=GREY, lw=0.6, ls=":", label="full orbit (best)")

        # data
        sel = astro["star"] == star
        for inst in bundle.instruments:
            s2 = sel & (astro["instrument"] == inst)
            if s2.any():
                colour, marker = _instrument_style(bundle, inst)
                sky.errorbar(astro["x"][s2], astro["y"][s2], xerr=astro["x_err"][s2],
                             yerr=astro["y_err"][s2], fmt=marker, ms=2.4, mew=0, lw=0.4,
                             color=colour, label=inst, zorder=4)
        sel_v = vel["star"] == star
        for inst in bundle.instruments:
            s2 = sel_v & (vel["instrument"] == inst)
            if s2.any():
                colour, marker = _instrument_style(bundle, inst)
                vax.errorbar(vel["epoch"][s2], vel["v"][s2], yerr=vel["v_err"][s2], fmt=marker,
                             ms=2.4, mew=0, lw=0.4, color=colour, label=inst, zorder=4)
        g = curves.sample_globals(table, best, bundle.t_ref)
        sky.plot(g["x0_mas"], g["y0_mas"], "+", color="k", ms=8, mew=1.1, zorder=5)
        _square_limits(sky, np.r_[astro["x"][sel], g["x0_mas"]],
                       np.r_[astro["y"][sel], g["y0_mas"]], pad=0.1)
        sky_axes(sky)
        compass(sky)
        # a translucent box keeps the legend legible where the orbit runs under it
        sky.legend(loc="upper left", fontsize=6.5, handlelength=1.4, ncol=1, frameon=True,
                   framealpha=0.8, facecolor="white", edgecolor="none")
        vax.set_ylabel("$v_z$ (km s$^{-1}$)")
        if not has_v:
            vax.text(0.02, 0.95, "no velocities measured: curves are predictions",
                     transform=vax.transAxes, fontsize=7, va="top")
        if vax.get_legend_handles_labels()[1]:
            vax.legend(loc="lower left" if has_v else "lower right", fontsize=6.5, ncol=2)
        plt.setp(vax.get_xticklabels(), visible=False)
        panels = ([("velocity", "v", "km s$^{-1}$")] if has_v else []) + \
            [("astrometry", "x", "mas"), ("astrometry", "y", "mas")]
        for ax, (kind, comp, unit) in zip(rax, panels):
            _residual_panel(ax, res, bundle, kind, comp, unit)
        for ax in rax[:-1]:
            plt.setp(ax.get_xticklabels(), visible=False)
        rax[-1].set_xlabel("Epoch (yr)")
        rax[-1].xaxis.set_major_locator(MaxNLocator(6, integer=True))
        vax.set_xlim(t_v0, t_v1)
        fig.align_ylabels([vax] + rax)
        title = star
        if mirror_info:
            fr = " / ".join(f"{100 * m['fraction']:.0f}%" for m in mirror_info["modes"])
            title += f" (no velocities: mirror modes {fr})"
        fig.suptitle(title, x=0.5, y=0.99, fontsize=9)
        files = save(fig, out_dir, f"star-{star}")
    caption = (f"{star}: sky track (left, North up, East left) and line-of-sight velocity "
               f"(right) with {sum(len(g[0]) for g in groups)} posterior draws of the reference "
               f"variant ({v}) and the best sample (black); below, the residuals against the "
               "best sample with the modelled errors (flagged outliers circled).")
    if mirror_info:
        caption += (" Without velocities the orbit has the mirror ambiguity (Omega + 180 deg, "
                    "omega + 180 deg): the two modes trace the same sky track but predict "
                    "opposite line-of-sight velocities; draws are coloured by mode.")
        delta = mirror_info.get("log_like_difference")
        if any(not m.get("parameters") for m in mirror_info["modes"]):
            caption += " One mode holds no samples; the dashed curve is the mirror image of the best sample"
            if delta is not None and abs(delta) > 3.0:
                caption += (f", whose best fit is worse by {abs(delta):.0f} in ln L: the "
                            "light-travel time across the orbit, which changes sign with z, "
                            "tells the two apart in these data.")
            else:
                caption += ", which fits the astrometry about as well."
    return Figure(f"star-{star}", star, caption, files)


# ---------------------------------------------------------------- posteriors

def _display(bundle, variant, name):
    return bundle.column(variant, name) / quantity(name).scale


def _title(name, summary):
    """'symbol = value^{+a}_{-b}' for a panel title."""
    q = quantity(name)
    value, lo, hi = measure_parts(Measure.from_summary(summary, q.scale))
    sep = " = "
    if lo is None:
        return f"{q.mpl}{sep}${value}$"
    if lo == hi:
        return f"{q.mpl}{sep}${value} \\pm {lo}$"
    return f"{q.mpl}{sep}${value}^{{+{hi}}}_{{-{lo}}}$"


def corner_figure(bundle, out_dir):
    v = bundle.reference
    glob = bundle.variants[v]["globals"]
    names = [n for n in curves.GLOBALS if n in glob and "fixed" not in glob[n]]
    if len(names) < 2:
        return []
    cols = [_display(bundle, v, n) for n in names]
    with figure_style():
        fig = corner(plt.subplots, cols, [quantity(n).label_mpl() for n in names],
                     [_title(n, glob[n]) for n in names])
        files = save(fig, out_dir, "corner")
    rho = np.corrcoef(bundle.column(v, "mass_msun"), bundle.column(v, "distance_pc"))[0, 1] \
        if {"mass_msun", "distance_pc"} <= set(names) else None
    note = f" The mass and distance correlate with coefficient {rho:.2f}." if rho is not None else ""
    return [Figure("corner", "Global parameters", (
        f"Posterior of the free global parameters of the reference variant ({v}): marginals "
        f"with median and 68% interval (dashed) on the diagonal, 68% and 95% regions and the "
        f"correlation coefficient of each pair below.{note}"), files)]


def relativity_figure(bundle, out_dir):
    v = bundle.free_relativity_variant()
    if v is None:
        return []
    glob = bundle.variants[v]["globals"]
    names = [n for n in ("f_sp", "f_z") if "fixed" not in glob[n]]
    with figure_style():
        ncol = len(names) + (1 if len(names) == 2 else 0)
        fig, axes = plt.subplots(1, ncol, figsize=(FULL_WIDTH, 2.3))
        axes = np.atleast_1d(axes)
        for ax, name in zip(axes, names):
            x = bundle.column(v, name)
            lo, hi = np.percentile(x, [0.3, 99.7])
            lo, hi = min(lo, 1.0), max(hi, 1.0)
            # show the Newtonian value only if it does not squash the posterior
            show_zero = lo - 4.0 * (hi - lo) < 0.0 < hi + 4.0 * (hi - lo)
            if show_zero:
                lo, hi = min(lo, 0.0), max(hi, 0.0)
            pad = 0.08 * (hi - lo)
            marginal_panel(ax, x, DRAW_COLOUR, (lo - pad, hi + pad))
            ax.axvline(0.0, color=NEWTON_COLOUR, lw=1.2, ls=(0, (4, 2)), label="Newtonian (0)")
            ax.axvline(1.0, color=GR_COLOUR, lw=1.2, label="GR (1)")
            if not show_zero:
                away = abs(np.median(x)) / max(np.std(x), 1e-12)
                ax.annotate(f"0 (Newtonian) is {away:.0f}\u03c3 away", xy=(0.02, 0.9),
                            xycoords="axes fraction", fontsize=6.5, color=NEWTON_COLOUR,
                            bbox=dict(fc="white", ec="none", alpha=0.85, pad=0.8))
            ax.set_xlabel(quantity(name).mpl)
            ax.set_title(_title(name, glob[name]), fontsize=8)
        if len(names) == 2:
            ax = axes[2]
            x, y = bundle.column(v, "f_sp"), bundle.column(v, "f_z")
            contour_panel(ax, x, y, DRAW_COLOUR)
            ax.plot([0], [0], "s", color=NEWTON_COLOUR, ms=5, label="Newtonian")
            ax.plot([1], [1], "*", color=GR_COLOUR, ms=8, label="GR")
            xl, yl = ax.get_xlim(), ax.get_ylim()
            span = max(xl[1] - xl[0], yl[1] - yl[0])
            if min(xl[0], yl[0]) - 4.0 * span < 0.0:       # the Newtonian corner is near
                ax.set_xlim(min(xl[0], -0.1), max(xl[1], 1.1))
                ax.set_ylim(min(yl[0], -0.1), max(yl[1], 1.1))
            else:
                ax.set_xlim(min(xl[0], 0.98), max(xl[1], 1.02))
                ax.set_ylim(min(yl[0], 0.98), max(yl[1], 1.02))
            ax.set_xlabel(quantity("f_sp").mpl)
            ax.set_ylabel(quantity("f_z").mpl)
            rho = np.corrcoef(x, y)[0, 1]
            ax.set_title(f"68% and 95% regions, \u03c1 = {rho:+.2f}".replace("-", "\u2212"),
                         fontsize=8)
        handles, labels = axes[0].get_legend_handles_labels()
        fig.legend(handles, labels, loc="upper center", ncol=2, bbox_to_anchor=(0.5, 1.02),
                   fontsize=7)
        fig.tight_layout(rect=(0, 0, 1, 0.9), w_pad=1.5)
        files = save(fig, out_dir, "relativity")
    return [Figure("relativity", "Relativistic parameters", (
        f"Posterior of the Schwarzschild-precession factor f<sub>SP</sub> and the redshift "
        f"factor f<sub><i>z</i></sub> in variant {v}, where they are free: marginals with "
        "median and 68% interval, the Newtonian value 0 (dashed; if it lies far outside, "
        "its distance in standard deviations is given) and the value of general relativity 1 "
        "(solid); right, their joint 68% and 95% regions."), files)]


# ---------------------------------------------------------------- residuals per instrument

def residual_figure(bundle, out_dir):
    v = bundle.reference
    res = bundle.residuals(v)
    panels = []
    for inst in bundle.instruments:
        r = bundle.variants[v]["residuals"].get(inst)
        if not r or not r["n_points"]:
            continue
        comps = ("x", "y") if r["kind"] == "astrometry" else ("v",)
        unit = "mas" if r["kind"] == "astrometry" else "km s$^{-1}$"
        panels += [(inst, r["kind"], c, unit) for c in comps]
    if not panels:
        return []
    with figure_style():
        fig, axes = plt.subplots(len(panels), 1, figsize=(FULL_WIDTH, 0.2 + 1.25 * len(panels)),
                                 sharex=True)
        axes = np.atleast_1d(axes)
        for ax, (inst, kind, comp, unit) in zip(axes, panels):
            sel_i = (np.asarray(res["instrument"]) == inst) & (np.asarray(res["kind"]) == kind)
            for k, star in enumerate(bundle.stars):
                sel = sel_i & (np.asarray(res["star"]) == star)
                if not sel.any():
                    continue
                colour, marker, _ = star_style(k)
                ax.errorbar(np.asarray(res["epoch"][sel], float),
                            np.asarray(res[f"res_{comp}"][sel], float),
                            yerr=np.asarray(res[f"sigma_{comp}"][sel], float), fmt=marker,
                            ms=2.2, mew=0, lw=0.4, color=colour, alpha=0.85,
                            label=star if ax is axes[0] else None)
            out = _flagged(res, sel_i)
            if out.any():
                ax.plot(np.asarray(res["epoch"][sel_i], float)[out],
                        np.asarray(res[f"res_{comp}"][sel_i], float)[out], "o", ms=6,
                        mfc="none", mec="k", mew=0.7,
                        label="flagged outlier" if ax is axes[0] else None)
            ax.axhline(0, color=GREY, lw=0.6)
            sub = res[sel_i]
            lim = np.nanpercentile(np.abs(np.asarray(sub[f"res_{comp}"], float))
                                   + np.asarray(sub[f"sigma_{comp}"], float), 99) * 1.15
            ax.set_ylim(-lim, lim)
            ax.set_ylabel(f"\u0394{comp} ({unit})")
            ax.text(0.005, 0.93, inst, transform=ax.transAxes, fontsize=7.5, va="top",
                    fontweight="bold")
        axes[-1].set_xlabel("Epoch (yr)")
        axes[-1].xaxis.set_major_locator(MaxNLocator(10, integer=True))
        handles, labels = axes[0].get_legend_handles_labels()
        fig.legend(handles, labels, loc="upper center", ncol=min(len(labels), 9),
                   bbox_to_anchor=(0.5, 1.0), fontsize=6.5, markerscale=1.5,
                   handletextpad=0.2, columnspacing=0.8)
        fig.tight_layout(rect=(0, 0, 1, 1 - 0.25 / (0.2 + 1.25 * len(panels))), h_pad=0.3)
        fig.align_ylabels(axes)
        files = save(fig, out_dir, "residuals")
    return [Figure("residuals", "Residuals against time", (
        f"Residuals of every data point against the best sample of the reference variant "
        f"({v}), per instrument and coordinate, with the modelled errors; colours by star, "
        "flagged outliers circled. Outliers far outside the bulk may lie beyond the panel; "
        "they are listed in the outlier table."), files)]


def make_figures(bundle, out_dir):
    """Every figure, in the order the report shows them (key -> Figure)."""
    figs = [sky_figure(bundle, out_dir)]
    figs += [star_figure(bundle, s, out_dir) for s in bundle.stars]
    figs += corner_figure(bundle, out_dir)
    figs += relativity_figure(bundle, out_dir)
    figs += residual_figure(bundle, out_dir)
    return {f.key: f for f in figs}
