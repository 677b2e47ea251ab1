"""Command line: ``python -m tracemill demo [--cases N] [--seed S] [--out DIR]``."""

from __future__ import annotations

import argparse
import sys


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m tracemill", description=__doc__)
    sub = parser.add_subparsers(dest="command", required=True)
    demo = sub.add_parser("demo", help="simulate the built-in workshop scenario and analyse it")
    demo.add_argument("--cases", type=int, default=20_000, help="number of repair orders")
    demo.add_argument("--seed", type=int, default=7, help="random seed of the simulation")
    demo.add_argument("--out", default=None, help="folder for files the demo writes")
    args = parser.parse_args(argv)
    if args.command == "demo":
        from .demo import run_demo

        print(run_demo(n_cases=args.cases, seed=args.seed, out=args.out))
    return 0


if __name__ == "__main__":
    sys.exit(main())
