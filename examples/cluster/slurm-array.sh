#!/bin/bash
# Slurm job array for 'cleave batch': array task I processes share I of
# SHARDS of the sorted file list (--shard auto) into one shared output folder.
#
#   jid=$(sbatch --parsable --export=ALL,IN=/shared/images,OUT=/shared/results,PARAMS=/shared/best.json slurm-array.sh)
#   sbatch --dependency=afterany:${jid%%;*} --export=ALL,OUT=/shared/results slurm-rebuild.sh
#
# The second job builds manifest.csv, objects.csv and report.html once every
# task has ended, whatever their exit status (afterany).
#
# SHARDS below is fixed: the array task id alone picks the share, so any
# subset of tasks can be resubmitted and gets its own files, e.g. after a
# time limit or a node failure:
#
#   sbatch --array=3,7 --export=ALL,IN=...,OUT=... slurm-array.sh
#
# and then the rebuild again. A resubmitted task skips every image whose
# record is current and redoes the rest. To change SHARDS, change it and
# the --array line together (ids 0 to SHARDS-1), and only for a new OUT.
#
# cleave must be on PATH on the compute nodes (sbatch passes the submitting
# shell's environment, --export=ALL), or set CLEAVE to the binary's path:
# --export=ALL,CLEAVE=/shared/bin/cleave,...
#
# Sizing (measured, see examples/cluster/README.md, Sizing): about 130 MB
# per megapixel for each image held at once (--jobs of them, set to
# --cpus-per-task below), about 9 core-seconds per megapixel per image.
# Ask --mem of 1.5 x jobs x 130 MB x megapixels: 2G suits 2 jobs of images
# up to 2048 x 2048; --time of images per task x megapixels x 9 s /
# cpus-per-task, doubled.
#
#SBATCH --job-name=cleave-batch
#SBATCH --array=0-15
#SBATCH --cpus-per-task=2
#SBATCH --mem=2G
#SBATCH --time=01:00:00
#SBATCH --output=cleave-batch-%A_%a.log
set -euo pipefail

SHARDS=16

: "${IN:?set IN to the folder of images}"
: "${OUT:?set OUT to the shared output folder}"
PARAMS=${PARAMS:-}
CLEAVE=${CLEAVE:-cleave}

# cleave batch --shard auto reads SLURM_ARRAY_TASK_ID and CLEAVE_SHARDS;
# it exits 2 if the task id is not 0 to SHARDS-1.
export CLEAVE_SHARDS=$SHARDS
args=(batch --recursive --jobs "${SLURM_CPUS_PER_TASK:-1}" --shard auto --out "$OUT")
if [ -n "$PARAMS" ]; then
	args+=(--params "$PARAMS")
fi
# Exit status: 0 all images of this share ok, 1 some failed (recorded in
# their STEM.json and, after the rebuild, in manifest.csv), 2 wrong usage.
exec "$CLEAVE" "${args[@]}" "$IN"
