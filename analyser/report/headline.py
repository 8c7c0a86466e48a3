"""The report's first page: what was fitted, the headline numbers, and the fit's
warnings in plain words.

The mass and distance are quoted from the reference variant; f_SP and f_z
from a variant that leaves them free (if there is none, the summary says so).
Warnings come from results.json (written by the fit) and a few the report
adds from the bundle itself, each rephrased for a reviewer with what to do.
"""

import re
from dataclasses import dataclass

from .cells import Measure
from .quantities import quantity


@dataclass
class Headline:
    label: str          # HTML (symbol and unit)
    value: Measure
    note: str = ""      # e.g. "variant free"


def _value(bundle, variant, name):
    summ = bundle.variants[variant]["globals"].get(name)
    return Measure.from_summary(summ, quantity(name).scale) if summ else None


def headlines(bundle):
    ref = bundle.reference
    out = [Headline(quantity(n).label_html(), _value(bundle, ref, n), f"variant {ref}")
           for n in ("mass_msun", "distance_pc")]
    free = bundle.free_relativity_variant()
    for n in ("f_sp", "f_z"):
        if free and "fixed" not in bundle.variants[free]["globals"][n]:
            out.append(Headline(quantity(n).html, _value(bundle, free, n), f"variant {free}"))
        else:
            out.append(Headline(quantity(n).html, None, "not free in any fitted variant"))
    return out


def bayes_factors(bundle):
    comp = bundle.doc["model_comparison"]
    rows = []
    for name, row in comp["against_reference"].items():
        if name == comp["reference"]:
            continue
        rows.append({"variant": name, "ln_b": Measure(row["ln_bayes_factor"],
                                                      row["ln_bayes_factor_err"],
                                                      row["ln_bayes_factor_err"]),
                     "strength": row["strength"], "favours": row["favours"]})
    return rows


# (pattern, rewording): the groups of the pattern fill the rewording
PLAIN = [
    (r"ln Z (\S+) differs from the Laplace estimate (\S+) by more than (\S+) nats",
     lambda m: (f"The nested-sampling evidence (ln Z = {m[1]}) and the Laplace approximation "
                f"at the prefit mode ({m[2]}) differ by {abs(float(m[1]) - float(m[2])):.1f} "
                "nats. This is expected when the posterior is far from Gaussian (partly "
                "covered orbits, mirror modes), but Bayes factors should not be read more "
                "finely than this without an independent rerun.")),
    (r"(\S+)% of the posterior lies in the far tails of the proposal prior",
     lambda m: (f"{m[1]}% of the posterior weight lies in the far tails of the sampler's "
                "proposal distribution, which was therefore somewhat narrow. The results stay "
                "exact, but the sampling there is less efficient and less reliable; a rerun "
                "with a wider proposal would confirm them.")),
    (r"ln Z (\S+) \+- (\S+) disagrees with importance sampling from the prefit \((\S+) \+- (\S+), "
     r"ESS (\S+)\)",
     lambda m: (f"The nested-sampling evidence ({m[1]} ± {m[2]}) disagrees with an "
                f"independent importance-sampling estimate ({m[3]} ± {m[4]}, effective sample "
                f"size {m[5]}). One of the two is wrong; do not use this variant's Bayes "
                "factors until a rerun with more live points agrees.")),
    (r"the best sampled ln L is (\S+) below the prefit's mode \(about (\S+) expected\)",
     lambda m: (f"The best posterior sample lies {m[1]} in ln L below the likelihood peak "
                f"found by the prefit (about {m[2]} expected by chance): the sampler may have "
                "missed the peak. Rerun with more live points.")),
    (r"star (\S+): no starting orbit converged",
     lambda m: (f"The prefit found no converging starting orbit for {m[1]}; its posterior "
                "rests on the sampler alone and deserves a look at its figure.")),
    (r"the Hessian at the mode is not positive definite",
     lambda m: ("The curvature matrix at the prefit mode was not positive definite and was "
                "regularised, so the Laplace evidence of this variant is unreliable.")),
]


def plain_words(text):
    for pattern, reword in PLAIN:
        m = re.search(pattern, text)
        if m:
            return reword(m)
    return text[:1].upper() + text[1:]


def _span(values, fmt):
    """'59' or '59-82': a number said once for several variants."""
    lo, hi = fmt.format(min(values)), fmt.format(max(values))
    return lo if lo == hi else f"{lo}-{hi}"


def warnings(bundle):
    """[(variant or '', plain text)] from the fit, then the report's own."""
    out = []
    # warnings that differ between variants only by a number are said once,
    # with the numbers' range: key -> (variants, values)
    ranged = {}
    for name, v in bundle.variants.items():
        out += [(name, plain_words(w)) for w in v.get("warnings", [])]
        for star, info in v.get("mirror_ambiguity", {}).items():
            empty = [k + 1 for k, m in enumerate(info["modes"]) if not m.get("parameters")]
            delta = info.get("log_like_difference")
            if empty and delta is not None and abs(delta) > 3.0:
                entry = ranged.setdefault(("mirror", star), ([], []))
                entry[0].append(name)
                entry[1].append(abs(delta))
            elif empty:
                out.append((name, f"{star} has no velocities, so its orbit has two mirror "
                                  f"solutions, but the samples populate only one (mode "
                                  f"{', '.join(map(str, empty))} is empty) although both fit "
                                  "about equally well. The mode fractions reflect the "
                                  "sampler, not the data; the star's Omega and omega are "
                                  "known only up to 180 deg."))
            expected = info.get("laplace_fractions") or []
            sampled = [m["fraction"] for m in info["modes"]]
            if len(expected) == len(sampled) == 2 and abs(expected[1] - sampled[1]) > 0.2:
                out.append((name, f"{star}: the samples put {100 * sampled[1]:.0f}% of the "
                                  f"posterior in the second mirror mode, the Laplace evidences "
                                  f"of the two modes {100 * expected[1]:.0f}%. Where they "
                                  "disagree this much, the split between the modes is "
                                  "uncertain; more live points would settle it."))
        ev = v.get("evidence_checks", {})
        ess, draws = ev.get("importance_ess"), ev.get("importance_draws")
        if ess is not None and draws and ess < 50:
            entry = ranged.setdefault(("ess", draws), ([], []))
            entry[0].append(name)
            entry[1].append(ess)
    for (kind, what), (variants, values) in ranged.items():
        if kind == "mirror":
            text = (f"{what} has no velocities, yet only one of its two mirror solutions is "
                    f"populated: the other fits worse by {_span(values, '{:.0f}')} in ln L at "
                    "its best, because the light-travel time across the orbit changes sign "
                    "with the star's depth. The choice rests on that small effect (and on the "
                    "modelled errors) alone.")
        else:
            text = (f"The importance-sampling check of the evidence had an effective sample "
                    f"size of only {_span(values, '{:.1f}')} of {what} draws, so it does not "
                    "confirm the nested-sampling evidence either way.")
        out += [(name, text) for name in variants]
    # the same sentence for several variants is said once, naming them all
    grouped = {}
    for variant, w in out:
        grouped.setdefault(w, []).append(variant)
    out = [(", ".join(vs), w) for w, vs in grouped.items()]
    known = {w for _, w in out}
    for w in bundle.doc.get("warnings", []):
        variant, _, rest = w.partition(": ")
        if variant in bundle.variants:
            continue                    # already listed with its variant
        if plain_words(w) not in known:
            out.append(("", plain_words(w)))
    return out
