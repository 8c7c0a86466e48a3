"""The prior of each parameter, as far as the bundle (or its campaign file) tells it.

First choice: prior descriptions stored in results.json, per variant under
"priors" ({name: text} or {name: {kind, a, b}}).  Otherwise the campaign file
named in the bundle is read, but only if it still exists and its SHA-256 is
the one recorded at fit time, so the priors shown are the ones fitted with.
Failing both, the report says what it knows: free or fixed at a value.
Priors are kept in internal units and converted for display by `prior_cell`.
"""

import hashlib
from pathlib import Path

from .cells import Rich, latex_escape

NOT_RECORDED = "free (prior not recorded)"


def _num(x):
    return f"{x:.4g}".replace("-", "\u2212")


def prior_cell(p, scale=1.0):
    """A table cell (Rich) for a prior dict {kind, a, b} in display units, or
    text as stored."""
    if p is None:
        return Rich(NOT_RECORDED, NOT_RECORDED, NOT_RECORDED)
    if isinstance(p, str):
        return Rich(p, p, latex_escape(p))
    kind = p["kind"]
    # results.json stores an absent bound (NaN) as null
    a, b = (float("nan") if p.get(k) is None else p[k] / scale for k in ("a", "b"))
    if kind == "fixed":
        return Rich(f"fixed at {a:g}", f"fixed at {_num(a)}", f"fixed at ${a:g}$")
    if kind == "gaussian":
        return Rich(f"Gaussian({a:g}, {b:g})", f"Gaussian({_num(a)}, {_num(b)})",
                    f"$\\mathcal{{N}}({a:g}, {b:g})$")
    if p.get("period"):
        return Rich("uniform (periodic)", "uniform, periodic", "uniform, periodic")
    return Rich(f"{kind} [{a:g}, {b:g}]", f"{kind} [{_num(a)}, {_num(b)}]",
                f"{latex_escape(kind)} $[{a:g}, {b:g}]$")


def _from_campaign_file(bundle):
    """{variant: {name: prior dict}} from the campaign file if it is unchanged, else None."""
    camp = bundle.campaign
    path = Path(camp.get("file", ""))
    recorded = bundle.doc.get("input_files_sha256", {}).get(path.name)
    if not path.is_file() or not recorded:
        return None
    if hashlib.sha256(path.read_bytes()).hexdigest() != recorded:
        return None
    try:
        from ..campaign import CampaignError, load_campaign
        campaign = load_campaign(path)
    except (CampaignError, OSError, ValueError):
        return None
    out = {}
    for name in bundle.variants:
        try:
            variant = campaign.variant(name)
        except KeyError:
            return None
        out[name] = {k: {"kind": p.kind, "a": p.a, "b": p.b, "period": p.period}
                     for k, p in variant.priors.items()}
    return out


def prior_table(bundle):
    """(source sentence, {variant: {parameter: prior dict or text}}), priors in
    the parameters' internal units (see prior_cell for display)."""
    stored = {n: v.get("priors") for n, v in bundle.variants.items()}
    if all(stored.values()):
        return "Priors as recorded in results.json.", stored
    from_file = _from_campaign_file(bundle)
    if from_file is not None:
        return (f"Priors read from the campaign file {bundle.campaign['file']}, whose SHA-256 "
                "matches the one recorded in the bundle.", from_file)
    out = {}
    for name, v in bundle.variants.items():
        fixed = v.get("fixed_parameters", {})
        out[name] = {k: {"kind": "fixed", "a": x} for k, x in fixed.items()}
        for k in v.get("free_parameters", []):
            out[name][k] = NOT_RECORDED
    return ("The bundle does not record the prior shapes and the campaign file it names "
            "is absent or changed; free parameters are marked as such.", out)
