"""``thermofolio schema``: write JSON Schemas of the source files for YAML editors."""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

from generator.source_schema import json_schemas


def register(sub) -> None:
    p = sub.add_parser("schema", help="write JSON Schemas for the source files",
                       description="Write one JSON Schema per kind of source file.")
    p.add_argument("-o", "--output", default="schema", help="folder to write into "
                   "(default: schema); '-' prints the species schema to stdout")
    p.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    schemas = json_schemas()
    if args.output == "-":
        print(json.dumps(schemas["species.schema.json"], indent=2, ensure_ascii=False))
        return 0
    out = Path(args.output)
    try:
        out.mkdir(parents=True, exist_ok=True)
        for name, schema in schemas.items():
            (out / name).write_text(json.dumps(schema, indent=2, ensure_ascii=False) + "\n",
                                    encoding="utf-8")
    except OSError as exc:
        print(f"thermofolio schema: error: cannot write to {out}: {exc.strerror}",
              file=sys.stderr)
        return 1
    print(f"wrote {len(schemas)} schemas to {out}/", file=sys.stderr)
    return 0
