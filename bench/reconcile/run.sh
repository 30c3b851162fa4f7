#!/usr/bin/env bash
# Times trueup reconcile end to end on a retail structure of 39,442 nodes
# (state → store, 10 stores, crossed with category → department → item,
# 3,000 items: 30,000 bottom series), T = 60 residual days, horizon 28,
# MinT with the shrinkage covariance, read from and written to Parquet,
# without and with --nonnegative. Then compares the dense and large-n MinT paths at about 2,000 nodes.
# Usage: bench/reconcile/run.sh   (from anywhere; needs /usr/bin/time)
set -euo pipefail
cd "$(dirname "$0")/../.."
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT
go build -o "$dir/trueup" ./cmd/trueup
echo "generating inputs into $dir ..."
go run ./bench/reconcile/gen -out "$dir"
ls -l "$dir"/*.parquet
cmd=("$dir/trueup" reconcile --base "$dir/base.parquet" --residuals "$dir/residuals.parquet"
     --nest state,store --nest category,department,item --method mint --cov shrink --out "$dir/out")
echo "+ trueup ${cmd[*]:1}"
/usr/bin/time -v "${cmd[@]}" 2> "$dir/time.txt"
grep -E "Elapsed \(wall clock\)|Maximum resident set size" "$dir/time.txt"
grep -A 6 '"timings_seconds"' "$dir/out/run.json"
grep -A 4 '"notes"' "$dir/out/run.json"
echo "+ the same with --nonnegative"
nonneg=("${cmd[@]:0:${#cmd[@]}-1}" "$dir/out-nonnegative" --nonnegative)
/usr/bin/time -v "${nonneg[@]}" 2> "$dir/time.txt" >/dev/null
grep -E "Elapsed \(wall clock\)|User time|Maximum resident set size" "$dir/time.txt"
echo
echo "dense vs large-n MinT(Shrink), T = 60, h = 28, variances included:"
go test -run '^$' -bench 'BenchmarkMinT$' -benchtime 3x ./reconcile | tee "$dir/bench.txt" | grep Benchmark
awk '/dense/ {d=$3} /large/ {l=$3} END {printf "dense / large time ratio: %.1f\n", d/l}' "$dir/bench.txt"
