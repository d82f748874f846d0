"""Strict YAML reading that keeps the file, line and column of every value.

PyYAML's composer gives a node tree with marks; we build plain Python values from it with
our own scalar rules (close to the YAML 1.2 core schema) so the YAML 1.1 traps are
closed: ``1e-3`` is a number, ``no``/``on`` stay strings, ``012`` is 12, ``12:30`` is a
string.  Anchors, aliases and explicit tags are refused while composing (an alias bomb
never expands), duplicate keys are errors that name both lines, and nesting and file size
are limited.

Sound files are parsed with libyaml's event parser where PyYAML was built with it (the
same events, about seven times faster); anything libyaml stops at is parsed again by the
pure-Python parser, whose messages are the ones we report.
"""

from __future__ import annotations

import math
import re
from pathlib import Path
from typing import Any

import yaml
import yaml.reader
from yaml.composer import Composer
from yaml.events import AliasEvent
from yaml.nodes import MappingNode, Node, ScalarNode, SequenceNode
from yaml.parser import Parser
from yaml.reader import Reader
from yaml.resolver import BaseResolver
from yaml.scanner import Scanner

from generator.diagnostics import Finding, Location, error

MAX_FILE_BYTES = 2 * 1024 * 1024
MAX_DEPTH = 40
MAX_NODES = 200_000

_STR_TAG = "tag:yaml.org,2002:str"
_SEQ_TAG = "tag:yaml.org,2002:seq"
_MAP_TAG = "tag:yaml.org,2002:map"

_INT = re.compile(r"[-+]?[0-9]+\Z")
_HEX = re.compile(r"0x[0-9a-fA-F]+\Z")
_FLOAT = re.compile(r"[-+]?(\.[0-9]+|[0-9]+(\.[0-9]*)?)([eE][-+]?[0-9]+)?\Z")
_NULLS = {"", "~", "null", "Null", "NULL"}
_TRUE = {"true", "True", "TRUE"}
_FALSE = {"false", "False", "FALSE"}
_NONFINITE = {".inf", ".Inf", ".INF", "+.inf", "-.inf", "-.Inf", "-.INF", ".nan", ".NaN", ".NAN"}


class YMap(dict):
    """A mapping read from YAML; remembers where it, its keys and its values were written."""

    loc: Location
    key_locs: dict[str, Location]
    value_locs: dict[str, Location]

    def where(self, key: str) -> Location:
        return self.value_locs.get(key, self.key_locs.get(key, self.loc))

    def key_where(self, key: str) -> Location:
        return self.key_locs.get(key, self.loc)


class YList(list):
    """A sequence read from YAML; remembers where it and each item were written."""

    loc: Location
    item_locs: list[Location]

    def where(self, index: int) -> Location:
        return self.item_locs[index] if 0 <= index < len(self.item_locs) else self.loc


class YamlRefused(Exception):
    def __init__(self, code: str, message: str, mark: Any, hint: str | None = None):
        super().__init__(message)
        self.code, self.message, self.mark, self.hint = code, message, mark, hint


class _NoImplicitResolver(BaseResolver):
    """Resolves no plain scalar implicitly: every scalar node keeps the str tag unless a tag
    was written, so explicit tags are detectable and our own rules decide the type."""


class _StrictComposer(Composer):
    def compose_node(self, parent: Node | None, index: Any) -> Node:  # type: ignore[override]
        event = self.peek_event()
        if isinstance(event, AliasEvent):
            raise YamlRefused(
                "yaml-alias",
                f"alias '*{event.anchor}' is not allowed",
                event.start_mark,
                "write the value out in full; anchors and aliases are refused",
            )
        if getattr(event, "anchor", None) is not None:
            raise YamlRefused(
                "yaml-anchor",
                f"anchor '&{event.anchor}' is not allowed",
                event.start_mark,
                "write the value out in full; anchors and aliases are refused",
            )
        depth = getattr(self, "_depth", 0) + 1
        if depth > MAX_DEPTH:
            raise YamlRefused(
                "yaml-too-deep", f"nesting deeper than {MAX_DEPTH} levels", event.start_mark
            )
        count = getattr(self, "_count", 0) + 1
        if count > MAX_NODES:
            raise YamlRefused("yaml-too-large", f"more than {MAX_NODES} values", event.start_mark)
        self._depth, self._count = depth, count
        try:
            return super().compose_node(parent, index)
        finally:
            self._depth = depth - 1


class _StrictLoader(Reader, Scanner, Parser, _StrictComposer, _NoImplicitResolver):
    def __init__(self, stream: str):
        Reader.__init__(self, stream)
        Scanner.__init__(self)
        Parser.__init__(self)
        _StrictComposer.__init__(self)
        _NoImplicitResolver.__init__(self)


try:
    from yaml.cyaml import CParser
except ImportError:  # PyYAML built without libyaml: the pure-Python parser does it all
    CParser = None

if CParser is not None:

    class _FastLoader(_StrictComposer, CParser, _NoImplicitResolver):  # type: ignore[misc]
        """libyaml's events, our composer: the same checks, the same marks."""

        def __init__(self, stream: str):
            CParser.__init__(self, stream)
            _StrictComposer.__init__(self)
            _NoImplicitResolver.__init__(self)


def _fast_node(text: str) -> Node | None | bool:
    """The node tree by libyaml, or False when libyaml is missing or stops (bad input is
    always re-read by the pure-Python parser, so its messages are the ones reported)."""
    if CParser is None or Reader.NON_PRINTABLE.search(text):
        return False
    loader = _FastLoader(text)
    try:
        return loader.get_single_node()
    except (yaml.YAMLError, YamlRefused, RecursionError):
        return False
    finally:
        loader.dispose()


def _loc(path: str, mark: Any) -> Location:
    if mark is None:
        return Location(path)
    return Location(path, mark.line + 1, mark.column + 1)


def plain_scalar(text: str) -> Any:
    """Type of an unquoted scalar, by the YAML 1.2 core schema (non-finite floats are kept
    as strings, so they are reported where a number is expected)."""
    if text in _NULLS:
        return None
    if text in _TRUE:
        return True
    if text in _FALSE:
        return False
    if _INT.match(text):
        return int(text)
    if _HEX.match(text):
        return int(text, 16)
    if _FLOAT.match(text):
        value = float(text)
        return value if math.isfinite(value) else text
    return text


def _value_loc(path: str, node: Node) -> Location:
    """Where a value's text starts: inside the quotes of a quoted scalar, so a column
    computed within the text points at the right character."""
    loc = _loc(path, node.start_mark)
    if isinstance(node, ScalarNode) and node.style in ('"', "'"):
        return loc.shifted(1)
    return loc


class _Builder:
    def __init__(self, path: str):
        self.path = path
        self.findings: list[Finding] = []

    def build(self, node: Node) -> Any:
        if node.tag not in (_STR_TAG, _SEQ_TAG, _MAP_TAG):
            self.findings.append(
                error(
                    "yaml-tag",
                    f"tag '{node.tag}' is not allowed",
                    _loc(self.path, node.start_mark),
                    hint="remove the tag; values are typed by the handbook's own rules",
                )
            )
        if isinstance(node, ScalarNode):
            if node.style in (None, "") and node.tag == _STR_TAG:
                return plain_scalar(node.value)
            return node.value
        if isinstance(node, SequenceNode):
            out = YList()
            out.loc = _loc(self.path, node.start_mark)
            out.item_locs = []
            for item in node.value:
                out.append(self.build(item))
                out.item_locs.append(_value_loc(self.path, item))
            return out
        assert isinstance(node, MappingNode)
        out = YMap()
        out.loc = _loc(self.path, node.start_mark)
        out.key_locs, out.value_locs = {}, {}
        for key_node, value_node in node.value:
            key_loc = _loc(self.path, key_node.start_mark)
            if not isinstance(key_node, ScalarNode):
                self.findings.append(error("yaml-key", "a key must be a plain name", key_loc))
                continue
            key = key_node.value
            if key in out.key_locs:
                first = out.key_locs[key]
                self.findings.append(
                    error(
                        "yaml-duplicate-key",
                        f"duplicate key '{key}' (first at line {first.line}, again at line "
                        f"{key_loc.line})",
                        key_loc,
                        hint="a key may appear once in a mapping; YAML would keep only the last",
                    )
                )
                continue
            out.key_locs[key] = key_loc
            out.value_locs[key] = _value_loc(self.path, value_node)
            out[key] = self.build(value_node)
        return out


def _reader_error(exc: yaml.reader.ReaderError, text: str, path: str) -> Finding:
    line = text[: exc.position].count("\n") + 1
    col = exc.position - (text.rfind("\n", 0, exc.position) + 1) + 1
    return error("yaml-syntax", f"character U+{exc.character:04X} is not allowed in YAML",
                 Location(path, line, col), hint="remove the control character")


def parse_yaml_text(text: str, path: str) -> tuple[Any, list[Finding]]:
    """Compose and build one YAML document; returns (value or None, findings)."""
    node = _fast_node(text)
    if node is False:
        return _parse_pure(text, path)
    if node is None:
        return None, []
    builder = _Builder(path)
    return builder.build(node), builder.findings


def _parse_pure(text: str, path: str) -> tuple[Any, list[Finding]]:
    """parse_yaml_text by PyYAML's pure-Python reader, scanner and parser."""
    try:
        loader = _StrictLoader(text)
    except yaml.reader.ReaderError as exc:
        return None, [_reader_error(exc, text, path)]
    try:
        node = loader.get_single_node()
    except yaml.reader.ReaderError as exc:
        return None, [_reader_error(exc, text, path)]
    except YamlRefused as exc:
        return None, [error(exc.code, exc.message, _loc(path, exc.mark), hint=exc.hint)]
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        message = exc.problem or exc.context or "invalid YAML"
        if exc.context and exc.problem:
            message = f"{exc.problem} ({exc.context})"
        return None, [error("yaml-syntax", f"YAML syntax: {message}", _loc(path, mark))]
    except yaml.YAMLError as exc:
        return None, [error("yaml-syntax", f"YAML syntax: {exc}", Location(path, 1, 1))]
    except RecursionError:
        return None, [error("yaml-too-deep", "nesting too deep", Location(path, 1, 1))]
    finally:
        loader.dispose()
    if node is None:
        return None, []
    builder = _Builder(path)
    return builder.build(node), builder.findings


def read_yaml_file(file: Path, display_path: str) -> tuple[Any, list[Finding]]:
    """Read a YAML file with the size limit and UTF-8 check, then parse it strictly."""
    raw, findings = read_source_bytes(file, display_path)
    if raw is None:
        return None, findings
    return parse_yaml_bytes(raw, display_path)


def read_source_bytes(file: Path, display_path: str) -> tuple[bytes | None, list[Finding]]:
    """A source file's bytes, or None and the finding (unreadable, over MAX_FILE_BYTES)."""
    try:
        size = file.stat().st_size
    except OSError as exc:
        return None, [error("io", f"cannot read file: {exc.strerror}", Location(display_path))]
    if size > MAX_FILE_BYTES:
        return None, [
            error(
                "yaml-too-large",
                f"file is {size} bytes; the limit is {MAX_FILE_BYTES}",
                Location(display_path, 1, 1),
            )
        ]
    try:
        return file.read_bytes(), []
    except OSError as exc:
        return None, [error("io", f"cannot read file: {exc.strerror}", Location(display_path))]


def parse_yaml_bytes(raw: bytes, display_path: str) -> tuple[Any, list[Finding]]:
    """Decode (UTF-8, BOM allowed) and parse strictly."""
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        return None, [error("encoding", "file is not valid UTF-8", Location(display_path, line, 1))]
    return parse_yaml_text(text, display_path)
