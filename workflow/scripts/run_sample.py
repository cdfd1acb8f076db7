"""Snakemake shell around fabric2seis.pipeline.run_sample (no science here).

Bad input becomes a status line for the suite table instead of stopping the workflow; any other
exception is a program error and fails the rule loudly.
"""
import json
import logging
import shutil
from pathlib import Path

from fabric2seis.errors import InputError
from fabric2seis.pipeline import run_sample

logging.basicConfig(filename=snakemake.log[0], level=logging.INFO, format="%(asctime)s %(message)s")
out = Path(snakemake.params.out)
try:
    run_sample(snakemake.input[0], out_dir=out, progress=logging.info, defaults=dict(snakemake.config))
    status = {"sample": snakemake.wildcards.sample, "status": "ok", "summary": str(out / "summary.json")}
except InputError as exc:
    logging.error(exc.one_line())
    if out.exists():
        shutil.rmtree(out)  # results of an earlier, good version of this file would be stale
    status = {"sample": snakemake.wildcards.sample, "status": exc.one_line(), "summary": None}
except Exception:
    logging.exception("program error")  # a genuine program error fails the rule loudly
    raise
Path(snakemake.output.status).write_text(json.dumps(status, indent=1) + "\n")
