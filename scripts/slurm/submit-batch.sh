#!/usr/bin/env bash
# Submits a habcast batch to Slurm: a job array of SHARDS tasks (one shard each), then one job that
# waits for all of them (afterany: it runs even when some tiles failed) and builds the mosaic and
# the region report. Prints the two job ids, "ARRAY_ID MOSAIC_ID".
#
# Usage: scripts/slurm/submit-batch.sh MANIFEST SHARDS [extra sbatch options...]
#   environment: HABCAST (executable, default habcast on PATH), OUTPUT (output folder), COG=1
# Example: HABCAST=$PWD/build/habcast scripts/slurm/submit-batch.sh region.toml 16 --partition=long
set -euo pipefail
if [[ $# -lt 2 ]]; then
  sed -n '2,9p' "$0" >&2
  exit 2
fi
here="$(cd "$(dirname "$0")" && pwd)"
manifest="$(realpath "$1")"
shards="$2"
shift 2
if ! [[ "$shards" =~ ^[1-9][0-9]*$ ]]; then echo "SHARDS must be a positive whole number, got '$shards'" >&2; exit 2; fi
export MANIFEST="$manifest" HABCAST="${HABCAST:-habcast}" OUTPUT="${OUTPUT:-}" COG="${COG:-0}"

array_id=$(sbatch --parsable --export=ALL --array="1-$shards" "$@" "$here/tiles-array.sbatch")
array_id="${array_id%%;*}"
mosaic_id=$(sbatch --parsable --export=ALL --dependency="afterany:$array_id" "$@" "$here/mosaic.sbatch")
mosaic_id="${mosaic_id%%;*}"
echo "$array_id $mosaic_id"
