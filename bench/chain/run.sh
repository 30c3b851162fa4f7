#!/bin/sh
# Whole run on a large invented monthly chain: writes a chain with the demo
# generator (fixtures/cmd/gendemo: 8 regions, 8 categories, STORES stores,
# six years of months) and times `trueup forecast --family auto` on it end
# to end with two workers: wall time, CPU and peak memory.
#
#   sh bench/chain/run.sh [STORES]    (from anywhere; default 440 stores,
#                                      about 4,000 nodes; 4,436 stores give
#                                      about 40,000 nodes; needs GNU time)
#
# Nodes: 1 + 8 + 8 + 64 + 9·STORES (total, region, category,
# region+category, region+store, region+store+category).
set -eu
stores=${1:-440}
cd "$(dirname "$0")/../.."
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT
go build -o "$dir/trueup" ./cmd/trueup
go run ./fixtures/cmd/gendemo --regions 8 --categories 8 --stores "$stores" \
	--format parquet --out "$dir" --name chain >/dev/null
/usr/bin/time -f "forecast: %e s wall, %U s user CPU, %M KB peak resident" \
	"$dir/trueup" forecast --input "$dir/chain.parquet" --time period --value sales \
	--nest region,store --nest category --family auto --workers 2 --quiet \
	--out "$dir/out" >/dev/null
python3 -c 'import json,sys; r=json.load(open(sys.argv[1])); print("stages (s):", {k: round(v, 2) for k, v in r["timings_seconds"].items()})' "$dir/out/run.json"
