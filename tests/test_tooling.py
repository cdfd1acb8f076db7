"""The code's own hygiene, run by the README's test command: ruff, mypy and Snakemake's linter.

Configurations are in pyproject.toml (ruff, mypy); the Snakemake linter checks the workflow
against Snakemake's own best practices (common practice for Snakemake workflows).
"""

import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def run(*command: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", *command], cwd=ROOT, capture_output=True, text=True, timeout=600)


def test_ruff_finds_nothing():
    result = run("ruff", "check", ".")
    assert result.returncode == 0, result.stdout[-3000:] + result.stderr[-1000:]


def test_mypy_finds_nothing_in_the_package():
    result = run("mypy")
    assert result.returncode == 0, result.stdout[-3000:] + result.stderr[-1000:]


def test_snakemake_lint_has_nothing_to_say():
    result = run("snakemake", "--lint")
    assert result.returncode == 0 and "Congratulations" in result.stdout + result.stderr, \
        (result.stdout + result.stderr)[-3000:]
