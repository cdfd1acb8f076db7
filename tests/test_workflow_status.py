"""The workflow's status and manifest files (fabric2seis.workflow.status), without Snakemake.

Snakemake reruns a job whose parameters changed since the job last ran (its default ``params``
rerun trigger; Snakemake documentation, "rerun triggers"): the ``results_check`` parameter must
keep the value the job ran with while the results are complete, and change when they are not.
"""

import json

import pytest

from fabric2seis.errors import InputError
from fabric2seis.folders import MARKER, folder_written_whole
from fabric2seis.workflow.status import (
    AS_RECORDED,
    manifest_file,
    read_manifest,
    read_status,
    results_state,
    run_and_record,
)


def _write_results(out, results_root):
    with folder_written_whole(out, "sample", results_root=results_root) as tmp:
        (tmp / "summary.json").write_text('{"sample": "s"}\n')
        (tmp / "pole_figures.png").write_bytes(b"\x89PNG" + bytes(100))
        (tmp / "sub").mkdir()
        (tmp / "sub" / "table.csv").write_text("a,b\n1,2\n")
    return out


@pytest.fixture
def recorded(tmp_path):
    root = tmp_path / "results"
    status_file, out = root / "status" / "s.json", root / "s"
    (root / "status").mkdir(parents=True)
    check = results_state(status_file, out)
    run_and_record(lambda: _write_results(out, root), status_file, "s", out, "sample", "summary.json", check,
                   root / "s.log")
    return status_file, out, check


def test_a_sample_never_run_has_the_constant_value(tmp_path):
    assert results_state(tmp_path / "status" / "s.json", tmp_path / "s") == AS_RECORDED


def test_complete_results_keep_the_value_the_job_ran_with(recorded):
    status_file, out, check = recorded
    assert check == AS_RECORDED
    status = read_status(status_file)
    assert status.ok and status.summary == str(out / "summary.json") and status.manifest == {}
    manifest = read_manifest(status_file).manifest
    assert manifest == {MARKER: (out / MARKER).stat().st_size, "pole_figures.png": 104, "sub/table.csv": 8,
                        "summary.json": 16}
    assert set(json.loads(status_file.read_text())) == {"sample", "status", "summary"}
    assert results_state(status_file, out) == check
    status_file.unlink()               # Snakemake deletes the status file before the job runs:
    assert results_state(status_file, out) == check     # the value does not depend on it


@pytest.mark.parametrize("spoil, named", [
    (lambda out: __import__("shutil").rmtree(out), "results folder"),
    (lambda out: (out / "pole_figures.png").unlink(), "pole_figures.png missing"),
    (lambda out: (out / "sub" / "table.csv").write_text("a,b\n"), "sub/table.csv changed size"),
    (lambda out: (out / "summary.json").unlink(), "summary.json missing"),
])
def test_missing_or_changed_files_change_the_value_until_rebuilt(recorded, spoil, named):
    status_file, out, check = recorded
    spoil(out)
    first = results_state(status_file, out)
    assert first != check and named in first
    # the job reruns with that value and records it; complete again, the value stays
    run_and_record(lambda: _write_results(out, out.parent), status_file, "s", out, "sample", "summary.json",
                   first, out.parent / "s.log")
    assert results_state(status_file, out) == first
    spoil(out)                         # the same loss a second time is noticed again
    assert results_state(status_file, out) not in (first, check)


def test_a_failed_sample_is_recorded_and_its_old_results_removed(recorded, tmp_path):
    status_file, out, check = recorded

    def bad_input():
        raise InputError("not a text file", "broken.ctf", "line 1")

    status = run_and_record(bad_input, status_file, "s", out, "sample", "summary.json", check, tmp_path / "s.log")
    assert status.status == "broken.ctf, line 1: not a text file" and status.summary is None
    assert not out.exists() and read_status(status_file) == status
    assert results_state(status_file, out) == check         # failed, no folder: as recorded

    def program_error():
        raise RuntimeError("injected\nfailure")

    status = run_and_record(program_error, status_file, "s", out, "sample", "summary.json", check, tmp_path / "s.log")
    assert status.status.startswith("program error (RuntimeError: injected failure); traceback in")


def test_an_unreadable_manifest_reruns_the_sample(recorded):
    status_file, out, check = recorded
    manifest_file(status_file).write_text("{not json")
    assert results_state(status_file, out) not in (check, AS_RECORDED)
