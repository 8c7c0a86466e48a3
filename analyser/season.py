"""The season's one command: check, fit, report, compare with the baseline, gate.

`run_season` is what `analyser run` does.  It is resumable without flags:
the bundle folder remembers the SHA-256 of the inputs its checkpoints belong
to; the same inputs continue from the checkpoints, changed inputs start
afresh.  With a baseline bundle the comparison (comparison.json) goes into
the report.  The campaign's gates are evaluated into gates.json (and JUnit
XML on request); the exit status tells CI whether they passed.
"""

import json
import shutil
import sys
import time
from pathlib import Path

from .results.bundle import read_bundle, summariser, write_atomic, write_bundle
from .results.compare import compare_bundles
from .results.gates import evaluate_gates, junit_xml

EXIT_OK, EXIT_GATE_FAILED = 0, 1


def _resume_allowed(out, campaign):
    """True if the checkpoints in `out` were made from these very inputs."""
    stamp = out / "checkpoints" / "inputs.json"
    current = {"inputs": dict(campaign.input_files)}
    if stamp.exists() and json.loads(stamp.read_text()) == current:
        return True
    if (out / "checkpoints").exists():
        shutil.rmtree(out / "checkpoints")
    write_atomic(stamp, json.dumps(current, indent=1))
    return False


def compare_command(new_dir, old_dir, out=None):
    """Comparison of two bundles as a dict; written to new_dir/comparison.json."""
    new, old = read_bundle(new_dir), read_bundle(old_dir)
    comparison = compare_bundles(new, old)
    comparison["baseline"] = str(old_dir)
    limits = {g["parameter"]: g["limit"] for g in new.get("gates", []) if g["kind"] == "shift"}
    from .results.compare import matches
    for row in comparison["parameters"]:
        limit = next((lim for pat, lim in limits.items() if matches(pat, row["name"])), None)
        row["limit_sigma"] = limit
        row["exceeds"] = limit is not None and abs(row["shift_sigma"]) > limit
    comparison["gates"] = evaluate_gates(new, comparison)
    write_atomic(Path(out or new_dir) / "comparison.json", json.dumps(comparison, indent=1))
    return comparison


def print_comparison(c, stream=sys.stdout):
    print(f"comparison with {c['baseline']} (variant {c['variant']})", file=stream)
    for star, counts in sorted(c["added_epochs"].items()):
        text = ", ".join(f"{n:+d} {inst}" for inst, n in counts.items())
        print(f"  data {star}: {text}", file=stream)
    for label in ("new_stars", "dropped_stars"):
        if c[label]:
            print(f"  {label.replace('_', ' ')}: {', '.join(c[label])}", file=stream)
    rows = sorted(c["parameters"], key=lambda r: -abs(r["shift_sigma"]))
    print(f"  {'parameter':28s} {'new':>14s} {'old':>14s} {'shift (sigma)':>14s}", file=stream)
    for r in rows[:20]:
        flag = "  EXCEEDS" if r.get("exceeds") else ""
        print(f"  {r['name']:28s} {r['new_median']:14.6g} {r['old_median']:14.6g} "
              f"{r['shift_sigma']:+14.2f}{flag}", file=stream)


def print_gates(gates, stream=sys.stdout):
    for g in gates:
        state = "skip" if g["skipped"] else ("pass" if g["passed"] else "FAIL")
        value = "" if g["value"] is None else f"{g['value']:.3g} vs limit {g['limit']:g}"
        print(f"  gate [{state}] {g['name']}: {value} {g['detail']}", file=stream)


def run_season(campaign, out_dir, baseline=None, workers=1, junit=None, scheduler=None,
               command_line=""):
    from .inference.run import fit_campaign
    from .report.render import build_report
    started = time.time()
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    resume = _resume_allowed(out, campaign)
    fits = fit_campaign(campaign, out, workers=workers, resume=resume, scheduler=scheduler,
                        finish=summariser(campaign, out))
    doc = write_bundle(out, campaign, fits, command_line, started)
    comparison = None
    if baseline:
        comparison = compare_command(out, baseline)
    else:
        stale = out / "comparison.json"
        if stale.exists():
            stale.unlink()
    gates = evaluate_gates(doc, comparison)
    write_atomic(out / "gates.json", json.dumps({"passed": all(g["passed"] for g in gates),
                                                 "gates": gates}, indent=1))
    if junit:
        write_atomic(junit, junit_xml(gates))
    build_report(out)
    return doc, comparison, gates
