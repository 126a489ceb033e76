"""Atomic writes: a finished file appears under its final name or not at all.

An interrupted job must never leave a partial file where a finished one is
expected, or a rerun would take it for done.
"""

from __future__ import annotations

import os
import shutil
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

_PARTIAL = ".partial-"
_REPLACED = ".replaced-"


@contextmanager
def atomic_path(final: str | os.PathLike[str]) -> Iterator[Path]:
    """Yield a temporary sibling of ``final``; rename it into place only on success.

    On failure the temporary file (or directory) is removed and ``final`` is left
    untouched. Works for files and directories; an existing ``final`` is replaced.
    Temporaries left by a killed earlier attempt (SIGKILL runs no clean-up) are
    removed first, so repeated kills cannot fill the disk.
    """
    final = Path(final)
    final.parent.mkdir(parents=True, exist_ok=True)
    _remove_leftovers(final)
    tmp = _sibling(final, _PARTIAL)
    try:
        yield tmp
        if final.is_dir() and not final.is_symlink():
            # Move the old directory aside in one step: deleting it in place could be
            # killed halfway and leave a directory that looks finished but is not.
            replaced = _sibling(final, _REPLACED)
            os.replace(final, replaced)
            os.replace(tmp, final)
            _remove(replaced)
        else:
            os.replace(tmp, final)
    except BaseException:
        _remove(tmp)
        raise


def _sibling(final: Path, marker: str) -> Path:
    return final.with_name(f".{final.name}{marker}{os.getpid()}")


def _remove_leftovers(final: Path) -> None:
    prefixes = tuple(f".{final.name}{marker}" for marker in (_PARTIAL, _REPLACED))
    for entry in final.parent.iterdir():
        if entry.name.startswith(prefixes):
            _remove(entry)


def _remove(path: Path) -> None:
    if path.is_dir() and not path.is_symlink():
        shutil.rmtree(path, ignore_errors=True)
    else:
        path.unlink(missing_ok=True)
