"""Where the templates and static assets live, and the jinja2 environment that renders them.

The wheel places ``site_templates`` inside the package (``generator/site_templates``, see the
force-include in pyproject.toml); an editable install reads ``<repo>/site_templates``.
"""

from __future__ import annotations

import functools
import os
from pathlib import Path

import jinja2
from jinja2.compiler import CodeGenerator
from markupsafe import Markup, escape

import generator

try:  # markupsafe's C escaper (its speedups module); the pure-Python one otherwise
    from markupsafe._speedups import _escape_inner
except ImportError:  # pragma: no cover - markupsafe built without its C extension
    _escape_inner = None

ASSET_NAMES: tuple[str, ...] = ("print.css", "site.css", "site.js")


@functools.lru_cache(maxsize=1)
def templates_dir() -> Path:
    """The first of ``generator/site_templates`` and ``<repo>/site_templates`` that exists
    (looked up once per process: every sheet asks)."""
    package = Path(generator.__file__).resolve().parent
    for candidate in (package / "site_templates", package.parent / "site_templates"):
        if (candidate / "base.html").is_file():
            return candidate
    raise FileNotFoundError(f"no site templates in {package / 'site_templates'} or "
                            f"{package.parent / 'site_templates'}")


_DICT_ATTRIBUTES = frozenset(dir(dict))
_NEW_STR = str.__new__
COMPILED_FORM = "escape1"  # changes with what _CodeGenerator adds to the compiled code


def template_escape(s) -> Markup:
    """``markupsafe.escape(s)``, the same Markup, for the values a page prints most (``{{ x
    }}`` with autoescaping calls it once per value): a str, int or float goes to markupsafe's
    escaper straight, and a Markup comes back as itself (it is already escaped, and
    immutable); anything else takes ``escape``.  ``escape`` costs about 0.9 us a call here,
    most of it in ``Markup.__new__``, this about 0.2 us; a full build makes some 600,000
    calls."""
    t = type(s)
    if _escape_inner is not None:
        if t is str:
            return _NEW_STR(Markup, _escape_inner(s))
        if t is int or t is float:
            return _NEW_STR(Markup, _escape_inner(str(s)))
    if t is Markup:
        return s
    return escape(s)


class _CodeGenerator(CodeGenerator):
    """jinja2's code generator, with template_escape bound to the name ``escape`` the
    compiled code calls for every printed value (the module's last line, run when the
    template is loaded, before anything renders); jinja2 documents
    ``Environment.code_generator_class`` for changing the code a template compiles to."""

    def visit_Template(self, node, frame=None) -> None:  # noqa: N802 - jinja2's visitor
        super().visit_Template(node, frame)
        self.writeline(f"from {__name__} import template_escape as escape")


class _Environment(jinja2.Environment):
    """jinja2's environment with a faster ``x.y`` on dicts (the page contexts are dicts):
    jinja2 tries the attribute first and the item on AttributeError, an exception raised
    for every row and cell; for a name that no dict attribute has, that ends at the item,
    so the item is looked up first and the result is the same.  Printed values are escaped
    by template_escape (see _CodeGenerator)."""

    code_generator_class = _CodeGenerator

    def getattr(self, obj, attribute):  # noqa: A003 - jinja2's own method name
        if type(obj) is dict and attribute not in _DICT_ATTRIBUTES:
            try:
                return obj[attribute]
            except (KeyError, TypeError):
                pass
        return super().getattr(obj, attribute)


def environment(folder: Path | None = None) -> jinja2.Environment:
    """Autoescaping, strict jinja2 environment over the template folder."""
    env = _Environment(
        loader=jinja2.FileSystemLoader(str(folder or templates_dir())),
        autoescape=True,
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
        keep_trailing_newline=True,
    )
    env.filters["num_cells"] = num_cells
    return env


_SEP = "\x1f"  # a control character no escaping touches and no formatted number holds
_NUM_CELL = '</td><td class="num">'


def num_cells(cells) -> Markup:
    """``<td class="num">cell</td>`` for each cell, escaped as ``{{ cell }}`` would be: the
    numbers of a table row, escaped in one call instead of one per cell."""
    texts = list(cells)
    if not texts:
        return Markup("")
    if any(hasattr(t, "__html__") for t in texts) or any(_SEP in str(t) for t in texts):
        inner = _NUM_CELL.join(str(escape(t)) for t in texts)
    else:
        inner = str(escape(_SEP.join(str(t) for t in texts))).replace(_SEP, _NUM_CELL)
    return Markup(f'<td class="num">{inner}</td>')


@functools.lru_cache(maxsize=4)
def shared_environment(folder: Path, compiled: str | None = None) -> jinja2.Environment:
    """One ``environment`` per process and folder, so each template is compiled once (its
    loader still recompiles a template whose file changed: jinja2's auto_reload).
    ``compiled``: a folder that keeps the templates' compiled code between builds
    (jinja2's FileSystemBytecodeCache: an entry per template, found by the checksum of its
    source and written by an atomic rename; jinja2 ignores an entry of another Python or
    jinja2 version; the entries' names carry COMPILED_FORM, so code compiled by an earlier
    _CodeGenerator is never loaded).  Compiling every template took 0.18 s in each worker
    process, loading them compiled 0.007 s."""
    env = environment(folder)
    if compiled is not None:
        try:
            os.makedirs(compiled, exist_ok=True)
        except OSError:
            return env  # a cache that cannot be written: compile as without one
        env.bytecode_cache = jinja2.FileSystemBytecodeCache(
            compiled, f"__jinja2_%s.{COMPILED_FORM}.cache")
    return env


def static_assets(folder: Path | None = None) -> dict[str, bytes]:
    """The stylesheets and the script, keyed by their path in the site (``assets/...``)."""
    base = (folder or templates_dir()) / "assets"
    return {f"assets/{name}": (base / name).read_bytes() for name in ASSET_NAMES}
