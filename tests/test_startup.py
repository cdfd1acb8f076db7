"""Start-up of a sample job: what `fabric2seis sample` and the workflow's sample script import
before the work begins stays light. A structural check of sys.modules in a fresh interpreter, not
a timing (the seconds are measured in benchmarks/startup.py)."""

import ast
import json
import os
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
ENV = {**os.environ, "PYTHONPATH": str(ROOT)}
SCRIPTS = ROOT / "fabric2seis" / "workflow" / "scripts"
#: libraries that take a second or more to import and that the sample job needs only later, where it
#: reads a map (orix), builds grains or fits (scipy), writes tables (pandas) or draws (matplotlib)
HEAVY = ("matplotlib", "orix", "scipy", "pandas", "numba", "dask")


def loaded_after(statements: list[str]) -> list[str]:
    """The heavy libraries in sys.modules of a fresh interpreter after running the import statements."""
    code = "\n".join([*statements, "import sys, json",
                      f"print(json.dumps([m for m in {HEAVY!r} if m in sys.modules]))"])
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=ENV, cwd=ROOT,
                         check=True)
    return json.loads(out.stdout)


def script_imports(script: Path) -> list[str]:
    """The module-level import statements of a workflow script, as written (ast.unparse)."""
    tree = ast.parse(script.read_text())
    return [ast.unparse(node) for node in tree.body if isinstance(node, (ast.Import, ast.ImportFrom))]


def test_the_sample_command_imports_no_heavy_library_before_it_works():
    # cli.main dispatches to _sample, which imports pipeline; pipeline imports its stages where they run
    assert loaded_after(["import fabric2seis.cli", "import fabric2seis.pipeline"]) == []
    # cli.main first builds the parser of every command: the synth command's fabric names import
    # fabric2seis.synth, whose map maker needs scipy.spatial (imported where it is used)
    assert loaded_after(["import fabric2seis.cli", "fabric2seis.cli.build_parser()"]) == []


def test_the_modules_a_run_always_passes_import_no_heavy_library():
    # the P, T corrections (elastic.conditions) run for every sample: scipy.optimize only when a
    # pressure is given; the other stages import scipy, pandas or numba where they compute
    assert loaded_after(["import fabric2seis.elastic.conditions", "import fabric2seis.synth"]) == []
    # the fabric package needs scipy.special (the kernel's normalisation); scipy.spatial (a second to
    # import, with scipy.sparse) only for odf_values, which no stage calls
    code = "import sys, fabric2seis.fabric, fabric2seis.uncertainty; print('scipy.spatial' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=ENV, cwd=ROOT, check=True)
    assert out.stdout.strip() == "False"


def test_the_workflow_sample_script_imports_no_heavy_library_before_it_works():
    statements = script_imports(SCRIPTS / "run_sample.py")
    assert any("fabric2seis.pipeline" in s for s in statements)     # the check reads the real script
    assert loaded_after(statements) == []


def test_the_workflow_batch_script_imports_no_heavy_library_before_it_works():
    # several small samples in one process (config small_samples): the same light start as a sample job
    statements = script_imports(SCRIPTS / "run_sample_batch.py")
    assert any("fabric2seis.workflow.batches" in s for s in statements)
    assert loaded_after(statements) == []


def test_the_report_job_of_a_sample_and_the_snakefile_s_helpers_import_no_heavy_library():
    # sample_report.py copies files and writes two small tables: no pandas (the csv module writes them);
    # the Snakefile imports the same module for the labels of the report
    statements = script_imports(SCRIPTS / "sample_report.py")
    assert any("fabric2seis.workflow.report_files" in s for s in statements)
    assert loaded_after(statements) == []


def imported_by_a_whole_run(source: Path, out: Path, threads: int, names: tuple[str, ...] = HEAVY) -> list[str]:
    """Those of ``names`` (modules) the run's own process holds after ``fabric2seis sample`` (cli.main) returns."""
    code = "\n".join(["import sys, json", "from fabric2seis.cli import main",
                      f"code = main(['sample', {str(source)!r}, '--out', {str(out)!r}, '--threads', '{threads}'])",
                      "assert code == 0, code",
                      f"print(json.dumps([m for m in {names!r} if m in sys.modules]))"])
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=ENV, cwd=ROOT)
    assert done.returncode == 0, done.stderr[-2000:]
    return json.loads(done.stdout.strip().splitlines()[-1])


def test_a_whole_sample_run_on_two_threads_never_imports_orix_in_its_own_process(tmp_path):
    # orix takes seconds to import (dask, matplotlib, numba caches): the readers of .ang, .ctf and the
    # CSV table, the point groups, the Euler angles and the lattice need none (fabric2seis.point_groups,
    # ingest.io.headers, orientations), and with a second process the figures that use orix are drawn
    # there (sample_output.SampleFigures); the results folder is complete all the same
    demo = ROOT / "demo_samples"
    for name in ("VM01_dunite.ang", "VM02_harzburgite.ctf", "VM04_grain_list.csv"):
        out = tmp_path / name
        held = imported_by_a_whole_run(demo / name, out, threads=2)
        assert "orix" not in held and "dask" not in held, (name, held)
        drawn_with_orix = {"inverse_pole_figures.png"} | (
            set() if name.endswith(".csv") else {"map_overview.png"})      # a grain list has no map
        assert drawn_with_orix | {"pole_figures.png", "velocities.png"} <= {p.name for p in out.iterdir()}
    # on one thread every figure is drawn here, orix included (the check above can fail)
    assert "orix" in imported_by_a_whole_run(demo / "VM04_grain_list.csv", tmp_path / "one", threads=1)


def test_a_whole_sample_run_without_a_pressure_never_imports_scipy_optimize(tmp_path):
    # scipy.optimize takes most of a second to import (scipy.linalg, its linear-programming solvers);
    # the symmetry decomposition of every sample refines its axes by fabric2seis.nelder_mead instead
    # (SciPy's steps, tests/test_nelder_mead.py), and elastic.conditions needs scipy's root finder only
    # for a pressure above zero (the demo samples give none)
    for name, threads in (("VM04_grain_list.csv", 1), ("VM01_dunite.ang", 2)):
        held = imported_by_a_whole_run(ROOT / "demo_samples" / name, tmp_path / name, threads,
                                       names=("scipy", "scipy.optimize"))
        assert held == ["scipy"], (name, held)        # scipy itself is used (special functions, graphs)


def test_every_figure_said_to_need_no_orix_is_drawn_without_it(tmp_path):
    # the run's own process takes only figures whose FigureTask says needs_orix=False
    # (sample_output.SampleFigures): drawing each of them in a fresh interpreter must not import orix,
    # and those that do need it must (else the flag is stale and the work badly shared)
    code = "\n".join([
        "import sys, json", "from pathlib import Path",
        "from fabric2seis import pipeline", "from fabric2seis.sample_output import figure_tasks",
        f"path = Path({str(ROOT / 'demo_samples' / 'VM01_dunite.ang')!r})",
        "settings, sf = pipeline.settings_for(path, None, None, None)",
        "sample = pipeline.ingest(path, settings, sf, lambda m: None)",
        "tasks = figure_tasks(sample, pipeline.fabric_stage(sample), pipeline.seismic_stage(sample))",
        "seen = {}",
        "for task in sorted(tasks, key=lambda t: t.needs_orix):",
        f"    task.draw(Path({str(tmp_path)!r}))",
        "    seen[task.name] = [task.needs_orix, 'orix' in sys.modules]",
        "print(json.dumps(seen))"])
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=ENV, cwd=ROOT)
    assert done.returncode == 0, done.stderr[-2000:]
    seen = json.loads(done.stdout.strip().splitlines()[-1])
    assert {"pole_figures", "velocities", "inverse_pole_figures", "map_overview"} <= set(seen)
    for name, (needs, held) in seen.items():
        assert held == needs, (name, seen)      # orix first imported by the first figure that needs it
