"""Content digest of one species or reaction, for tying a review to what was reviewed.

The digest is the SHA-256 of the canonical JSON (sorted keys, no whitespace, UTF-8) of the
item's parsed source mapping without its ``review`` block, cut to its first 16 hex
digits.  Comments, layout, quoting and key order do not change it; any value does.
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Mapping
from typing import Any

DIGEST_HEX = 16
EXCLUDED_KEYS = ("review",)


def _plain(x: Any) -> Any:
    if isinstance(x, Mapping):
        return {str(k): _plain(v) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [_plain(v) for v in x]
    return x


def canonical_json(doc: Mapping[str, Any]) -> str:
    """The mapping minus its review block, as canonical JSON."""
    body = {k: v for k, v in doc.items() if k not in EXCLUDED_KEYS}
    return json.dumps(_plain(body), sort_keys=True, separators=(",", ":"), ensure_ascii=False,
                      allow_nan=True, default=str)


def content_digest(doc: Any) -> str | None:
    """First 16 hex digits of sha256(canonical JSON); None when ``doc`` is not a mapping."""
    if not isinstance(doc, Mapping):
        return None
    return hashlib.sha256(canonical_json(doc).encode("utf-8")).hexdigest()[:DIGEST_HEX]
