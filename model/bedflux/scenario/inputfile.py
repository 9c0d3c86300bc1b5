"""Opening a user's input file safely: a regular file of sane size, TOML of sane depth.

A device (``/dev/zero``), a pipe or a socket given as an input would block or never end; a file
of many megabytes or a TOML table nested thousands of levels deep would exhaust memory or the
parser's stack. Each is refused with an :class:`~bedflux.errors.InputError` naming the file,
before anything large is read.
"""
from __future__ import annotations

import stat
import tomllib
from pathlib import Path
from typing import Any

from bedflux.errors import InputError

#: Largest TOML input read (scenario, fit and plan files are a few kilobytes).
MAX_TOML_BYTES = 4 * 1024 * 1024
#: Deepest nesting of tables and arrays allowed in a TOML input (a scenario needs 4).
MAX_TOML_DEPTH = 32


def regular_file(path: str | Path, what: str) -> Path:
    """Return ``path`` if it is a regular file (or a link to one); raise otherwise.

    Parameters
    ----------
    path
        The file named by the user.
    what
        What the file should be, for messages ("scenario file", "stage series").

    Raises
    ------
    InputError
        If the path does not exist, is a folder, or is a device, pipe or socket.
    """
    path = Path(path)
    try:
        mode = path.stat().st_mode
    except FileNotFoundError:
        raise InputError(f"{what} not found", source=str(path)) from None
    except NotADirectoryError:
        raise InputError(f"{what} not found (a part of the path is a file, not a folder)",
                         source=str(path)) from None
    except OSError as err:
        raise InputError(f"cannot open the {what}: {err.strerror}", source=str(path)) from None
    if stat.S_ISDIR(mode):
        raise InputError(f"is a folder; expected a {what}", source=str(path))
    if not stat.S_ISREG(mode):
        kind = ("a pipe (FIFO)" if stat.S_ISFIFO(mode) else "a socket" if stat.S_ISSOCK(mode)
                else "a device")
        raise InputError(f"is {kind}, not a regular file; give a {what} saved on disk", source=str(path))
    return path


def toml_depth(value: Any) -> int:
    """Nesting depth of parsed TOML (a scalar 0, a table of scalars 1), without recursion."""
    deepest = 0
    stack = [(value, 0)]
    while stack:
        node, depth = stack.pop()
        if isinstance(node, dict):
            children = node.values()
        elif isinstance(node, list):
            children = node
        else:
            continue
        deepest = max(deepest, depth + 1)
        stack.extend((c, depth + 1) for c in children)
    return deepest


def read_toml(path: str | Path, what: str) -> dict:
    """Read a TOML input file as a dict.

    Parameters
    ----------
    path
        The file.
    what
        What the file should be, for messages ("scenario file", "fit file").

    Raises
    ------
    InputError
        Naming the file: missing, not a regular file, larger than :data:`MAX_TOML_BYTES`, not
        UTF-8, not valid TOML, or nested deeper than :data:`MAX_TOML_DEPTH`.
    """
    path = regular_file(path, what)
    size = path.stat().st_size
    if size > MAX_TOML_BYTES:
        raise InputError(f"is {size / 2**20:.1f} MiB; a {what} is a short text file (at most "
                         f"{MAX_TOML_BYTES // 2**20} MiB); check that this is the right file", source=str(path))
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8-sig"))
    except tomllib.TOMLDecodeError as err:
        raise InputError(f"not valid TOML: {err}", source=str(path)) from None
    except UnicodeDecodeError:
        raise InputError(f"not a text file (expected a UTF-8 TOML {what})", source=str(path)) from None
    except RecursionError:
        raise InputError(f"tables or arrays are nested too deeply (a {what} needs at most "
                         f"{MAX_TOML_DEPTH} levels)", source=str(path)) from None
    depth = toml_depth(data)
    if depth > MAX_TOML_DEPTH:
        raise InputError(f"tables or arrays are nested {depth} levels deep; a {what} needs at most "
                         f"{MAX_TOML_DEPTH}", source=str(path))
    return data
