"""The rows every benchmark hands to ``benchmarks/run.py``: one figure each, as JSON.

A benchmark script given ``--json PATH`` writes there a JSON object ``{"benchmark": NAME,
"rows": [...]}``; each row is made by :func:`row` and holds

* ``figure``: what was measured, in words (with the size it was measured at);
* ``value`` and ``unit``: the measurement (``value`` None when it could not be taken);
* ``baseline``, ``baseline_unit``, ``baseline_label``: what it is compared with, measured in the
  same run beside it (orix's read of the same file, a plain loop, ...), or None;
* ``ratio`` and ``ratio_label``: how the two compare (``value / baseline`` or a speed-up
  ``baseline / value``, as the script says in ``ratio_label``), or None;
* ``target``: None, or ``{"on": "value" | "ratio", "op": "<=" | "<" | ">=" | ">", "limit": x}``;
  ``run.py`` decides pass or fail from it, so that no script states its own verdict twice;
* ``note``: anything the reader needs (runs, median or best, stopped early, ...);
* ``detail``: True for breakdown rows (shares of a run's time), shown apart from the targets.

This module imports only the standard library, so that a parent process measuring the memory
of its children stays small.
"""

from __future__ import annotations

import json
import os
import tempfile
from pathlib import Path

#: the checkout the benchmarks measure
REPOSITORY_ROOT = Path(__file__).resolve().parent.parent

OPERATORS = ("<=", "<", ">=", ">")


def row(figure: str, value: float | None, unit: str, *, baseline: float | None = None,
        baseline_unit: str | None = None, baseline_label: str = "", ratio: float | None = None,
        ratio_label: str = "", target: tuple[str, str, float] | None = None, note: str = "",
        detail: bool = False) -> dict:
    """One measured figure; ``target`` is (``"value"`` or ``"ratio"``, operator, limit)."""
    if target is not None:
        on, op, limit = target
        if on not in ("value", "ratio") or op not in OPERATORS:
            raise ValueError(f"target must be ('value' | 'ratio', one of {OPERATORS}, limit), not {target}")
        target_dict: dict | None = {"on": on, "op": op, "limit": float(limit)}
    else:
        target_dict = None
    return {"figure": figure, "value": None if value is None else float(value), "unit": unit,
            "baseline": None if baseline is None else float(baseline),
            "baseline_unit": baseline_unit if baseline is not None else None,
            "baseline_label": baseline_label, "ratio": None if ratio is None else float(ratio),
            "ratio_label": ratio_label, "target": target_dict, "note": note, "detail": detail}


def passed(entry: dict) -> bool | None:
    """Whether a row meets its target: None without a target or without the measured number."""
    target = entry.get("target")
    if not target:
        return None
    measured = entry.get(target["on"])
    if measured is None:
        return False if entry.get("value") is None else None   # not measured: the run failed or was stopped
    limit, op = target["limit"], target["op"]
    return {"<=": measured <= limit, "<": measured < limit, ">=": measured >= limit,
            ">": measured > limit}[op]


def write_rows(path: str | Path | None, benchmark: str, rows: list[dict], **extra) -> None:
    """Write the rows of one benchmark as JSON (nothing when ``path`` is None)."""
    if path is None:
        return
    Path(path).write_text(json.dumps({"benchmark": benchmark, "rows": rows, **extra}, indent=1) + "\n")


def add_options(parser, quick_help: str) -> None:
    """The two options every benchmark offers to ``run.py``: ``--json PATH`` and ``--quick``."""
    parser.add_argument("--json", default=None, metavar="PATH",
                        help="also write the measured figures as JSON rows to PATH (for benchmarks/run.py)")
    parser.add_argument("--quick", action="store_true", help=quick_help)


def child_environment(bytecode_cache: bool = True) -> dict[str, str]:
    """The environment of the processes a benchmark starts.

    This checkout comes first on ``PYTHONPATH`` (Snakemake's scripts import it too). Python's
    bytecode cache is on (``PYTHONDONTWRITEBYTECODE`` removed), kept in a folder of the system's
    temporary folder (``PYTHONPYCACHEPREFIX``) so that the checkout stays clean: an installed
    package has its bytecode compiled, and a shell that forbids writing it would charge the
    compilation of every module to every process. ``bytecode_cache=False`` measures that case.
    """
    environment = dict(os.environ)
    environment["PYTHONPATH"] = os.pathsep.join(
        [str(REPOSITORY_ROOT)] + [p for p in environment.get("PYTHONPATH", "").split(os.pathsep)
                                   if p and Path(p).resolve() != REPOSITORY_ROOT])
    if bytecode_cache:
        environment.pop("PYTHONDONTWRITEBYTECODE", None)
        environment["PYTHONPYCACHEPREFIX"] = str(Path(tempfile.gettempdir()) / "fabric2seis-benchmark-pycache")
    else:
        environment["PYTHONDONTWRITEBYTECODE"] = "1"
        environment.pop("PYTHONPYCACHEPREFIX", None)
    return environment


#: rows recorded by :func:`record` in this process, for scripts that print as they measure
COLLECTED: list[dict] = []


def record(figure: str, value: float | None, unit: str, **keywords) -> dict:
    """Make a row (the arguments of :func:`row`) and keep it in :data:`COLLECTED`."""
    made = row(figure, value, unit, **keywords)
    COLLECTED.append(made)
    return made
