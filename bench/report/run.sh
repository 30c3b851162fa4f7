#!/usr/bin/env bash
# Sizes and times the HTML report on a 39,442-node run (state → store,
# 10 stores, crossed with category → department → item, 3,000 items:
# 30,000 bottom series of 120 days, horizon 28, seasonal naive per node,
# bottom-up), and on the demo: the report's size, the time to render it
# again from the run's tables, and in headless Chromium the time to draw
# the first view and to select nodes. Targets: the demo's report under
# 2 MB; the large one under 25 MB, first view within 3 s, a node
# selected within 300 ms.
# Usage: bench/report/run.sh   (needs Debian's chromium and /usr/bin/time)
set -euo pipefail
cd "$(dirname "$0")/../.."
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT
go build -o "$dir/trueup" ./cmd/trueup
go build -o "$dir/view" ./bench/report/view

echo "== demo"
"$dir/trueup" demo --quiet --out "$dir/demo" >/dev/null
ls -l "$dir/demo/report.html"
"$dir/view" -report "$dir/demo/report.html"

echo "== 39,442 nodes"
go run ./bench/report/gen -out "$dir"
cmd=("$dir/trueup" forecast --input "$dir/sales.parquet" --time day --value units
     --hierarchy state,store --hierarchy category,department,item --family seasonal-naive
     --method bottom-up --horizon 28 --quiet --out "$dir/out")
echo "+ trueup ${cmd[*]:1}"
"${cmd[@]}" >/dev/null
echo "+ trueup report --from out"
/usr/bin/time -f "report --from: %e s wall, %M KB max resident" "$dir/trueup" report --from "$dir/out"
"$dir/view" -report "$dir/out/report.html"
