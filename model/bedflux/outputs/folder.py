"""Output folders you can trust: locked, checked before computing, replaced as a whole.

:func:`output_folder` wraps a command from its checks to its last file:

1. create the folder (it may be a mount point, its parent may be read-only) and lock it with
   ``flock`` on ``.bedflux-lock``; a second command into the same folder is refused;
2. finish or undo what a killed command left (hidden ``.bedflux-stage-*`` folders);
3. check the free space against the caller's estimate, before anything is computed;
4. yield a staging folder *inside* the output folder (same file system, so every move is a
   rename), where the command writes all its files;
5. commit: move the earlier output of the same verb (the files its manifest names) aside, move
   the new files in, and move the new ``VERB_manifest.json`` in last. That rename is the commit
   point; a failure before it puts everything back, and a kill before it leaves a journal that
   the next command into the folder uses to restore the earlier output.

Files that no manifest names (the user's own) are never touched.
"""
from __future__ import annotations

import errno
import json
import os
import shutil
import signal
import tempfile
import threading
from contextlib import contextmanager
from pathlib import Path
from typing import Iterator

from bedflux.outputs import manifest
from bedflux.errors import InputError

try:
    import fcntl
except ImportError:  # pragma: no cover - not POSIX: no lock
    fcntl = None

LOCK_NAME = ".bedflux-lock"
STAGE_PREFIX = ".bedflux-stage-"
#: Room kept for figures, tables and copies beside the estimated result (bytes).
FIGURE_ALLOWANCE = 1_000_000
_NO_SPACE = (errno.ENOSPC, errno.EDQUOT)


def size_text(n: float) -> str:
    """A byte count in words: ``12.3 MB``."""
    for unit, f in (("GB", 1e9), ("MB", 1e6), ("kB", 1e3)):
        if n >= f:
            return f"{n / f:.3g} {unit}"
    return f"{int(n)} bytes"


@contextmanager
def output_folder(outdir: str | os.PathLike, verb: str, need: int = 0, need_text: str = "") -> Iterator[Path]:
    """Lock and check ``outdir``, yield a staging folder, and commit it as ``verb``'s output.

    Parameters
    ----------
    outdir
        The output folder (created if missing).
    verb
        ``run``, ``field``, ``fit`` or ``plan``: whose earlier output is replaced.
    need
        Estimated bytes of the output; with :data:`FIGURE_ALLOWANCE` checked against the free
        space before the block runs.
    need_text
        How ``need`` was estimated, for messages.

    Raises
    ------
    InputError
        Naming the folder: it cannot be created or written, another command is writing into
        it, the output will not fit or the disk filled up while writing, or the earlier
        output could not be replaced (nothing changed then).
    """
    target = Path(outdir)
    created = _make_folder(target)
    lock = None
    stage = None
    committed = False
    try:
        lock = _lock(target)
        try:
            for v in manifest.VERBS:  # a damaged manifest is reported before the work, not after
                manifest.read(target, v)
            _recover(target)
            _check_space(target, need, need_text)
            stage = _new_stage(target, verb)
            yield stage / "new"
            _commit(target, stage, verb)
            committed = True
        except OSError as err:
            raise _folder_error(err, target, need, need_text) from None
    finally:
        if stage is not None:
            shutil.rmtree(stage, ignore_errors=True)
        if lock is not None:
            _unlock(target, lock)
        if not committed:
            for folder in created:
                try:
                    folder.rmdir()
                except OSError:
                    break


# --------------------------------------------------------------------------- before computing

def _make_folder(target: Path) -> list[Path]:
    """Create ``target`` and missing parents; return the folders created, deepest first."""
    if target.exists() and not target.is_dir():
        raise InputError("exists and is not a folder; choose another output folder (-o)", str(target))
    missing = [p for p in [target, *target.parents] if not p.exists()]
    try:
        target.mkdir(parents=True, exist_ok=True)
    except OSError as err:
        raise InputError(f"cannot create the output folder: {err.strerror}; choose another output folder (-o)",
                         str(target)) from None
    return missing


def _lock(target: Path) -> int:
    """Take the folder's lock (``flock`` on ``.bedflux-lock``); refuse when another command holds it."""
    path = target / LOCK_NAME
    while True:
        try:
            fd = os.open(path, os.O_RDWR | os.O_CREAT, 0o644)
        except OSError as err:
            raise InputError(f"cannot write into the output folder: {err.strerror}; choose another output "
                             "folder (-o)", str(target)) from None
        if fcntl is None:
            return fd
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError:
            holder = os.read(fd, 200).decode("utf-8", "replace").strip() or "another process"
            os.close(fd)
            raise InputError(f"another bedflux command is writing into this folder ({holder}); wait until it "
                             "has finished or choose another output folder (-o)", str(target)) from None
        try:
            same = os.path.samestat(os.fstat(fd), os.stat(path))
        except FileNotFoundError:
            same = False
        if same:  # not a lock file that its holder removed meanwhile
            os.ftruncate(fd, 0)
            os.write(fd, f"process {os.getpid()}\n".encode())
            return fd
        os.close(fd)


def _unlock(target: Path, fd: int) -> None:
    try:
        os.unlink(target / LOCK_NAME)
    except OSError:
        pass
    os.close(fd)


def _check_space(target: Path, need: int, need_text: str) -> None:
    if need <= 0:
        return
    free = shutil.disk_usage(target).free
    if need + FIGURE_ALLOWANCE > free:
        how = f" ({need_text})" if need_text else ""
        raise InputError(f"not enough free space: the outputs need about {size_text(need)}{how} plus "
                         f"{size_text(FIGURE_ALLOWANCE)} for figures, but only {size_text(free)} are free; "
                         "free some space, coarsen the grid or output times, or choose another output folder (-o)",
                         str(target))


def _new_stage(target: Path, verb: str) -> Path:
    stage = Path(tempfile.mkdtemp(prefix=f"{STAGE_PREFIX}{verb}-", dir=target))
    (stage / "new").mkdir()
    (stage / "old").mkdir()
    return stage


def _folder_error(err: OSError, target: Path, need: int, need_text: str) -> Exception:
    """An OSError met while staging or committing, as a message naming the folder."""
    if err.errno in _NO_SPACE:
        free = shutil.disk_usage(target).free
        est = f"; the outputs need about {size_text(need)} ({need_text}) plus figures" if need else ""
        return InputError(f"the disk is full: no space left while writing the outputs{est}; "
                          f"{size_text(free)} free now; free some space or choose another output folder (-o). "
                          "The earlier outputs in the folder are unchanged", str(target))
    inside = err.filename is None or Path(os.path.abspath(err.filename)).is_relative_to(target.absolute())
    if err.errno == errno.EROFS or (err.errno in (errno.EACCES, errno.EPERM) and inside):
        where = f" ({err.filename})" if err.filename else ""
        return InputError(f"cannot write the outputs{where}: {err.strerror}; the earlier outputs in the folder "
                          "are unchanged; choose another output folder (-o)", str(target))
    return err


# --------------------------------------------------------------------------- commit

def _journal(stage: Path) -> Path:
    return stage / "journal.json"


def _commit(target: Path, stage: Path, verb: str) -> None:
    """Replace ``verb``'s earlier output in ``target`` by the files staged in ``stage/new``."""
    new = stage / "new"
    name = manifest.manifest_name(verb)
    files_new = [f for f in manifest.files_under(new) if f not in {manifest.manifest_name(v) for v in manifest.VERBS}]
    bad = [f for f in files_new if not manifest.safe_relative(f)]
    if bad:
        raise RuntimeError(f"bedflux wrote an output with a hidden or unsafe name: {bad[0]}")
    files_old = manifest.listed(target, verb)
    others = {f: v for v in manifest.VERBS if v != verb for f in manifest.listed(target, v)}
    clash = [f for f in files_new if f in others]
    if clash:
        raise InputError(f"bedflux {verb} would replace {clash[0]}, an output of bedflux {others[clash[0]]} in "
                         "this folder; give each command its own output folder (-o)", str(target))
    root = target.resolve()
    for rel in files_old + files_new:
        if not (target / rel).parent.resolve().is_relative_to(root):
            raise InputError(f"{rel} would be written outside the folder through a linked folder; remove the "
                             "link or choose another output folder (-o)", str(target))
    (stage / name).write_text(json.dumps(manifest.build(new, verb, files_new), indent=2) + "\n", encoding="utf-8")
    _journal(stage).write_text(json.dumps({"verb": verb, "old": files_old, "new": files_new}) + "\n",
                               encoding="utf-8")
    moved_old: list[str] = []
    moved_new: list[str] = []
    made: list[Path] = []
    with _signals_held():
        try:
            if (target / name).exists():
                os.replace(target / name, stage / "old" / name)
                moved_old.append(name)
            for rel in sorted(set(files_old) | set(files_new)):
                src = target / rel
                if src.is_symlink() or src.is_file():
                    dst = stage / "old" / rel
                    dst.parent.mkdir(parents=True, exist_ok=True)
                    os.replace(src, dst)
                    moved_old.append(rel)
            for rel in files_new:
                dst = target / rel
                _make_parents(dst.parent, target, made)
                os.replace(new / rel, dst)
                moved_new.append(rel)
            os.replace(stage / name, target / name)  # the commit point
        except BaseException as err:
            _undo(target, stage, moved_new, moved_old, made)
            if isinstance(err, OSError) and err.errno not in _NO_SPACE:
                where = f" ({err.filename})" if err.filename else ""
                raise InputError(f"could not replace the earlier outputs{where}: {err.strerror}; the earlier "
                                 "outputs in the folder are unchanged; choose another output folder (-o)",
                                 str(target)) from None
            raise
    _remove_empty_parents(target, files_old)


def _make_parents(folder: Path, target: Path, made: list[Path]) -> None:
    missing = [p for p in [folder, *folder.parents] if p != target and p.is_relative_to(target) and not p.exists()]
    for p in reversed(missing):
        p.mkdir()
        made.append(p)


def _undo(target: Path, stage: Path, moved_new: list[str], moved_old: list[str], made: list[Path]) -> None:
    """Put the earlier output back after a failed commit."""
    for rel in reversed(moved_new):
        try:
            os.replace(target / rel, stage / "new" / rel)
        except OSError:
            pass
    for rel in reversed(moved_old):
        try:
            os.replace(stage / "old" / rel, target / rel)
        except OSError:
            pass
    for p in reversed(made):
        try:
            p.rmdir()
        except OSError:
            pass


def _remove_empty_parents(target: Path, files: list[str]) -> None:
    """Remove folders of the earlier output left empty (``inputs/`` of a replaced run)."""
    folders = {p for f in files for p in (target / f).parents if p != target and p.is_relative_to(target)}
    for p in sorted(folders, key=lambda q: len(q.parts), reverse=True):
        try:
            p.rmdir()
        except OSError:
            pass


def _recover(target: Path) -> None:
    """Deal with staging folders that killed commands left (the lock is held, so none is live).

    Without a journal the command was killed before its commit: its folder is removed. With a
    journal and the new manifest still staged, the commit was cut short: the earlier output is
    put back. With the manifest already moved, the commit had finished: the leftovers go.
    """
    for stage in sorted(target.glob(STAGE_PREFIX + "*")):
        if not stage.is_dir() or stage.is_symlink():
            continue
        try:
            journal = json.loads(_journal(stage).read_text(encoding="utf-8"))
        except (OSError, ValueError):
            journal = None
        if isinstance(journal, dict) and journal.get("verb") in manifest.VERBS:
            name = manifest.manifest_name(journal["verb"])
            if (stage / name).exists():
                _roll_back(target, stage, journal)
        shutil.rmtree(stage, ignore_errors=True)


def _roll_back(target: Path, stage: Path, journal: dict) -> None:
    for rel in journal.get("new") or []:
        if manifest.safe_relative(rel) and not (stage / "new" / rel).exists():
            try:
                (target / rel).unlink()
            except OSError:
                pass
    old = stage / "old"
    for rel in manifest.files_under(old):
        dst = target / rel
        dst.parent.mkdir(parents=True, exist_ok=True)
        os.replace(old / rel, dst)
    _remove_empty_parents(target, [r for r in journal.get("new") or [] if manifest.safe_relative(r)])


# --------------------------------------------------------------------------- signals

@contextmanager
def _signals_held() -> Iterator[None]:
    """Hold Ctrl-C and SIGTERM while the files are switched; act on them right after."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    caught: list[int] = []
    sigs = (signal.SIGINT, signal.SIGTERM)
    before = {s: signal.signal(s, lambda signum, frame: caught.append(signum)) for s in sigs}
    try:
        yield
    finally:
        for s, handler in before.items():
            signal.signal(s, handler)
        for s in caught[:1]:
            handler = before[s]
            if callable(handler):
                handler(s, None)
            elif handler == signal.SIG_DFL:
                os.kill(os.getpid(), s)
