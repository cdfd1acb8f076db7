"""Snakemake shell around fabric2seis.suite.suite_table (no science here)."""
from fabric2seis.suite import suite_table

suite_table(list(snakemake.input)).to_csv(snakemake.output[0], index=False)
