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


@contextmanager
def atomic_path(final: str | os.PathLike[str]) -> Iterator[Path]:
    """Yield a temporary sibling of ``final``; rename it into place only on success.

    On failure the temporary file (or directory) is removed and ``final`` is left
    untouched. Works for files and directories; an existing ``final`` is replaced.
    """
    final = Path(final)
    final.parent.mkdir(parents=True, exist_ok=True)
    tmp = final.with_name(f".{final.name}.partial-{os.getpid()}")
    _remove(tmp)
    try:
        yield tmp
        if final.is_dir() and not final.is_symlink():
            shutil.rmtree(final)
        os.replace(tmp, final)
    except BaseException:
        _remove(tmp)
        raise


def _remove(path: Path) -> None:
    if path.is_dir() and not path.is_symlink():
        shutil.rmtree(path)
    else:
        path.unlink(missing_ok=True)
