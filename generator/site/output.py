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
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
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
    # Every file the site holds afterwards: site path -> [size, mtime in ns, inode], as
    # commands.build.output_state would read them (the build record keeps this).
    state: Mapping[str, list[int]] | None = field(default=None, compare=False, repr=False)


def _old_files(out: Path) -> dict[str, tuple[int, int, int, int]]:
    """Regular files of a previous marked site: site path -> (size, device, inode,
    modification time in ns)."""
    if not (out / MARKER).is_file():
        return {}
    found: dict[str, tuple[int, int, int]] = {}
    for dirpath, _dirs, names in os.walk(out):
        rel_dir = os.path.relpath(dirpath, out)
        for name in names:
            st = os.lstat(os.path.join(dirpath, name))
            if stat.S_ISREG(st.st_mode):
                rel = name if rel_dir == "." else f"{rel_dir}/{name}".replace(os.sep, "/")
                found[rel] = (st.st_size, st.st_dev, st.st_ino, st.st_mtime_ns)
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
    staging = Staging(out)
    try:
        staging.add(files, sources)
        return staging.commit()
    finally:
        staging.abort()  # after a commit: nothing left to remove


class Staging:
    """A site written in parts: ``add`` files (as often as needed, each path once), then
    ``commit`` swaps the complete new tree in (write_site's rules), or ``abort`` drops it.
    The temporary folder is made only once a file differs from the previous site's, so a
    build that changes nothing touches nothing, unless ``open`` makes it at once for worker
    processes to ``place`` files in (the parent takes them with ``placed``; a folder that
    then holds nothing new is removed, not swapped in).  The marker is always part of the
    site."""

    def __init__(self, out: Path) -> None:
        self.out = Path(os.path.abspath(out))
        clean_leftovers(self.out)
        self._old = _old_files(self.out) if self.out.is_dir() else {}
        self._out_s = str(self.out)
        self._tmp: Path | None = None
        self._made: set[str] = set()
        self._kept_later: list[tuple[str, str]] = []  # unchanged files, before the folder
        self._paths: set[str] = set()
        self._same = 0
        self._state: dict[str, list[int]] = {}
        self._mode = _new_file_mode()
        self._done = False
        self.add({MARKER: MARKER_TEXT})

    def add(self, files: Mapping[str, bytes], sources: Mapping[str, str] | None = None
            ) -> None:
        """Put ``files`` (site path -> bytes) into the new tree; ``sources`` as write_site's."""
        self._usable()
        sources = sources or {}
        for rel in sorted(files):
            self._claim(rel)
            self._same += self._put(rel, files[rel], sources.get(rel))

    def open(self) -> None:
        """Make the temporary folder now, so processes forked after this can ``place``
        files in it."""
        self._usable()
        self._folder()

    def place(self, files: Mapping[str, bytes], sources: Mapping[str, str] | None = None,
              shared: bool = False) -> list[tuple[str, bool, list[int]]]:
        """Put ``files`` into the open folder, from this process or one forked after
        ``open`` (a worker, which needs no bytes sent back); what it returns goes to
        ``placed`` in the process that commits.  ``sources`` as write_site's.  ``shared``:
        several processes may put the same paths (content-addressed charts, whose path
        names their bytes), so each file is created exclusively and a path another process
        has made already is left out of the result (its maker reports it)."""
        if self._tmp is None:
            raise RuntimeError("place() needs an open() folder")
        sources = sources or {}
        out = []
        for rel in sorted(files):
            try:
                kept = self._put(rel, files[rel], sources.get(rel), shared)
            except FileExistsError:
                if not shared:
                    raise
                continue
            out.append((rel, kept, self._state[rel]))
        return out

    def placed(self, placements: Sequence[tuple[str, bool, list[int]]]) -> None:
        """Take the files ``place`` put (site path, kept from the previous site, state)."""
        self._usable()
        for rel, kept, state in placements:
            self._claim(rel)
            self._same += kept
            self._state[rel] = state

    def _usable(self) -> None:
        if self._done:
            raise RuntimeError("this site has been committed or aborted")

    def _claim(self, rel: str) -> None:
        if rel in self._paths:
            raise ValueError(f"{rel!r} is already part of this site")
        self._paths.add(rel)

    def _put(self, rel: str, data: bytes, source: str | None, exclusive: bool = False
             ) -> bool:
        """Put one file into the new tree; True when it is the previous site's, kept.
        ``exclusive``: FileExistsError when the path exists already (nothing is changed)."""
        native = _checked(rel)
        if self._unchanged(rel, native, data, source):
            if self._tmp is None:
                self._kept_later.append((rel, native))
            else:
                self._keep(rel, native, exclusive)
            return True
        self._folder()
        if rel == MARKER:
            return False  # the folder's first file, written by _folder
        target = self._target(native)
        if not (source is not None and _linked(source, target, data, self._mode, exclusive)):
            _write_file(target, data, exclusive)
        self._note(rel, target)
        return False

    def _keep(self, rel: str, native: str, exclusive: bool = False) -> None:
        """Put the previous site's file into the new tree (the same file, when linked)."""
        target = self._target(native)
        if _keep(os.path.join(self._out_s, native), target, exclusive):
            size, _dev, ino, mtime = self._old[rel]
            self._state[rel] = [size, mtime, ino]
        else:
            self._note(rel, target)

    def _note(self, rel: str, path: str) -> None:
        st = os.lstat(path)
        self._state[rel] = [st.st_size, st.st_mtime_ns, st.st_ino]

    def _unchanged(self, rel: str, native: str, data: bytes, source: str | None) -> bool:
        """The previous site's file holds ``data``: it is a link of the cache entry that
        holds them (checked when the entry was read), or its bytes are equal."""
        was = self._old.get(rel)
        if was is None or was[0] != len(data):
            return False
        if source is not None and _is_file(source, was[1:3]):
            return True
        return _same_bytes(os.path.join(self._out_s, native), data, was[0])

    def _folder(self) -> None:
        """Make the temporary folder (the marker first, so a killed build's folder is known
        to be ours) and put the unchanged files met so far into it."""
        if self._tmp is not None:
            return
        self.out.parent.mkdir(parents=True, exist_ok=True)
        self._tmp = Path(tempfile.mkdtemp(prefix=f".{self.out.name}.new-", dir=self.out.parent))
        self._made = {str(self._tmp)}
        kept, self._kept_later = self._kept_later, []
        if (MARKER, MARKER) not in kept:
            (self._tmp / MARKER).write_bytes(MARKER_TEXT)  # the previous one differed
            self._note(MARKER, str(self._tmp / MARKER))
        for rel, native in sorted(kept, key=lambda k: k[0] != MARKER):
            self._keep(rel, native)

    def _target(self, native: str) -> str:
        assert self._tmp is not None
        target = os.path.join(str(self._tmp), native)
        parent = os.path.dirname(target)
        if parent not in self._made:
            os.makedirs(parent, exist_ok=True)
            self._made.add(parent)
        return target

    def commit(self) -> WriteResult:
        """Swap the new tree in; nothing is touched when every file is unchanged and none
        of the previous site's files is gone."""
        if self._done:
            raise RuntimeError("this site has been committed or aborted")
        self._done = True
        removed = len(self._old.keys() - self._paths)
        if self._same == len(self._paths) and not removed:
            state = {rel: [size, mtime, ino] for rel, (size, _dev, ino, mtime)
                     in self._old.items()}
            self.abort()  # an open folder that holds nothing new
            return WriteResult(rewritten=0, kept=self._same, removed=0, swapped=False,
                               state=state)
        self._folder()
        result = WriteResult(rewritten=len(self._paths) - self._same, kept=self._same,
                             removed=removed, swapped=True, state=self._state)
        tmp, out = self._tmp, self.out
        assert tmp is not None
        aside: Path | None = None
        try:
            os.chmod(tmp, 0o755)
            if out.exists() and _exchange(tmp, out):
                shutil.rmtree(tmp, ignore_errors=True)  # tmp now holds the previous site
                self._tmp = None
                return result
            if out.exists():
                aside = Path(tempfile.mkdtemp(prefix=f".{out.name}.old-", dir=out.parent))
                os.rename(out, aside / out.name)
            try:
                os.rename(tmp, out)
            except BaseException:
                if aside is not None:
                    os.rename(aside / out.name, out)
                raise
            self._tmp = None
        except BaseException:
            if aside is not None and not any(aside.iterdir()):
                aside.rmdir()
            raise
        if aside is not None:
            shutil.rmtree(aside, ignore_errors=True)
        return result

    def abort(self) -> None:
        """Drop the new tree (if any); the previous site stays as it was."""
        self._done = True
        if self._tmp is not None:
            shutil.rmtree(self._tmp, ignore_errors=True)
            self._tmp = None


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


_WRITE = os.O_WRONLY | os.O_CREAT | getattr(os, "O_CLOEXEC", 0) | getattr(os, "O_BINARY", 0)


def _write_file(target: str, data: bytes, exclusive: bool = False) -> None:
    """``data`` as the file ``target`` (made with 0o666 less the umask, as ``open`` makes
    it), by the system calls alone: a site is thousands of small files, and ``open``'s
    buffered file object cost about as much again as the writing.  ``exclusive``: a
    ``target`` that exists already raises FileExistsError."""
    fd = os.open(target, _WRITE | (os.O_EXCL if exclusive else os.O_TRUNC), 0o666)
    try:
        view = memoryview(data)
        while view:
            view = view[os.write(fd, view):]
    finally:
        os.close(fd)


def _linked(source: str, target: str, data: bytes, mode: int, exclusive: bool = False
            ) -> bool:
    """Hard-link ``source`` as ``target`` when it holds ``data``'s length and the permissions
    a written file would get; False (nothing made) otherwise or when linking fails (another
    file system, say).  The source's bytes were checked when it was read.  ``exclusive``:
    a ``target`` that exists already raises FileExistsError."""
    try:
        st = os.stat(source)
        if st.st_size != len(data) or stat.S_IMODE(st.st_mode) != mode:
            return False
        os.link(source, target)
    except FileExistsError:
        if exclusive:
            raise
        return False
    except OSError:
        return False
    return True


def _keep(old: str | Path, new: str | Path, exclusive: bool = False) -> bool:
    """Put the previous site's unchanged file at ``new``, keeping its modification time;
    True when it is the same file (a hard link), False for a copy.  ``exclusive``: a
    ``new`` that exists already raises FileExistsError."""
    try:
        os.link(old, new)
    except FileExistsError:
        if exclusive:
            raise
        shutil.copy2(old, new)
        return False
    except OSError:
        if exclusive:
            with open(old, "rb") as src, open(new, "xb") as dst:
                shutil.copyfileobj(src, dst)
            shutil.copystat(old, new)
        else:
            shutil.copy2(old, new)
        return False
    return True
