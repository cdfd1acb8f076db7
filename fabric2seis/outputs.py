"""Writing a results folder whole or not at all."""

from __future__ import annotations

import contextlib
import os
import shutil
import tempfile
from collections.abc import Iterator
from pathlib import Path


@contextlib.contextmanager
def folder_written_whole(out: Path) -> Iterator[Path]:
    """A temporary folder beside ``out`` that replaces it only if the block succeeds.

    Folders left by a run that was killed (``.<name>.partial-*``) are removed first; on any error
    the temporary folder is removed and ``out`` is left as it was.
    """
    out = Path(out)
    out.parent.mkdir(parents=True, exist_ok=True)
    for stale in out.parent.glob(f".{out.name}.partial-*"):
        shutil.rmtree(stale, ignore_errors=True)
    tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.partial-", dir=out.parent))
    try:
        yield tmp
        if out.exists():
            shutil.rmtree(out)
        os.replace(tmp, out)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
