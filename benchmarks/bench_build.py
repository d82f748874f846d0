"""Build benchmark: ``python benchmarks/bench_build.py --species N --reactions M [--json F]``.

Generates a synthetic handbook (benchmarks/synthetic.py) and measures, in one run on one
machine: the cold full build; the floor (the same charts drawn by bare matplotlib with the
same number of processes) and the ratio of the two; the no-change rebuild; the rebuild after
editing one species' dfH (files rewritten, charts redrawn); the pages-only build (charts
cached, fresh output folder) against a generic documentation site generator (mkdocs, the
``bench`` extra) building as many markdown pages of similar size, the two kinds of run
alternating; peak memory of the build's process tree; output size and the median size of a
species sheet with its charts; engine evaluation of 1,000 species at 1,000 temperatures;
and the cost of math-text labels against plain Unicode labels.
"""

from __future__ import annotations

import argparse
import json
import os
import re
import shutil
import statistics
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
REPO = HERE.parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(REPO))

from synthetic import generate  # noqa: E402

from generator.results_cache import DATABASE  # noqa: E402

SUMMARY = re.compile(r"(\d+) pages, (\d+) of \d+ sheets rendered, (\d+) charts "
                     r"\((\d+) drawn, (\d+) cached.*?\), "
                     r"(\d+) files rewritten")


def _tree_memory(pid: int) -> tuple[int, int]:
    """(RSS, PSS) in bytes of ``pid`` and all its descendants, from /proc.  Forked workers
    share the parent's pages, which the RSS sum counts once per process; the proportional
    set size (PSS) splits each shared page among its sharers, so its sum is the memory the
    build really holds."""
    rss = pss = 0
    todo = [pid]
    while todo:
        p = todo.pop()
        try:
            with open(f"/proc/{p}/status") as fh:
                for line in fh:
                    if line.startswith("VmRSS:"):
                        rss += int(line.split()[1]) * 1024
            try:
                with open(f"/proc/{p}/smaps_rollup") as fh:
                    for line in fh:
                        if line.startswith("Pss:"):
                            pss += int(line.split()[1]) * 1024
            except OSError:
                pass
            for task in os.listdir(f"/proc/{p}/task"):
                with open(f"/proc/{p}/task/{task}/children") as fh:
                    todo.extend(int(c) for c in fh.read().split())
        except (OSError, ValueError):
            continue
    return rss, pss


STUB = """
import importlib
publish = importlib.import_module("generator.site.publish")


def stub_render_many(specs, jobs=1):
    return [b'<svg xmlns="http://www.w3.org/2000/svg"><title>' + s.title.encode() +
            b'</title></svg>\\n' for s in specs]


publish.render_many = stub_render_many
from generator.cli import run
run()  # the thermofolio command's own exit
"""


def quiet_disk() -> None:
    """Flush what earlier steps wrote and deleted before a timed run starts, so the file
    system's deferred work for them (write-back, discards on a disk mounted with online
    discard) is not charged to the run that follows."""
    if hasattr(os, "sync"):
        os.sync()


def compile_package() -> None:
    """Byte-compile the package, as pip does when it installs a wheel, so every timed build
    loads thermofolio as an installed copy does (and as mkdocs' pip-installed code loads)
    instead of compiling each module from source in each run where the environment
    forbids writing bytecode (PYTHONDONTWRITEBYTECODE=1, as on these machines: about
    0.1 s of every run)."""
    import compileall

    compileall.compile_dir(str(REPO / "generator"), quiet=1)


def run_build(src: Path, out: Path, cache: Path | None, jobs: int, stub: bool = False,
              watch_memory: bool = False) -> dict:
    """One build in a child process; ``stub``: charts by a stand-in (no drawing at all).
    ``watch_memory``: sample the process tree's memory (peak_*_MB in the result).  Only
    the cold build, whose drawing pool holds the most, is watched: reading a process's
    smaps_rollup walks its page tables under its memory-map lock, which stalls the build's
    own page faults (timed pages-only builds ran about 10 % slower watched)."""
    head = [sys.executable, "-c", STUB] if stub else [sys.executable, "-m", "generator"]
    cmd = [*head, "build", str(src), "-o", str(out), "-j", str(jobs)]
    cmd += ["--cache", str(cache)] if cache else ["--no-cache"]
    env = {**os.environ, "SOURCE_DATE_EPOCH": "1767225600", "CI": "1",
           "PYTHONPATH": str(REPO)}
    peak = [0, 0]
    quiet_disk()
    start = time.perf_counter()
    proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                            env=env, cwd=REPO)

    def watch() -> None:
        while proc.poll() is None:
            rss, pss = _tree_memory(proc.pid)
            peak[0], peak[1] = max(peak[0], rss), max(peak[1], pss)
            time.sleep(0.25)  # reading /proc costs CPU the build would use

    watcher = threading.Thread(target=watch, daemon=True)
    if watch_memory:
        watcher.start()
    _stdout, stderr = proc.communicate()
    seconds = time.perf_counter() - start
    if watch_memory:
        watcher.join()
    if proc.returncode != 0:
        raise SystemExit(f"build failed ({proc.returncode}):\n{stderr[-3000:]}")
    m = SUMMARY.search(stderr)
    assert m, stderr[-2000:]
    pages, sheets, charts, drawn, cached, rewritten = (int(g) for g in m.groups())
    done = {"seconds": round(seconds, 3), "pages": pages, "charts": charts, "drawn": drawn,
            "cached": cached, "sheets_rendered": sheets, "rewritten": rewritten}
    if watch_memory:
        done.update(peak_rss_MB=round(peak[0] / 2**20, 1), peak_pss_MB=round(peak[1] / 2**20, 1))
    return done


def repeated(n: int, one) -> dict:
    """``one()`` (a run_build result) ``n`` times: the median run's figures, with every
    run's seconds; the machine's speed wanders, so one run alone says little."""
    runs = [one(i) for i in range(n)]
    runs.sort(key=lambda r: r["seconds"])
    return {**runs[len(runs) // 2], "runs_seconds": [r["seconds"] for r in runs]}


# --- the floor: the same charts by bare matplotlib -----------------------------------------


def _bare_draw(spec) -> int:
    """One chart of the same kind and content with plain matplotlib defaults."""
    import io

    from matplotlib.backends.backend_svg import FigureCanvasSVG
    from matplotlib.figure import Figure

    level = spec.kind in ("levels", "entropy_levels")
    fig = Figure(figsize=(6.4, 4.8 if level else 4.0), layout="constrained")
    FigureCanvasSVG(fig)
    ax = fig.add_subplot()
    if level:
        for lv in spec.levels:
            ax.plot([lv.column - 0.32, lv.column + 0.32], [lv.value, lv.value], color="k")
            ax.annotate(lv.label, (lv.column + 0.32, lv.value), ha="right", va="bottom")
        for arrow in spec.arrows:
            ax.annotate(arrow.label, (0, 0), xytext=(0.5, 0.5), arrowprops={"arrowstyle": "->"})
        ax.set_ylabel(spec.unit_label)
    else:
        if spec.kind == "gibbs":
            series = [(spec.T, spec.drH, spec.drH_label), (spec.T, spec.T_drS, spec.T_drS_label),
                      (spec.T, spec.drG, spec.drG_label)]
            shaded = spec.extrapolated
        elif spec.kind == "vant_hoff":
            series = [([1000.0 / t for t in spec.T], spec.log10_K, spec.series_label)]
            shaded = spec.extrapolated
        else:
            series = [(s.x, s.y, s.label) for s in spec.series]
            shaded = spec.shaded
        for rng in shaded:
            ax.axvspan(rng.x_min, rng.x_max, alpha=0.2, label=rng.label)
        for x, y, label in series:
            ax.plot(x, y, marker="o", markevery=0.11, label=label)
        ax.set_xlabel(spec.x_label)
        ax.set_ylabel(spec.y_label)
        ax.legend()
    ax.set_title(spec.title)
    buf = io.BytesIO()
    fig.savefig(buf, format="svg")
    return len(buf.getvalue())


def floor_seconds(specs: list, jobs: int) -> float:
    import multiprocessing

    start = time.perf_counter()
    ctx = multiprocessing.get_context("forkserver")
    with ctx.Pool(jobs) as pool:
        pool.map(_bare_draw, specs, chunksize=max(1, len(specs) // (8 * jobs)))
    return time.perf_counter() - start


def label_rendering(n: int = 12) -> dict:
    """Seconds per chart with plain Unicode labels and with math-text labels."""
    import io

    import matplotlib
    from matplotlib.backends.backend_svg import FigureCanvasSVG
    from matplotlib.figure import Figure

    labels = {"unicode": ("ΔrG° / (kJ mol⁻¹)", "H₂O(g) + CO₂(g)"),
              "mathtext": (r"$\Delta_r G^\circ$ / (kJ mol$^{-1}$)", r"H$_2$O(g) + CO$_2$(g)")}
    out = {}
    for name, (y_label, title) in labels.items():
        with matplotlib.rc_context({"text.parse_math": name == "mathtext",
                                    "svg.fonttype": "none"}):
            start = time.perf_counter()
            for i in range(n):
                fig = Figure(figsize=(6.4, 4.0), layout="constrained")
                FigureCanvasSVG(fig)
                ax = fig.add_subplot()
                ax.plot([300, 600, 900], [i, i + 1, i + 3], label=title)
                ax.set_title(title)
                ax.set_ylabel(y_label)
                ax.set_xlabel("T / K")
                ax.legend()
                fig.savefig(io.BytesIO(), format="svg")
            out[name] = round((time.perf_counter() - start) / n, 4)
    return out


# --- the generic generator -----------------------------------------------------------------


def mkdocs_site(n_pages: int, page_bytes: int, work: Path) -> Path | None:
    """A mkdocs project of ``n_pages`` markdown pages that grow into about ``page_bytes``
    of HTML each; None when mkdocs is not installed."""
    if shutil.which("mkdocs") is None:
        return None
    site = work / "mkdocs"
    docs = site / "docs"
    docs.mkdir(parents=True)
    (site / "mkdocs.yml").write_text("site_name: Bench\n", encoding="utf-8")
    para = ("Heat capacity, enthalpy and entropy values at the listed temperatures, with "
            "their sources and uncertainties. ")
    row = "| 500 | 35.2 | 6.9 | 206.5 | -123.4 |\n"
    for i in range(n_pages):
        text = f"# Page {i}\n\n" + para * 4 + "\n\n| T | Cp | H | S | G |\n|---|---|---|---|---|\n"
        while len(text) < page_bytes // 3:  # markdown grows about threefold into HTML
            text += row
        (docs / f"page-{i:05d}.md").write_text(text, encoding="utf-8")
    return site


def mkdocs_seconds(site: Path, run: int) -> float:
    """One mkdocs build of ``site`` into a fresh folder of its own (as each pages-only
    build gets one), so no run pays for emptying the one before."""
    quiet_disk()
    start = time.perf_counter()
    subprocess.run(["mkdocs", "build", "-q", "-f", str(site / "mkdocs.yml"), "-d",
                    str(site / f"site-{run}")], check=True, capture_output=True)
    return time.perf_counter() - start


# --- output figures ------------------------------------------------------------------------


def output_sizes(out: Path) -> dict:
    total = sum(p.stat().st_size for p in out.rglob("*") if p.is_file())
    sheets = []
    for page in (out / "species").glob("*.html"):
        text = page.read_text(encoding="utf-8")
        charts = set(re.findall(r'src="\.\./(charts/[0-9a-f]+\.svg)"', text))
        sheets.append(page.stat().st_size + sum((out / c).stat().st_size for c in charts))
    html = [p.stat().st_size for p in out.rglob("*.html")]
    return {"output_MB": round(total / 2**20, 1),
            "median_sheet_with_charts_KB": round(statistics.median(sheets) / 1024, 1),
            "median_page_KB": round(statistics.median(html) / 1024, 1), "html_pages": len(html)}


def engine_seconds(src: Path) -> dict:
    """1,000 species at 1,000 temperatures (Cp, H - H298, H, S, G, gef and the extrapolation
    flags): the batched evaluation (best of seven, plans built), its first call (plans
    built in it) and the same species one call each."""
    import numpy as np

    from generator.load import load_handbook
    from generator.thermo import species_props

    handbook, _ = load_handbook(src)
    species = list(handbook.species.values())
    species = (species * (1000 // len(species) + 1))[:1000]
    T = np.linspace(200.0, 3000.0, 1000)
    start = time.perf_counter()
    species_props.species_table(species, T)
    first = time.perf_counter() - start
    best = float("inf")
    for _ in range(7):
        start = time.perf_counter()
        species_props.species_table(species, T)
        best = min(best, time.perf_counter() - start)
    species_props.clear_memo()
    start = time.perf_counter()
    for sp in species:
        species_props.species_functions(sp, T)
    one_by_one = time.perf_counter() - start
    return {"batched": round(best, 4), "first_call": round(first, 4),
            "one_call_per_species": round(one_by_one, 4)}


def chart_specs(src: Path) -> list:
    import importlib

    from generator.compute import compute_handbook
    from generator.load import load_handbook

    publish = importlib.import_module("generator.site.publish")
    handbook, _ = load_handbook(src)
    _views, specs = publish.plan_charts(publish.chart_entries(compute_handbook(handbook)))
    return list(specs.values())


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--species", type=int, default=1000)
    ap.add_argument("--reactions", type=int, default=1000)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--jobs", type=int, default=os.cpu_count() or 1)
    ap.add_argument("--json", type=Path, default=None)
    ap.add_argument("--keep", type=Path, default=None, help="work folder to keep")
    ap.add_argument("--repeat", type=int, default=3,
                    help="runs of each rebuild measurement (the median is reported)")
    ap.add_argument("--stub-charts", action="store_true",
                    help="draw charts with a stand-in: measures every rebuild step but the "
                    "drawing, skips the cold build's floor, the label test and the sizes")
    args = ap.parse_args(argv)
    work = args.keep or Path(tempfile.mkdtemp(prefix="tf-bench-"))
    src, out, cache = work / "src", work / "out", work / "cache"
    made = generate(src, args.species, args.reactions, args.seed)
    r: dict = {"species": args.species, "reactions": args.reactions, "jobs": args.jobs,
               "cores": os.cpu_count(), "date": time.strftime("%Y-%m-%d")}
    stub = args.stub_charts
    r["stub_charts"] = stub
    compile_package()
    r["cold"] = run_build(src, out, cache, args.jobs, stub, watch_memory=True)
    if not stub:
        specs = chart_specs(src)
        r["floor_seconds"] = round(floor_seconds(specs, args.jobs), 3)
        r["cold_over_floor"] = round(r["cold"]["seconds"] / r["floor_seconds"], 3)
    r["no_change"] = repeated(args.repeat, lambda _i: run_build(src, out, cache, args.jobs,
                                                                stub))
    picks = sorted(made)

    def edit_one(i: int) -> dict:
        sid = picks[(len(picks) // 2 + 97 * i) % len(picks)]
        path = src / "species" / f"{sid}.yaml"
        text = path.read_text(encoding="utf-8")
        path.write_text(re.sub(r'dfH: "(-?[0-9.]+)',
                               lambda m: f'dfH: "{float(m.group(1)) + 1.5:.3f}', text, count=1),
                        encoding="utf-8")
        users = sum(1 for f in (src / "reactions").glob("*.yaml")
                    if "(g)" in f.read_text() and _uses(f.read_text(), made[sid]))
        return {**run_build(src, out, cache, args.jobs, stub), "species": sid,
                "reactions_using_it": users}

    r["edit_one_species"] = repeated(args.repeat, edit_one)

    def pages_only(i: int) -> dict:
        """A fresh output folder with the chart cache warm and nothing else cached: the
        results cache (computed numbers and rendered sheets) is set aside for the run, so
        every number is computed and every page rendered."""
        fresh = work / f"out-pages-{i}"
        kept = [cache / f"{DATABASE}{suffix}" for suffix in ("", "-wal", "-shm")]
        for path in kept:
            if path.exists():
                path.rename(path.with_name(path.name + ".aside"))
        try:
            return run_build(src, fresh, cache, args.jobs, stub)
        finally:
            for path in kept:
                path.unlink(missing_ok=True)
                aside = path.with_name(path.name + ".aside")
                if aside.exists():
                    aside.rename(path)

    # The pages-only builds and the generic generator's builds alternate, so that both
    # meet the same stretches of a machine whose speed wanders from minute to minute; each
    # figure is the median of its runs.
    r.update(output_sizes(out))
    site = mkdocs_site(r["html_pages"], int(r["median_page_KB"] * 1024), work)
    page_runs, mk_runs = [], []
    for i in range(args.repeat):
        page_runs.append(pages_only(i))
        if site is not None:
            mk_runs.append(round(mkdocs_seconds(site, i), 3))
    page_runs.sort(key=lambda run: run["seconds"])
    r["pages_only"] = {**page_runs[len(page_runs) // 2],
                       "runs_seconds": [run["seconds"] for run in page_runs]}
    mk = statistics.median(mk_runs) if mk_runs else None
    r["mkdocs_seconds"] = None if mk is None else round(mk, 3)
    r["mkdocs_runs_seconds"] = sorted(mk_runs)
    r["mkdocs_over_pages_only"] = None if mk is None else round(mk / r["pages_only"]["seconds"],
                                                                 2)
    r["engine_1000x1000_seconds"] = engine_seconds(src)
    r["label_seconds_per_chart"] = None if stub else label_rendering()
    _table(r)
    if args.json:
        args.json.write_text(json.dumps(r, indent=1) + "\n", encoding="utf-8")
    if args.keep is None:
        shutil.rmtree(work, ignore_errors=True)
    return 0


def _uses(equation_file: str, counts: dict) -> bool:
    from synthetic import formula

    return f" {formula(counts)}(g)" in equation_file or f'"{formula(counts)}(g)' in \
        equation_file


def _table(r: dict) -> None:
    rows = [
        ("cold full build", f"{r['cold']['seconds']:.1f} s ({r['cold']['charts']} charts, "
         f"{r['cold']['pages']} pages)"),
        ("floor (bare matplotlib, same charts)", f"{r.get('floor_seconds', 0):.1f} s"),
        ("cold / floor", f"{r.get('cold_over_floor', 0):.2f}"),
        ("no-change rebuild (median)", f"{r['no_change']['seconds']:.2f} s, "
         f"{r['no_change']['rewritten']} files rewritten"),
        ("edit one species' dfH (median)", f"{r['edit_one_species']['seconds']:.2f} s, "
         f"{r['edit_one_species']['rewritten']} files rewritten, "
         f"{r['edit_one_species']['drawn']} charts redrawn "
         f"({r['edit_one_species']['reactions_using_it']} reactions use it)"),
        ("pages-only build, charts cached (median)", f"{r['pages_only']['seconds']:.2f} s "
         f"(runs {r['pages_only']['runs_seconds']})"),
        ("generic generator, same page count (median)", "not installed"
         if r["mkdocs_seconds"] is None else f"{r['mkdocs_seconds']:.2f} s "
         f"(runs {r['mkdocs_runs_seconds']}; {r['mkdocs_over_pages_only']}x)"),
        ("peak memory (cold, process tree)", f"{r['cold']['peak_pss_MB']:.0f} MB PSS "
         f"({r['cold']['peak_rss_MB']:.0f} MB summed RSS)"),
        ("output size", f"{r['output_MB']} MB"),
        ("median sheet with its charts", f"{r['median_sheet_with_charts_KB']} KB"),
        ("engine, 1000 species x 1000 T", "{batched:.3f} s batched (first call {first_call:.3f}"
         " s, one call per species {one_call_per_species:.3f} s)".format(
             **r["engine_1000x1000_seconds"])),
        ("label rendering s/chart", json.dumps(r["label_seconds_per_chart"])),
    ]
    width = max(len(a) for a, _ in rows)
    print(f"thermofolio build benchmark: {r['species']} species + {r['reactions']} reactions, "
          f"{r['jobs']} jobs, {r['cores']} cores, {r['date']}")
    for a, b in rows:
        print(f"  {a:<{width}}  {b}")


if __name__ == "__main__":
    raise SystemExit(main())
