"""Snakemake shell around fabric2seis.optics.section.run_optics (no science here).

Whatever goes wrong with one sample becomes its optics status line instead of stopping the
workflow (fabric2seis.workflow.status.run_and_record writes the status file); old optics results
of a sample that now fails are removed only if fabric2seis wrote them.
"""
import logging

from fabric2seis.optics.section import run_optics
from fabric2seis.workflow.status import run_and_record
from fabric2seis.workflow.suite import check_workflow_sample_name

logging.basicConfig(filename=snakemake.log[0], level=logging.INFO, format="%(asctime)s %(message)s")
sample = snakemake.wildcards.sample


def run():
    check_workflow_sample_name(sample, snakemake.input[0])
    return run_optics(snakemake.input[0], out_dir=snakemake.params.out, progress=logging.info,
                      defaults=dict(snakemake.config), results_root=snakemake.params.results_root)


run_and_record(run, snakemake.output.status, sample, snakemake.params.out, "optics", "optics_summary.json",
               snakemake.params.results_check, snakemake.log[0])
