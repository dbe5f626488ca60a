"""Command-line entry point: ``eddyphone COMMAND ...``.

Each sub-command lives in its own module in this package and exposes
``NAME``, ``HELP``, ``ORDER``, ``add_arguments(parser)`` and ``run(args) -> int``.
Those modules import only :mod:`argparse` at module level so that ``--help``
stays fast; heavy imports happen inside ``run``.
"""

from __future__ import annotations

import argparse
import importlib
import pkgutil
import sys
from collections.abc import Sequence

from eddyphone._version import __version__


def _command_modules() -> list:
    modules = []
    for info in pkgutil.iter_modules(__path__):
        if info.name.startswith("_"):
            continue
        module = importlib.import_module(f"{__name__}.{info.name}")
        if hasattr(module, "run"):
            modules.append(module)
    return sorted(modules, key=lambda m: (getattr(m, "ORDER", 100), m.NAME))


def build_parser() -> argparse.ArgumentParser:
    """Return the top-level parser with every sub-command registered."""
    parser = argparse.ArgumentParser(
        prog="eddyphone",
        description=(
            "Turn digital stethoscope recordings into documented, physically explained "
            "findings. Decision support only, not a diagnosis."
        ),
    )
    parser.add_argument("--version", action="version", version=f"eddyphone {__version__}")
    parser.add_argument(
        "--debug", action="store_true", help="show full tracebacks for internal errors"
    )
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for module in _command_modules():
        child = sub.add_parser(module.NAME, help=module.HELP, description=module.HELP)
        module.add_arguments(child)
        child.set_defaults(_run=module.run)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Parse ``argv``, run the chosen sub-command and return its exit status."""
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "_run", None):
        parser.print_help()
        return 2
    try:
        return int(args._run(args) or 0)
    except KeyboardInterrupt:
        print("eddyphone: interrupted", file=sys.stderr)
        return 130
    except Exception as exc:  # noqa: BLE001 - the CLI's last line of defence
        from eddyphone.errors import EddyphoneError

        if args.debug:
            raise
        if isinstance(exc, EddyphoneError):
            print(f"eddyphone: {exc}", file=sys.stderr)
            return 2
        print(
            f"eddyphone: internal error ({type(exc).__name__}: {exc}); "
            "rerun with --debug and report it",
            file=sys.stderr,
        )
        return 3


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
