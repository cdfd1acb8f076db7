"""Snakemake shell around fabric2seis.pipeline.run_sample (no science here).

Whatever goes wrong with one sample becomes its status line for the suite table instead of
stopping the workflow (fabric2seis.workflow.status.run_and_record writes the status file).
"""
import logging

from fabric2seis.pipeline import run_sample
from fabric2seis.workflow.status import run_and_record
from fabric2seis.workflow.suite import check_workflow_sample_name

logging.basicConfig(filename=snakemake.log[0], level=logging.INFO, format="%(asctime)s %(message)s")
sample = snakemake.wildcards.sample


def run():
    check_workflow_sample_name(sample, snakemake.input[0])
    return run_sample(snakemake.input[0], out_dir=snakemake.params.out, progress=logging.info,
                      defaults=dict(snakemake.config), results_root=snakemake.params.results_root,
                      threads=snakemake.threads)


run_and_record(run, snakemake.output.status, sample, snakemake.params.out, "sample", "summary.json",
               snakemake.params.results_check, snakemake.log[0])
