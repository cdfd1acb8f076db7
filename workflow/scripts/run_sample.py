"""Snakemake shell around fabric2seis.pipeline.run_sample (no science here)."""
import logging

from fabric2seis.pipeline import run_sample

logging.basicConfig(filename=snakemake.log[0], level=logging.INFO, format="%(asctime)s %(message)s")
run_sample(snakemake.input[0], out_dir=snakemake.params.out, progress=logging.info)
