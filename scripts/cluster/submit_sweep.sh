#!/bin/bash
# Submits the shard array and a merge job that runs only if all shards succeed.
# Usage: scripts/cluster/submit_sweep.sh [SHARDS [SBATCH OPTION...]]
#   SHARDS           number of array tasks (default 8)
#   SBATCH OPTION    passed to both sbatch calls, e.g. --partition=short
#                    --cpus-per-task=2 (command-line options win over the
#                    #SBATCH lines of the job scripts)
# Run it from the folder the results should go to (results/ is made there).
# Prints the ids: "array <id> merge <id>".
set -euo pipefail
here=$(cd "$(dirname "$0")" && pwd)
SHARDS=${1:-8}
shift || true
mkdir -p results/slurm
array_id=$(sbatch --parsable --array=1-"$SHARDS" "$@" "$here/sweep_array.sh")
array_id=${array_id%%;*}
# --kill-on-invalid-dep: if a shard fails, the merge is cancelled instead of
# waiting for ever.
merge_id=$(sbatch --parsable --dependency=afterok:"$array_id" --kill-on-invalid-dep=yes \
    --export=ALL,SHARDS="$SHARDS" "$@" "$here/merge.sh")
merge_id=${merge_id%%;*}
echo "submitted shard array $array_id ($SHARDS tasks) and its merge job $merge_id" >&2
echo "array $array_id merge $merge_id"
