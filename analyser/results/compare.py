"""Season against season: what moved between two results bundles, and why.

For the reference variant (present in both bundles), every global and every
star's elements are compared: the shift of the median in units of the
combined standard deviation, sqrt(s_new^2 + s_old^2) (angles on the circle).
The data added (epochs per star and instrument), the stars that appeared or
disappeared, and the variants' evidences are listed beside it.
"""

import math

ELEMENTS = ("period_yr", "e", "i_deg", "Omega_deg", "omega_deg", "t_p_yr", "a_mas")
ANGLES = {"Omega_deg": 360.0, "omega_deg": 360.0}


def _shift(new, old, period=0.0):
    if "median" not in new or "median" not in old:
        return None
    diff = new["median"] - old["median"]
    if period:
        diff = (diff + 0.5 * period) % period - 0.5 * period
    scale = math.hypot(new["std"], old["std"])
    return {"new_median": new["median"], "new_std": new["std"], "old_median": old["median"],
            "old_std": old["std"], "difference": diff,
            "shift_sigma": diff / scale if scale > 0 else (0.0 if diff == 0 else math.inf)}


def _epochs(doc):
    return {s["name"]: dict(s["epochs"]) for s in doc["campaign"]["stars"]}


def compare_bundles(new, old, variant=None):
    """Comparison of two results.json documents (dicts)."""
    variant = variant or new["model_comparison"]["reference"]
    if variant not in old["variants"]:
        raise KeyError(f"the baseline has no variant {variant!r}")
    nv, ov = new["variants"][variant], old["variants"][variant]
    rows = []
    for group in ("globals", "nuisances"):
        for name, summ in nv[group].items():
            if name in ov[group]:
                row = _shift(summ, ov[group][name])
                if row:
                    rows.append({"name": name, **row})
    for star, elements in nv["stars"].items():
        if star not in ov["stars"]:
            continue
        for key in ELEMENTS:
            row = _shift(elements[key], ov["stars"][star][key], ANGLES.get(key, 0.0))
            if row:
                rows.append({"name": f"{star}.{key}", **row})
    new_ep, old_ep = _epochs(new), _epochs(old)
    added = {}
    for star, counts in new_ep.items():
        diff = {inst: n - old_ep.get(star, {}).get(inst, 0) for inst, n in counts.items()}
        diff = {k: v for k, v in diff.items() if v}
        if diff:
            added[star] = diff
    return {"variant": variant, "parameters": rows, "added_epochs": added,
            "new_stars": sorted(set(new_ep) - set(old_ep)),
            "dropped_stars": sorted(set(old_ep) - set(new_ep)),
            "log_z": {v: {"new": nv_["log_z"], "old": old["variants"][v]["log_z"]}
                      for v, nv_ in new["variants"].items() if v in old["variants"]}}


def matches(pattern, name):
    """Gate parameter patterns: exact, or a prefix ending in '*'."""
    return name.startswith(pattern[:-1]) if pattern.endswith("*") else name == pattern
