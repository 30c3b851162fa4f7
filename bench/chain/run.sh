#!/bin/sh
# Whole run on a large invented monthly chain: writes a chain with the demo
# generator (fixtures/cmd/gendemo: 8 regions, 8 categories, STORES stores,
# six years of months) and times `trueup forecast --family auto` on it end
# to end with two workers, once per input format: wall time, user CPU,
# peak memory, the load average before the run, and the run's stages from
# run.json (timings_seconds).
#
#   sh bench/chain/run.sh [STORES [FORMATS]]
#
# from anywhere; STORES defaults to 440 (about 4,000 nodes; 4,436 stores
# give about 40,000 nodes), FORMATS to "parquet csv" (the same rows as a
# Parquet file and as a CSV file). Needs GNU time and python3.
#
# Nodes: 1 + 8 + 8 + 64 + 9·STORES (total, region, category,
# region+category, region+store, region+store+category).
set -eu
stores=${1:-440}
formats=${2:-parquet csv}
cd "$(dirname "$0")/../.."
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT
go build -o "$dir/trueup" ./cmd/trueup
go run ./fixtures/cmd/gendemo --regions 8 --categories 8 --stores "$stores" \
	--format "$(echo "$formats" | tr ' ' ',')" --out "$dir" --name chain >/dev/null
for format in $formats; do
	echo "== $format input, $stores stores; load average before: $(cut -d' ' -f1-3 /proc/loadavg)"
	/usr/bin/time -f "forecast: %e s wall, %U s user CPU, %S s system CPU, %M KB peak resident" \
		"$dir/trueup" forecast --input "$dir/chain.$format" --time period --value sales \
		--hierarchy region,store --hierarchy category --family auto --workers 2 --quiet \
		--out "$dir/out-$format" >/dev/null
	python3 - "$dir/out-$format/run.json" <<'EOF'
import json, sys
r = json.load(open(sys.argv[1]))
t = r["timings_seconds"]
print("nodes:", r["counts"]["nodes"])
order = ["read", "structure", "fit", "reconcile", "write"]
keys = [k for k in order if k in t] + sorted(k for k in t if k not in order)
print("stages (s wall):", ", ".join(f"{k} {t[k]:.2f}" for k in keys))
EOF
done
echo "load average after: $(cut -d' ' -f1-3 /proc/loadavg)"
