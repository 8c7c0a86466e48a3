"""The demo campaign's fit: wall time, likelihood calls and ln Z of each variant.

    python benchmarks/demo_fit.py [--workers 2]

Runs `analyser fit` on demo_inputs/campaign.toml into runs/benchmark-demo and
prints the figures from its results.json.
"""

import argparse
import json
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--out", default=str(ROOT / "runs" / "benchmark-demo"))
    args = ap.parse_args()
    t0 = time.time()
    subprocess.run([sys.executable, "-m", "analyser.cli", "fit",
                    str(ROOT / "demo_inputs" / "campaign.toml"), "--out", args.out,
                    "--workers", str(args.workers)], check=True)
    total = time.time() - t0
    doc = json.loads((Path(args.out) / "results.json").read_text())
    print(f"\ndemo fit: {total:.0f} s wall in all ({args.workers} workers)")
    print(f"{'variant':10s} {'prefit s':>9s} {'sampling s':>11s} {'calls':>10s} "
          f"{'ln Z':>11s} {'+-':>6s} {'Laplace':>10s} {'H nats':>7s}")
    for name, v in doc["variants"].items():
        print(f"{name:10s} {v['prefit_seconds']:9.1f} {v['wall_seconds']:11.1f} "
              f"{v['likelihood_calls']:10d} {v['log_z']:11.2f} {v['log_z_err']:6.2f} "
              f"{v['evidence_checks']['laplace_log_z']:10.2f} {v['information_nats']:7.1f}")


if __name__ == "__main__":
    main()
