#!/usr/bin/env bash
# Stands in for a scheduler's submit command: runs the job script Snakemake hands over in the
# background on this machine and prints a job id, as sbatch or qsub would.
set -euo pipefail
jobscript="${@: -1}"
log="${jobscript}.out"
nohup bash "$jobscript" > "$log" 2>&1 &
echo "local-$!"
