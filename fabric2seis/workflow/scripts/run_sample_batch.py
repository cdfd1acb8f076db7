"""Snakemake shell around fabric2seis.workflow.batches.run_batch: several small samples in one process.

Each sample is run as rule sample's script runs it (pipeline.run_sample through
status.run_and_record), with its own status file and log; a sample whose inputs and results are
unchanged since its last run is kept (batches.kept_status). When several are computed, the
libraries of the figures drawn with orix are imported once here (sample_output.load_figure_libraries),
so that each sample's second process, forked from this one, need not import them again.
"""
import logging

from fabric2seis.pipeline import run_sample
from fabric2seis.sample_output import load_figure_libraries
from fabric2seis.workflow.batches import BatchMember, recompute_requested, run_batch
from fabric2seis.workflow.suite import check_workflow_sample_name

logging.basicConfig(filename=snakemake.log[0], level=logging.INFO, format="%(asctime)s %(message)s")
members = [BatchMember(*fields) for fields in zip(snakemake.params.samples, snakemake.input, snakemake.output.status,
                                                  snakemake.params.outs, snakemake.params.settings,
                                                  snakemake.params.results_check, snakemake.params.logs)]


def run(member):
    check_workflow_sample_name(member.sample, member.input)
    return run_sample(member.input, out_dir=member.out, progress=logging.info, defaults=dict(snakemake.config),
                      results_root=snakemake.params.results_root)


run_batch(members, run, recompute=recompute_requested(), note=logging.info, before_several=load_figure_libraries)
