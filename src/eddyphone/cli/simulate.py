"""``eddyphone simulate``: write synthetic recordings with exact ground truth."""

from __future__ import annotations

import argparse

NAME = "simulate"
HELP = "write synthetic recordings (WAV + truth CSV/JSON): the demo cases or a benchmark set"
ORDER = 80


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Register the options of ``eddyphone simulate``."""
    parser.add_argument("--out", metavar="DIR",
                        help="folder to write into (created if missing; required unless --list)")
    parser.add_argument("--case", nargs="+", metavar="NAME", default=None,
                        help="demo cases to write (default: all); see --list")
    parser.add_argument("--seed", type=int, default=None,
                        help="seed: replaces each demo case's own seed, or seeds the "
                             "benchmark draw (default 0)")
    parser.add_argument("--benchmark", type=int, metavar="N", default=None,
                        help="write a graded benchmark set of N cases instead of the demo "
                             "cases")
    parser.add_argument("--overwrite", action="store_true",
                        help="replace files that already exist (default: refuse)")
    parser.add_argument("--list", action="store_true",
                        help="list the demo cases and exit")


def run(args: argparse.Namespace) -> int:
    """Write the requested set and print one line per file group."""
    import time

    from eddyphone.errors import InputError
    from eddyphone.simulate import demo_specs, write_benchmark, write_demo

    if args.list:
        for name, spec in demo_specs().items():
            print(f"{name:28s} {spec.note}")
        return 0
    if not args.out:
        raise InputError(None, "no output folder given", "pass --out DIR")
    start = time.perf_counter()
    if args.benchmark is not None:
        if args.case:
            raise InputError(None, "--case and --benchmark were both given",
                             "use one of them")
        if args.benchmark < 1:
            raise InputError(None, f"--benchmark {args.benchmark} is not a positive count",
                             "give the number of cases, e.g. --benchmark 200")
        index = write_benchmark(args.out, args.benchmark, seed=args.seed or 0,
                                overwrite=args.overwrite)
        count = args.benchmark
    else:
        index = write_demo(args.out, args.case, seed=args.seed, overwrite=args.overwrite)
        count = len(args.case) if args.case else len(demo_specs())
    elapsed = time.perf_counter() - start
    print(f"wrote {count} recording(s) with truth files to {args.out} "
          f"(index: {index}) in {elapsed:.1f} s")
    return 0
