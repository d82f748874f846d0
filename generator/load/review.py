"""Reading the review block shared by species and reactions."""

from __future__ import annotations

import datetime as dt

from generator.load.fields import FileReader
from generator.model import Review
from generator.source_schema import REVIEW_FIELDS
from generator.yamlsource import YMap


def read_review(r: FileReader, m: YMap) -> Review:
    if "review" not in m:
        return Review()
    rm = r.mapping(m["review"], m.where("review"), "'review'")
    if rm is None:
        return Review()
    r.check_fields(rm, REVIEW_FIELDS, "the review")
    status = r.string(rm, "status", "the review", "draft") or "draft"
    if status not in ("draft", "checked", "approved"):
        r.error("bad-review-status", f"unknown review status '{status}'", rm.where("status"),
                "use draft, checked or approved")
        status = "draft"
    date = r.string(rm, "date", "the review")
    if date is not None:
        try:
            dt.date.fromisoformat(date)
        except ValueError:
            r.error("bad-date", f"review date '{date}' is not an ISO date", rm.where("date"),
                    "write YYYY-MM-DD")
            date = None
    return Review(
        status=status,
        by=r.string(rm, "by", "the review"),
        date=date,
        note=r.string(rm, "note", "the review", "") or "",
        digest=r.string(rm, "digest", "the review"),
        location=m.where("review"),
    )


def from_memory_note(review: Review) -> bool:
    return "from memory" in review.note.lower()
