"""Command line: `analyser <command> ...`.  Argument parsing only, no science.

Exit status: 0 success (and all gates passed), 1 a CI gate failed, 2 invalid
input, 3 an internal failure.
"""

import argparse
import sys

EXIT_OK, EXIT_GATE_FAILED, EXIT_INVALID_INPUT, EXIT_INTERNAL = 0, 1, 2, 3


def _check(args):
    from .data.summary import check_command
    return check_command(args.campaign)


def _simulate(args):
    from .simulate import simulate_command
    return simulate_command(args.scenario, args.out)


def _load(path):
    """The campaign, or None after printing its problems."""
    from .campaign import CampaignError, load_campaign
    try:
        return load_campaign(path)
    except CampaignError as exc:
        for problem in exc.problems:
            print(problem, file=sys.stderr)
        return None


def _fit(args):
    import time
    from .inference.run import fit_campaign
    from .results.bundle import summariser, write_bundle
    started = time.time()
    campaign = _load(args.campaign)
    if campaign is None:
        return EXIT_INVALID_INPUT
    variants = args.variants or None
    for name in variants or []:
        if name not in [v.name for v in campaign.variants]:
            print(f"{args.campaign}: no variant named {name!r} (have: "
                  f"{', '.join(v.name for v in campaign.variants)})", file=sys.stderr)
            return EXIT_INVALID_INPUT
    fits = fit_campaign(campaign, args.out, variants=variants, workers=args.workers,
                        resume=args.resume, engine=args.engine, scheduler=args.scheduler,
                        finish=summariser(campaign, args.out))
    doc = write_bundle(args.out, campaign, fits, " ".join(["analyser"] + sys.argv[1:]), started)
    _print_fit_summary(doc)
    return EXIT_OK


def _print_fit_summary(doc):
    comp = doc["model_comparison"]
    print(f"results: {comp['reference']} is the reference variant; preferred: {comp['preferred']}")
    for name, v in doc["variants"].items():
        row = comp["against_reference"][name]
        m = v["globals"]["mass_msun"]
        r = v["globals"]["distance_pc"]
        print(f"  {name:12s} ln Z {v['log_z']:10.2f} +- {v['log_z_err']:.2f}   "
              f"ln B {row['ln_bayes_factor']:+8.2f}   M {m.get('median', m.get('fixed')):.4g} "
              f"R0 {r.get('median', r.get('fixed')):.5g} pc")
    for w in doc["warnings"]:
        print(f"warning: {w}")


def _report(args):
    from .report.render import report_command
    return report_command(args.bundle)


def _bundle_exists(path):
    from pathlib import Path
    if not (Path(path) / "results.json").exists():
        print(f"{path}: not a results bundle (no results.json)", file=sys.stderr)
        return False
    return True


def _run(args):
    from .season import print_comparison, print_gates, run_season
    campaign = _load(args.campaign)
    if campaign is None:
        return EXIT_INVALID_INPUT
    if args.baseline and not _bundle_exists(args.baseline):
        return EXIT_INVALID_INPUT
    doc, comparison, gates = run_season(
        campaign, args.out, baseline=args.baseline, workers=args.workers, junit=args.junit,
        scheduler=args.scheduler, command_line=" ".join(["analyser"] + sys.argv[1:]))
    _print_fit_summary(doc)
    if comparison:
        print_comparison(comparison)
    print_gates(gates)
    print(f"report: {args.out}/report.html, {args.out}/report.pdf")
    return EXIT_OK if all(g["passed"] for g in gates) else EXIT_GATE_FAILED


def _compare(args):
    from .results.gates import junit_xml
    from .season import compare_command, print_comparison, print_gates
    if not (_bundle_exists(args.new) and _bundle_exists(args.old)):
        return EXIT_INVALID_INPUT
    comparison = compare_command(args.new, args.old)
    print_comparison(comparison)
    print_gates(comparison["gates"])
    if args.junit:
        from .results.bundle import write_atomic
        write_atomic(args.junit, junit_xml(comparison["gates"]))
    return EXIT_OK if all(g["passed"] for g in comparison["gates"]) else EXIT_GATE_FAILED


def _predict(args):
    from .forecast import parse_date, predict
    if not _bundle_exists(args.bundle):
        return EXIT_INVALID_INPUT
    try:
        start, stop = parse_date(args.start), parse_date(args.stop)
    except ValueError as exc:
        print(f"cannot read the date: {exc}", file=sys.stderr)
        return EXIT_INVALID_INPUT
    if not stop > start:
        print("--to must be later than --from", file=sys.stderr)
        return EXIT_INVALID_INPUT
    events = predict(args.bundle, start, stop, step_days=args.step, variant=args.variant,
                     separation_mas=args.separation)
    print(f"predictions ({events['variant']}) written to {args.bundle}/predictions/")
    for p in events["periapsis"]:
        print(f"  periapsis {p['star']}: {p['epoch_yr']:.3f} ({p['date']}), "
              f"68% {p['lo68']:.3f} to {p['hi68']:.3f}")
    for p in events["redshift_peaks"]:
        print(f"  redshift signal of {p['star']} peaks at {p['epoch_yr']:.3f}: "
              f"{p['signal_km_s']:.1f} km/s")
    for p in events["close_pairs"]:
        print(f"  confusion risk: {p['stars'][0]} and {p['stars'][1]} "
              f"{p['separation_mas']:.2f} mas apart at {p['epoch_yr']:.3f}")
    return EXIT_OK


def build_parser():
    parser = argparse.ArgumentParser(
        prog="analyser",
        description="Joint orbit analysis of stars around a compact dark mass.")
    sub = parser.add_subparsers(dest="command", required=True)

    p = sub.add_parser("check", help="validate a campaign and summarise its data")
    p.add_argument("campaign", help="campaign file (TOML)")
    p.set_defaults(handler=_check)

    p = sub.add_parser("fit", help="fit all stars jointly and write a results bundle")
    p.add_argument("campaign", help="campaign file (TOML)")
    p.add_argument("--out", required=True, help="bundle folder")
    p.add_argument("--resume", action="store_true", help="continue from the checkpoints in --out")
    p.add_argument("--workers", type=int, default=1, help="CPUs to use (default 1)")
    p.add_argument("--variants", nargs="+", metavar="NAME", help="fit only these variants")
    p.add_argument("--engine", choices=("blocked", "stock"), default=None,
                   help="override the campaign's sampler engine")
    p.add_argument("--scheduler", metavar="tcp://HOST:PORT",
                   help="run on a Dask distributed cluster")
    p.set_defaults(handler=_fit)

    p = sub.add_parser("report", help="render report.html and report.pdf from a bundle")
    p.add_argument("bundle", help="results bundle folder")
    p.set_defaults(handler=_report)

    p = sub.add_parser("run", help="the season in one go: check, fit, report, compare, gates")
    p.add_argument("campaign", help="campaign file (TOML)")
    p.add_argument("--out", required=True, help="bundle folder (reruns continue from it)")
    p.add_argument("--baseline", metavar="OLD_DIR", help="last season's bundle to compare with")
    p.add_argument("--workers", type=int, default=2, help="CPUs to use (default 2)")
    p.add_argument("--junit", metavar="FILE", help="also write the gates as JUnit XML")
    p.add_argument("--scheduler", metavar="tcp://HOST:PORT",
                   help="run on a Dask distributed cluster")
    p.set_defaults(handler=_run)

    p = sub.add_parser("compare", help="what moved between two bundles; CI gates")
    p.add_argument("new", help="this season's bundle")
    p.add_argument("old", help="the baseline bundle")
    p.add_argument("--junit", metavar="FILE", help="also write the gates as JUnit XML")
    p.set_defaults(handler=_compare)

    p = sub.add_parser("predict", help="ephemerides and events for coming dates")
    p.add_argument("bundle", help="results bundle folder")
    p.add_argument("--from", dest="start", required=True, help="first date (ISO, J2027.5, ...)")
    p.add_argument("--to", dest="stop", required=True, help="last date")
    p.add_argument("--step", type=float, default=10.0, help="step in days (default 10)")
    p.add_argument("--variant", help="variant to use (default: the reference)")
    p.add_argument("--separation", type=float, default=5.0,
                   help="flag pairs of stars closer than this on the sky (mas, default 5)")
    p.set_defaults(handler=_predict)

    p = sub.add_parser("simulate", help="write a synthetic campaign from a scenario")
    p.add_argument("scenario", help="scenario file (TOML)")
    p.add_argument("--out", required=True, help="output folder")
    p.set_defaults(handler=_simulate)
    return parser


def main(argv=None):
    args = build_parser().parse_args(argv)
    try:
        return args.handler(args)
    except KeyboardInterrupt:
        print("interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:        # e.g. `analyser check ... | head`
        return EXIT_OK
    except Exception:              # an internal failure, told apart from bad input
        import traceback
        traceback.print_exc()
        print("internal error: please report it with the traceback above", file=sys.stderr)
        return EXIT_INTERNAL


if __name__ == "__main__":
    sys.exit(main())
