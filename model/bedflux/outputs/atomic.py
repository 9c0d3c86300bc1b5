"""Write output files atomically: into a temporary file beside the target, then rename.

A reader never sees a half-written file, and a run that fails leaves nothing behind. Whole
output folders are staged and committed by :mod:`bedflux.outputs.folder`.
"""
from __future__ import annotations

import os
import tempfile
from contextlib import contextmanager
from pathlib import Path
from typing import Callable, Iterator


@contextmanager
def atomic_path(target: str | os.PathLike) -> Iterator[Path]:
    """Yield a temporary path; on success it replaces ``target``, on error it is removed."""
    target = Path(target)
    target.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=target.suffix, dir=target.parent)
    os.close(fd)
    # mkstemp makes the file owner-only; outputs get the usual permissions of new files
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(tmp, 0o666 & ~umask)
    tmp_path = Path(tmp)
    try:
        yield tmp_path
        os.replace(tmp_path, target)
    finally:
        if tmp_path.exists():
            tmp_path.unlink()


def write_text(target: str | os.PathLike, text: str) -> None:
    """Write a text file atomically."""
    with atomic_path(target) as tmp:
        tmp.write_text(text, encoding="utf-8")


def write_with(target: str | os.PathLike, writer: Callable[[Path], None]) -> None:
    """Call ``writer(tmp_path)`` and move the result onto ``target`` atomically."""
    with atomic_path(target) as tmp:
        writer(tmp)
