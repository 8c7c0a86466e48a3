"""CI gates: the campaign's pass/fail rules evaluated on a results bundle.

Kinds (campaign.Gate):
  shift         |shift| in combined sigma of the matching parameters against
                the baseline bundle (needs one; without it the gate is skipped)
  reduced_chi2  the instrument's reduced chi^2 at the best sample, every variant
  log_z_err     the evidence's error, every variant
  min_ess       the posterior's effective sample size, every variant (a floor)

The outcome is a list of dicts (name, kind, passed, skipped, value, limit,
detail), written as gates.json and, for CI systems, as JUnit XML.
"""

import math
from xml.sax.saxutils import escape, quoteattr

from .compare import matches


def evaluate_gates(doc, comparison=None):
    out = []
    for gate in doc.get("gates", []):
        kind, limit, name = gate["kind"], gate["limit"], gate["name"]
        value, detail, skipped = None, "", False
        if kind == "shift":
            if comparison is None:
                skipped, detail = True, "no baseline given"
            else:
                rows = [r for r in comparison["parameters"] if matches(gate["parameter"], r["name"])]
                if rows:
                    worst = max(rows, key=lambda r: abs(r["shift_sigma"]))
                    value = abs(worst["shift_sigma"])
                    detail = f"{worst['name']} moved {worst['shift_sigma']:+.2f} sigma"
                else:
                    skipped, detail = True, f"no parameter matches {gate['parameter']!r}"
        elif kind == "reduced_chi2":
            vals = [(v, r["residuals"][gate["instrument"]]["reduced_chi2"])
                    for v, r in doc["variants"].items()
                    if gate["instrument"] in r["residuals"]
                    and r["residuals"][gate["instrument"]]["reduced_chi2"] is not None]
            if vals:
                v, value = max(vals, key=lambda t: t[1])
                detail = f"largest in variant {v}"
            else:
                skipped, detail = True, f"no data of {gate['instrument']}"
        elif kind == "log_z_err":
            v, value = max(((v, r["log_z_err"]) for v, r in doc["variants"].items()),
                           key=lambda t: t[1])
            detail = f"largest in variant {v}"
        elif kind == "min_ess":
            v, value = min(((v, r["effective_sample_size"]) for v, r in doc["variants"].items()),
                           key=lambda t: t[1])
            detail = f"smallest in variant {v}"
        if skipped:
            passed = True
        elif kind == "min_ess":
            passed = value >= limit
        else:
            passed = value is not None and math.isfinite(value) and value <= limit
        out.append({"name": name, "kind": kind, "passed": bool(passed), "skipped": skipped,
                    "value": value, "limit": limit, "detail": detail})
    return out


def junit_xml(gates, suite="analyser gates"):
    """JUnit XML of gate outcomes (one test case per gate)."""
    failures = sum(not g["passed"] for g in gates)
    skipped = sum(g["skipped"] for g in gates)
    lines = ['<?xml version="1.0" encoding="UTF-8"?>',
             f'<testsuite name={quoteattr(suite)} tests="{len(gates)}" failures="{failures}" '
             f'skipped="{skipped}">']
    for g in gates:
        lines.append(f'  <testcase classname="gates.{escape(g["kind"])}" name={quoteattr(g["name"])}>')
        text = f"{g['detail']}; value {g['value']}, limit {g['limit']}"
        if g["skipped"]:
            lines.append(f"    <skipped message={quoteattr(g['detail'])}/>")
        elif not g["passed"]:
            lines.append(f"    <failure message={quoteattr(text)}>{escape(text)}</failure>")
        lines.append("  </testcase>")
    lines.append("</testsuite>")
    return "\n".join(lines) + "\n"
