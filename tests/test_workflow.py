"""The Snakemake workflow on a small temporary suite (CONTRACT.md, outputs of the suite)."""

import json
import os
import re
import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from fabric2seis.elastic.minerals import find_mineral
from fabric2seis.ingest.io.write import write_table
from fabric2seis.synth import fabric_orientations

ROOT = Path(__file__).resolve().parents[1]
# Snakemake runs each rule's script in a new Python process: make it import this checkout of
# fabric2seis, not whichever copy happens to be installed.
os.environ["PYTHONPATH"] = os.pathsep.join(p for p in (str(ROOT), os.environ.get("PYTHONPATH")) if p)
FIGURES = ("pole_figures", "inverse_pole_figures", "fabric_convergence", "velocities")
# a Snakemake report plugin that writes the report's structure as JSON (tests/report_plugin)
REPORT_PLUGIN = Path(__file__).resolve().parent / "report_plugin"
PLAIN_STACK = ("period_s: 8\nback_azimuth_step_deg: 10\nlayers:\n  - {name: deep, fast_azimuth_deg: 30, delay_s: 1.0}\n"
               "  - {name: crust, fast_azimuth_deg: 120, delay_s: 0.4}\n")
PLACED = ("field: {foliation_strike_deg: 30.0, foliation_dip_deg: 5.0, lineation_pitch_deg: 15.0, "
          "layer_thickness_km: 60.0}\n")


def _planned_jobs(dry_run_text: str) -> list[tuple[str, str]]:
    """(rule, sample) of every per-sample job in the text of a Snakemake dry run."""
    jobs, rule = [], None
    for line in dry_run_text.splitlines():
        if m := re.match(r"\s*(?:local)?rule (\w+):", line):
            rule = m.group(1)
        elif m := re.match(r"\s*wildcards: sample=(.*)$", line):
            jobs.append((rule, m.group(1).strip()))
    return sorted(jobs)


def _batch_members(dry_run_text: str) -> list[str]:
    """The samples of the batch jobs (``sample_batch_<n>``: their outputs are the members' status files)."""
    members, rule = [], None
    for line in dry_run_text.splitlines():
        if m := re.match(r"\s*(?:local)?rule (\w+):", line):
            rule = m.group(1)
        elif (m := re.match(r"\s*output: (.*)$", line)) and rule and rule.startswith("sample_batch_"):
            members += [Path(path).stem for path in m.group(1).split(", ")]
    return sorted(members)


@pytest.fixture(scope="module")
def suite(tmp_path_factory):
    folder = tmp_path_factory.mktemp("suite")
    samples = folder / "samples"
    samples.mkdir()
    ol = find_mineral("olivine")
    for name, fabric in (("one sample", "olivine-A"), ("two", "olivine-B")):   # a space in a name
        write_table(samples / f"{name}.csv", fabric_orientations(ol, fabric, 120, 20.0, seed=3), ["olivine"] * 120)
        (samples / f"{name}.yaml").write_text("bootstrap: {n: 20}\n")
    (samples / "one sample.yaml").write_text("bootstrap: {n: 20}\n" + PLACED)    # a splitting figure too
    (samples / "broken.ctf").write_bytes(b"\x00\x01\x02 not a ctf")
    (samples / "measured.csv").write_text((ROOT / "demo_samples" / "field_measurements.csv").read_text())
    results = folder / "results"
    (folder / "two_layers.yaml").write_text(PLAIN_STACK)     # a stack in the results: the report's Stacks
    subprocess.run([sys.executable, "-m", "fabric2seis", "field", "--stack", str(folder / "two_layers.yaml"), "--out",
                    str(results / "stack")], cwd=ROOT, check=True, capture_output=True)
    run = subprocess.run([sys.executable, "-m", "fabric2seis", "suite", "--samples", str(samples),
                          "--results", str(results), "--cores", "2", "-q"], cwd=ROOT, capture_output=True, text=True)
    return samples, results, run


def test_suite_processes_good_samples_and_reports_the_bad_one(suite):
    samples, results, run = suite
    assert run.returncode == 0, run.stderr[-2000:]
    table = pd.read_csv(results / "suite_summary.csv")
    status = dict(zip(table["sample"], table["status"]))
    assert status["one sample"] == "ok" and status["two"] == "ok"
    assert "broken.ctf" in status["broken"] and "not a text file" in status["broken"]
    assert not (results / "broken").exists()
    assert (results / "suite_comparison.png").stat().st_size > 1000


def test_suite_outputs_agree_with_the_sample_command(suite, tmp_path):
    samples, results, _ = suite
    direct = tmp_path / "direct"
    subprocess.run([sys.executable, "-m", "fabric2seis", "sample", str(samples / "two.csv"), "--out", str(direct)],
                   cwd=ROOT, check=True, capture_output=True)
    a = json.loads((results / "two" / "summary.json").read_text())
    b = json.loads((direct / "summary.json").read_text())
    assert a == b


def test_spreadsheet_tables_and_text_tensors_of_the_suite_hold_the_summaries_numbers(suite):
    # the numbers a user copies into a paper, read back through the suite command's own files and
    # compared with summary.json and stiffness.json read independently (CONTRACT.md outputs)
    _, results, _ = suite
    short = pd.read_csv(results / "suite_table.csv").set_index("sample")
    long = pd.read_csv(results / "suite_long.csv", keep_default_na=False)
    assert list(long.columns) == ["sample", "phase", "quantity", "value", "low", "high", "unit"]
    assert (short.loc["broken", "status"] != "ok") and short.loc[["one sample", "two"], "status"].eq("ok").all()
    assert "n_grains,".encode() in (results / "suite_table.csv").read_bytes()
    assert ",120," in (results / "suite_table.csv").read_text()          # an integer stays an integer
    for name in ("one sample", "two"):
        summary = json.loads((results / name / "summary.json").read_text())
        row = short.loc[name]
        assert row["Vp max (km/s)"] == pytest.approx(summary["seismic"]["vp_max_km_s"], rel=1e-6)
        assert row["max AVs (%)"] == pytest.approx(summary["seismic"]["avs_max_pct"], rel=1e-6)
        assert row["J main phase"] == pytest.approx(summary["phases"]["olivine"]["J"], rel=1e-6)
        assert [row["J 95% low"], row["J 95% high"]] == pytest.approx(summary["uncertainty"]["olivine.J"], rel=1e-6)
        j = long[(long["sample"] == name) & (long["phase"] == "olivine") & (long["quantity"] == "J-index")]
        assert len(j) == 1 and j["unit"].iloc[0] == "dimensionless"
        assert j[["value", "low", "high"]].astype(float).iloc[0].tolist() == pytest.approx(
            [summary["phases"]["olivine"]["J"], *summary["uncertainty"]["olivine.J"]], rel=1e-6)
        stiffness = json.loads((results / name / "stiffness.json").read_text())
        for average in ("voigt", "reuss", "hill", "geometric"):
            text = (results / name / f"stiffness_{average}.txt").read_text()
            assert "GPa" in text and "11 22 33 23 13 12" in text and "kg m^-3" in text
            assert np.allclose(np.loadtxt(results / name / f"stiffness_{average}.txt"), stiffness[average], atol=1e-6)


def _report_structure(samples, results, out):
    """The report's categories, subcategories, entries and front page, from Snakemake's own report data.

    Built through Snakemake's report-plugin interface (a reporter that writes what Snakemake hands
    it as JSON: tests/report_plugin), not by reading the HTML.
    """
    env = {**os.environ, "PYTHONPATH": os.pathsep.join([str(REPORT_PLUGIN), os.environ["PYTHONPATH"]])}
    run = subprocess.run([sys.executable, "-m", "snakemake", "--reporter", "structure", "--report-structure-path",
                          str(out), "--config", f"samples_dir={samples}", f"results_dir={results}"], cwd=ROOT,
                         capture_output=True, text=True, timeout=600, env=env)
    assert run.returncode == 0, run.stderr[-2000:]
    return json.loads(out.read_text())


def test_report_has_a_front_page_categories_captions_and_the_failed_sample_as_an_entry(suite, tmp_path):
    samples, results, _ = suite
    structure = _report_structure(samples, results, tmp_path / "structure.json")
    categories = structure["categories"]
    assert set(categories) == {"Suite", "Samples", "Field comparison", "Stacks"}
    # Suite: the overview with the version and settings digest, the table and the comparison figure
    suite = {e["name"]: e for e in categories["Suite"]["all samples"]}
    assert set(suite) == {"suite_overview.csv", "suite_summary.csv", "suite_comparison.png"}
    from fabric2seis import __version__
    labels = suite["suite_overview.csv"]["labels"]
    assert labels["fabric2seis"] == __version__ and re.fullmatch(r"[0-9a-f]{12}", labels["settings digest"])
    assert "numbered as in the suite comparison figure" in suite["suite_overview.csv"]["caption"]
    overview = pd.read_csv(suite["suite_overview.csv"]["path"], keep_default_na=False)
    assert overview["sample"].tolist() == ["one sample", "two", "broken"]          # failed last, unnumbered
    assert overview["number"].astype(str).tolist() == ["1", "2", ""]
    # Samples: one subcategory per sample; a failed sample has one entry, its error, in its data and labels
    assert set(categories["Samples"]) == {"one sample", "two", "broken"}
    for sample in ("one sample", "two"):
        entries = {e["name"]: e for e in categories["Samples"][sample]}
        for figure in FIGURES:
            entry = entries[f"{figure}.png"]
            assert entry["mime"] == "image/png" and entry["labels"]["sample"] == sample
            assert f"of sample {sample}" in entry["caption"] and "Look for" in entry["caption"]
        assert "X (lineation) to the right" in entries["pole_figures.png"]["caption"]
        assert entries["key_numbers.csv"]["labels"] == {"content": "key numbers (table)", "sample": sample,
                                                        "status": "ok"}
    one = {e["name"] for e in categories["Samples"]["one sample"]}
    assert {"splitting_vs_backazimuth.png", "splitting_vs_backazimuth.csv"} <= one
    assert "splitting_vs_backazimuth.png" not in {e["name"] for e in categories["Samples"]["two"]}   # no field
    [error] = categories["Samples"]["broken"]
    assert error["name"] == "error.csv" and error["labels"]["status"].startswith("failed: ")
    assert "not a text file" in error["labels"]["status"] and "Sample broken failed" in error["caption"]
    assert "not a text file" in pd.read_csv(error["path"])["error"].iloc[0]
    # Field comparison: all stations, then one subcategory per station with each sample's two figures
    field = categories["Field comparison"]
    assert set(field) == {"all stations", "station VLM-N", "station VLM-S"}
    assert {e["name"] for e in field["all stations"]} == {"field_fit.json", "fast_directions.png", "fits.csv"}
    for station in ("VLM-N", "VLM-S"):
        entries = {(e["name"], e["labels"]["sample"]): e for e in field[f"station {station}"]}
        assert set(entries) == {("fits.csv", "all"), ("predictions.csv", "all")} | {
            (f"{kind}.png", s) for kind in ("splitting", "misfit") for s in ("one sample", "two")}
        misfit = entries[("misfit.png", "two")]["caption"]
        assert f"sample two at station {station}" in misfit and "2.30 and 6.18" in misfit
        fits = pd.read_csv(entries[("fits.csv", "all")]["path"])
        assert set(fits["station"]) == {station} and set(fits["sample"]) == {"one sample", "two"}
    # Stacks: the stack folder found in the results
    assert {e["name"] for e in categories["Stacks"]["stack"]} == {"stack_splitting.png", "stack_splitting.csv"}
    # the front page: title, version, digest and every sample with its status
    front = structure["description"]
    assert "fabric2seis: seismic anisotropy of a suite of samples" in front
    assert f"fabric2seis {__version__}" in front and labels["settings digest"] in front
    assert re.search(r"broken\s+failed: .*not a text file", front) and re.search(r"\btwo\s+ok\b", front)
    # the numbers of the key table are those of the summary
    numbers = pd.read_csv(results / "report_parts" / "samples" / "two" / "key_numbers.csv")
    summary = json.loads((results / "two" / "summary.json").read_text())
    avs = numbers.set_index("quantity").loc["AVs max"]
    assert float(avs["value"]) == pytest.approx(summary["seismic"]["avs_max_pct"], rel=1e-12)
    assert [avs["low"], avs["high"]] == pytest.approx(summary["uncertainty"]["avs_max_pct"], rel=1e-12)


def test_html_report_is_built(suite):
    # the command the README gives; its contents are checked through the structure above
    samples, results, _ = suite
    report = results / "report.html"
    run = subprocess.run([sys.executable, "-m", "snakemake", "--report", str(report), "--config",
                          f"samples_dir={samples}", f"results_dir={results}"], cwd=ROOT, capture_output=True,
                         text=True, timeout=600)
    assert run.returncode == 0, run.stderr[-2000:]
    assert report.stat().st_size > 100_000


def test_rerun_has_nothing_to_do_and_a_new_file_is_planned(suite):
    samples, results, _ = suite
    cmd = [sys.executable, "-m", "snakemake", "-n", "--cores", "1", "--config", f"samples_dir={samples}",
           f"results_dir={results}"]
    dry = subprocess.run(cmd, cwd=ROOT, capture_output=True, text=True)
    assert "Nothing to be done" in dry.stdout + dry.stderr
    ol = find_mineral("olivine")
    write_table(samples / "three.csv", fabric_orientations(ol, "olivine-C", 50, 20.0, seed=1), ["olivine"] * 50)
    dry = subprocess.run(cmd, cwd=ROOT, capture_output=True, text=True)
    text = dry.stdout + dry.stderr
    # the grain lists are small samples, computed several to a job (config small_samples, the default):
    # the new one joins their batch job, which keeps the members whose inputs and results are unchanged
    # (tests/test_workflow_tracking.py runs it); no job of the other samples' own
    members = _batch_members(text)
    assert "three" in members, text[-1500:]
    assert {sample for rule, sample in _planned_jobs(text) if rule == "sample"} == set(), text[-1500:]
    assert ("sample_report", "three") in _planned_jobs(text)
    (samples / "three.csv").unlink()


def _small_suite(folder, n_samples=1):
    samples = folder / "samples"
    samples.mkdir()
    ol = find_mineral("olivine")
    for k in range(n_samples):
        write_table(samples / f"s{k}.csv", fabric_orientations(ol, "olivine-A", 100, 20.0, seed=k), ["olivine"] * 100)
        (samples / f"s{k}.yaml").write_text("bootstrap: {n: 20}\n")
    return samples, folder / "results"


def test_generic_cluster_executor_with_a_local_submit_script(tmp_path):
    # The path a cluster takes: job scripts handed to a submit command (config/profiles/local-cluster)
    samples, results = _small_suite(tmp_path)
    run = subprocess.run([sys.executable, "-m", "snakemake", "--profile", "config/profiles/local-cluster",
                          "--config", f"samples_dir={samples}", f"results_dir={results}", "-q"],
                         cwd=ROOT, capture_output=True, text=True, timeout=900)
    assert run.returncode == 0, run.stderr[-2000:]
    assert pd.read_csv(results / "suite_summary.csv")["status"].tolist() == ["ok"]


def test_killed_run_completes_on_rerun_without_half_written_outputs(tmp_path):
    import signal
    import time
    samples, results = _small_suite(tmp_path, n_samples=3)
    cmd = [sys.executable, "-m", "snakemake", "--cores", "1", "--config", f"samples_dir={samples}",
           f"results_dir={results}", "-q"]
    proc = subprocess.Popen(cmd, cwd=ROOT, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, start_new_session=True)
    deadline = time.time() + 300
    while time.time() < deadline:
        if (results / "status").exists() and list((results / "status").glob("*.json")):
            break
        time.sleep(0.5)
    time.sleep(2.0)                                   # part way through the next sample
    import os
    os.killpg(proc.pid, signal.SIGKILL)
    proc.wait()
    # what a user does after a crash (Snakemake's own advice): release the lock, rerun incomplete jobs
    subprocess.run(cmd[:3] + ["--unlock"] + cmd[3:], cwd=ROOT, capture_output=True, timeout=300)
    rerun = subprocess.run(cmd[:3] + ["--rerun-incomplete"] + cmd[3:], cwd=ROOT, capture_output=True, text=True,
                           timeout=900)
    assert rerun.returncode == 0, rerun.stderr[-2000:]
    assert pd.read_csv(results / "suite_summary.csv")["status"].tolist() == ["ok"] * 3
    assert not list(results.glob(".*partial*"))       # no temporary folders left behind
    for k in range(3):
        assert json.loads((results / f"s{k}" / "summary.json").read_text())["sample"] == f"s{k}"


def test_editing_one_sidecar_recomputes_only_that_sample(tmp_path):
    # the two grain lists are small samples, one batch job by default (config small_samples): the edit
    # reruns that job, which computes s1 again and keeps s0 (its run.log untouched)
    samples, results = _small_suite(tmp_path, n_samples=2)
    cmd = [sys.executable, "-m", "snakemake", "--cores", "2", "--config", f"samples_dir={samples}",
           f"results_dir={results}", "-q"]
    assert subprocess.run(cmd, cwd=ROOT, capture_output=True, timeout=900).returncode == 0
    before = {name: (results / name / "run.log").stat().st_mtime_ns for name in ("s0", "s1")}
    (samples / "s1.yaml").write_text("bootstrap: {n: 20}\ngrains: {min_pixels: 3}\n")
    dry = subprocess.run(cmd[:3] + ["-n"] + cmd[3:-1], cwd=ROOT, capture_output=True, text=True, timeout=300)
    text = dry.stdout + dry.stderr
    assert "s1" in _batch_members(text) or ("sample", "s1") in _planned_jobs(text), text[-1500:]
    assert subprocess.run(cmd, cwd=ROOT, capture_output=True, timeout=900).returncode == 0
    assert (results / "s0" / "run.log").stat().st_mtime_ns == before["s0"]
    assert (results / "s1" / "run.log").stat().st_mtime_ns != before["s1"]


def test_own_minerals_reach_every_sample_of_the_suite_and_an_edit_reruns_it(tmp_path):
    # `fabric2seis suite --minerals DIR`: an entry of a packaged name replaces it (here olivine with a
    # density changed by hand), and editing that file makes the suite run the samples again
    samples, results = _small_suite(tmp_path)
    own = tmp_path / "own minerals"
    own.mkdir()
    packaged = (ROOT / "fabric2seis" / "elastic" / "minerals" / "data" / "olivine.yaml").read_text()
    cmd = [sys.executable, "-m", "fabric2seis", "suite", "--samples", str(samples), "--results", str(results),
           "--cores", "1", "--minerals", str(own), "-q"]
    densities = []
    for density in (3300.0, 3310.0):
        (own / "olivine.yaml").write_text(re.sub(r"(?m)^density_kg_m3:.*$", f"density_kg_m3: {density}", packaged))
        run = subprocess.run(cmd, cwd=tmp_path, capture_output=True, text=True, timeout=900)
        assert run.returncode == 0, run.stderr[-2000:]
        summary = json.loads((results / "s0" / "summary.json").read_text())
        densities.append(summary["density_kg_m3"])
        assert summary["mineral_library"]["used"]["olivine"]["origin"] == "user"
    assert densities == [3300.0, 3310.0]      # a one-mineral rock has the mineral's density (common practice)


def test_settings_given_with_config_on_the_command_line_reach_the_samples(tmp_path):
    # `snakemake --config odf='{halfwidth_deg: 15}'` changes the defaults under every sidecar
    samples, results = _small_suite(tmp_path)
    run = subprocess.run([sys.executable, "-m", "snakemake", "--cores", "1", "--config", f"samples_dir={samples}",
                          f"results_dir={results}", "odf={halfwidth_deg: 15}", "-q"],
                         cwd=ROOT, capture_output=True, text=True, timeout=900)
    assert run.returncode == 0, run.stderr[-2000:]
    summary = json.loads((results / "s0" / "summary.json").read_text())
    assert summary["phases"]["olivine"]["odf_halfwidth_deg"] == 15
    assert summary["uncertainty"]["resamples"] == 20           # the sidecar still counts


SITE_HOOK = '''
import os
if os.environ.get("FABRIC2SEIS_TEST_FAIL_SAMPLE"):
    import fabric2seis.pipeline as pipeline
    _ingest = pipeline.ingest

    def ingest(path, *args, **kwargs):        # a program error in one sample, injected for the test
        if os.environ["FABRIC2SEIS_TEST_FAIL_SAMPLE"] in str(path):
            raise RuntimeError("injected failure")
        return _ingest(path, *args, **kwargs)

    pipeline.ingest = ingest
'''


def test_unreadable_sidecar_and_program_error_become_status_rows(tmp_path):
    samples, results = _small_suite(tmp_path, n_samples=3)
    (samples / "s1.yaml").write_bytes("bootstrap: {n: 20}\n# carotte r\xe2p\xe9e\n".encode("latin-1"))
    hook = tmp_path / "hook"
    hook.mkdir()
    (hook / "sitecustomize.py").write_text(SITE_HOOK)
    env = {**os.environ, "FABRIC2SEIS_TEST_FAIL_SAMPLE": "s2.csv",
           "PYTHONPATH": os.pathsep.join([str(hook), os.environ["PYTHONPATH"]])}
    run = subprocess.run([sys.executable, "-m", "snakemake", "--cores", "2", "--config", f"samples_dir={samples}",
                          f"results_dir={results}", "-q"], cwd=ROOT, capture_output=True, text=True, timeout=900,
                         env=env)
    assert run.returncode == 0, run.stderr[-2000:]
    status = pd.read_csv(results / "suite_summary.csv").set_index("sample")["status"]
    assert status["s0"] == "ok"
    assert "s1.yaml" in status["s1"] and "not UTF-8" in status["s1"]
    assert status["s2"].startswith("program error (RuntimeError: injected failure)")
    assert "Traceback" in (results / "logs" / "sample" / "s2.log").read_text()
    assert not (results / "s1").exists() and not (results / "s2").exists()


def test_suite_merges_the_users_config_with_samples_and_results(tmp_path):
    samples, results = _small_suite(tmp_path)
    run = subprocess.run([sys.executable, "-m", "fabric2seis", "suite", "--samples", str(samples), "--results",
                          str(results), "--cores", "1", "--config", "odf={halfwidth_deg: 15}", "-q"],
                         cwd=ROOT, capture_output=True, text=True, timeout=900)
    assert run.returncode == 0, run.stderr[-2000:]
    summary = json.loads((results / "s0" / "summary.json").read_text())
    assert summary["phases"]["olivine"]["odf_halfwidth_deg"] == 15
    refused = subprocess.run([sys.executable, "-m", "fabric2seis", "suite", "--samples", str(samples),
                              "--config", f"results_dir={tmp_path / 'elsewhere'}"],
                             cwd=ROOT, capture_output=True, text=True, timeout=300)
    assert refused.returncode == 2 and "give the folder with --results" in refused.stderr
    assert "Traceback" not in refused.stderr and not (tmp_path / "elsewhere").exists()


def test_settings_digest_ignores_the_folders_and_sees_every_setting():
    from fabric2seis.workflow.report_files import settings_digest
    settings = {"samples_dir": "a", "results_dir": "b", "odf": {"halfwidth_deg": 10.0}, "averaging": "hill"}
    moved = {**settings, "samples_dir": "elsewhere", "results_dir": "/tmp/other"}
    assert settings_digest(settings) == settings_digest(moved)
    assert settings_digest(settings) != settings_digest({**settings, "odf": {"halfwidth_deg": 15.0}})
    assert settings_digest(settings) != settings_digest({**settings, "averaging": "voigt"})


def test_a_large_map_asks_for_the_idle_cores_and_a_small_sample_for_one_thread(tmp_path):
    # the rule's threads, by the size of the input and the suite's cores per sample
    # (workflow.suite.sample_threads), in a dry run
    from fabric2seis.workflow.suite import LARGE_SAMPLE_BYTES, sample_threads

    samples, results = _small_suite(tmp_path)
    with open(samples / "large.ang", "wb") as handle:          # its size is all the rule looks at
        handle.truncate(LARGE_SAMPLE_BYTES)
    assert sample_threads(samples / "large.ang", samples=1, cores=2) == 2
    assert sample_threads(samples / "large.ang", samples=2, cores=2) == 1     # two jobs side by side instead
    assert sample_threads(samples / "large.ang", samples=2, cores=16) == 2    # LARGE_SAMPLE_THREADS at most
    assert sample_threads(samples / "large.ang", samples=40, cores=None) == 2   # a cluster: cores of its own
    assert sample_threads(samples / "s0.csv", samples=1, cores=2) == 1
    assert sample_threads(samples / "absent.ang") == 1
    dry = subprocess.run([sys.executable, "-m", "snakemake", f"{results}/status/large.json",
                          f"{results}/status/s0.json", "--cores", "4", "-n", "--config", f"samples_dir={samples}",
                          f"results_dir={results}"],
                         cwd=ROOT, capture_output=True, text=True, timeout=300)
    text = dry.stdout + dry.stderr
    assert dry.returncode == 0, text[-2000:]
    threads = {}                          # sample -> the threads line of its job (none: one thread)
    for block in text.split("rule sample:")[1:]:
        job = block.split("\n\n")[0]
        threads[re.search(r"wildcards: sample=(\S+)", job).group(1)] = re.findall(r"threads: (\d+)", job)
    assert threads == {"large": ["2"], "s0": []}, text[-2000:]


def test_the_field_job_asks_for_the_free_cores_up_to_its_limit(tmp_path):
    # the field job runs once every sample is done and draws its figures in as many processes as it
    # has threads: min(--cores, FIELD_THREADS), in a dry run (Snakemake prints a job's threads above 1)
    from fabric2seis.workflow.suite import FIELD_THREADS

    samples, results = _small_suite(tmp_path)
    (samples / "measured.csv").write_text((ROOT / "demo_samples" / "field_measurements.csv").read_text())
    for cores, expected in ((1, []), (2, ["2"]), (16, [str(FIELD_THREADS)])):
        dry = subprocess.run([sys.executable, "-m", "snakemake", f"{results}/field/field_fit.json", "--cores",
                              str(cores), "-n", "--config", f"samples_dir={samples}", f"results_dir={results}"],
                             cwd=ROOT, capture_output=True, text=True, timeout=300)
        text = dry.stdout + dry.stderr
        assert dry.returncode == 0, text[-2000:]
        job = text.split("rule field:")[1].split("\n\n")[0]
        assert re.findall(r"threads: (\d+)", job) == expected, job


def test_a_sample_job_hands_its_threads_to_the_run(tmp_path):
    # Snakemake gives the job its threads (here --set-threads, at most --cores: Snakemake's
    # documentation on threads); the script hands them to run_sample, whose run.log says them
    samples, results = _small_suite(tmp_path)
    run = subprocess.run([sys.executable, "-m", "snakemake", f"{results}/status/s0.json", "--cores", "2", "-q",
                          "--set-threads", "sample=2", "--config", f"samples_dir={samples}", f"results_dir={results}"],
                         cwd=ROOT, capture_output=True, text=True, timeout=900)
    assert run.returncode == 0, run.stderr[-2000:]
    assert (results / "s0" / "run.log").read_text().splitlines()[0].endswith("on 2 threads")


def test_batched_small_samples_keep_their_own_outputs_failures_and_tracking(tmp_path):
    # config small_samples: four grain lists and a bad file, three to a job -> two batch jobs in name order,
    # [broken, s0, s1] and [s2, s3]; every sample keeps the contract's outputs of its own (CONTRACT.md)
    samples, results = _small_suite(tmp_path, n_samples=4)
    (samples / "broken.ctf").write_bytes(b"\x00\x01\x02 not a ctf")
    config = ["--config", f"samples_dir={samples}", f"results_dir={results}", "small_samples={per_job: 3}"]
    cmd = [sys.executable, "-m", "snakemake", "--cores", "2", *config]
    run = subprocess.run(cmd + ["-q"], cwd=ROOT, capture_output=True, text=True, timeout=900)
    assert run.returncode == 0, run.stderr[-2000:]
    assert sorted(p.name for p in (results / "benchmarks" / "sample_batch").iterdir()) == ["1.tsv", "2.tsv"]
    assert not (results / "benchmarks" / "sample").exists()            # no job of a single sample
    status = pd.read_csv(results / "suite_summary.csv").set_index("sample")["status"].to_dict()
    assert sorted(status) == ["broken", "s0", "s1", "s2", "s3"]
    assert "broken.ctf" in status["broken"] and "not a text file" in status["broken"]
    assert not (results / "broken").exists()
    assert (results / "report_parts" / "samples" / "broken" / "error.csv").is_file()
    for k in range(4):
        assert status[f"s{k}"] == "ok"
        assert json.loads((results / f"s{k}" / "summary.json").read_text())["sample"] == f"s{k}"
        assert json.loads((results / "status" / f"s{k}.json").read_text())["status"] == "ok"
        assert (results / "report_parts" / "samples" / f"s{k}" / "key_numbers.csv").is_file()
        assert "done, results in" in (results / "logs" / "sample" / f"s{k}.log").read_text()
    # the third sample of a process gives the bytes of a process of its own
    direct = tmp_path / "direct"
    subprocess.run([sys.executable, "-m", "fabric2seis", "sample", str(samples / "s1.csv"), "--out", str(direct)],
                   cwd=ROOT, check=True, capture_output=True)
    assert (results / "s1" / "summary.json").read_bytes() == (direct / "summary.json").read_bytes()

    # a new sample joins the second batch: only that batch runs, and it computes only the new sample
    ol = find_mineral("olivine")
    write_table(samples / "s4.csv", fabric_orientations(ol, "olivine-C", 100, 20.0, seed=9), ["olivine"] * 100)
    dry = subprocess.run(cmd + ["-n"], cwd=ROOT, capture_output=True, text=True, timeout=300)
    assert re.findall(r"^rule (sample_batch_\d+|sample):", dry.stdout + dry.stderr, re.M) == ["sample_batch_2"], \
        dry.stdout[-1500:]
    before = {k: (results / f"s{k}" / "summary.json").stat().st_mtime_ns for k in range(4)}
    assert subprocess.run(cmd + ["-q"], cwd=ROOT, capture_output=True, timeout=900).returncode == 0
    assert json.loads((results / "s4" / "summary.json").read_text())["sample"] == "s4"
    assert {k: (results / f"s{k}" / "summary.json").stat().st_mtime_ns for k in range(4)} == before
    assert "s2: inputs and results unchanged" in (results / "logs" / "sample_batch" / "2.log").read_text()

    # a deleted results file reruns its batch, which computes that sample alone; a forced run computes all
    (results / "s0" / "velocities.csv").unlink()
    assert subprocess.run(cmd + ["-q"], cwd=ROOT, capture_output=True, timeout=900).returncode == 0
    assert (results / "s0" / "velocities.csv").is_file()
    assert (results / "s1" / "summary.json").stat().st_mtime_ns == before[1]
    assert subprocess.run(cmd + ["-q", "--forcerun", "sample_batch_1"], cwd=ROOT, capture_output=True,
                          timeout=900).returncode == 0
    assert (results / "s1" / "summary.json").stat().st_mtime_ns != before[1]
    assert "Nothing to be done" in subprocess.run(cmd + ["-n"], cwd=ROOT, capture_output=True, text=True,
                                                  timeout=300).stdout
    report = subprocess.run([sys.executable, "-m", "snakemake", "--report", str(results / "report.html"), *config],
                            cwd=ROOT, capture_output=True, text=True, timeout=600)
    assert report.returncode == 0 and (results / "report.html").stat().st_size > 100_000, report.stderr[-2000:]
