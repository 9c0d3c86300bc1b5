"""The manifest of an output: the list of every file one command wrote, with sizes and hashes.

``bedflux run``, ``field``, ``fit`` and ``plan`` each write ``VERB_manifest.json`` into their
output folder as the last step of a commit (:mod:`bedflux.outputs.folder`). It names every file of that
output; a later command of the same verb replaces exactly those files, and the report trusts
only files the manifest names and whose content still matches it.
"""
from __future__ import annotations

import hashlib
import json
import os
import stat
from datetime import datetime, timezone
from pathlib import Path, PurePosixPath
from typing import Any

from bedflux.version import __version__
from bedflux.errors import InputError

#: The commands that write an output folder.
VERBS = ("run", "field", "fit", "plan", "ensemble")


def manifest_name(verb: str) -> str:
    """File name of a verb's manifest, e.g. ``run_manifest.json``."""
    return f"{verb}_manifest.json"


def sha256(path: str | os.PathLike) -> str:
    """Hex SHA-256 of a file, read in blocks."""
    h = hashlib.sha256()
    with open(path, "rb") as f:
        for block in iter(lambda: f.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def safe_relative(name: Any) -> bool:
    """True for a plain relative path inside a folder (no ``..``, not absolute, not hidden)."""
    if not isinstance(name, str) or not name or "\\" in name or "\x00" in name:
        return False
    p = PurePosixPath(name)
    return not p.is_absolute() and all(part not in ("", ".", "..") and not part.startswith(".")
                                       for part in p.parts)


def files_under(folder: Path) -> list[str]:
    """Relative POSIX paths of the regular files below ``folder``, sorted."""
    out = []
    for dirpath, _, names in os.walk(folder):
        for n in names:
            p = Path(dirpath) / n
            if stat.S_ISREG(p.lstat().st_mode):
                out.append(p.relative_to(folder).as_posix())
    return sorted(out)


def build(folder: Path, verb: str, files: list[str]) -> dict:
    """The manifest of ``files`` (relative to ``folder``) written by ``verb``."""
    return {
        "verb": verb,
        "bedflux_version": __version__,
        "written_utc": datetime.now(timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ"),
        "note": "every file this command wrote into the folder; bedflux report trusts only these",
        "files": {rel: {"bytes": (folder / rel).stat().st_size, "sha256": sha256(folder / rel)}
                  for rel in files},
    }


def write(folder: str | os.PathLike, verb: str, files: list[str] | None = None) -> Path:
    """Write ``VERB_manifest.json`` into ``folder`` listing ``files`` (default: every visible
    file below it except manifests); return its path."""
    folder = Path(folder)
    if files is None:
        files = [f for f in files_under(folder)
                 if safe_relative(f) and not any(f == manifest_name(v) for v in VERBS)]
    path = folder / manifest_name(verb)
    path.write_text(json.dumps(build(folder, verb, files), indent=2) + "\n", encoding="utf-8")
    return path


def read(folder: str | os.PathLike, verb: str) -> dict | None:
    """The manifest of ``verb`` in ``folder``; None when there is none.

    Raises
    ------
    InputError
        If the manifest is unreadable, not JSON, or its file list is malformed.
    """
    path = Path(folder) / manifest_name(verb)
    if not path.is_file() and not path.is_symlink():
        return None
    source = str(path)
    if not stat.S_ISREG(path.lstat().st_mode):
        raise InputError("is not a regular file; remove it and run the command again", source)
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, json.JSONDecodeError, RecursionError):
        raise InputError("is not a manifest written by bedflux (unreadable JSON); remove it and run the "
                         f"bedflux {verb} command again", source) from None
    files = data.get("files") if isinstance(data, dict) else None
    if not isinstance(files, dict) or not all(
            safe_relative(k) and isinstance(v, dict) and isinstance(v.get("sha256"), str)
            for k, v in files.items()):
        raise InputError("has no valid list of files; remove it and run the "
                         f"bedflux {verb} command again", source)
    return data


def listed(folder: str | os.PathLike, verb: str) -> list[str]:
    """The files the manifest of ``verb`` in ``folder`` names (empty when there is none)."""
    m = read(folder, verb)
    return sorted(m["files"]) if m else []


def untrusted_reason(folder: Path, rel: str, manifest: dict, root: Path) -> str | None:
    """Why ``folder/rel`` cannot be trusted as part of the output ``manifest`` describes, or None.

    A file is trusted when the manifest names it, it is a regular file (not a link) inside
    ``root``, and its size and SHA-256 match the manifest.
    """
    entry = manifest["files"].get(rel)
    path = folder / rel
    if entry is None:
        return "not named by the manifest of the command that wrote this folder"
    try:
        st = path.lstat()
    except OSError:
        return "named by the manifest but missing"
    if stat.S_ISLNK(st.st_mode):
        target = Path(os.path.realpath(path))
        where = "inside" if target.is_relative_to(root) else "outside"
        return f"a symbolic link to {target} ({where} the project folder); not followed"
    if not stat.S_ISREG(st.st_mode):
        return "not a regular file"
    if not Path(os.path.realpath(path)).is_relative_to(root):
        return "lies outside the project folder (through a linked folder); not followed"
    if st.st_size != entry.get("bytes") or sha256(path) != entry["sha256"]:
        return "changed since bedflux wrote it (its SHA-256 differs from the manifest)"
    return None
