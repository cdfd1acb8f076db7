"""The README's testing section: its counts are computed here from the tests themselves.

The block between the two markers in README.md must equal :func:`counts_block`; after adding bad
inputs, fuzz targets, invariants or faults, rewrite it with

    FABRIC2SEIS_WRITE_COUNTS=1 python -m pytest tests/test_counts.py
"""

import os
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(Path(__file__).parent / "bad_inputs"))

import make_cases  # noqa: E402
import test_faults  # noqa: E402
import test_fuzzing  # noqa: E402
import test_invariants  # noqa: E402

BEGIN = "<!-- counts: written by tests/test_counts.py from the tests themselves -->"
END = "<!-- end of counts -->"


def counts_block() -> str:
    cases = make_cases.load_cases()
    examples = sum(test_fuzzing.FUZZ_EXAMPLES.values())
    faults = test_faults.FAULTS
    lines = [
        BEGIN,
        f"- **{len(cases)} bad inputs** (`tests/bad_inputs/cases.yaml`) through the commands, every reader, "
        "sidecar settings, measurement and stack files: each refused with exit status 2 and one line naming the "
        "file and the place, no traceback, nothing written.",
        f"- **{len(test_fuzzing.FUZZ_TARGETS)} fuzz targets, {examples:,} generated inputs** (hypothesis, "
        "derandomised, `tests/test_fuzzing.py`): a result or a clear one-line error, nothing else.",
        f"- **{len(test_invariants.INVARIANTS)} invariants** as property tests (`tests/test_invariants.py`):",
        *(f"  - {text}" for text in test_invariants.INVARIANTS),
        f"- **{sum(faults.values())} faults survived** (`tests/test_faults.py`): a results folder is absent or "
        "complete, never partial, and a rerun completes:",
        *(f"  - {text}: {n}" for text, n in faults.items()),
        END,
    ]
    return "\n".join(lines)


def test_readme_counts_are_those_of_the_tests():
    readme = ROOT / "README.md"
    text = readme.read_text(encoding="utf-8")
    assert text.count(BEGIN) == 1 and text.count(END) == 1, "README.md lacks the counts markers"
    start, end = text.index(BEGIN), text.index(END) + len(END)
    if os.environ.get("FABRIC2SEIS_WRITE_COUNTS") == "1":
        readme.write_text(text[:start] + counts_block() + text[end:], encoding="utf-8")
        text = readme.read_text(encoding="utf-8")
        end = text.index(END) + len(END)
    assert text[start:end] == counts_block(), (
        "README.md's testing counts are out of date: FABRIC2SEIS_WRITE_COUNTS=1 python -m pytest tests/test_counts.py")


def test_counts_meet_the_reliability_issue():
    # issue 15: at least 60 bad inputs; random bytes and rows for every reader, settings for the validator
    assert len(make_cases.load_cases()) >= 60
    assert len(test_fuzzing.FUZZ_TARGETS) >= 8 and min(test_fuzzing.FUZZ_EXAMPLES.values()) >= 100
