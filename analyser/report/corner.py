"""A corner plot of posterior samples, drawn directly with matplotlib.

Diagonal: the one-dimensional marginal (step histogram) with the median and
the 68% central interval.  Below it: every pair as filled contours enclosing
68% and 95% of the samples (highest-density regions of a lightly smoothed
two-dimensional histogram) and the sample correlation coefficient.  Above
the diagonal is left empty.  Only contours are drawn, no points, so the
vector file stays small with thousands of samples.
"""

import numpy as np
from matplotlib.ticker import MaxNLocator
from scipy.ndimage import gaussian_filter

from .style import FULL_WIDTH, OKABE_ITO

LEVELS = (0.68, 0.95)


def bins_for(n):
    """Histogram bins for n samples: coarser for small runs, so noise does not
    pass for structure."""
    return int(np.clip(0.8 * np.sqrt(n), 12, 36))


def density_levels(h, fractions=LEVELS):
    """Density thresholds enclosing the given fractions of the histogram's mass,
    highest first (so, as contour levels, increasing)."""
    flat = np.sort(h.ravel())[::-1]
    cum = np.cumsum(flat)
    cum /= cum[-1]
    out = [flat[min(np.searchsorted(cum, f), flat.size - 1)] for f in fractions]
    return sorted(out)


def _range(x):
    lo, hi = np.percentile(x, [0.3, 99.7])
    pad = 0.08 * (hi - lo) if hi > lo else 0.5 * abs(lo) + 1e-9
    return lo - pad, hi + pad


def contour_panel(ax, x, y, colour=OKABE_ITO["blue"], ranges=None):
    """Filled 68% and 95% regions of (x, y) on ax."""
    rx, ry = ranges or (_range(x), _range(y))
    bins = bins_for(len(x))
    h, xe, ye = np.histogram2d(x, y, bins=bins, range=(rx, ry))
    h = gaussian_filter(h, 1.0 if len(x) > 2000 else 1.4)
    levels = density_levels(h)
    xc, yc = 0.5 * (xe[1:] + xe[:-1]), 0.5 * (ye[1:] + ye[:-1])
    if h.max() <= 0 or len(set(levels)) < len(levels):
        ax.plot(x, y, ",", color=colour)           # degenerate: too few distinct samples
        return
    ax.contourf(xc, yc, h.T, levels=[levels[0], levels[1], h.max() * 1.01],
                colors=[colour, colour], alpha=0.25)
    ax.contourf(xc, yc, h.T, levels=[levels[1], h.max() * 1.01], colors=[colour], alpha=0.35)
    ax.contour(xc, yc, h.T, levels=levels, colors=[colour], linewidths=0.7)
    ax.set_xlim(rx)
    ax.set_ylim(ry)


def marginal_panel(ax, x, colour=OKABE_ITO["blue"], xrange=None):
    lo, med, hi = np.percentile(x, [16, 50, 84])
    ax.hist(x, bins=bins_for(len(x)), range=xrange or _range(x), histtype="step", color=colour,
            lw=0.9,
            density=True)
    for v, ls in ((lo, "--"), (med, "-"), (hi, "--")):
        ax.axvline(v, color=colour, ls=ls, lw=0.7)
    ax.set_yticks([])
    ax.set_xlim(xrange or _range(x))


def corner(fig_factory, columns, labels, titles=None, colour=OKABE_ITO["blue"]):
    """Draw the corner plot of `columns` (list of 1-D arrays, displayed units)
    with axis `labels`; `titles` over the diagonal.  Returns the figure."""
    n = len(columns)
    size = min(FULL_WIDTH, 1.15 * n + 0.6)
    fig, axes = fig_factory(n, n, figsize=(size, size))
    axes = np.atleast_2d(axes)
    ranges = [_range(c) for c in columns]
    for i in range(n):
        for j in range(n):
            ax = axes[i, j]
            if j > i:
                ax.set_visible(False)
                continue
            if i == j:
                marginal_panel(ax, columns[i], colour, ranges[i])
                if titles:
                    # left-aligned: the text runs into the empty upper triangle
                    ax.set_title(titles[i], fontsize=6.5, pad=3, loc="left")
            else:
                contour_panel(ax, columns[j], columns[i], colour, (ranges[j], ranges[i]))
                rho = np.corrcoef(columns[j], columns[i])[0, 1]
                ax.text(0.04, 0.95, f"\u03c1 = {rho:+.2f}".replace("-", "\u2212"),
                        transform=ax.transAxes, ha="left", va="top", fontsize=5.5,
                        bbox=dict(fc="white", ec="none", alpha=0.75, pad=0.6))
            ax.xaxis.set_major_locator(MaxNLocator(3, prune="both"))
            if i != j:
                ax.yaxis.set_major_locator(MaxNLocator(3, prune="both"))
            ax.tick_params(labelsize=6, length=2)
            if i == n - 1:
                ax.set_xlabel(labels[j], fontsize=7)
                for t in ax.get_xticklabels():
                    t.set_rotation(40)
                    t.set_ha("right")
            else:
                ax.set_xticklabels([])
            if j == 0 and i > 0:
                ax.set_ylabel(labels[i], fontsize=7)
            elif i != j:
                ax.set_yticklabels([])
    fig.subplots_adjust(wspace=0.06, hspace=0.06)
    fig.align_ylabels(axes[:, 0])
    fig.align_xlabels(axes[-1, :])
    return fig
