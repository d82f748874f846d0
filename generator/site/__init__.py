"""The static offline HTML handbook: page contexts, templates, charts, exports, atomic write."""

from generator.site.publish import publish

__all__ = ["publish"]
