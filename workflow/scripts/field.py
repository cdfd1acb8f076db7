"""Snakemake shell around fabric2seis.commands.run_field (no science here)."""
import json
import logging

from fabric2seis.commands import run_field

logging.basicConfig(filename=snakemake.log[0], level=logging.INFO, format="%(asctime)s %(message)s")
good = []
for f in snakemake.input.status:
    status = json.loads(open(f).read())
    if status["status"] == "ok":
        good.append(status["summary"].rsplit("/", 1)[0])
try:
    run_field(good, snakemake.input.measurements, snakemake.params.out,
              results_root=snakemake.params.results_root)
    logging.info("fitted %d samples to %s", len(good), snakemake.input.measurements)
except Exception:
    logging.exception("field comparison failed")
    raise
