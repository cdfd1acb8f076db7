"""Figures drawn in a second process while the bootstrap runs (fabric2seis.second_process, sample_output).

What must hold (the project's rules in CONTRACT.md and the issue on performance): the second
process changes no file (the same bytes as figures drawn in the run's own process: test_threads
compares the tables, here the figures too); an error in it reaches the command as one line with
exit status 2 and nothing written; an error of the run itself stops it and leaves no process and no
scratch folder behind; and the run with it never uses more threads than given (test_threads counts
the thread pools, here the second process with them). Facts of POSIX used: a forked child is a
copy of its parent (its monkeypatches included), and ``os.waitpid(-1, WNOHANG)`` raises
ChildProcessError when the caller has no child left (common practice).
"""

import os
import re
import signal
import tempfile
import time
from pathlib import Path

import pytest

from fabric2seis import cli, pipeline, sample_output
from fabric2seis.errors import InputError
from fabric2seis.second_process import SecondProcess, can_fork
from fabric2seis.threads import threads_given

ROOT = Path(__file__).resolve().parents[1]
GRAIN_LIST = ROOT / "demo_samples" / "VM04_grain_list.csv"
needs_fork = pytest.mark.skipif(not hasattr(os, "fork") or os.uname().sysname == "Darwin",
                                reason="the second process needs os.fork (not on macOS)")


def _no_child_left() -> bool:
    try:
        os.waitpid(-1, os.WNOHANG)
    except ChildProcessError:
        return True
    return False


@pytest.fixture
def scratch_space(tmp_path, monkeypatch) -> Path:
    """The system's temporary space of the run, to see that no scratch folder stays behind."""
    space = tmp_path / "system_tmp"
    space.mkdir()
    monkeypatch.setattr(tempfile, "tempdir", str(space))
    return space


@needs_fork
def test_the_result_and_the_errors_of_the_work_come_back():
    with threads_given(2):
        assert can_fork()
        with SecondProcess(lambda: {"pid": os.getpid(), "values": [1.5, 2.5]}, fork=True) as job:
            assert job.forked
            got = job.result()
        assert got["values"] == [1.5, 2.5] and got["pid"] != os.getpid()     # computed in the child

        def refuse():
            raise InputError("a figure setting is wrong", "s.yaml", "key figures.poles")

        with SecondProcess(refuse, fork=True) as job, pytest.raises(InputError) as raised:
            job.result()
        assert raised.value.one_line() == "s.yaml, key figures.poles: a figure setting is wrong"
        assert "second process" in "".join(getattr(raised.value, "__notes__", []))

        with SecondProcess(lambda: os.kill(os.getpid(), signal.SIGKILL), fork=True) as job, \
                pytest.raises(RuntimeError, match="signal 9"):
            job.result()
    assert _no_child_left()


@needs_fork
def test_leaving_early_stops_the_second_process():
    with threads_given(2):
        started = time.perf_counter()
        with SecondProcess(lambda: time.sleep(60), fork=True) as job:
            pid = job.pid
        assert time.perf_counter() - started < 30 and _no_child_left()
        with pytest.raises(ProcessLookupError):
            os.kill(pid, 0)


def test_one_thread_or_no_fork_runs_the_work_in_this_process():
    with threads_given(1):
        assert not can_fork()
    job = SecondProcess(lambda: os.getpid(), fork=False)
    assert not job.forked and job.result() == os.getpid()


@needs_fork
def test_figures_of_the_second_process_are_the_bytes_of_those_drawn_in_this_one(tmp_path, scratch_space):
    # through the command: the demo grain list with two threads (figures in a second process) and
    # with one (figures here); every file but run.log the same bytes
    for threads in ("1", "2"):
        assert cli.main(["sample", str(GRAIN_LIST), "--out", str(tmp_path / threads), "--threads", threads]) == 0
    log = (tmp_path / "2" / "run.log").read_text()
    assert "drawing figures in a second process" in log
    assert "second process" not in (tmp_path / "1" / "run.log").read_text()
    # each figure drawn once, by one process or the other (which depends on timing): named once in run.log
    logged = []
    for line in log.splitlines():
        step = re.search(r"  (?:figures: )?wrote (.+) in \d+\.\d\d s$", line)
        logged += [name for name in (step.group(1).split(", ") if step else []) if name.endswith((".png", ".pdf"))]
    names = sorted(p.name for p in (tmp_path / "1").iterdir() if p.name != "run.log")
    assert names == sorted(p.name for p in (tmp_path / "2").iterdir() if p.name != "run.log")
    figures = [n for n in names if n.endswith((".png", ".pdf"))]
    assert len(figures) >= 10 and sorted(logged) == figures, (figures, logged)
    for name in names:
        assert (tmp_path / "1" / name).read_bytes() == (tmp_path / "2" / name).read_bytes(), name
    times = [float(line.split()[0]) for line in log.splitlines()]
    assert times == sorted(times)                             # the two processes' lines in time order
    assert list(scratch_space.iterdir()) == [] and _no_child_left()


@needs_fork
def test_an_error_while_drawing_is_one_line_and_nothing_is_written(tmp_path, capsys, monkeypatch, scratch_space):
    def broken(*args, **kwargs):
        raise InputError("cannot draw this velocity sheet", "velocities")

    monkeypatch.setattr("fabric2seis.figures.velocities.velocity_figure", broken)   # the child is a copy
    out = tmp_path / "out"
    assert cli.main(["sample", str(GRAIN_LIST), "--out", str(out), "--threads", "2"]) == 2
    err = capsys.readouterr().err
    assert err.strip() == "fabric2seis sample: error: velocities: cannot draw this velocity sheet"
    assert not out.exists() and [p.name for p in tmp_path.iterdir()] == ["system_tmp"]
    assert list(scratch_space.iterdir()) == [] and _no_child_left()


@needs_fork
def test_an_error_of_the_run_stops_the_drawing_and_leaves_nothing(tmp_path, capsys, monkeypatch, scratch_space):
    drawing: list[int] = []
    start = sample_output.SampleFigures.start

    def start_and_note(self, fabric, seismic):
        start(self, fabric, seismic)
        drawing.append(self._job.pid)

    def failing_bootstrap(*args, **kwargs):
        raise InputError("the bootstrap was refused", "settings.yaml", "key bootstrap")

    monkeypatch.setattr(sample_output.SampleFigures, "start", start_and_note)
    monkeypatch.setattr(pipeline, "uncertainty_stage", failing_bootstrap)
    out = tmp_path / "out"
    assert cli.main(["sample", str(GRAIN_LIST), "--out", str(out), "--threads", "2"]) == 2
    assert "the bootstrap was refused" in capsys.readouterr().err
    assert len(drawing) == 1 and _no_child_left()
    with pytest.raises(ProcessLookupError):
        os.kill(drawing[0], 0)
    assert not out.exists() and list(scratch_space.iterdir()) == []


@needs_fork
def test_while_the_second_process_draws_this_one_uses_one_thread_fewer(tmp_path, monkeypatch):
    # with --threads 2 the bootstrap runs on one thread while the figures are drawn on the other
    from fabric2seis import threads as thread_module

    seen: list[tuple[int, bool]] = []
    bootstrap = pipeline.uncertainty_stage

    def noted(*args, **kwargs):
        seen.append((thread_module.thread_count(), True))
        return bootstrap(*args, **kwargs)

    monkeypatch.setattr(pipeline, "uncertainty_stage", noted)
    assert cli.main(["sample", str(GRAIN_LIST), "--out", str(tmp_path / "two"), "--threads", "2"]) == 0
    assert cli.main(["sample", str(GRAIN_LIST), "--out", str(tmp_path / "three"), "--threads", "3"]) == 0
    assert [count for count, _ in seen] == [1, 2]


@needs_fork
def test_shared_tasks_each_run_once_in_one_of_the_processes_and_errors_come_back(tmp_path):
    # shared_among_processes: every task exactly once, taken by this process and the forked ones
    # (each writes its number and process into one file, appended: a POSIX append is one write)
    from fabric2seis.second_process import shared_among_processes

    record = tmp_path / "done.txt"

    def task(k):
        def run():
            time.sleep(0.05)
            with record.open("a") as f:
                f.write(f"{k} {os.getpid()}\n")
        return run

    shares = []                                                          # the progress told, in this process
    shared_among_processes([task(k) for k in range(24)], 3, shares.append)
    rows = [line.split() for line in record.read_text().splitlines()]
    assert sorted(int(k) for k, _ in rows) == list(range(24))
    assert len({pid for _, pid in rows}) >= 2 and str(os.getpid()) in {pid for _, pid in rows}
    assert _no_child_left()
    assert shares == sorted(shares) and shares[-1] == 1.0 and 0.0 < shares[0] < 1.0

    record.unlink()
    shares.clear()
    shared_among_processes([task(k) for k in range(5)], 1, shares.append)       # one process: here, in order
    assert [line.split() for line in record.read_text().splitlines()] == [[str(k), str(os.getpid())] for k in range(5)]
    assert shares == [0.2, 0.4, 0.6, 0.8, 1.0]

    def refuse():
        raise InputError("this figure cannot be drawn", "misfit")

    with pytest.raises(InputError, match="this figure cannot be drawn"):
        shared_among_processes([task(0), refuse, task(1), task(2)], 2)
    assert _no_child_left()


@needs_fork
def test_field_figures_drawn_by_two_processes_are_the_bytes_of_one(tmp_path, monkeypatch):
    # through the command: `fabric2seis field` of the demo grain list with --threads 2 (the figures
    # shared by two processes) and --threads 1; every file the same bytes, each figure drawn once
    from fabric2seis.figures import field as field_figures

    measurements = ROOT / "demo_samples" / "field_measurements.csv"      # two stations
    assert cli.main(["sample", str(GRAIN_LIST), "--out", str(tmp_path / "sample"), "--threads", "1"]) == 0
    drawn = tmp_path / "drawn.txt"

    def recording(draw):
        def recorded(stem, *args, **kwargs):
            with drawn.open("a") as f:
                f.write(f"{Path(stem).name} {os.getpid()}\n")
            return draw(stem, *args, **kwargs)
        return recorded

    for name in ("misfit_surface", "data_and_predictions", "fast_direction_rose"):
        monkeypatch.setattr(field_figures, name, recording(getattr(field_figures, name)))
    for threads in ("1", "2"):
        assert cli.main(["field", str(tmp_path / "sample"), "--measurements", str(measurements),
                         "--out", str(tmp_path / f"field{threads}"), "--threads", threads]) == 0
    rows = [line.split() for line in drawn.read_text().splitlines()]
    assert len(rows) == 10 and sorted(r[0] for r in rows[:5]) == sorted(r[0] for r in rows[5:])
    assert {pid for _, pid in rows[:5]} == {str(os.getpid())} and len({pid for _, pid in rows[5:]}) == 2
    names = sorted(p.name for p in (tmp_path / "field1").iterdir())
    assert len(names) == 13 and names == sorted(p.name for p in (tmp_path / "field2").iterdir())   # with the marker
    for name in names:
        assert (tmp_path / "field1" / name).read_bytes() == (tmp_path / "field2" / name).read_bytes(), name
    assert _no_child_left()
