"""``thermofolio build``: check the sources and publish the handbook site."""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

from generator.caution import CAUTION
from generator.diagnostics import Severity, sort_findings, summary_line
from generator.pipeline import check_handbook


def register(sub) -> None:
    p = sub.add_parser("build", help="check the sources and build the handbook site",
                       description="Read SOURCES, check them and write the site to OUT.")
    p.add_argument("sources", nargs="?", default="sources", help="handbook folder "
                   "(default: sources)")
    p.add_argument("-o", "--output", default="out", help="site folder (default: out)")
    p.add_argument("-q", "--quiet", action="store_true", help="print only problems")
    p.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    return build_site(Path(args.sources), Path(args.output), quiet=args.quiet, args=args)


def build_site(sources: Path, output: Path, quiet: bool = False,
               args: argparse.Namespace | None = None) -> int:
    """Check the sources and publish the site; problems go to stderr; the exit code."""
    start = time.perf_counter()
    if args is None:
        args = argparse.Namespace(sources=str(sources), output=str(output), quiet=quiet)
    handbook, findings = check_handbook(sources)
    findings = sort_findings(findings)
    for f in findings:
        if not quiet or f.severity is Severity.ERROR:
            print(f.format(), file=sys.stderr)
    if handbook is None or any(f.severity is Severity.ERROR for f in findings):
        print(f"thermofolio build: {summary_line(findings)}; nothing written", file=sys.stderr)
        return 1
    from generator.site import publish

    return publish(handbook, findings, output, args, start)


def print_caution() -> None:
    print(f"CAUTION: {CAUTION}", file=sys.stderr)
