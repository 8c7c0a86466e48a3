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


def build_parser():
    parser = argparse.ArgumentParser(
        prog="analyser",
        description="Joint orbit analysis of stars around a compact dark mass.")
    sub = parser.add_subparsers(dest="command", required=True)

    p = sub.add_parser("check", help="validate a campaign and summarise its data")
    p.add_argument("campaign", help="campaign file (TOML)")
    p.set_defaults(handler=_check)

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


if __name__ == "__main__":
    sys.exit(main())
