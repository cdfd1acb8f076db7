"""Snakemake shell around fabric2seis.workflow.suite (no science here)."""
import logging
from pathlib import Path

from fabric2seis.figures.suite import suite_figure
from fabric2seis.tables import summaries_from_status, write_suite_tables
from fabric2seis.workflow.suite import suite_table_from_status

logging.basicConfig(filename=snakemake.log[0], level=logging.INFO, format="%(asctime)s %(message)s")
try:
    table = suite_table_from_status(list(snakemake.input))
    table.to_csv(snakemake.output.table, index=False)
    write_suite_tables(summaries_from_status(list(snakemake.input)), Path(snakemake.output.short).parent)
    suite_figure(snakemake.output.figure[: -len(".png")], table)
    logging.info("%d samples, %d ok", len(table), int((table["status"] == "ok").sum()))
except Exception:
    logging.exception("suite summary failed")
    raise
