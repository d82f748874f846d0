"""``thermofolio check``: load, validate and run the engine's consistency checks."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from generator.diagnostics import Severity, findings_json, sort_findings, summary_line
from generator.pipeline import check_handbook


def register(sub) -> None:
    p = sub.add_parser("check", help="validate the sources and report every problem",
                       description="Load and validate every source file and print one "
                       "compiler-style line per problem.")
    p.add_argument("sources", nargs="?", default="sources", help="handbook folder "
                   "(default: sources)")
    p.add_argument("--strict", action="store_true", help="fail on warnings too")
    p.add_argument("--format", choices=("text", "json"), default="text",
                   help="output format (json for CI)")
    p.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    _handbook, findings = check_handbook(Path(args.sources))
    findings = sort_findings(findings)
    if args.format == "json":
        print(findings_json(findings))
    else:
        for f in findings:
            print(f.format(), file=sys.stderr)
        print(f"thermofolio check: {summary_line(findings)}", file=sys.stderr)
    errors = any(f.severity is Severity.ERROR for f in findings)
    warnings = any(f.severity is Severity.WARNING for f in findings)
    return 1 if errors or (args.strict and warnings) else 0
