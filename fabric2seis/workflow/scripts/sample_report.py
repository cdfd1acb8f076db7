"""Snakemake shell around fabric2seis.workflow.report_files.gather_report_files (no science here)."""
import logging

from fabric2seis.workflow.report_files import gather_report_files

logging.basicConfig(filename=snakemake.log[0], level=logging.INFO, format="%(asctime)s %(message)s")
try:
    files = gather_report_files(snakemake.input.status, snakemake.output.files)
    logging.info("%d files for the report: %s", len(files), ", ".join(f.name for f in files))
except Exception:
    logging.exception("gathering the report files failed")
    raise
