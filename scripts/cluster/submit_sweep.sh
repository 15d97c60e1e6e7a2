#!/bin/bash
# Submits the shard array and a merge job that runs only if all shards succeed.
# Usage: scripts/cluster/submit_sweep.sh [SHARDS]   (default 8)
set -euo pipefail
SHARDS=${1:-8}
mkdir -p results/slurm
array_id=$(sbatch --parsable --array=1-"$SHARDS" scripts/cluster/sweep_array.sh)
array_id=${array_id%%;*}
sbatch --dependency=afterok:"$array_id" --export=ALL,SHARDS="$SHARDS" scripts/cluster/merge.sh
echo "submitted shard array $array_id ($SHARDS tasks) and its merge job"
