"""``thermofolio review ITEM``: record a review, with the digest of the content reviewed."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from generator.model import REVIEW_STATUSES


def register(sub) -> None:
    p = sub.add_parser("review", help="record a review of a species or reaction",
                       description="Record a review in the item's source file (its comments "
                       "and layout kept) together with a digest of the reviewed content; "
                       "`check` reports when the content changes afterwards.")
    p.add_argument("item", help="species or reaction id, or the path of its file")
    p.add_argument("--status", required=True, choices=REVIEW_STATUSES,
                   help="checked or approved (draft withdraws a review)")
    p.add_argument("--by", required=True, help="the reviewer's name")
    p.add_argument("--note", default=None, help="review note (the old note is kept if "
                   "omitted)")
    p.add_argument("--date", default=None, help="review date, YYYY-MM-DD (default: today, "
                   "or the date of SOURCE_DATE_EPOCH)")
    p.add_argument("--sources", default="sources", help="handbook folder (default: sources)")
    p.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    from generator.load import display_path
    from generator.provenance import today_from_environment
    from generator.review_edit import ReviewError, find_item_file, record_review

    file = find_item_file(Path(args.sources), args.item)
    if file is None:
        print(f"thermofolio review: no species or reaction '{args.item}' under "
              f"{args.sources}/species or {args.sources}/reactions", file=sys.stderr)
        return 1
    date = args.date or today_from_environment().isoformat()
    try:
        rec = record_review(file, args.status, args.by, date, args.note,
                            display=display_path(file))
    except ReviewError as exc:
        print(f"thermofolio review: {exc}", file=sys.stderr)
        return 1
    was = ("" if rec.previous_digest in (None, rec.digest) else
           f" (the previous review covered {rec.previous_digest})")
    print(f"{rec.path}: {rec.status} {rec.date} by {rec.by}; content digest {rec.digest}{was}")
    return 0
