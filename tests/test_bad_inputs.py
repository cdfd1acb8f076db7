"""The bad-input corpus (tests/bad_inputs/cases.yaml) through the commands.

CONTRACT.md: bad input gives exit status 2 and one line on stderr naming the file and the place
(line, column or settings key), no traceback, and no output folder, not even a partial one. Every
case runs its command line in a folder of its own holding only its files, with temporary folders
and the cache inside the compared tree, so that a temporary file left behind or a cache written
before the refusal counts as written. All cases run in-process through ``fabric2seis.cli.main``
(start-up would dominate); one case of each reader and command runs as a real process as well.
"""

from __future__ import annotations

import hashlib
import os
import shlex
import subprocess
import sys
import tempfile
from pathlib import Path

import pytest

from fabric2seis.cli import main

sys.path.insert(0, str(Path(__file__).parent / "bad_inputs"))
import make_cases  # noqa: E402

CASES = make_cases.load_cases()
#: run as real processes too: one per reader, the settings, the field and stack commands
AS_PROCESS = ("table_nan_weight", "ang_hexagonal_header_over_square_points", "ctf_xcells_against_the_points",
              "h5_text_named_h5", "settings_bootstrap_beyond_memory", "settings_python_tag",
              "measurements_null_neither_true_nor_false", "stack_back_azimuth_step_beyond_memory")


@pytest.fixture(scope="session")
def results_folder(tmp_path_factory):
    """A real results folder of `fabric2seis sample` (a good grain list with a field placement)."""
    return make_cases.make_results(tmp_path_factory.mktemp("results"))


def tree(folder: Path) -> dict[str, str]:
    """Every file and folder under ``folder``, with a digest of each file's contents."""
    return {str(p.relative_to(folder)): hashlib.sha256(p.read_bytes()).hexdigest() if p.is_file() else "folder"
            for p in sorted(folder.rglob("*"))}


def case_folder(case: dict, root: Path, results: Path) -> tuple[Path, Path, Path]:
    """The case's working folder with its files, and empty temporary and cache folders beside it."""
    work, scratch, cache = root / "case", root / "tmp", root / "cache"
    for folder in (work, scratch, cache):
        folder.mkdir()
    make_cases.prepare(case, work, results if case.get("results") else None)
    return work, scratch, cache


def check_refusal(case: dict, code, out: str, err: str) -> None:
    assert code == 2, f"exit {code}: {err}"
    assert "Traceback" not in out + err, err
    assert err.endswith("\n") and err.count("\n") == 1, f"not one line: {err!r}"
    for part in ("names", "where", "message"):
        assert case[part] in err, f"no {part} {case[part]!r} in: {err}"


@pytest.mark.parametrize("case", CASES, ids=[c["name"] for c in CASES])
def test_bad_input_is_refused_in_one_line(case, tmp_path, monkeypatch, capsys, results_folder):
    work, scratch, cache = case_folder(case, tmp_path, results_folder)
    monkeypatch.chdir(work)
    monkeypatch.setattr(tempfile, "tempdir", str(scratch))
    monkeypatch.setenv("XDG_CACHE_HOME", str(cache))
    before = tree(tmp_path)
    code = main(shlex.split(case["run"]))
    out, err = capsys.readouterr()
    check_refusal(case, code, out, err)
    assert tree(tmp_path) == before, "something was written"


@pytest.mark.parametrize("name", AS_PROCESS)
def test_bad_input_as_a_real_process(name, tmp_path, tmp_path_factory, results_folder):
    case = next(c for c in CASES if c["name"] == name)
    work, scratch, cache = case_folder(case, tmp_path, results_folder)
    before = tree(tmp_path)
    env = {**os.environ, "TMPDIR": str(scratch), "XDG_CACHE_HOME": str(cache), "PYTHONWARNINGS": "default",
           "MPLCONFIGDIR": str(tmp_path_factory.mktemp("matplotlib"))}    # matplotlib's own font cache
    run = subprocess.run([sys.executable, "-m", "fabric2seis", *shlex.split(case["run"])], cwd=work, env=env,
                         capture_output=True, text=True, timeout=120)
    check_refusal(case, run.returncode, run.stdout, run.stderr)     # warnings would add lines too
    assert tree(tmp_path) == before, "something was written"


def test_the_corpus_covers_every_reader_and_command():
    assert len(CASES) >= 60
    assert len({c["name"] for c in CASES}) == len(CASES)
    for case in CASES:
        assert case["why"].strip() and case["where"].strip() and case["message"].strip(), case["name"]
        for name in case.get("files", []):
            assert (make_cases.FILES / name).is_file() or name in make_cases.MAKERS, f"{case['name']}: {name}"
    runs = [shlex.split(c["run"]) for c in CASES]
    inputs = [r[1] for r in runs if r[0] == "sample"]
    for suffix in (".csv", ".ang", ".ctf", ".h5", ".gz"):              # every reader (ingest/io)
        assert sum(i.endswith(suffix) for i in inputs) >= 2, f"too few cases read {suffix}"
    assert sum("--settings" in r for r in runs) >= 20
    assert sum(r[0] == "field" and "--stack" not in r for r in runs) >= 10
    assert sum("--stack" in r for r in runs) >= 10


@pytest.mark.parametrize("encoding", ["utf-8", "utf-8-sig", "utf-16"])
def test_sidecars_in_utf8_and_utf16_with_its_mark_are_read(tmp_path, encoding):
    """The encodings a sidecar may be saved in (Python's "utf-16" writes the byte-order mark)."""
    from fabric2seis.settings import settings_for

    (tmp_path / "s.csv").write_text("phase,phi1,Phi,phi2\n")
    text = "# Vallmora, 12\u00b0 kernel\nodf:\n  halfwidth_deg: 12\nphases: {Forsterit\u00e9: olivine}\n"
    (tmp_path / "s.yaml").write_bytes(text.encode(encoding))
    settings, source = settings_for(tmp_path / "s.csv")
    assert source == str(tmp_path / "s.yaml")
    assert settings["odf"]["halfwidth_deg"] == 12 and settings["phases"] == {"Forsterit\u00e9": "olivine"}
