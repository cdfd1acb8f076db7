"""Small samples several to a job (fabric2seis.workflow.batches), without Snakemake.

The suite through Snakemake with batches is in tests/test_workflow.py
(test_batched_small_samples_keep_their_own_outputs_failures_and_tracking).
"""

import json

from fabric2seis.errors import InputError
from fabric2seis.folders import folder_written_whole
from fabric2seis.workflow.batches import BatchMember, inputs_digest, kept_status, run_batch, sample_batches
from fabric2seis.workflow.status import read_manifest, read_status, results_state


def _files(folder, sizes):
    folder.mkdir(exist_ok=True)
    paths = {}
    for name, size in sizes.items():
        paths[name] = folder / f"{name}.csv"
        paths[name].write_bytes(b"x" * size)
    return paths


def test_small_samples_go_in_name_order_per_job_to_a_batch_and_large_ones_alone(tmp_path):
    samples = _files(tmp_path, {"c": 100, "a": 100, "big": 3000, "b": 2048, "d": 10})
    assert sample_batches(samples, per_job=2, max_size_kb=2) == [["a", "b"], ["c", "d"]]   # 2048 bytes: 2 kB, small
    assert sample_batches(samples, per_job=3, max_size_kb=2) == [["a", "b"], ["c", "d"]]   # sizes differ by <= 1
    assert sample_batches(samples, per_job=1, max_size_kb=2) == []      # 1: every sample a job of its own
    assert sample_batches(samples, per_job=8, max_size_kb=0.001) == []


def test_small_samples_are_shared_in_jobs_of_nearly_equal_size_and_a_batch_holds_two_or_more(tmp_path):
    # common practice (batching many short jobs): as few processes as per_job allows, of equal
    # load, so that the last job is not a straggler of one sample; a batch of one would be a job
    # of its own under another name
    samples = _files(tmp_path, {name: 100 for name in "abcdefghij"})
    assert sample_batches(samples, per_job=8, max_size_kb=1) == [list("abcde"), list("fghij")]   # not 8 + 2
    assert sample_batches(samples, per_job=4, max_size_kb=1) == [list("abcd"), list("efg"), list("hij")]
    assert sample_batches(samples, per_job=10, max_size_kb=1) == [list("abcdefghij")]
    one_each = _files(tmp_path / "two", {"a": 100, "b": 100, "c": 100})
    assert sample_batches(one_each, per_job=2, max_size_kb=1) == [["a", "b"]]        # c alone, no batch of one
    every = [name for batch in sample_batches(samples, per_job=3, max_size_kb=1) for name in batch]
    assert every == list("abcdefghij")                                          # each once, in name order


def test_the_inputs_digest_follows_the_file_and_the_settings(tmp_path):
    path = _files(tmp_path, {"a": 100})["a"]
    first = inputs_digest(path, "settings-1")
    assert inputs_digest(path, "settings-1") == first
    assert inputs_digest(path, "settings-2") != first
    path.write_bytes(b"y" * 100)                         # same size, other bytes
    assert inputs_digest(path, "settings-1") != first


def _member(root, name, input_file, settings="s1"):
    status_file = root / "status" / f"{name}.json"
    return BatchMember(name, str(input_file), str(status_file), str(root / name), settings,
                       results_state(status_file, root / name), str(root / "logs" / "sample" / f"{name}.log"))


def _writer(calls, root):
    def run(member):
        calls.append(member.sample)
        if member.sample == "bad":
            raise InputError("not a table", source=member.input)
        with folder_written_whole(member.out, "sample", results_root=root) as tmp:
            (tmp / "summary.json").write_text(json.dumps({"sample": member.sample}))
    return run


def test_a_batch_records_each_member_keeps_unchanged_ones_and_recomputes_changed_or_forced(tmp_path):
    root = tmp_path / "results"
    files = _files(tmp_path / "samples", {"a": 10, "bad": 10, "c": 10})
    calls: list[str] = []
    members = [_member(root, name, files[name]) for name in ("a", "bad", "c")]
    statuses = run_batch(members, _writer(calls, root), note=lambda line: None)
    assert calls == ["a", "bad", "c"]
    assert [s.status for s in statuses][::2] == ["ok", "ok"]
    assert read_status(root / "status" / "bad.json").status.startswith(f"{files['bad']}: not a table")
    assert (root / "logs" / "sample" / "bad.log").read_text().count("not a table") == 1   # its own log
    assert not (root / "bad").exists() and (root / "a" / "summary.json").is_file()

    # Snakemake deletes a job's outputs before it runs it again: the status files go, manifests stay
    for member in members:
        (root / "status" / f"{member.sample}.json").unlink()
    files["c"].write_bytes(b"z" * 10)                               # c's file changed
    (root / "a" / "summary.json").unlink()                          # a's results incomplete
    members = [_member(root, name, files[name]) for name in ("a", "bad", "c")]
    assert kept_status(members[1], inputs_digest(files["bad"], "s1")) is not None
    calls.clear()
    run_batch(members, _writer(calls, root), note=lambda line: None)
    assert calls == ["a", "c"]                                      # the failed sample kept its status line
    assert read_status(root / "status" / "bad.json").status.startswith(f"{files['bad']}: not a table")
    assert read_manifest(root / "status" / "c.json").inputs == inputs_digest(files["c"], "s1")

    for member in members:
        (root / "status" / f"{member.sample}.json").unlink()
    calls.clear()
    run_batch([_member(root, name, files[name], settings="s2") for name in ("a", "bad", "c")], _writer(calls, root),
              note=lambda line: None)
    assert calls == ["a", "bad", "c"]                               # new settings: every member again
    calls.clear()
    run_batch([_member(root, name, files[name], settings="s2") for name in ("a", "bad", "c")], _writer(calls, root),
              recompute=True, note=lambda line: None)
    assert calls == ["a", "bad", "c"]                               # a forced run


def test_a_batch_loads_the_figures_libraries_once_and_only_when_it_computes_two_or_more(tmp_path):
    # common practice (fork without exec): what the batch process imports before the samples' second
    # processes are forked, they inherit; one sample alone needs no orix in its own process
    root = tmp_path / "results"
    files = _files(tmp_path / "samples", {"a": 10, "b": 10})
    members = [_member(root, name, files[name]) for name in ("a", "b")]
    loads: list[int] = []
    calls: list[str] = []
    run_batch(members, _writer(calls, root), note=lambda line: None, before_several=lambda: loads.append(len(calls)))
    assert loads == [0] and calls == ["a", "b"]             # once, before the first member
    for member in members:
        (root / "status" / f"{member.sample}.json").unlink()
    files["b"].write_bytes(b"z" * 10)                       # only b changed: one to compute
    calls.clear()
    run_batch([_member(root, name, files[name]) for name in ("a", "b")], _writer(calls, root),
              note=lambda line: None, before_several=lambda: loads.append(len(calls)))
    assert calls == ["b"] and loads == [0]
