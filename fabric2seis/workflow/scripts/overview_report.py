"""Snakemake shell around fabric2seis.workflow.report_files.write_suite_overview (no science here)."""
import logging

from fabric2seis.workflow.report_files import write_suite_overview

logging.basicConfig(filename=snakemake.log[0], level=logging.INFO, format="%(asctime)s %(message)s")
try:
    write_suite_overview(list(snakemake.input.status), dict(snakemake.config), snakemake.params.version,
                         snakemake.output.table, snakemake.output.about)
    logging.info("suite overview of %d samples written", len(snakemake.input.status))
except Exception:
    logging.exception("writing the suite overview failed")
    raise
