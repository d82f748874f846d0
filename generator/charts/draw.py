"""Spec in, SVG bytes out: draws chart specs with matplotlib's object-oriented API.

matplotlib is imported inside the functions only, so a build whose charts are all cached
never imports it.  Output is byte-identical for equal specs: the SVG hash salt is derived
from the spec, the date is left out, and text stays text (``svg.fonttype: none``).
"""

from __future__ import annotations

import hashlib
import io
import multiprocessing
import re
import threading
from collections.abc import Callable, Sequence
from concurrent.futures import ProcessPoolExecutor, as_completed
from typing import TYPE_CHECKING, Any
from xml.sax.saxutils import escape, quoteattr

from generator.charts import style
from generator.charts.specs import (
    ZERO_LEVEL,
    ChartSpec,
    GibbsChartSpec,
    LevelDiagramSpec,
    LineChartSpec,
    MarkedPoint,
    Series,
    ShadedRange,
    VantHoffSpec,
)

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

_SVG_ROOT = re.compile(rb"<svg\b[^>]*>")


def chart_id(spec: ChartSpec) -> str:
    """A short id from the spec's content: the root id and the prefix of title/desc ids."""
    return "chart-" + hashlib.sha256(spec.to_canonical_json().encode("utf-8")).hexdigest()[:12]


def render_svg(spec: ChartSpec) -> bytes:
    """Draw ``spec`` and return the SVG document, with <title>/<desc> and ARIA on the root."""
    import matplotlib
    from matplotlib.backends.backend_svg import FigureCanvasSVG
    from matplotlib.figure import Figure

    drawer = _DRAWERS.get(spec.kind)
    if drawer is None:
        raise ValueError(f"no drawer for chart kind {spec.kind!r}; known: {sorted(_DRAWERS)}")
    cid = chart_id(spec)
    rc = style.rc_params(hashsalt=cid)
    rc["svg.id"] = cid
    with matplotlib.rc_context(rc):
        figsize = style.LEVEL_FIGSIZE if isinstance(spec, LevelDiagramSpec) else style.FIGSIZE
        fig = Figure(figsize=figsize, layout="constrained")
        FigureCanvasSVG(fig)
        drawer(fig, spec)
        buf = io.BytesIO()
        fig.savefig(buf, format="svg", metadata={"Date": None})
    return _add_accessibility(buf.getvalue(), cid, spec.title, spec.description)


def _add_accessibility(svg: bytes, cid: str, title: str, description: str) -> bytes:
    """Put <title> and <desc> first inside the root <svg>, and role/aria-labelledby on it."""
    match = _SVG_ROOT.search(svg)
    if match is None:
        raise ValueError("matplotlib output has no <svg> root element")
    title_id, desc_id = f"{cid}-title", f"{cid}-desc"
    root = match.group(0)[:-1].rstrip(b"/")
    attrs = f' role="img" aria-labelledby={quoteattr(f"{title_id} {desc_id}")}'
    children = (
        f"\n <title id={quoteattr(title_id)}>{escape(title)}</title>"
        f"\n <desc id={quoteattr(desc_id)}>{escape(description)}</desc>"
    )
    new_root = root + attrs.encode("utf-8") + b">" + children.encode("utf-8")
    return svg[: match.start()] + new_root + svg[match.end() :]


def render_many(
    specs: Sequence[ChartSpec],
    jobs: int = 1,
    progress: Callable[[int], None] | None = None,
) -> list[bytes]:
    """``render_svg`` over ``specs`` in order.  jobs > 1 draws in one pool of worker processes
    started for this call (see ``start_many``); ``progress`` is called with the number of
    charts finished so far."""
    return start_many(specs, jobs).result(progress)


def start_many(specs: Sequence[ChartSpec], jobs: int = 1) -> PendingCharts:
    """Start drawing ``specs``; ``result()`` on the returned handle waits for the SVGs, in
    order.  With jobs > 1 the charts are drawn by a pool of worker processes started now
    (forkserver with matplotlib preloaded, so each worker pays the import once), and the
    caller goes on meanwhile; with one job they are drawn in this process when the result
    is asked for."""
    return PendingCharts(list(specs), jobs)


class PendingCharts:
    """Charts being drawn while the caller goes on: ``result`` waits for them (and shuts the
    pool down), ``cancel`` drops what has not started and waits for what has.  The pool is
    started by a thread of its own: starting a forkserver worker waits until the server has
    imported matplotlib, which the caller need not wait for."""

    def __init__(self, specs: list[ChartSpec], jobs: int) -> None:
        self._specs = specs
        self._pool: ProcessPoolExecutor | None = None
        self._futures: dict[Any, int] = {}
        self._batches: list[list[ChartSpec]] = []
        self._error: BaseException | None = None
        jobs = max(1, min(int(jobs), len(specs)))
        self._in_process = jobs == 1
        self._starter: threading.Thread | None = None
        if self._in_process:
            return
        size = max(1, min(16, len(specs) // (6 * jobs)))  # small batches keep the cores busy
        self._batches = [specs[i : i + size] for i in range(0, len(specs), size)]
        self._starter = threading.Thread(target=self._start, args=(jobs,), daemon=True,
                                         name="thermofolio-chart-pool")
        self._starter.start()

    def _start(self, jobs: int) -> None:
        try:
            methods = multiprocessing.get_all_start_methods()
            if "forkserver" in methods:
                ctx = multiprocessing.get_context("forkserver")
                ctx.set_forkserver_preload(list(_PRELOAD))
            else:
                ctx = multiprocessing.get_context("spawn")
            self._pool = ProcessPoolExecutor(max_workers=jobs, mp_context=ctx,
                                             initializer=_warm_worker)
            self._futures = {self._pool.submit(_render_batch, batch): i
                             for i, batch in enumerate(self._batches)}
        except BaseException as exc:  # raised again by result()
            self._error = exc

    def _started(self) -> None:
        if self._starter is not None:
            self._starter.join()
            self._starter = None

    def result(self, progress: Callable[[int], None] | None = None) -> list[bytes]:
        """The SVG of each spec, in order; ``progress`` gets the number finished so far."""
        if self._in_process:
            out = []
            for spec in self._specs:
                out.append(render_svg(spec))
                if progress is not None:
                    progress(len(out))
            return out
        self._started()
        if self._error is not None:
            self.cancel()
            raise self._error
        if self._pool is None:
            raise RuntimeError("the drawing was cancelled")
        results: list[list[bytes] | None] = [None] * len(self._batches)
        done = 0
        try:
            for future in as_completed(self._futures):
                i = self._futures[future]
                results[i] = future.result()
                done += len(self._batches[i])
                if progress is not None:
                    progress(done)
        finally:
            self.cancel()
        return [svg for batch in results if batch is not None for svg in batch]

    def cancel(self) -> None:
        self._started()
        if self._pool is not None:
            self._pool.shutdown(wait=True, cancel_futures=True)
            self._pool = None


_PRELOAD = ("generator.charts.draw", "matplotlib.figure", "matplotlib.backends.backend_svg")


def _warm_worker() -> None:
    """Import matplotlib's figure and SVG backend before the first chart arrives."""
    import matplotlib.figure  # noqa: F401
    from matplotlib.backends import backend_svg  # noqa: F401


def _render_batch(specs: Sequence[ChartSpec]) -> list[bytes]:
    return [render_svg(spec) for spec in specs]


# --- helpers shared by the chart kinds -------------------------------------------------------


def _legend_text(label: str) -> str:
    # matplotlib hides legend entries whose label starts with "_"; a zero-width space keeps them.
    return "\u200b" + label if label.startswith("_") else label


def _plot_series(ax: Axes, series: Series, offset: int) -> None:
    rs = style.role_style(series.role)
    common: dict[str, Any] = {
        "color": rs.color,
        "marker": rs.marker,
        "label": _legend_text(series.label),
        "gid": f"series-{offset}",
    }
    if not rs.line:
        ax.plot(series.x, series.y, linestyle="none", markeredgewidth=1.3, **common)
        return
    start = (offset % 5) * style.MARKER_SPACING / 5  # keeps markers of curves apart
    ax.plot(
        series.x,
        series.y,
        linewidth=rs.width,
        linestyle=(0, rs.dashes) if rs.dashes else "-",
        markevery=(start, style.MARKER_SPACING),
        markerfacecolor="white",
        markeredgewidth=1.1,
        **common,
    )


def _shade(ax: Axes, ranges: Sequence[ShadedRange], to_x: Callable[[float], float]) -> None:
    seen: set[str] = set()
    for i, rng in enumerate(ranges):
        lo, hi = sorted((to_x(rng.x_min), to_x(rng.x_max)))
        ax.axvspan(
            lo,
            hi,
            facecolor=style.SHADE,
            edgecolor="#B0B0B0",
            hatch=style.HATCH,
            linewidth=0.0,
            zorder=0.5,
            label=None if rng.label in seen else _legend_text(rng.label),
            gid=f"extrapolated-{i}",
        )
        seen.add(rng.label)


def _mark(
    ax: Axes, points: Sequence[MarkedPoint], gid: str, to_x: Callable[[float], float]
) -> None:
    ms = style.CROSSOVER_MARKER
    for i, pt in enumerate(points):
        x = to_x(pt.x)
        ax.plot(
            [x],
            [pt.y],
            linestyle="none",
            marker=ms.marker,
            markersize=7.5,
            markerfacecolor=ms.color,
            markeredgecolor="white",
            markeredgewidth=1.6,
            zorder=5,
            gid=f"{gid}-{i}",
        )
        if pt.label:
            ax.annotate(
                pt.label,
                (x, pt.y),
                xytext=(6, 8),
                textcoords="offset points",
                fontsize=9,
                gid=f"{gid}-label-{i}",
            )


def _finish(ax: Axes, title: str, x_label: str, y_label: str) -> None:
    ax.set_title(title)
    ax.set_xlabel(x_label)
    ax.set_ylabel(y_label)
    if ax.get_legend_handles_labels()[0]:
        ax.legend(loc="best")


def _same(x: float) -> float:
    return x


# --- the chart kinds -------------------------------------------------------------------------


def _draw_line(fig: Figure, spec: LineChartSpec) -> None:
    ax = fig.add_subplot()
    _shade(ax, spec.shaded, _same)
    for i, series in enumerate(spec.series):
        _plot_series(ax, series, i)
    _mark(ax, spec.points, "point", _same)
    _finish(ax, spec.title, spec.x_label, spec.y_label)


def _draw_gibbs(fig: Figure, spec: GibbsChartSpec) -> None:
    ax = fig.add_subplot()
    _shade(ax, spec.extrapolated, _same)
    ax.axhline(0.0, color=style.GREY, linewidth=0.8, zorder=1, gid="zero-line")
    parts = (
        Series(spec.drH_label, spec.T, spec.drH, "drH"),
        Series(spec.T_drS_label, spec.T, spec.T_drS, "T_drS"),
        Series(spec.drG_label, spec.T, spec.drG, "drG"),
    )
    for i, series in enumerate(parts):
        _plot_series(ax, series, i)
    _mark(ax, spec.crossovers, "crossover", _same)
    _finish(ax, spec.title, spec.x_label, spec.y_label)


def _inverse_kK(x: Any) -> Any:
    """1000 K / T from T in K, and back (the map is its own inverse)."""
    import numpy as np

    x = np.asarray(x, dtype=float)
    with np.errstate(divide="ignore"):
        return np.where(x == 0, np.inf, 1000.0 / np.where(x == 0, 1.0, x))


_NICE_T = (200, 250, 300, 350, 400, 500, 600, 700, 800, 1000, 1200, 1500, 2000, 3000, 5000)


def _top_ticks(T_min: float, T_max: float) -> list[float]:
    """Round temperatures for the top axis, kept at least 9 % of the 1000/T range apart."""
    gap = 0.09 * (1000.0 / T_min - 1000.0 / T_max)
    ticks: list[float] = []
    for T in _NICE_T:
        if T_min <= T <= T_max and (not ticks or 1000.0 / ticks[-1] - 1000.0 / T >= gap):
            ticks.append(T)
    return ticks or [T_min, T_max]


def _draw_vant_hoff(fig: Figure, spec: VantHoffSpec) -> None:
    ax = fig.add_subplot()

    def to_x(T: float) -> float:
        return 1000.0 / T

    _shade(ax, spec.extrapolated, to_x)
    ax.axhline(0.0, color=style.GREY, linewidth=0.8, zorder=1, gid="zero-line")
    x = tuple(to_x(T) for T in spec.T)
    _plot_series(ax, Series(spec.series_label, x, spec.log10_K, "primary"), 0)
    _mark(ax, spec.points, "point", to_x)
    _finish(ax, spec.title, spec.x_label, spec.y_label)
    if spec.top_axis_T:
        ax.spines["top"].set_visible(True)
        top = ax.secondary_xaxis("top", functions=(_inverse_kK, _inverse_kK))
        ticks = _top_ticks(min(spec.T), max(spec.T))
        top.set_xticks(ticks, [f"{T:g}" for T in ticks])
        top.set_xlabel(spec.top_label)


def _draw_levels(fig: Figure, spec: LevelDiagramSpec) -> None:
    ax = fig.add_subplot()
    half = 0.32  # half the width of a level bar, in column units
    by_key = {lv.key: lv for lv in spec.levels}
    n_cols = max(max(lv.column for lv in spec.levels) + 1, len(spec.column_labels))
    values = [0.0, *(lv.value for lv in spec.levels)]
    span = (max(values) - min(values)) or 1.0

    ax.axhline(0.0, color=style.BLACK, linewidth=1.0, zorder=1, gid="zero-line")
    # The baseline's name sits in the right margin, where no level or arrow can cover it.
    ax.annotate(
        _wrap(spec.zero_label),
        (1.0, 0.0),
        xycoords=("axes fraction", "data"),
        xytext=(4, 0),
        textcoords="offset points",
        fontsize=8.5,
        color=style.GREY,
        va="center",
        ha="left",
        annotation_clip=False,
        gid="zero-label",
    )
    for i, lv in enumerate(spec.levels):
        ax.plot(
            [lv.column - half, lv.column + half],
            [lv.value, lv.value],
            color=style.BLACK,
            linewidth=2.4,
            solid_capstyle="butt",
            gid=f"level-{i}",
        )
        ax.annotate(  # right-aligned, since vertical arrows start at the bar's left end
            lv.label,
            (lv.column + half, lv.value),
            xytext=(0, 3),
            textcoords="offset points",
            ha="right",
            va="bottom",
            fontsize=9,
            bbox={"boxstyle": "square,pad=0.1", "facecolor": "white", "edgecolor": "none"},
            zorder=5,
            gid=f"level-label-{i}",
        )

    def end(key: str) -> tuple[float | None, float]:
        if key == ZERO_LEVEL:
            return None, 0.0
        return float(by_key[key].column), by_key[key].value

    slots: dict[float, int] = {}
    counts: dict[str, int] = {}
    for arrow in spec.arrows:
        a_col, a_val = end(arrow.from_level)
        b_col, b_val = end(arrow.to_level)
        vertical = a_col is None or b_col is None or a_col == b_col
        if vertical:
            col = b_col if b_col is not None else a_col
            assert col is not None  # Arrow refuses to join the baseline to itself
            k = slots.get(col, 0)
            slots[col] = k + 1
            x = col - half + 0.08 + 0.14 * k
            start, stop = (x, a_val), (x, b_val)
        else:
            a_x = a_col + half if b_col > a_col else a_col - half
            b_x = b_col - half if b_col > a_col else b_col + half
            start, stop = (a_x, a_val), (b_x, b_val)
        n = counts.get(arrow.kind, 0)
        counts[arrow.kind] = n + 1
        _level_arrow(ax, start, stop, style.ARROW_STYLES[arrow.kind], f"arrow-{arrow.kind}-{n}")
        if arrow.label:
            short = abs(b_val - a_val) < 0.1 * span
            gid = f"arrow-label-{arrow.kind}-{n}"
            _arrow_label(ax, arrow.label, (start, stop), vertical, short, gid)

    ax.set_xlim(-0.5, n_cols - 0.5)
    ax.set_ylim(min(values) - 0.08 * span, max(values) + 0.12 * span)
    ax.grid(False, axis="x")
    for side in ("top", "right", "bottom"):
        ax.spines[side].set_visible(False)
    if spec.column_labels:
        ax.set_xticks(range(len(spec.column_labels)), spec.column_labels)
        ax.tick_params(axis="x", length=0)
    else:
        ax.set_xticks([])
    ax.set_title(spec.title)
    ax.set_ylabel(spec.unit_label)


def _arrow_label(
    ax: Axes,
    label: str,
    ends: tuple[tuple[float, float], tuple[float, float]],
    vertical: bool,
    short: bool,
    gid: str,
) -> None:
    """Beside a long vertical arrow; past the head of a short one; left of a slanted one."""
    start, stop = ends
    if vertical and short:
        down = stop[1] < start[1]
        xy, offset, ha, va = stop, (0, -4 if down else 4), "left", "top" if down else "bottom"
    else:
        xy = ((start[0] + stop[0]) / 2, (start[1] + stop[1]) / 2)
        offset, ha, va = ((5, 0), "left", "center") if vertical else ((-5, 0), "right", "center")
    ax.annotate(
        label, xy, xytext=offset, textcoords="offset points", ha=ha, va=va, fontsize=8.5, gid=gid
    )


def _wrap(label: str, width: int = 16) -> str:
    """Break a long margin label into lines of about ``width`` characters."""
    import textwrap

    return "\n".join(textwrap.wrap(label, width)) or label


def _level_arrow(
    ax: Axes,
    start: tuple[float, float],
    stop: tuple[float, float],
    ast: style.ArrowStyle,
    gid: str,
) -> None:
    """A dashed-or-solid shaft and a separate, always solid head (dashes spoil a small head)."""
    from matplotlib.patches import FancyArrowPatch

    head_length, head_width, scale = 0.7, 0.4, 12.0
    ax.add_patch(
        FancyArrowPatch(
            start,
            stop,
            arrowstyle="-",
            edgecolor=ast.color,
            linewidth=ast.width,
            linestyle=(0, ast.dashes) if ast.dashes else "-",
            shrinkA=0.0,
            shrinkB=0.0 if ast.head == "->" else 0.5 * head_length * scale,
            zorder=3,
            gid=gid,
        )
    )
    tip_from = (stop[0] - 1e-3 * (stop[0] - start[0]), stop[1] - 1e-3 * (stop[1] - start[1]))
    ax.add_patch(
        FancyArrowPatch(
            tip_from,
            stop,
            arrowstyle=f"{ast.head},head_length={head_length},head_width={head_width}",
            mutation_scale=scale,
            edgecolor=ast.color,
            facecolor=ast.color if ast.head_fill else "white",
            linewidth=ast.width,
            linestyle="-",
            joinstyle="miter",
            shrinkA=0.0,
            shrinkB=0.0,
            zorder=4,
            gid=f"{gid}-head",
        )
    )


_DRAWERS: dict[str, Callable[[Figure, Any], None]] = {
    "line": _draw_line,
    "gibbs": _draw_gibbs,
    "vant_hoff": _draw_vant_hoff,
    "levels": _draw_levels,
    "entropy_levels": _draw_levels,
}
