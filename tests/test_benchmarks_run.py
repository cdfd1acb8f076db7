"""benchmarks/run.py, the one benchmark command: its table's structure, never its speed.

The benchmarks are measurements run by hand (benchmarks/), not timed tests: these tests run the
fastest one at its --quick size through run.py and check what run.py writes (JSON and
markdown), and that every benchmark script is registered with run.py.
"""

import json
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
BENCHMARKS = ROOT / "benchmarks"
#: scripts in benchmarks/ that are helpers, not benchmarks
HELPERS = {"run", "rows", "timing"}
ROW_KEYS = {"figure", "value", "unit", "baseline", "baseline_unit", "baseline_label", "ratio", "ratio_label",
            "target", "note", "detail", "passed"}


def run_command(*arguments: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, str(BENCHMARKS / "run.py"), *arguments], cwd=ROOT,
                          capture_output=True, text=True, timeout=120)


def test_every_benchmark_script_is_run_by_run_py():
    listed = {line.split()[0] for line in run_command("--list").stdout.splitlines() if line.strip()}
    scripts = {path.stem for path in BENCHMARKS.glob("*.py")} - HELPERS
    assert listed == scripts


def test_quick_table_of_one_benchmark(tmp_path):
    finished = run_command("--quick", "--only", "splitting_layers", "--out", str(tmp_path))
    assert finished.returncode == 0, finished.stdout + finished.stderr
    table = json.loads((tmp_path / "quick" / "table.json").read_text())
    assert table["mode"] == "quick"
    assert {"cpu", "logical_cpus", "memory_gb", "python", "versions", "date"} <= set(table["machine"])
    (benchmark,) = table["benchmarks"]
    assert benchmark["name"] == "splitting_layers" and benchmark["status"] == 0
    assert len(benchmark["load_before"]) == 3 and benchmark["wall_s"] > 0
    assert benchmark["rows"]
    for row in benchmark["rows"]:
        assert set(row) == ROW_KEYS
        assert row["unit"] and row["value"] is not None and row["baseline"] is not None
        assert row["target"]["op"] in ("<=", "<", ">=", ">") and row["target"]["on"] in ("value", "ratio")
        assert row["passed"] in (True, False)
        assert abs(row["ratio"] - row["baseline"] / row["value"]) <= 1e-9 * row["ratio"]   # loop / vectorised
    text = (tmp_path / "quick" / "table.md").read_text()
    assert "| benchmark | figure | measured | baseline | ratio | target | result |" in text
    for row in benchmark["rows"]:
        assert row["figure"] in text
    assert (tmp_path / "quick" / "splitting_layers.txt").read_text().strip()


def test_pass_and_fail_are_decided_from_the_target():
    sys.path.insert(0, str(BENCHMARKS))
    try:
        from rows import passed, row
    finally:
        sys.path.remove(str(BENCHMARKS))
    assert passed(row("t", 2.0, "s", baseline=1.0, ratio=2.0, target=("ratio", "<=", 3))) is True
    assert passed(row("t", 4.0, "s", baseline=1.0, ratio=4.0, target=("ratio", "<=", 3))) is False
    assert passed(row("m", 2100.0, "MB", target=("value", "<", 2048))) is False
    assert passed(row("m", None, "MB", target=("value", "<", 2048))) is False     # stopped: not measured
    assert passed(row("n", 5.0, "px")) is None
