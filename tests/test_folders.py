"""outputs: which folders may be replaced, atomic replacement, stale temporary folders.

The rules are this project's own (never delete a user's files); the facts they rest on are
POSIX's: rename(2) within one file system is atomic, and kill(pid, 0) fails with ESRCH for a
process that has ended (common practice).
"""

import json
import os
import subprocess

import pytest

from fabric2seis.errors import InputError
from fabric2seis.folders import (
    MARKER,
    _host_tag,
    check_destination,
    clear_stale_temporaries,
    folder_written_whole,
    remove_results,
    written_kind,
)


def dead_pid() -> int:
    """The pid of a process that has ended (and been reaped)."""
    child = subprocess.Popen(["true"])
    child.wait()
    return child.pid


def temporary(parent, name, role, pid, host=None):
    folder = parent / f".{name}.{role}-{host or _host_tag()}-{pid}-0123abcd"
    folder.mkdir()
    (folder / "summary.json").write_text("{}")
    return folder


def results_folder(path, kind="sample", text="old"):
    path.mkdir(parents=True)
    (path / "summary.json").write_text(text)
    (path / MARKER).write_text(json.dumps({"kind": kind}))
    return path


def test_refused_destinations(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    data = tmp_path / "data"
    data.mkdir()
    (data / "a.ang").write_text("x")
    user = tmp_path / "mine"
    user.mkdir()
    (user / "notes.txt").write_text("keep")
    cases = {".": "current folder", "..": "current folder", "data/..": "current folder",
             "data/sub/..": "'.' or '..'", str(tmp_path.parent): "current folder",
             "results": "results root", str(data): "holds the input", str(user): "not written by fabric2seis",
             str(data / "a.ang"): "holds the input"}
    for out, message in cases.items():
        with pytest.raises(InputError, match=message):
            check_destination(out, "sample", inputs=[data / "a.ang"])
    (tmp_path / "file.txt").write_text("x")
    with pytest.raises(InputError, match="is a file"):
        check_destination("file.txt", "sample")
    with pytest.raises(InputError, match="inside the input folder"):
        check_destination(data / "sub", "field", inputs=[data])
    results_folder(tmp_path / "f", kind="field")
    with pytest.raises(InputError, match="holds fabric2seis field results"):
        check_destination("f", "sample")
    outer = results_folder(tmp_path / "outer")
    results_folder(outer / "inner")
    with pytest.raises(InputError, match="holds other fabric2seis results"):
        check_destination(outer, "sample")
    (tmp_path / "link").symlink_to(results_folder(tmp_path / "target"))
    with pytest.raises(InputError, match="symbolic link"):
        check_destination("link", "sample")


def test_allowed_destinations(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "empty").mkdir()
    results_folder(tmp_path / "results" / "s1")
    for out in ("new", "empty", "results/s1", "results/new"):
        assert check_destination(out, "sample", inputs=[tmp_path / "x.ang"]) == type(tmp_path)(out)


def test_replacement_keeps_nothing_of_the_old_folder_and_marks_the_new(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    out = results_folder(tmp_path / "res")
    (out / "stale.png").write_text("old figure")
    with folder_written_whole(out, "sample") as tmp:
        (tmp / "summary.json").write_text("new")
    assert sorted(p.name for p in out.iterdir()) == sorted([MARKER, "summary.json"])
    assert (out / "summary.json").read_text() == "new" and written_kind(out) == "sample"
    assert [p.name for p in tmp_path.iterdir()] == ["res"]          # nothing left beside it


def test_failure_leaves_the_old_folder_as_it_was(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    out = results_folder(tmp_path / "res")
    with pytest.raises(RuntimeError):
        with folder_written_whole(out, "sample") as tmp:
            (tmp / "summary.json").write_text("half")
            raise RuntimeError("killed")
    assert (out / "summary.json").read_text() == "old"
    assert [p.name for p in tmp_path.iterdir()] == ["res"]


def test_stale_temporaries_are_matched_literally_and_only_when_stale(tmp_path):
    gone = dead_pid()
    other_host = "ffffffff" if _host_tag() != "ffffffff" else "eeeeeeee"
    mine_stale = temporary(tmp_path, "s[1]", "partial", gone)
    mine_alive = temporary(tmp_path, "s[1]", "partial", os.getppid())        # a live process: pytest's parent
    mine_remote = temporary(tmp_path, "s[1]", "partial", gone, host=other_host)  # another machine, recent
    glob_match = temporary(tmp_path, "s1", "partial", gone)      # what the glob '.s[1].partial-*' would match
    star_match = temporary(tmp_path, "sX", "partial", gone)      # what '.s*.partial-*' would match
    longer = tmp_path / f".s[1].partial-x.partial-{_host_tag()}-{gone}-0123abcd"   # another sample's
    longer.mkdir()
    assert clear_stale_temporaries(tmp_path / "s[1]") == [mine_stale]
    clear_stale_temporaries(tmp_path / "s*")
    for kept in (mine_alive, mine_remote, glob_match, star_match, longer):
        assert kept.is_dir(), kept.name
    os.utime(mine_remote, (0, 0))                                # now older than STALE_AFTER_S
    assert clear_stale_temporaries(tmp_path / "s[1]") == [mine_remote]


def test_old_results_moved_aside_by_a_run_that_died_are_put_back(tmp_path):
    aside = temporary(tmp_path, "res", "replaced", dead_pid())
    (aside / MARKER).write_text(json.dumps({"kind": "sample"}))
    clear_stale_temporaries(tmp_path / "res")
    assert (tmp_path / "res" / "summary.json").read_text() == "{}" and not aside.exists()


def test_remove_results_removes_only_fabric2seis_folders(tmp_path):
    mine = results_folder(tmp_path / "mine")
    user = tmp_path / "user"
    user.mkdir()
    (user / "summary.json").write_text("a user's file")
    assert remove_results(user, "sample") is False and (user / "summary.json").exists()
    assert remove_results(mine, "field") is False and mine.exists()
    assert remove_results(mine, "sample") is True and not mine.exists()
    assert [p.name for p in tmp_path.iterdir()] == ["user"]
