"""Writing the site: everything into a fresh temporary folder beside the output, then a swap.

``os.replace`` onto a non-empty folder fails, so the swap exchanges the two folders in one
atomic step (Linux ``renameat2(RENAME_EXCHANGE)``): at every instant the output is either
the complete previous site or the complete new one.  Where the exchange is not available
the swap falls back to two renames (old aside, new in), and the next build puts an
orphaned previous site back if a kill fell between them.  A folder is only ever replaced if
it is empty or carries the marker file a previous build wrote; the temporary folders a
killed build leaves beside the output are removed by the next build, and only those that
carry the marker (or are empty), so nothing else is ever deleted.

A file whose bytes equal the previous site's file is not rewritten: the old file is
hard-linked (or, across file systems, copied with its times) into the new tree, so its
modification time stays and mirrors copy only what changed.  A new file whose bytes a chart
cache entry already holds is hard-linked from that entry (creating thousands of files with
data costs far more than linking them on some file systems).  When nothing at all changed the
previous site is left exactly as it is and no swap happens.
"""

from __future__ import annotations

import ctypes
import ctypes.util
import errno
import functools
import os
import shutil
import stat
import tempfile
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path

MARKER = ".thermofolio-site"
MARKER_TEXT = (b"This folder was written by 'thermofolio build'. The next build replaces it "
               b"whole; do not keep other files here.\n")


def refusal(out: Path) -> str | None:
    """Why ``out`` must not be replaced, or None when it may be."""
    if not out.exists() and not out.is_symlink():
        return None
    if not out.is_dir() or out.is_symlink():
        return f"{out} exists and is not a folder; refusing to replace it"
    if any(out.iterdir()) and not (out / MARKER).is_file():
        return (f"{out} is not empty and was not written by thermofolio (no {MARKER} file); "
                "refusing to replace it — choose another folder with -o or empty it")
    return None


def _checked(rel: str) -> str:
    """``rel`` as a native relative path; refuses absolute paths, ``..``, ``.`` and empty
    parts (the site's paths are plain ``folder/name`` strings)."""
    parts = rel.split("/")
    if rel.startswith("/") or any(p in ("", ".", "..") for p in parts):
        raise ValueError(f"refusing to write outside the site: {rel!r}")
    return os.path.join(*parts)


@dataclass(frozen=True)
class WriteResult:
    """What a write did: files new or changed, files kept from the previous site, old files
    dropped, and whether the folder was swapped (False: nothing changed, nothing touched)."""

    rewritten: int
    kept: int
    removed: int
    swapped: bool


def _old_files(out: Path) -> dict[str, tuple[int, int, int]]:
    """Regular files of a previous marked site: site path -> (size, device, inode)."""
    if not (out / MARKER).is_file():
        return {}
    found: dict[str, tuple[int, int, int]] = {}
    for dirpath, _dirs, names in os.walk(out):
        rel_dir = os.path.relpath(dirpath, out)
        for name in names:
            st = os.lstat(os.path.join(dirpath, name))
            if stat.S_ISREG(st.st_mode):
                rel = name if rel_dir == "." else f"{rel_dir}/{name}".replace(os.sep, "/")
                found[rel] = (st.st_size, st.st_dev, st.st_ino)
    return found


def _is_file(path: str, dev_ino: tuple[int, int]) -> bool:
    """``path`` is the file (device, inode) ``dev_ino``: a hard link of it."""
    try:
        st = os.stat(path)
    except OSError:
        return False
    return (st.st_dev, st.st_ino) == dev_ino


def _same_bytes(path: str, data: bytes, size: int | None) -> bool:
    if size is None or size != len(data):
        return False
    try:
        with open(path, "rb") as fh:
            return fh.read() == data
    except OSError:
        return False


_AT_FDCWD = -100
_RENAME_EXCHANGE = 2


@functools.lru_cache(maxsize=1)
def _renameat2():
    try:
        libc = ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6", use_errno=True)
        fn = libc.renameat2
    except (OSError, AttributeError):
        return None
    fn.argtypes = [ctypes.c_int, ctypes.c_char_p, ctypes.c_int, ctypes.c_char_p, ctypes.c_uint]
    fn.restype = ctypes.c_int
    return fn


def _exchange(a: Path, b: Path) -> bool:
    """Swap two folders atomically; False when the platform or file system cannot."""
    fn = _renameat2()
    if fn is None:
        return False
    if fn(_AT_FDCWD, os.fsencode(a), _AT_FDCWD, os.fsencode(b), _RENAME_EXCHANGE) == 0:
        return True
    err = ctypes.get_errno()
    if err in (errno.ENOSYS, errno.EINVAL, errno.ENOTSUP, errno.EOPNOTSUPP, errno.EXDEV):
        return False
    raise OSError(err, os.strerror(err), str(b))


def _ours(folder: Path, name: str) -> bool:
    """A leftover temporary folder of a build of ``name``: empty, or marked."""
    try:
        entries = list(folder.iterdir())
    except OSError:
        return False
    return (not entries or (folder / MARKER).is_file()
            or (folder / name / MARKER).is_file() and len(entries) == 1)


def clean_leftovers(out: Path) -> None:
    """Put back a previous site a killed fallback swap left aside, then remove the
    temporary folders killed builds left beside ``out`` (only marked or empty ones)."""
    parent, name = out.parent, out.name
    if not parent.is_dir():
        return
    olds = sorted(parent.glob(f".{name}.old-*"))
    if not out.exists():
        for old in olds:
            if (old / name / MARKER).is_file():
                os.rename(old / name, out)
                break
    for leftover in sorted(parent.glob(f".{name}.new-*")) + olds:
        if leftover.is_dir() and not leftover.is_symlink() and _ours(leftover, name):
            shutil.rmtree(leftover, ignore_errors=True)


def write_site(out: Path, files: Mapping[str, bytes],
               sources: Mapping[str, str] | None = None) -> WriteResult:
    """Write ``files`` (site path -> bytes, plus the marker) as the folder ``out``, atomically
    as far as the file system allows; on any failure the previous site stays as it was.
    ``sources``: for some paths, a file already holding exactly their bytes (a chart cache
    entry), hard-linked into the new tree instead of written again."""
    out = Path(os.path.abspath(out))
    clean_leftovers(out)
    everything = {**files, MARKER: MARKER_TEXT}
    native = {rel: _checked(rel) for rel in everything}
    old = _old_files(out) if out.is_dir() else {}
    out_s = str(out)
    sources = sources or {}

    def unchanged(rel: str, data: bytes) -> bool:
        """The previous site's file holds ``data``: it is a link of the cache entry that
        holds them (checked when the entry was read), or its bytes are equal."""
        was = old.get(rel)
        if was is None or was[0] != len(data):
            return False
        if rel in sources and _is_file(sources[rel], was[1:]):
            return True
        return _same_bytes(os.path.join(out_s, native[rel]), data, was[0])

    same = {rel for rel, data in everything.items() if unchanged(rel, data)}
    removed = len(old.keys() - everything.keys())
    if len(same) == len(everything) and not removed:
        return WriteResult(rewritten=0, kept=len(same), removed=0, swapped=False)
    out.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.new-", dir=out.parent))
    # The marker goes first, so a killed build's folder is known to be ours.
    if MARKER in same:
        _keep(out / MARKER, tmp / MARKER)
    else:
        (tmp / MARKER).write_bytes(MARKER_TEXT)
    aside: Path | None = None
    new_mode = _new_file_mode()
    try:
        tmp_s = str(tmp)
        made: set[str] = {tmp_s}
        for rel in sorted(everything):
            if rel == MARKER:
                continue
            target = os.path.join(tmp_s, native[rel])
            parent = os.path.dirname(target)
            if parent not in made:
                os.makedirs(parent, exist_ok=True)
                made.add(parent)
            if rel in same:
                _keep(os.path.join(out_s, native[rel]), target)
            elif not (rel in sources and
                      _linked(sources[rel], target, everything[rel], new_mode)):
                Path(target).write_bytes(everything[rel])
        os.chmod(tmp, 0o755)
        if out.exists() and _exchange(tmp, out):
            shutil.rmtree(tmp, ignore_errors=True)  # tmp now holds the previous site
            return WriteResult(rewritten=len(everything) - len(same), kept=len(same),
                               removed=removed, swapped=True)
        if out.exists():
            aside = Path(tempfile.mkdtemp(prefix=f".{out.name}.old-", dir=out.parent))
            os.rename(out, aside / out.name)
        try:
            os.rename(tmp, out)
        except BaseException:
            if aside is not None:
                os.rename(aside / out.name, out)
            raise
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        if aside is not None and not any(aside.iterdir()):
            aside.rmdir()
        raise
    if aside is not None:
        shutil.rmtree(aside, ignore_errors=True)
    return WriteResult(rewritten=len(everything) - len(same), kept=len(same),
                       removed=removed, swapped=True)


def _new_file_mode() -> int:
    """The permission bits a file written now gets (0o666 less the umask), read from
    /proc where it can be: setting the umask to read it would race other threads (the
    preview server's)."""
    try:
        with open("/proc/self/status", encoding="ascii") as fh:
            mask = next(int(line.split()[1], 8) for line in fh if line.startswith("Umask:"))
    except (OSError, StopIteration, ValueError, IndexError):
        mask = os.umask(0o022)
        os.umask(mask)
    return 0o666 & ~mask


def _linked(source: str, target: str, data: bytes, mode: int) -> bool:
    """Hard-link ``source`` as ``target`` when it holds ``data``'s length and the permissions
    a written file would get; False (nothing made) otherwise or when linking fails (another
    file system, say).  The source's bytes were checked when it was read."""
    try:
        st = os.stat(source)
        if st.st_size != len(data) or stat.S_IMODE(st.st_mode) != mode:
            return False
        os.link(source, target)
    except OSError:
        return False
    return True


def _keep(old: str | Path, new: str | Path) -> None:
    """Put the previous site's unchanged file at ``new``, keeping its modification time."""
    try:
        os.link(old, new)
    except OSError:
        shutil.copy2(old, new)
