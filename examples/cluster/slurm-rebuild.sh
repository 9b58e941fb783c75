#!/bin/bash
# Builds manifest.csv, objects.csv and report.html in OUT from the records
# of the tasks of slurm-array.sh; submit it after them:
#
#   sbatch --dependency=afterany:JOBID --export=ALL,OUT=/shared/results slurm-rebuild.sh
#
# Exit status 1 means some images failed or are still pending (a task that
# did not finish): manifest.csv names them; resubmit those tasks
# (sbatch --array=...) and this job again. CLEAVE as in slurm-array.sh.
#
#SBATCH --job-name=cleave-rebuild
#SBATCH --cpus-per-task=1
#SBATCH --mem=1G
#SBATCH --time=00:30:00
#SBATCH --output=cleave-rebuild-%j.log
set -euo pipefail

: "${OUT:?set OUT to the shared output folder}"
exec "${CLEAVE:-cleave}" batch --rebuild "$OUT"
