"""Small samples computed together: several samples of a suite in one process (config ``small_samples``).

A sample job is a fresh Python process that imports orix, scipy, pandas and matplotlib on first
use, seconds that a grain list of a few hundred grains does not need for its own work. With
``small_samples.per_job`` above 1, the workflow gives every sample whose file is at most
``small_samples.max_size_kb`` to a batch rule (``rules/sample.smk``): the small samples in name
order, ``per_job`` to a job, one process per job. Each sample still gets its own results folder,
status file, manifest file and log (``logs/sample/<sample>.log``), and a failure stays its own
status line (``status.run_and_record``).

Snakemake reruns a batch job as a whole: when a member's file or settings change, when a member is
added to it or leaves it, when a member's results are incomplete. The job then computes again only
the members whose inputs changed (:func:`inputs_digest`, recorded in the manifest) or whose
results are incomplete (``status.missing_results``), and keeps the others, rewriting their status
files as they were. A forced run (``--forceall``, ``--forcerun``, ``--force``) computes every member
again: the Snakefile sets :data:`RECOMPUTE_VARIABLE` for its jobs.
"""

from __future__ import annotations

import hashlib
import logging
import os
from collections.abc import Callable
from dataclasses import dataclass, replace
from functools import partial
from itertools import accumulate
from pathlib import Path

from fabric2seis import __version__
from fabric2seis.workflow.status import SampleStatus, missing_results, read_manifest, run_and_record, write_status

#: environment variable the Snakefile sets for the jobs of a forced run: a batch computes every member
RECOMPUTE_VARIABLE = "FABRIC2SEIS_RECOMPUTE_BATCHED"


def sample_batches(samples: dict[str, Path], per_job: int, max_size_kb: float) -> list[list[str]]:
    """Share the small samples of a suite among batch jobs.

    The small samples, in name order, go to as few jobs as hold at most ``per_job`` each, the jobs'
    sizes differing by at most one (nine samples at eight to a job: five and four, which two cores
    run side by side). A batch of one sample is no batch: it runs as a job of its own. The shares
    depend on the samples and the settings only, not on ``--cores``, so that a complete suite has
    nothing to do whatever cores the next run is given.

    Parameters
    ----------
    samples : dict of str to Path
        The suite's samples by name (``suite.discover_samples``).
    per_job : int
        At most this many samples to a job; 1 or less: no batches (every sample a job of its own).
    max_size_kb : float
        A sample is small when its file holds at most this many kilobytes (1024 bytes).

    Returns
    -------
    list of list of str
        The batches, each a list of two names or more, in name order. Samples in none of them
        run alone.
    """
    if per_job <= 1:
        return []
    small = sorted(name for name, path in samples.items() if Path(path).stat().st_size <= max_size_kb * 1024)
    jobs = -(-len(small) // per_job)
    if jobs == 0:
        return []
    size, extra = divmod(len(small), jobs)
    bounds = list(accumulate((size + (k < extra) for k in range(jobs)), initial=0))
    return [small[a:b] for a, b in zip(bounds[:-1], bounds[1:]) if b - a >= 2]


def inputs_digest(input_file: str | Path, settings_digest: str) -> str:
    """Digest of what a sample's results follow from: its file's bytes, its settings digest, the version.

    Parameters
    ----------
    input_file : str or Path
        The sample's EBSD file (small: read whole).
    settings_digest : str
        The workflow's digest of its sidecar and config (``settings_digest`` in ``rules/common.smk``).

    Returns
    -------
    str
        16 hexadecimal digits.
    """
    digest = hashlib.sha256(Path(input_file).read_bytes())
    digest.update(f"\0{settings_digest}\0{__version__}".encode())
    return digest.hexdigest()[:16]


@dataclass(frozen=True)
class BatchMember:
    """One sample of a batch job: its names and paths as the rule gives them."""

    sample: str
    input: str
    status_file: str
    out: str
    settings: str
    results_check: str
    log_file: str


def kept_status(member: BatchMember, inputs: str) -> SampleStatus | None:
    """The recorded status of a member that needs no new run, else None.

    A member is kept when its manifest file records the same inputs digest and its results are as
    recorded (``status.missing_results``): every file of its results folder, or no folder for a
    sample that failed.
    """
    try:
        recorded = read_manifest(member.status_file)
    except (OSError, ValueError):
        return None
    if recorded.inputs != inputs or recorded.sample != member.sample:
        return None
    if missing_results(recorded, member.out, "sample") is not None:
        return None
    return replace(recorded, results_check=member.results_check)


def run_batch(members: list[BatchMember], run: Callable[[BatchMember], object], recompute: bool = False,
              note: Callable[[str], object] = print,
              before_several: Callable[[], object] | None = None) -> list[SampleStatus]:
    """Run the members of a batch one after the other in this process, each as its own sample job would.

    Parameters
    ----------
    members : list of BatchMember
        The samples.
    run : callable
        Computes one member into its results folder (``pipeline.run_sample``), or raises.
    recompute : bool
        Compute every member, kept or not (a forced run).
    note : callable
        Takes one line per member for the batch's log.
    before_several : callable, optional
        Called once before the first member computed when two or more are to be computed (the
        batch script imports there what every sample's figures need, once for all of them).

    Returns
    -------
    list of SampleStatus
        What was written, in the order of ``members``.
    """
    computed = [m for m in members if recompute or kept_status(m, inputs_digest(m.input, m.settings)) is None]
    if before_several is not None and len(computed) >= 2:
        before_several()
    written = []
    for member in members:
        inputs = inputs_digest(member.input, member.settings)
        kept = None if recompute else kept_status(member, inputs)
        if kept is not None:
            write_status(member.status_file, kept)
            note(f"{member.sample}: inputs and results unchanged since its last run, kept ({kept.status})")
            written.append(kept)
            continue
        root = logging.getLogger()
        Path(member.log_file).parent.mkdir(parents=True, exist_ok=True)
        handler = logging.FileHandler(member.log_file, mode="w", encoding="utf-8")
        handler.setFormatter(logging.Formatter("%(asctime)s %(message)s"))
        root.addHandler(handler)
        try:
            status = run_and_record(partial(run, member), member.status_file, member.sample, member.out,
                                    "sample", "summary.json", member.results_check, member.log_file, inputs)
        finally:
            root.removeHandler(handler)
            handler.close()
        note(f"{member.sample}: {status.status}")
        written.append(status)
    return written


def recompute_requested() -> bool:
    """True when the Snakefile marked this run as forced (:data:`RECOMPUTE_VARIABLE`)."""
    return os.environ.get(RECOMPUTE_VARIABLE) == "1"
