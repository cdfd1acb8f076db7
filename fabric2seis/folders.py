"""Writing a results folder whole or not at all, and never over a user's own files.

Every folder fabric2seis writes carries a marker file (``MARKER``) naming what it holds
(``sample``, ``field``, ``stack``, ``optics`` or ``combined``). A destination is replaced only when
it is missing, empty, or carries the marker of the same kind with no other results folder inside it; it must not be the
current folder or above it, the results root, or a folder equal to or above any input. Replacing
is atomic: the new results are written into a temporary folder beside the destination, the old
folder is moved aside, the new one renamed into place, and only then the old one removed. A run
killed at any moment leaves the old results or the new ones under the destination's name, never
a partial folder; a later run puts back old results that were moved aside by a run that died.

Temporary folders are named ``.<name>.partial-<host>-<pid>-<token>`` (``replaced`` for the old
folder moved aside) and are matched literally by that pattern; one is removed only when it is
stale: its process on this machine has ended, or, written from another machine, it is older than
``STALE_AFTER_S``.
"""

from __future__ import annotations

import contextlib
import errno
import hashlib
import json
import os
import re
import secrets
import shutil
import socket
import time
from collections.abc import Iterable, Iterator
from pathlib import Path

from fabric2seis.errors import InputError

MARKER = ".fabric2seis-results"
KINDS = ("sample", "field", "stack", "optics", "combined")
STALE_AFTER_S = 24 * 3600.0


def _host_tag() -> str:
    return hashlib.sha256(socket.gethostname().encode()).hexdigest()[:8]


def _temporary_pattern(name: str) -> re.Pattern:
    return re.compile(re.escape(f".{name}.") + r"(partial|replaced)-([0-9a-f]{8})-([0-9]+)-([0-9a-f]{8})")


def _above_or_equal(folder: Path, path: Path) -> bool:
    return folder == path or folder in path.parents


def written_kind(folder: str | Path) -> str | None:
    """Read the kind recorded in ``folder``'s marker file.

    Parameters
    ----------
    folder : str or Path
        A folder that may hold a ``MARKER`` file.

    Returns
    -------
    str or None
        ``"sample"``, ``"field"``, ``"stack"``, ``"optics"`` or ``"combined"``; None if the folder has no
        marker, an unreadable one, or one naming another kind.
    """
    try:
        kind = json.loads((Path(folder) / MARKER).read_text()).get("kind")
    except (OSError, ValueError, AttributeError):
        return None
    return kind if kind in KINDS else None


def check_destination(out: str | Path, kind: str, inputs: Iterable[str | Path] = (),
                      results_root: str | Path | None = "results", option: str = "--out") -> Path:
    """Refuse a destination whose replacement could destroy files fabric2seis did not write.

    Parameters
    ----------
    out : str or Path
        The folder the results are to go to.
    kind : {"sample", "field", "stack", "optics", "combined"}
        What is written.
    inputs : iterable of str or Path
        Files and folders the run reads; the destination may not be equal to or above any of
        them, nor inside an input folder.
    results_root : str or Path or None
        The folder that holds a suite's results (default ``results``), which is never replaced.
    option : str
        The option the destination came from, for the message.

    Returns
    -------
    Path
        ``out`` as given.

    Raises
    ------
    ValueError
        If ``kind`` is not one of ``KINDS``.
    InputError
        (source ``out``, place ``option``) if the destination is the current folder or above it,
        the results root, equal to, above or inside an input, a symbolic link or a file, or a
        non-empty folder not written by fabric2seis as results of this ``kind`` (or holding other
        results folders).
    """
    if kind not in KINDS:
        raise ValueError(f"kind must be one of {KINDS}, not {kind!r}")
    out = Path(out)
    target = out.resolve()
    if _above_or_equal(target, Path.cwd().resolve()):
        raise InputError("the output folder is the current folder or above it; its files would be "
                         "replaced: choose a folder of its own", out, option)
    if out.name in ("", ".", ".."):
        raise InputError("the output must be a named folder of its own, not '.' or '..'", out, option)
    if results_root is not None and target == Path(results_root).resolve():
        raise InputError("the output folder is the results root, which holds every sample's results: "
                         "choose a folder inside it", out, option)
    for item in inputs:
        source = Path(item).resolve()
        if _above_or_equal(target, source):
            raise InputError(f"the output folder holds the input {item}; choose a folder that does not "
                             "contain your data", out, option)
        if source.is_dir() and source in target.parents:
            raise InputError(f"the output folder lies inside the input folder {item}; choose a folder "
                             "outside it", out, option)
    if out.is_symlink():
        raise InputError("the output is a symbolic link; give the folder itself", out, option)
    if not out.exists():
        return out
    if not out.is_dir():
        raise InputError("the output exists and is a file, not a results folder", out, option)
    if not any(out.iterdir()):
        return out
    found = written_kind(out)
    if found is None:
        raise InputError(f"the output folder exists and was not written by fabric2seis (no {MARKER} "
                         "file in it); fabric2seis replaces only its own results folders: choose another "
                         "folder or empty this one yourself", out, option)
    if found != kind:
        raise InputError(f"the output folder holds fabric2seis {found} results, not {kind} results; "
                         "choose another folder", out, option)
    nested = next((p.parent for p in out.rglob(MARKER) if p.parent != out), None)
    if nested is not None:
        raise InputError(f"the output folder holds other fabric2seis results ({nested}); choose another "
                         "folder", out, option)
    return out


def _temporary_tag() -> str:
    """``<host>-<pid>-<token>``: whose a temporary folder is, as the stale check reads it back."""
    return f"{_host_tag()}-{os.getpid()}-{secrets.token_hex(4)}"


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


def _is_stale(entry: Path, host: str, pid: int) -> bool:
    if host == _host_tag():
        return pid != os.getpid() and not _alive(pid)
    try:
        return time.time() - entry.lstat().st_mtime > STALE_AFTER_S
    except OSError:
        return False


def clear_stale_temporaries(out: str | Path) -> list[Path]:
    """Remove the stale temporary folders of ``out`` (matched literally).

    If ``out`` is missing and a stale folder holds old results moved aside by a run that died
    before putting the new ones in place, those old results are put back first.

    Parameters
    ----------
    out : str or Path
        The destination whose temporaries are looked for beside it.

    Returns
    -------
    list of Path
        The temporary folders removed (not those put back).
    """
    out = Path(out)
    if not out.parent.is_dir():
        return []
    pattern = _temporary_pattern(out.name)
    removed = []
    for entry in sorted(out.parent.iterdir()):
        match = pattern.fullmatch(entry.name)
        if match is None or entry.is_symlink() or not entry.is_dir():
            continue
        role, host, pid, _token = match.groups()
        if not _is_stale(entry, host, int(pid)):
            continue
        if role == "replaced" and not out.exists() and written_kind(entry) is not None:
            os.replace(entry, out)
            continue
        shutil.rmtree(entry, ignore_errors=True)
        removed.append(entry)
    return removed


@contextlib.contextmanager
def folder_written_whole(out: str | Path, kind: str, inputs: Iterable[str | Path] = (),
                         results_root: str | Path | None = "results", option: str = "--out"
                         ) -> Iterator[Path]:
    """Give a temporary folder beside ``out`` that replaces it atomically only if the block succeeds.

    The destination is checked first (:func:`check_destination`); stale temporary folders of
    ``out`` are cleared; on any error the temporary folder is removed and ``out`` is left as it
    was. The marker file is written into the new folder last, just before it is put in place.

    Parameters
    ----------
    out, kind, inputs, results_root, option
        As for :func:`check_destination`.

    Yields
    ------
    Path
        The temporary folder to write the results into.

    Raises
    ------
    InputError, ValueError
        If the destination is refused, before the block runs or (if something changed it
        meanwhile) after it; any error of the block itself is raised again after cleaning up.
    """
    from fabric2seis import __version__

    inputs = list(inputs)
    out = check_destination(out, kind, inputs, results_root, option)
    tag = _temporary_tag()
    tmp = out.parent / f".{out.name}.partial-{tag}"
    aside = out.parent / f".{out.name}.replaced-{tag}"
    with _writing(out, option):
        out.parent.mkdir(parents=True, exist_ok=True)
        clear_stale_temporaries(out)
        tmp.mkdir()
    try:
        with _writing(out, option):
            yield tmp
            # no time in the marker: two runs of the same settings write the same bytes (times are in run.log)
            (tmp / MARKER).write_text(json.dumps({"kind": kind, "written_by": f"fabric2seis {__version__}"}) + "\n")
            check_destination(out, kind, inputs, results_root, option)   # nothing changed it meanwhile
            if out.exists():
                os.replace(out, aside)
            os.replace(tmp, out)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        if aside.exists() and not out.exists():
            os.replace(aside, out)
        raise
    _discard(aside)


# The errors of a location that cannot take the results: the user's to fix, not a program error.
_LOCATION_ERRORS = {errno.ENOSPC: "no space left on the device",
                    errno.EDQUOT: "disk quota exceeded",
                    errno.EACCES: "permission denied",
                    errno.EPERM: "operation not permitted",
                    errno.EROFS: "read-only file system"}


@contextlib.contextmanager
def _writing(out: Path, option: str) -> Iterator[None]:
    """Turn a full, read-only or forbidden results location into one clear line (InputError)."""
    try:
        yield
    except OSError as exc:
        reason = _LOCATION_ERRORS.get(exc.errno or 0)
        if reason is None:
            raise
        where = f" ({exc.filename})" if exc.filename else ""
        raise InputError(f"cannot write the results here: {reason}{where}; nothing was written "
                         f"(free space, fix the permissions or choose another {option})", out, option) from None


def _discard(folder: Path) -> None:
    """Remove a folder, its marker first, so that a removal cut short is never put back as results."""
    with contextlib.suppress(FileNotFoundError):
        (folder / MARKER).unlink()
    shutil.rmtree(folder, ignore_errors=True)


def remove_results(out: str | Path, kind: str) -> bool:
    """Remove ``out`` if and only if it is a fabric2seis results folder of ``kind``.

    A folder that holds another results folder inside it is left alone.

    Parameters
    ----------
    out : str or Path
        The folder to remove.
    kind : {"sample", "field", "stack", "optics", "combined"}
        The kind its marker must name.

    Returns
    -------
    bool
        True if the folder was removed.
    """
    out = Path(out)
    if out.is_symlink() or not out.is_dir() or written_kind(out) != kind:
        return False
    if any(p.parent != out for p in out.rglob(MARKER)):
        return False
    tag = _temporary_tag()
    doomed = out.parent / f".{out.name}.partial-{tag}"
    os.replace(out, doomed)
    _discard(doomed)
    return True
