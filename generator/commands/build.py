"""``thermofolio build``: check the sources and publish the handbook site."""

from __future__ import annotations

import argparse
import hashlib
import json
import os
import stat
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from generator.caution import CAUTION
from generator.diagnostics import Severity, sort_findings, summary_line


def _jobs(text: str) -> int:
    try:
        n = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"not a whole number: {text!r}") from None
    if n < 1:
        raise argparse.ArgumentTypeError("must be at least 1")
    return n


def register(sub) -> None:
    p = sub.add_parser("build", help="check the sources and build the handbook site",
                       description="Read SOURCES, check them and write the site to OUT.")
    p.add_argument("sources", nargs="?", default="sources", help="handbook folder "
                   "(default: sources)")
    p.add_argument("-o", "--output", default="out", help="site folder (default: out)")
    p.add_argument("-q", "--quiet", action="store_true", help="print only problems")
    p.add_argument("-j", "--jobs", type=_jobs, default=None, metavar="N",
                   help="processes computing reactions, rendering sheets and drawing charts "
                   "(default: the number of cores)")
    p.add_argument("--cache", default=None, metavar="DIR",
                   help="cache folder for charts and per-item results (default: "
                   ".thermofolio-cache beside SOURCES)")
    p.add_argument("--no-cache", action="store_true",
                   help="draw every chart and compute and render everything; neither read "
                   "nor write the chart and results caches")
    p.add_argument("--since", default=None, metavar="REV",
                   help="add a page of the changes since git revision REV of the sources")
    p.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    return build_site(Path(args.sources), Path(args.output), quiet=args.quiet, args=args)


def build_site(sources: Path, output: Path, quiet: bool = False,
               args: argparse.Namespace | None = None) -> int:
    """Check the sources and publish the site; problems go to stderr; the exit code.

    generator.pipeline.load_and_compute loads and computes once; the computed handbook goes
    on to the publisher."""
    start = time.perf_counter()
    if args is None:
        args = argparse.Namespace(sources=str(sources), output=str(output), quiet=quiet)
    stamp = build_stamp(sources, args)
    if stamp is not None:
        from generator.site import output as site_output

        site_output.clean_leftovers(Path(os.path.abspath(output)))
        record = up_to_date(sources, output, args, stamp)
        if record is not None:
            _report_up_to_date(record, output, quiet, start)
            return 0
    from generator.parallel import default_jobs
    from generator.pipeline import load_and_compute
    from generator.site.publish import results_cache_for

    jobs = int(getattr(args, "jobs", 0) or default_jobs())
    results = results_cache_for(args, sources)
    handbook, computed, findings = load_and_compute(sources, jobs, results)
    findings = sort_findings(findings)
    for f in findings:
        if not quiet or f.severity is Severity.ERROR:
            print(f.format(), file=sys.stderr)
    if handbook is None or any(f.severity is Severity.ERROR for f in findings):
        print(f"thermofolio build: {summary_line(findings)}; nothing written", file=sys.stderr)
        return 1
    if getattr(args, "since", None):
        from generator.site.since import SinceError, diff_since

        try:
            args.since_diff = diff_since(sources, args.since)
        except SinceError as exc:
            print(f"thermofolio build: {exc}; nothing written", file=sys.stderr)
            return 2
    from generator.site import publish

    code = publish(handbook, findings, output, args, start, computed=computed)
    record = getattr(args, "build_record", None)
    if code == 0 and stamp is not None and record is not None:
        record["findings"] = [[f.severity.name, f.format()] for f in findings]
        save_record(sources, output, args, stamp, record)
    return code


# --- the whole-build stamp -----------------------------------------------------------------
# A sha256 (FIPS 180-4) over everything that can change the site's bytes: every source file
# (path and bytes), the build date's inputs, the source revision, the package's own code and
# templates, the library versions it renders with, and the options that change output.  It
# is kept in the chart cache folder (never in the site, whose bytes it must not change) with
# the size, modification time and inode of every file the build left in the output folder.
# A build whose stamp matches and whose output folder still holds exactly those files does
# nothing and reports the site up to date.

STAMP_FOLDER = "stamps"
_PATCHABLE_OK = frozenset({"render_many"})  # a stand-in drawer salts the stamp instead


def _git_heads(root: Path) -> str:
    """Full and short HEAD of the sources' repository, and the folder's place in it."""
    try:
        done = subprocess.run(["git", "-C", str(root), "rev-parse", "HEAD", "--short", "HEAD",
                               "--show-prefix"], capture_output=True, text=True, timeout=10,
                              check=False)
    except (OSError, subprocess.SubprocessError):
        return "no git"
    return f"{done.returncode}\n{done.stdout}"


def _publish_renderer() -> str | None:
    """"" for the package's own publisher, a stand-in drawer's name, or None when any other
    step of the publisher was replaced in this process (then no stamp is trusted)."""
    mod = sys.modules.get("generator.site.publish")
    if mod is None:
        return ""
    originals = getattr(mod, "_ORIGINALS", None)
    if originals is None:
        return None
    if any(getattr(mod, k, None) is not v for k, v in originals.items()
           if k not in _PATCHABLE_OK):
        return None
    return mod._renderer_name()


def build_stamp(sources: Path, args: argparse.Namespace) -> str | None:
    """The stamp of building ``sources`` with ``args``, or None when no stamp applies
    (``--no-cache``, ``--since``, or a replaced publishing step)."""
    if getattr(args, "no_cache", False) or getattr(args, "since", None):
        return None
    renderer = _publish_renderer()
    if renderer is None:
        return None
    from generator.results_cache import code_identity, tree_digest

    h = hashlib.sha256(b"thermofolio build stamp 2\0")
    h.update(f"{code_identity()}\0{renderer}\0".encode())
    root = Path(os.path.abspath(sources))
    # Pages show source paths relative to the working folder when inside it
    # (generator.load.display_path), however the sources were named.
    h.update(f"\0sources\0{root}\0{sources}\0{os.getcwd()}\0".encode())
    newest = tree_digest(h, root, skip_hidden=True)
    epoch = os.environ.get("SOURCE_DATE_EPOCH", "").strip()
    h.update(f"\0date\0{epoch}\0{'' if epoch.isdigit() else repr(newest)}\0".encode())
    h.update(f"\0git\0{_git_heads(root)}\0".encode())
    return h.hexdigest()


def _cache_folder(sources: Path, args: argparse.Namespace) -> Path:
    from generator.site.chart_cache import default_folder

    folder = getattr(args, "cache", None)
    return Path(folder) if folder else default_folder(sources)


def _record_path(sources: Path, output: Path, args: argparse.Namespace) -> Path:
    key = hashlib.sha256(os.path.abspath(output).encode()).hexdigest()[:32]
    return _cache_folder(sources, args) / STAMP_FOLDER / f"{key}.json"


def output_state(output: Path) -> dict[str, list[int]]:
    """Every regular file under ``output``: site path -> [size, mtime_ns, inode]."""
    found: dict[str, list[int]] = {}
    base = os.path.abspath(output)
    for dirpath, _dirs, names in os.walk(base):
        rel_dir = os.path.relpath(dirpath, base)
        for name in names:
            st = os.lstat(os.path.join(dirpath, name))
            rel = name if rel_dir == "." else f"{rel_dir}/{name}".replace(os.sep, "/")
            if stat.S_ISREG(st.st_mode):
                found[rel] = [st.st_size, st.st_mtime_ns, st.st_ino]
            else:
                found[rel] = [-1, -1, -1]
    return found


def up_to_date(sources: Path, output: Path, args: argparse.Namespace,
               stamp: str) -> dict | None:
    """The stored record when the last build into ``output`` had ``stamp`` and left the
    folder exactly as it is now; else None."""
    path = _record_path(sources, output, args)
    try:
        record = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    if not isinstance(record, dict) or record.get("stamp") != stamp:
        return None
    if not os.path.isdir(output) or output_state(output) != record.get("files"):
        return None
    if _entries_state(record.get("cache_entries", [])) != record.get("cache_state"):
        return None  # a chart cache entry changed or went: let the build check and redraw it
    return record


def _entries_state(paths: list[str]) -> list[list[int]]:
    out = []
    for path in paths:
        try:
            st = os.stat(path)
        except OSError:
            out.append([-1, -1])
            continue
        out.append([st.st_size, st.st_mtime_ns])
    return out


def save_record(sources: Path, output: Path, args: argparse.Namespace, stamp: str,
                record: dict) -> None:
    """Store the stamp with the output folder's state (the writer's account of it, else read
    from the folder); a failure only costs a rebuild."""
    path = _record_path(sources, output, args)
    state = record.get("files")
    doc = {**record, "stamp": stamp,
           "files": output_state(output) if state is None else state,
           "cache_state": _entries_state(record.get("cache_entries", []))}
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(prefix=".stamp-", dir=path.parent)
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            fh.write(json.dumps(doc, sort_keys=True, separators=(",", ":")))  # C encoder
        os.replace(tmp, path)
    except OSError:
        return


def _report_up_to_date(record: dict, output: Path, quiet: bool, start: float) -> None:
    for severity, text in record.get("findings", []):
        if not quiet or severity == Severity.ERROR.name:
            print(text, file=sys.stderr)
    if quiet:
        return
    elapsed = time.perf_counter() - start
    n = len(record["files"])
    print(f"thermofolio build: up to date: {record['pages']} pages, 0 of "
          f"{record.get('sheets', 0)} sheets rendered, {record['charts']} charts "
          f"(0 drawn, {record['charts']} cached), 0 files rewritten, {n} unchanged, "
          f"{record['warnings']} warnings, {elapsed:.1f} s -> {output}", file=sys.stderr)
    print(f"CAUTION: {record['caution']}", file=sys.stderr)


def print_caution() -> None:
    print(f"CAUTION: {CAUTION}", file=sys.stderr)
