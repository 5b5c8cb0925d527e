#!/bin/sh
# antiphon sweep on Slurm: a job array runs one shard per task (SLURM_ARRAY_TASK_ID is the
# shard index), each writing its shard folder to the shared file system; a dependent job
# merges them once every task has ended well.
#
#   sh deploy/sweep-slurm.sh            # submits both; run from the folder holding the inputs
#
# Adjust SHARDS, the inputs and the partition to your site. The array must run 0..SHARDS-1.
set -eu
SHARDS=${SHARDS:-8}
OUT=${OUT:-results}
mkdir -p "$OUT" logs

array=$(sbatch --parsable --job-name=antiphon-sweep --array=0-$((SHARDS - 1)) \
  --cpus-per-task=2 --mem=4G --time=24:00:00 --output=logs/sweep-%A_%a.out \
  --wrap="npx antiphon sweep --params config/demo_cell.yaml --space examples/sweep-space.yaml \
    --bags bags --labels labels.csv --jobs 2 --shard auto/$SHARDS --resume \
    --out $OUT/shard-\$SLURM_ARRAY_TASK_ID --overwrite")

sbatch --job-name=antiphon-sweep-merge --dependency=afterok:"$array" --output=logs/merge-%j.out \
  --wrap="npx antiphon merge $OUT/shard-* --out $OUT/merged --overwrite"
echo "submitted array $array ($SHARDS shards) and its merge"
