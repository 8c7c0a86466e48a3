"""The look of every figure: colour-blind-safe colours, fonts, sizes, and saving.

Colours are the Okabe & Ito (2008) palette, distinguishable with the common
colour-vision deficiencies; stars beyond eight repeat the colours with other
markers.  Figures are saved twice: SVG (text as paths, so the page looks the
same in every browser and in the PDF) and PDF (for a paper), both vector.
Sky plots follow the astronomical orientation: North up, East to the LEFT.
"""

from contextlib import contextmanager
from pathlib import Path

import matplotlib

matplotlib.use("Agg")        # files only, never a window

import matplotlib.pyplot as plt  # noqa: E402

OKABE_ITO = {"blue": "#0072B2", "vermillion": "#D55E00", "green": "#009E73",
             "purple": "#CC79A7", "orange": "#E69F00", "sky": "#56B4E9", "black": "#000000",
             "yellow": "#F0E442"}
STAR_COLOURS = [OKABE_ITO[k] for k in ("blue", "vermillion", "green", "purple", "orange",
                                       "sky", "black")]
STAR_MARKERS = ["o", "s", "D", "^", "v", "P", "X"]
MODE_COLOURS = (OKABE_ITO["blue"], OKABE_ITO["orange"])      # mirror modes 1 and 2
NEWTON_COLOUR, GR_COLOUR = OKABE_ITO["vermillion"], OKABE_ITO["green"]
OUTLIER_COLOUR = OKABE_ITO["vermillion"]
GREY = "#777777"

FULL_WIDTH = 7.0          # inches: the text width of an A4 page with the report's margins

RC = {
    "font.family": "DejaVu Sans",
    "font.size": 8.5,
    "axes.labelsize": 8.5,
    "axes.titlesize": 9,
    "legend.fontsize": 7.5,
    "xtick.labelsize": 7.5,
    "ytick.labelsize": 7.5,
    "axes.linewidth": 0.7,
    "xtick.direction": "in",
    "ytick.direction": "in",
    "xtick.top": True,
    "ytick.right": True,
    "lines.linewidth": 1.0,
    "errorbar.capsize": 0,
    "legend.frameon": False,
    "svg.fonttype": "path",
    "svg.hashsalt": "analyser-report",     # stable ids: same bundle, same file
    "pdf.fonttype": 42,
    "savefig.bbox": "tight",
    "savefig.pad_inches": 0.03,
    "axes.formatter.useoffset": False,
}


STAR_LINES = ["-", "--", ":", "-."]


def star_style(k):
    """(colour, marker, line style) of the k-th star: after the seven colours,
    the markers and line styles change so that no two stars look alike."""
    n = len(STAR_COLOURS)
    return (STAR_COLOURS[k % n], STAR_MARKERS[(k // n) % len(STAR_MARKERS)],
            STAR_LINES[(k // n) % len(STAR_LINES)])


@contextmanager
def figure_style():
    with plt.rc_context(RC):
        yield


def save(fig, out_dir, stem):
    """Write stem.svg and stem.pdf; returns {relative name: path}."""
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    paths = {}
    for ext in ("svg", "pdf"):
        path = out / f"{stem}.{ext}"
        meta = {"Date": None} if ext == "svg" else {"CreationDate": None}
        fig.savefig(path, format=ext, metadata=meta)
        paths[f"figures/{stem}.{ext}"] = path
    plt.close(fig)
    return paths


def sky_axes(ax):
    """Astronomical orientation: East to the left (x axis inverted), equal scale,
    with a small compass."""
    ax.set_aspect("equal", adjustable="box")
    if not ax.xaxis_inverted():
        ax.invert_xaxis()
    from matplotlib.ticker import MaxNLocator
    ax.xaxis.set_major_locator(MaxNLocator(5))     # room for minus signs on narrow panels
    ax.set_xlabel("East offset x (mas)")
    ax.set_ylabel("North offset y (mas)")


def compass(ax, corner=(0.93, 0.07), size=0.09):
    """N and E arrows in axes coordinates from `corner`: N points up, E points
    left (axes fractions are not inverted with the data axis)."""
    x, y = corner
    arrow = dict(arrowstyle="-|>", lw=0.7, color="k", shrinkA=0, shrinkB=0,
                 mutation_scale=6)
    for (dx, dy), label, ha, va in (((0, size), "N", "center", "bottom"),
                                    ((-size, 0), "E", "right", "center")):
        ax.annotate("", xy=(x + dx, y + dy), xytext=(x, y), xycoords="axes fraction",
                    arrowprops=arrow)
        ax.text(x + 1.15 * dx, y + 1.15 * dy, label, transform=ax.transAxes, fontsize=7,
                ha=ha, va=va)
