"""Writing the site: everything into a fresh temporary folder beside the output, then a swap.

``os.replace`` onto a non-empty folder fails, so the swap is: rename the old site aside,
rename the new one into place, delete the old.  A folder is only ever replaced if it is
empty or carries the marker file a previous build wrote.
"""

from __future__ import annotations

import os
import shutil
import tempfile
from collections.abc import Mapping
from pathlib import Path, PurePosixPath

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


def _checked(rel: str) -> PurePosixPath:
    path = PurePosixPath(rel)
    if path.is_absolute() or ".." in path.parts or not path.parts:
        raise ValueError(f"refusing to write outside the site: {rel!r}")
    return path


def write_site(out: Path, files: Mapping[str, bytes]) -> None:
    """Write ``files`` (site path -> bytes, plus the marker) as the folder ``out``, atomically
    as far as the file system allows; on any failure the previous site stays as it was."""
    out = Path(os.path.abspath(out))
    out.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.new-", dir=out.parent))
    aside: Path | None = None
    try:
        for rel in sorted({**files, MARKER: MARKER_TEXT}):
            target = tmp.joinpath(*_checked(rel).parts)
            target.parent.mkdir(parents=True, exist_ok=True)
            target.write_bytes(MARKER_TEXT if rel == MARKER else files[rel])
        os.chmod(tmp, 0o755)
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
