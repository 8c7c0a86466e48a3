"""Render the review report of a results bundle: HTML, PDF, figures and tables.

`build_report(dir)` reads the bundle (load.py), draws the figures
(figures.py), builds the tables (tables.py) and writes them as LaTeX and CSV,
fills the jinja2 template report_templates/report.html.j2 (its stylesheet is
inlined, so the page needs nothing but its figures) and prints that page to
PDF with WeasyPrint.  Both documents use the same SVG figures, so both are
vector.  `report_command(dir)` is `analyser report DIR`.
"""

import sys
import traceback
from datetime import datetime, timezone
from pathlib import Path

import jinja2
from markupsafe import Markup

from .. import __version__
from . import cells, tables
from .cautions import cautions
from .headline import bayes_factors, headlines, warnings
from .latex import latex_document, latex_table
from .load import BundleError, load_bundle
from .priors import prior_table

TEMPLATES = Path(__file__).resolve().parents[2] / "report_templates"
EXIT_OK, EXIT_INVALID_INPUT, EXIT_INTERNAL = 0, 2, 3


def _environment():
    env = jinja2.Environment(loader=jinja2.FileSystemLoader(str(TEMPLATES)),
                             autoescape=jinja2.select_autoescape(["html", "j2"]),
                             undefined=jinja2.StrictUndefined, trim_blocks=True,
                             lstrip_blocks=True)
    env.filters["cell"] = lambda c: Markup(cells.html(c))
    env.filters["trusted"] = Markup          # HTML built by the report itself
    return env


def _all_tables(bundle, priors, prior_source):
    """Main-text tables in order of appearance, then the appendix ones."""
    main = [tables.data_table(bundle), tables.global_table(bundle, priors, prior_source),
            tables.comparison_table(bundle), tables.element_table(bundle),
            tables.derived_table(bundle), tables.nuisance_table(bundle, priors, prior_source),
            tables.residual_table(bundle), tables.outlier_table(bundle)]
    main += tables.change_tables(bundle)
    appendix = [tables.sampler_table(bundle), tables.evidence_check_table(bundle)]
    for k, t in enumerate(main + appendix, start=1):
        t.number = k
    return {t.key: t for t in main + appendix}


def _write(path, text):
    path.parent.mkdir(parents=True, exist_ok=True)
    tmp = path.with_name(path.name + ".tmp")
    tmp.write_text(text)
    tmp.replace(path)
    return path


def _write_tables(bundle, all_tables, out):
    written = {}
    for key, t in all_tables.items():
        if not t.rows:
            continue
        written[f"tables/{key}.tex"] = _write(out / "tables" / f"{key}.tex",
                                              latex_table(t, bundle.campaign["name"]))
        written[f"tables/{key}.csv"] = _write(out / "tables" / f"{key}.csv", tables.write_csv(t))
    present = [t for t in all_tables.values() if t.rows]
    written["tables/all_tables.tex"] = _write(out / "tables" / "all_tables.tex",
                                              latex_document(present))
    return written


def _summary_facts(bundle):
    camp = bundle.campaign
    kinds = {i["name"]: i["kind"] for i in camp["instruments"]}
    per_inst = {i: sum(s["epochs"].get(i, 0) for s in camp["stars"]) for i in bundle.instruments}
    return {
        "n_stars": len(camp["stars"]),
        "span": camp["time_span"],
        "astro": [(i, n) for i, n in per_inst.items() if kinds[i] == "astrometry"],
        "vel": [(i, n) for i, n in per_inst.items() if kinds[i] == "velocity"],
        "n_astro": camp.get("astrometric_epochs"), "n_vel": camp.get("velocity_epochs"),
        "no_velocities": camp.get("mirror_ambiguity", []),
        "excluded": sum(camp.get("excluded", {}).values()),
    }


def _context(bundle, all_tables, figs, priors):
    doc = bundle.doc
    comp = doc["model_comparison"]
    return {
        "b": bundle, "doc": doc, "camp": bundle.campaign, "comp": comp,
        "facts": _summary_facts(bundle), "headlines": headlines(bundle),
        "bayes": bayes_factors(bundle), "warnings": warnings(bundle),
        "t": all_tables, "fig": figs, "cautions": cautions(bundle, priors),
        "free_rel": bundle.free_relativity_variant(),
        "figure_numbers": {k: n for n, k in enumerate(figs, start=1)},
        "generated": datetime.now(timezone.utc).isoformat(timespec="seconds"),
        "version": __version__,
        "stylesheet": Markup((TEMPLATES / "report.css").read_text()),
        "star_figures": [figs[k] for k in figs if k.startswith("star-")],
    }


def build_report(bundle_dir):
    """Write report.html, report.pdf, figures/ and tables/ into the bundle.

    Returns {name relative to the bundle: path} of every file written.
    Raises BundleError if the folder is not a usable bundle."""
    bundle = load_bundle(bundle_dir)
    out = bundle.path
    from .figures import make_figures          # matplotlib only when there is work to do
    prior_source, priors = prior_table(bundle)
    figs = make_figures(bundle, out / "figures")
    all_tables = _all_tables(bundle, priors, prior_source)
    written = {}
    for f in figs.values():
        written.update(f.files)
    written.update(_write_tables(bundle, all_tables, out))
    page = _environment().get_template("report.html.j2").render(
        **_context(bundle, all_tables, figs, priors))
    written["report.html"] = _write(out / "report.html", page)
    import weasyprint
    pdf = out / "report.pdf"
    tmp = out / "report.pdf.tmp"
    weasyprint.HTML(filename=str(out / "report.html"), base_url=str(out)).write_pdf(str(tmp))
    tmp.replace(pdf)
    written["report.pdf"] = pdf
    return written


def report_command(bundle_dir):
    """`analyser report DIR`: 0 when written, 2 (one line, no traceback) when
    DIR is not a usable bundle, 3 on an internal failure."""
    try:
        written = build_report(bundle_dir)
    except BundleError as exc:
        print(f"analyser report: {exc}", file=sys.stderr)
        return EXIT_INVALID_INPUT
    except Exception:
        print("analyser report: internal error while rendering the report; please report it "
              "with this traceback:", file=sys.stderr)
        traceback.print_exc()
        return EXIT_INTERNAL
    n_fig = sum(1 for k in written if k.startswith("figures/") and k.endswith(".svg"))
    n_tab = sum(1 for k in written if k.startswith("tables/") and k.endswith(".csv"))
    print(f"wrote {written['report.html']} and {written['report.pdf']} "
          f"({n_fig} figures, {n_tab} tables as LaTeX and CSV)")
    return EXIT_OK
