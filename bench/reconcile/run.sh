#!/usr/bin/env bash
# Times trueup reconcile end to end on a retail structure of 39,442 nodes
# (state → store, 10 stores, crossed with category → department → item,
# 3,000 items: 30,000 bottom series), T = 60 residual days, horizon 28,
# MinT with the shrinkage covariance, as users run it (report.html
# included): read from and written to Parquet, then the same inputs as CSV
# read from and written to CSV, each without and with --nonnegative. Then
# compares the dense and large-n MinT paths at about 2,000 nodes.
# Prints wall time, user CPU, peak memory and the load average (the
# machine is shared: a busy machine stretches wall times).
# Usage: bench/reconcile/run.sh   (from anywhere; needs /usr/bin/time)
set -euo pipefail
cd "$(dirname "$0")/../.."
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT
go build -o "$dir/trueup" ./cmd/trueup
echo "generating inputs into $dir ..."
for f in parquet csv; do
  mkdir -p "$dir/$f"
  go run ./bench/reconcile/gen -out "$dir/$f" -format "$f"
done
ls -l "$dir"/parquet/*.parquet "$dir"/csv/*.csv
for f in parquet csv; do
  cmd=("$dir/trueup" reconcile --base "$dir/$f/base.$f" --residuals "$dir/$f/residuals.$f"
       --hierarchy state,store --hierarchy category,department,item --method mint --cov shrink
       --format "$f" --out "$dir/out-$f")
  for extra in "" --nonnegative; do
    echo
    echo "+ trueup ${cmd[*]:1} $extra"
    echo "load average before: $(cut -d' ' -f1-3 /proc/loadavg)"
    /usr/bin/time -v "${cmd[@]}" $extra 2> "$dir/time.txt" >/dev/null
    grep -E "Elapsed \(wall clock\)|User time|System time|Maximum resident set size" "$dir/time.txt"
    echo "load average after: $(cut -d' ' -f1-3 /proc/loadavg)"
    grep -A 4 '"timings_seconds"' "$dir/out-$f/run.json" | tail -n +2
  done
done
echo
echo "dense vs large-n MinT(Shrink), T = 60, h = 28, variances included:"
go test -run '^$' -bench 'BenchmarkMinT$' -benchtime 3x ./reconcile | tee "$dir/bench.txt" | grep Benchmark
awk '/dense/ {d=$3} /large/ {l=$3} END {printf "dense / large time ratio: %.1f\n", d/l}' "$dir/bench.txt"
