"""``thermofolio build``: check the sources and publish the handbook site."""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

from generator.caution import CAUTION
from generator.diagnostics import Severity, sort_findings, summary_line


def _jobs(text: str) -> int:
    try:
        n = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"not a whole number: {text!r}") from None
    if n < 1:
        raise argparse.ArgumentTypeError("must be at least 1")
    return n


def register(sub) -> None:
    p = sub.add_parser("build", help="check the sources and build the handbook site",
                       description="Read SOURCES, check them and write the site to OUT.")
    p.add_argument("sources", nargs="?", default="sources", help="handbook folder "
                   "(default: sources)")
    p.add_argument("-o", "--output", default="out", help="site folder (default: out)")
    p.add_argument("-q", "--quiet", action="store_true", help="print only problems")
    p.add_argument("-j", "--jobs", type=_jobs, default=None, metavar="N",
                   help="processes drawing charts (default: the number of cores)")
    p.add_argument("--cache", default=None, metavar="DIR",
                   help="chart cache folder (default: .thermofolio-cache beside SOURCES)")
    p.add_argument("--no-cache", action="store_true",
                   help="draw every chart; neither read nor write the chart cache")
    p.add_argument("--since", default=None, metavar="REV",
                   help="add a page of the changes since git revision REV of the sources")
    p.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    return build_site(Path(args.sources), Path(args.output), quiet=args.quiet, args=args)


def build_site(sources: Path, output: Path, quiet: bool = False,
               args: argparse.Namespace | None = None) -> int:
    """Check the sources and publish the site; problems go to stderr; the exit code.

    The steps are those of generator.pipeline.check_handbook (load, then the engine's
    checks), kept apart here so the computed handbook is handed to the publisher instead of
    being computed a second time."""
    start = time.perf_counter()
    if args is None:
        args = argparse.Namespace(sources=str(sources), output=str(output), quiet=quiet)
    from generator.load import load_handbook

    handbook, findings = load_handbook(sources)
    computed = None
    if handbook is not None:
        from generator.compute import compute_handbook

        computed = compute_handbook(handbook)
        findings = list(findings) + list(computed.findings)
    findings = sort_findings(findings)
    for f in findings:
        if not quiet or f.severity is Severity.ERROR:
            print(f.format(), file=sys.stderr)
    if handbook is None or any(f.severity is Severity.ERROR for f in findings):
        print(f"thermofolio build: {summary_line(findings)}; nothing written", file=sys.stderr)
        return 1
    if getattr(args, "since", None):
        from generator.site.since import SinceError, diff_since

        try:
            args.since_diff = diff_since(sources, args.since)
        except SinceError as exc:
            print(f"thermofolio build: {exc}; nothing written", file=sys.stderr)
            return 2
    from generator.site import publish

    return publish(handbook, findings, output, args, start, computed=computed)


def print_caution() -> None:
    print(f"CAUTION: {CAUTION}", file=sys.stderr)
