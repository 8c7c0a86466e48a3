"""What `analyser check` prints: a campaign's summary, as data and as text.

`campaign_summary` builds a plain, JSON-ready dict that reports can reuse;
`format_summary` renders it for a terminal; `check_command` loads a campaign
and prints either its summary (exit 0) or every problem found (exit 2).
"""

from __future__ import annotations

import sys
import textwrap
import traceback
from collections import Counter

import numpy as np

from ..campaign import STAR_PARAMETERS, Campaign, CampaignError, load_campaign

EXIT_OK, EXIT_INVALID_INPUT, EXIT_INTERNAL = 0, 2, 3
POINTS_PER_EPOCH = {"astrometry": 2, "velocity": 1}   # x and y; v


def _span(epochs) -> dict:
    if len(epochs) == 0:
        return {"first_yr": None, "last_yr": None, "span_yr": 0.0}
    first, last = float(np.min(epochs)), float(np.max(epochs))
    return {"first_yr": first, "last_yr": last, "span_yr": last - first}


def campaign_summary(campaign: Campaign) -> dict:
    """The campaign's data and model in numbers: per star epochs by instrument,
    time spans, data points, the mirror ambiguity, exclusions and variants."""
    a, v = campaign.astrometry, campaign.velocities
    instruments = [i for kind in POINTS_PER_EPOCH
                   for i in campaign.instruments.values() if i.kind == kind]
    rows = {"astrometry": a, "velocity": v}
    stars = []
    for star in campaign.stars:
        counts, points, epochs = {}, 0, []
        for instrument in instruments:
            data = rows[instrument.kind]
            mask = (data.star == star) & (data.instrument == instrument.name)
            counts[instrument.name] = int(mask.sum())
            points += POINTS_PER_EPOCH[instrument.kind] * counts[instrument.name]
            epochs.extend(data.epoch_yr[mask].tolist())
        stars.append({"name": star, "epochs": counts, "data_points": points,
                      "has_velocities": bool(np.any(v.star == star)), **_span(epochs)})
    all_epochs = np.concatenate([a.epoch_yr, v.epoch_yr])
    used = {name for data in rows.values() for name in data.instrument.tolist()}
    variants = []
    for variant in campaign.variants:
        free = [n for n, p in variant.priors.items() if not p.is_fixed]
        fixed = {n: p.a for n, p in variant.priors.items() if p.is_fixed}
        variants.append({"name": variant.name, "description": variant.description,
                         "reference": variant.name == campaign.reference_variant,
                         "free_parameters": free, "fixed_parameters": fixed})
    return {
        "name": campaign.name,
        "file": str(campaign.path),
        "dynamics": campaign.dynamics,
        "reference_epoch_yr": campaign.reference_epoch_yr,
        "seed": campaign.seed,
        "instruments": [{"name": i.name, "kind": i.kind, "reference": i.reference,
                         "offset": i.offset, "error_model": i.error_model,
                         "outliers": i.outliers, "nuisances": list(i.nuisance_names())}
                        for i in instruments],
        "instruments_without_data": [i.name for i in instruments if i.name not in used],
        "stars": stars,
        "astrometric_epochs": len(a),
        "velocity_epochs": len(v),
        "time_span": _span(all_epochs),
        "mirror_ambiguity": list(campaign.stars_without_velocities()),
        "parameters_per_star": len(STAR_PARAMETERS),
        "under_constrained": [s["name"] for s in stars
                              if s["data_points"] < len(STAR_PARAMETERS)],
        "excluded": dict(Counter(row.reason for row in campaign.excluded)),
        "reference_variant": campaign.reference_variant,
        "variants": variants,
        "input_files": dict(campaign.input_files),
    }


def _year(value) -> str:
    return "-" if value is None else f"{value:.2f}"


def _table(header: list, body: list, align: str) -> list:
    """Rows of cells as text lines; `align` has an 'l' or 'r' per column."""
    widths = [max(len(str(row[k])) for row in [header] + body) for k in range(len(header))]

    def line(row):
        cells = [str(c).ljust(w) if a == "l" else str(c).rjust(w)
                 for c, w, a in zip(row, widths, align)]
        return "  " + "  ".join(cells).rstrip()
    return [line(header)] + [line(row) for row in body]


def _is_star_parameter(name: str, star_names: set) -> bool:
    return "." in name and name.rsplit(".", 1)[0] in star_names


def _variant_lines(variants: list, star_names: set) -> list:
    """One line per variant (what is free or fixed beyond the common set), then the
    parameters free in every variant."""
    common = set.intersection(*(set(v["free_parameters"]) for v in variants))
    rows = []
    for v in variants:
        extra = [n for n in v["free_parameters"] if n not in common]
        fixed = [f"{n} = {x:g}" for n, x in v["fixed_parameters"].items()
                 if not _is_star_parameter(n, star_names)]
        notes = ([("free " + ", ".join(extra))] if extra else []) + \
                ([("fixed " + ", ".join(fixed))] if fixed else [])
        rows.append([v["name"] + (" *" if v["reference"] else ""), len(v["free_parameters"]),
                     "; ".join(notes), v["description"]])
    lines = _table(["variant", "free", "", ""], rows, "lrll")
    shared = [n for n in variants[0]["free_parameters"]
              if n in common and not _is_star_parameter(n, star_names)]
    in_stars = sum(1 for n in common if _is_star_parameter(n, star_names))
    text = ", ".join(shared) + (f" and {in_stars} star elements" if in_stars else "")
    lines += textwrap.wrap("Free in every variant: " + text, 92, initial_indent="  ",
                           subsequent_indent="    ")
    return lines


def format_summary(summary: dict) -> str:
    span = summary["time_span"]
    stars = summary["stars"]
    instruments = [i["name"] for i in summary["instruments"]]
    out = [
        f"Campaign         {summary['name']}",
        f"File             {summary['file']}",
        f"Dynamics         {summary['dynamics']}",
        f"Reference epoch  {summary['reference_epoch_yr']:.3f}",
        f"Seed             {summary['seed']}",
        f"Stars            {len(stars)} fitted, {summary['astrometric_epochs']} astrometric "
        f"and {summary['velocity_epochs']} velocity epochs",
        f"Time span        {_year(span['first_yr'])} to {_year(span['last_yr'])} "
        f"({span['span_yr']:.2f} yr)",
        "",
        "Epochs per star and instrument",
    ]
    header = ["star"] + instruments + ["first", "last", "span yr", "points"]
    body = [[s["name"]] + [s["epochs"][i] for i in instruments]
            + [_year(s["first_yr"]), _year(s["last_yr"]), f"{s['span_yr']:.2f}",
               s["data_points"]] for s in stars]
    body.append(["total"] + [sum(s["epochs"][i] for s in stars) for i in instruments]
                + [_year(span["first_yr"]), _year(span["last_yr"]), f"{span['span_yr']:.2f}",
                   sum(s["data_points"] for s in stars)])
    out += _table(header, body, "l" + "r" * (len(header) - 1))
    out.append("  (points: 2 per astrometric epoch, 1 per velocity)")
    out.append("")
    if summary["mirror_ambiguity"]:
        out.append("Mirror ambiguity (no velocities, so Omega+180 deg, omega+180 deg fit "
                   "equally well): " + ", ".join(summary["mirror_ambiguity"]))
    if summary["under_constrained"]:
        out.append(f"Fewer data points than their {summary['parameters_per_star']} orbital "
                   "parameters: " + ", ".join(summary["under_constrained"]))
    if summary["instruments_without_data"]:
        out.append("Instruments without data: " + ", ".join(summary["instruments_without_data"]))
    excluded = summary["excluded"]
    out.append(f"Excluded rows: {sum(excluded.values())}")
    out += [f"  {count:5d}  {reason}" for reason, count in excluded.items()]
    out.append("")
    out.append(f"Variants (* the reference, {summary['reference_variant']})")
    out += _variant_lines(summary["variants"], {s["name"] for s in stars})
    return "\n".join(out)


def check_command(path) -> int:
    """`analyser check`: print the campaign's summary and return 0, or print every
    problem to stderr and return 2.  Nothing is written to disk."""
    try:
        campaign = load_campaign(path)
    except CampaignError as err:
        for problem in err.problems:
            print(problem, file=sys.stderr)
        count = len(err.problems)
        print(f"{count} problem{'s' if count != 1 else ''} found; the campaign is not valid",
              file=sys.stderr)
        return EXIT_INVALID_INPUT
    except Exception:
        print("internal error while checking the campaign; please report it with this "
              "traceback:", file=sys.stderr)
        traceback.print_exc()
        return EXIT_INTERNAL
    print(format_summary(campaign_summary(campaign)))
    return EXIT_OK
