"""The cache of results that are slow to simulate but fixed by their inputs and a seed.

Random misorientation histograms (``fabric.misorientation_index.random_distribution``) and the random floors
of J, M and pfJ (``fabric.phase.random_floor``) are simulated with fixed seeds, so they are the same
every time; they are kept in memory and in ``$XDG_CACHE_HOME/fabric2seis`` (default
``~/.cache/fabric2seis``), one file each, named by a hash of everything they depend on. The cache
only saves time: a missing, unreadable, rejected or unwritable file is recomputed, with the same
seed, so results never depend on whether it exists.
"""

from __future__ import annotations

import json
import os
import threading
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np

#: results kept in memory for the life of the process, by file name
_MEMORY: dict[str, Any] = {}


def cache_folder() -> Path:
    """``$XDG_CACHE_HOME/fabric2seis``, or ``~/.cache/fabric2seis`` when the variable is unset."""
    return Path(os.environ.get("XDG_CACHE_HOME", Path.home() / ".cache")) / "fabric2seis"


def cached_result(file_name: str, compute: Callable[[], Any],
                  accept: Callable[[Any], bool] | None = None) -> Any:
    """The result stored under ``file_name``: from memory, else from the cache folder, else computed.

    Parameters
    ----------
    file_name : str
        Name of the cache file; its suffix chooses the format: ``.json`` (a JSON value) or ``.npy``
        (one numpy array). The name must carry a hash of every input of ``compute``.
    compute : callable
        Makes the result when it is not cached; called with no arguments.
    accept : callable, optional
        Checks a value read from the file; a rejected one is recomputed and the file replaced.

    Returns
    -------
    object
        The result, as ``compute`` made it or as read back from the file (JSON gives lists and
        dicts; numbers read back equal the numbers written).
    """
    if file_name in _MEMORY:
        return _MEMORY[file_name]
    path = cache_folder() / file_name
    try:
        value = _read(path)
        if accept is None or accept(value):
            _MEMORY[file_name] = value
            return value
    except (OSError, ValueError):
        pass
    value = compute()
    _MEMORY[file_name] = value
    _write(path, value)
    return value


def clear_memory() -> None:
    """Forget the results kept in memory (the files stay); the next call reads the cache folder."""
    _MEMORY.clear()


def _read(path: Path) -> Any:
    if path.suffix == ".npy":
        return np.load(path)
    return json.loads(path.read_text())


def _write(path: Path, value: Any) -> None:
    """Write through a temporary file and an atomic replace; an unwritable folder is no error."""
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        # one temporary file per process and thread: the fabric of two minerals may write at once
        tmp = path.with_name(f"{path.name}.{os.getpid()}.{threading.get_ident()}.tmp")
        if path.suffix == ".npy":
            with open(tmp, "wb") as handle:
                np.save(handle, value)
        else:
            tmp.write_text(json.dumps(value))
        os.replace(tmp, path)
    except OSError:
        pass
