"""The workflow's status file of a sample: the one module that writes and reads it.

Rule ``sample`` declares ``results/status/<sample>.json`` as its output, not the results folder:
Snakemake deletes a job's declared outputs before the job runs, and a results folder is replaced
only through ``folders``, which first checks that fabric2seis wrote it. The status file holds

- ``sample``: the sample's name;
- ``status``: ``"ok"``, or the one-line error of a sample that failed;
- ``summary``: the path of its ``summary.json`` (null when it failed).

Beside it, ``results/status/manifests/<sample>.json`` (not a declared output, so Snakemake leaves
it in place) repeats these and adds

- ``manifest``: every file of the results folder, by path relative to it, with its size in bytes;
- ``results_check``: the value of the rule's ``results_check`` parameter the job ran with;
- ``inputs``: a digest of what the sample's results follow from (its EBSD file, its settings digest
  and the fabric2seis version; ``batches.inputs_digest``), written by the jobs that compute several
  samples, empty otherwise: such a job keeps a sample whose digest and results are unchanged.

:func:`results_state` gives that parameter from the manifest file and the results folder: the
value recorded while the folder holds every file of its manifest at its recorded size (or the
sample failed and left no results folder), and a new value naming what is missing otherwise.
Snakemake reruns a job whose parameters changed (its default ``params`` rerun trigger), so a
deleted or half-deleted results folder is rebuilt, and a complete suite has nothing to do.
Snakemake evaluates the parameter when it plans the jobs and again just before a job runs, after
deleting the status file; the manifest file, left in place, gives the same value both times, and
the job records that value for the next plan.
"""

from __future__ import annotations

import hashlib
import json
import logging
import os
from collections.abc import Callable
from dataclasses import asdict, dataclass, field
from pathlib import Path

from fabric2seis.errors import InputError
from fabric2seis.folders import remove_results, written_kind

#: the parameter's value for a sample that has no status file yet (its job runs anyway)
AS_RECORDED = "as recorded"
#: at most this many missing files are named in the parameter's value
NAMED_FILES = 3


@dataclass(frozen=True)
class SampleStatus:
    """What a sample's status file holds (see the module's docstring)."""

    sample: str
    status: str
    summary: str | None = None
    manifest: dict[str, int] = field(default_factory=dict)
    results_check: str = AS_RECORDED
    inputs: str = ""

    @property
    def ok(self) -> bool:
        """True if the sample succeeded."""
        return self.status == "ok"

    @property
    def folder(self) -> Path | None:
        """The results folder of a sample that succeeded, else None."""
        return Path(self.summary).parent if self.ok and self.summary else None


def folder_manifest(folder: str | Path) -> dict[str, int]:
    """List every file of a folder with its size.

    Parameters
    ----------
    folder : str or Path
        The results folder.

    Returns
    -------
    dict of str to int
        Size in bytes by path relative to ``folder`` (``/``-separated), sorted by path.
    """
    folder = Path(folder)
    found = {p.relative_to(folder).as_posix(): p.stat().st_size for p in folder.rglob("*") if p.is_file()}
    return dict(sorted(found.items()))


def manifest_file(status_file: str | Path) -> Path:
    """The manifest file kept beside a status file (``manifests/<sample>.json``).

    Parameters
    ----------
    status_file : str or Path
        The status file.

    Returns
    -------
    Path
        Its manifest file.
    """
    status_file = Path(status_file)
    return status_file.parent / "manifests" / status_file.name


def _write_json_whole(path: Path, data: dict) -> None:
    """Write JSON into a temporary file beside ``path``, then rename it into place."""
    path.parent.mkdir(parents=True, exist_ok=True)
    tmp = path.with_name(f".{path.name}.partial-{os.getpid()}")
    tmp.write_text(json.dumps(data, indent=1, ensure_ascii=False) + "\n", encoding="utf-8")
    os.replace(tmp, path)


def write_status(path: str | Path, status: SampleStatus) -> Path:
    """Write a status file and its manifest file, each whole (a temporary file renamed into place).

    The manifest file is written first: a run killed between the two leaves no status file, and
    the sample runs again.

    Parameters
    ----------
    path : str or Path
        The status file.
    status : SampleStatus
        What it records.

    Returns
    -------
    Path
        ``path``.
    """
    path = Path(path)
    _write_json_whole(manifest_file(path), asdict(status))
    _write_json_whole(path, {"sample": status.sample, "status": status.status, "summary": status.summary})
    return path


def _status_from(data, path: Path) -> SampleStatus:
    if not isinstance(data, dict) or not isinstance(data.get("sample"), str) or not isinstance(data.get("status"), str):
        raise ValueError(f"{path} is not a workflow status file")
    return SampleStatus(sample=data["sample"], status=data["status"], summary=data.get("summary"),
                        manifest={str(k): int(v) for k, v in (data.get("manifest") or {}).items()},
                        results_check=str(data.get("results_check", AS_RECORDED)),
                        inputs=str(data.get("inputs", "")))


def read_status(path: str | Path) -> SampleStatus:
    """Read a status file (without its manifest: :func:`read_manifest` reads that).

    Parameters
    ----------
    path : str or Path
        The status file.

    Returns
    -------
    SampleStatus
        Its contents, with an empty manifest.

    Raises
    ------
    OSError
        If the file cannot be read.
    ValueError
        If it is not a status file (not JSON, or without ``sample`` and ``status``).
    """
    path = Path(path)
    return _status_from(json.loads(path.read_text(encoding="utf-8")), path)


def read_manifest(status_file: str | Path) -> SampleStatus:
    """Read the manifest file kept beside a status file.

    Parameters
    ----------
    status_file : str or Path
        The status file.

    Returns
    -------
    SampleStatus
        The status as the job recorded it, with the manifest and the ``results_check`` it ran with.

    Raises
    ------
    OSError
        If the file cannot be read.
    ValueError
        If it is not a manifest file.
    """
    path = manifest_file(status_file)
    return _status_from(json.loads(path.read_text(encoding="utf-8")), path)


def read_statuses(paths: list[str | Path]) -> list[SampleStatus]:
    """Read several status files, in the order given.

    Parameters
    ----------
    paths : list of str or Path
        The status files.

    Returns
    -------
    list of SampleStatus
        Their contents.
    """
    return [read_status(p) for p in paths]


def failure_line(exc: BaseException, log_file: str | Path) -> str:
    """The status line of a sample that failed: bad input as its one line, else "program error".

    Parameters
    ----------
    exc : BaseException
        What stopped the sample.
    log_file : str or Path
        The rule's log, which holds the traceback of a program error.

    Returns
    -------
    str
        One line.
    """
    if isinstance(exc, InputError):
        return exc.one_line()
    return f"program error ({type(exc).__name__}: {' '.join(str(exc).split())[:200]}); traceback in {log_file}"


def run_and_record(run: Callable[[], object], status_file: str | Path, sample: str, out: str | Path, kind: str,
                   summary_name: str, results_check: str, log_file: str | Path, inputs: str = "") -> SampleStatus:
    """Run one sample and write its status file, whatever happens, so that one sample does not stop the suite.

    Bad input and program errors become the status line (a program error's traceback goes to the
    log through :mod:`logging`); old results of a sample that now fails are removed only if
    fabric2seis wrote them (``folders.remove_results``), since they would be stale.

    Parameters
    ----------
    run : callable
        Writes the results folder ``out`` (e.g. ``pipeline.run_sample``), or raises.
    status_file : str or Path
        The status file to write.
    sample : str
        The sample's name.
    out : str or Path
        Its results folder.
    kind : {"sample", "field", "stack"} or another kind ``folders`` knows
        What the folder holds, for ``folders.remove_results``.
    summary_name : str
        File of the folder recorded as its summary (``summary.json``).
    results_check : str
        The rule's ``results_check`` parameter as the job was planned (:func:`results_state`).
    log_file : str or Path
        The rule's log.
    inputs : str
        Digest of what the results follow from, recorded in the manifest (``batches.inputs_digest``).

    Returns
    -------
    SampleStatus
        What was written.
    """
    out = Path(out)
    try:
        run()
        status = SampleStatus(sample, "ok", str(out / summary_name), folder_manifest(out), results_check, inputs)
    except Exception as exc:
        if isinstance(exc, InputError):
            logging.error(exc.one_line())
        else:
            logging.exception("program error")
        remove_results(out, kind)
        status = SampleStatus(sample, failure_line(exc, log_file), None, {}, results_check, inputs)
    write_status(status_file, status)
    return status


def missing_results(status: SampleStatus, out: str | Path, kind: str) -> str | None:
    """Tell what a sample's results lack, against its status file.

    Parameters
    ----------
    status : SampleStatus
        The sample's status.
    out : str or Path
        Its results folder.
    kind : str
        What the folder holds (``sample``).

    Returns
    -------
    str or None
        None if the results are as recorded: the sample succeeded and its folder holds every file
        of the manifest at its size (and the summary), or it failed and there is no results folder
        fabric2seis wrote. Otherwise a few words naming what is missing or changed.
    """
    if not status.ok:
        return "a results folder of a sample that failed" if written_kind(out) == kind else None
    folder = status.folder
    if folder is None or not folder.is_dir():
        return f"results folder {folder or out} missing"
    expected = dict(status.manifest)
    if status.summary is not None:
        expected.setdefault(Path(status.summary).name, -1)
    lost = []
    for name, size in expected.items():
        try:
            found = (folder / name).stat().st_size
        except OSError:
            lost.append(f"{name} missing")
            continue
        if size >= 0 and found != size:
            lost.append(f"{name} changed size")
    if not lost:
        return None
    more = f" and {len(lost) - NAMED_FILES} more" if len(lost) > NAMED_FILES else ""
    return f"in {folder}: {', '.join(lost[:NAMED_FILES])}{more}"


def results_state(status_file: str | Path, out: str | Path, kind: str = "sample") -> str:
    """The value of rule ``sample``'s ``results_check`` parameter.

    The value recorded in the manifest file while the results are as recorded
    (:func:`missing_results`), so an unchanged suite has nothing to do. Otherwise a new value: what
    is missing, and a digest of the recorded value, so that it differs from the value Snakemake
    recorded when the job last ran, and Snakemake reruns the job; the job records the new value.

    Parameters
    ----------
    status_file : str or Path
        The sample's status file (its manifest file is read, not the status file itself).
    out : str or Path
        Its results folder.
    kind : str
        What the folder holds (``sample``).

    Returns
    -------
    str
        :data:`AS_RECORDED` when there is no manifest file (a sample that never ran).
    """
    path = manifest_file(status_file)
    if not path.exists():
        return AS_RECORDED
    try:
        status = read_manifest(status_file)
    except ValueError:        # not a manifest file: rerun, and again if it is spoilt another way
        return f"manifest file unreadable {hashlib.sha256(path.read_bytes()).hexdigest()[:8]}"
    except OSError:
        return "manifest file unreadable"
    problem = missing_results(status, out, kind)
    if problem is None:
        return status.results_check
    digest = hashlib.sha256(f"{status.results_check}\n{problem}".encode()).hexdigest()[:8]
    return f"rebuild ({problem}) {digest}"
