"""Snakemake shell around fabric2seis.commands.run_field (no science here)."""
import logging

from fabric2seis.commands import run_field
from fabric2seis.workflow.status import read_statuses

logging.basicConfig(filename=snakemake.log[0], level=logging.INFO, format="%(asctime)s %(message)s")
good = [str(s.folder) for s in read_statuses(snakemake.input.status) if s.ok]
try:
    run_field(good, snakemake.input.measurements, snakemake.params.out,
              results_root=snakemake.params.results_root, threads=snakemake.threads)
    logging.info("fitted %d samples to %s", len(good), snakemake.input.measurements)
except Exception:
    logging.exception("field comparison failed")
    raise
