"""Notes of species and reactions: Markdown to HTML, then an allowlist sanitiser (nh3).

Raw HTML in a note is not trusted: whatever Python-Markdown passes through, nh3 keeps only
the tags and attributes below, links only to http, https, mailto or relative targets.
"""

from __future__ import annotations

import functools

import markdown
import nh3

TAGS: frozenset[str] = frozenset({
    "p", "a", "em", "strong", "code", "pre", "ul", "ol", "li", "table", "thead", "tbody",
    "tr", "th", "td", "sub", "sup", "blockquote", "h3", "h4", "br", "hr",
})
ATTRIBUTES: dict[str, set[str]] = {"a": {"href", "title"}, "th": {"align"}, "td": {"align"}}
URL_SCHEMES: frozenset[str] = frozenset({"http", "https", "mailto"})
EXTENSIONS: tuple[str, ...] = ("tables", "fenced_code", "sane_lists")


@functools.lru_cache(maxsize=1)
def _converter() -> markdown.Markdown:
    """One Markdown converter per process, reset before each note (Python-Markdown's own
    advice for many documents; building one per note cost most of the time)."""
    return markdown.Markdown(extensions=list(EXTENSIONS), output_format="html",
                             extension_configs={"tables": {"use_align_attribute": True}})


def render(text: str) -> str:
    """Sanitised HTML of a Markdown note ("" for an empty note)."""
    if not text or not text.strip():
        return ""
    html = _converter().reset().convert(text)
    return nh3.clean(
        html,
        tags=set(TAGS),
        attributes={k: set(v) for k, v in ATTRIBUTES.items()},
        url_schemes=set(URL_SCHEMES),
        link_rel=None,
        strip_comments=True,
    ).strip()
