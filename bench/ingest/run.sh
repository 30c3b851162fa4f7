#!/usr/bin/env bash
# Times reading and aggregating ten million item-level rows (summed to
# store × category and every aggregate) on one core.
# Usage: bench/ingest/run.sh   (from the repository root)
set -euo pipefail
cd "$(dirname "$0")/../.."
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT
echo "generating ~10M item-level rows into $dir ..."
go run ./fixtures/cmd/gendemo -stores 200 -items 91 -format parquet -out "$dir" >/dev/null
file=$(ls "$dir"/*.parquet | head -1)
ls -l "$file"
GOMAXPROCS=1 TRUEUP_INGEST_FILE="$file" go test -run '^$' -bench 'BenchmarkReadAndAggregate$' -benchtime 3x -benchmem ./engine
