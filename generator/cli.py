"""The ``thermofolio`` command line: one subcommand per module in generator/commands.

Exit codes: 0 success, 1 data errors, 2 usage errors; results go to stdout and
diagnostics to stderr.
"""

from __future__ import annotations

import argparse
import os
import sys
import traceback
from collections.abc import Sequence

from generator import __version__


class _Parser(argparse.ArgumentParser):
    def error(self, message: str) -> None:  # type: ignore[override]
        self.print_usage(sys.stderr)
        sys.stderr.write(f"{self.prog}: error: {message}\n")
        raise SystemExit(2)


def build_parser() -> argparse.ArgumentParser:
    from generator.commands import build, calc, check, diff, review, schema, serve

    parser = _Parser(prog="thermofolio", description="A cited, reviewed thermochemical "
                     "handbook: check the sources, compute, publish.")
    parser.add_argument("--version", action="version", version=f"thermofolio {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for module in (check, calc, build, serve, schema, review, diff):
        module.register(sub)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "run", None):
        parser.print_help(sys.stderr)
        return 2
    try:
        return int(args.run(args) or 0)
    except KeyboardInterrupt:
        sys.stderr.write("thermofolio: interrupted\n")
        return 130
    except BrokenPipeError:
        return 0
    except Exception as exc:  # a bug, not bad input: say so without a traceback
        if os.environ.get("THERMOFOLIO_DEBUG"):
            traceback.print_exc()
        sys.stderr.write(f"thermofolio: internal error: {type(exc).__name__}: {exc} (this is a "
                         "bug in thermofolio; set THERMOFOLIO_DEBUG=1 for details and report "
                         "it)\n")
        return 3


def run() -> None:
    """The ``thermofolio`` command: ``main``, then exit without tearing the interpreter
    down object by object (half a second after a large build; every file is closed and
    every worker joined by then, and the standard streams are flushed here)."""
    code = main()
    for stream in (sys.stdout, sys.stderr):
        try:
            stream.flush()
        except (OSError, ValueError):
            pass
    os._exit(code)
