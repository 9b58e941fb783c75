#!/bin/bash
# Slurm job array for 'cleave batch': array task I of N processes share
# I/N of the sorted file list (--shard I/N) into one shared output folder.
#
#   sbatch --export=ALL,IN=/shared/images,OUT=/shared/results,PARAMS=/shared/best.json slurm-array.sh
#
# When every task has finished, build manifest.csv, objects.csv and report.html once:
#
#   sbatch --dependency=afterany:JOBID --wrap "cleave batch --rebuild /shared/results"
#
# A task killed by the scheduler (time limit, preemption) loses nothing:
# resubmitting the array redoes only the images without a current record.
#
#SBATCH --job-name=cleave-batch
#SBATCH --array=0-15
#SBATCH --cpus-per-task=4
#SBATCH --mem=8G
#SBATCH --time=04:00:00
#SBATCH --output=cleave-batch-%A_%a.log
set -euo pipefail

: "${IN:?set IN to the folder of images}"
: "${OUT:?set OUT to the shared output folder}"
PARAMS=${PARAMS:-}

# The array may not start at 0 (e.g. --array=1-16): count from its minimum.
N=${SLURM_ARRAY_TASK_COUNT:?not run as a Slurm job array}
I=$(( SLURM_ARRAY_TASK_ID - ${SLURM_ARRAY_TASK_MIN:-0} ))

args=(batch --recursive --jobs "${SLURM_CPUS_PER_TASK:-0}" --shard "$I/$N" --out "$OUT")
if [ -n "$PARAMS" ]; then
	args+=(--params "$PARAMS")
fi
# Exit status: 0 all images of this share ok, 1 some failed (recorded in
# their STEM.json and, after --rebuild, in manifest.csv), 2 wrong usage.
exec cleave "${args[@]}" "$IN"
