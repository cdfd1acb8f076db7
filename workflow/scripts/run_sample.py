"""Snakemake shell around fabric2seis.pipeline.run_sample (no science here).

Whatever goes wrong with one sample becomes its status line for the suite table instead of
stopping the workflow: bad input as its one-line error, a program error as "program error" with
the traceback in the rule's log. Old results of a sample that now fails are removed only if
fabric2seis wrote them (outputs.remove_results).
"""
import json
import logging
from pathlib import Path

from fabric2seis.errors import InputError
from fabric2seis.folders import remove_results
from fabric2seis.pipeline import run_sample
from fabric2seis.workflow.suite import check_workflow_sample_name

logging.basicConfig(filename=snakemake.log[0], level=logging.INFO, format="%(asctime)s %(message)s")
out = Path(snakemake.params.out)
sample = snakemake.wildcards.sample
try:
    check_workflow_sample_name(sample, snakemake.input[0])
    run_sample(snakemake.input[0], out_dir=out, progress=logging.info, defaults=dict(snakemake.config),
               results_root=snakemake.params.results_root)
    status = {"sample": sample, "status": "ok", "summary": str(out / "summary.json")}
except Exception as exc:
    if isinstance(exc, InputError):
        message = exc.one_line()
        logging.error(message)
    else:
        logging.exception("program error")
        message = (f"program error ({type(exc).__name__}: {' '.join(str(exc).split())[:200]}); "
                   f"traceback in {snakemake.log[0]}")
    remove_results(out, "sample")    # results of an earlier, good version of this file would be stale
    status = {"sample": sample, "status": message, "summary": None}
Path(snakemake.output.status).write_text(json.dumps(status, indent=1) + "\n")
