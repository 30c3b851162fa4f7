#!/usr/bin/env bash
# Runs the demo, the 10M-row ingest and the 39,442-node reconcile
# benchmarks for this tree and for an earlier revision, alternating the
# two so that both see the same machine load, and prints each figure side
# by side with the ratio new / old.
#   bench/sidebyside/run.sh REV [ROUNDS]   (REV: a commit, e.g. HEAD~5; ROUNDS default 2)
# Needs GNU time (Debian package "time").
set -euo pipefail
rev=${1:?give the revision to compare with}
rounds=${2:-2}
cd "$(dirname "$0")/../.."
new=$(pwd)
dir=$(mktemp -d)
trap 'git worktree remove --force "$dir/old" >/dev/null 2>&1 || true; rm -rf "$dir"' EXIT
git worktree add --detach "$dir/old" "$rev" >/dev/null
old="$dir/old"
for t in old new; do
	tree=${!t}
	(cd "$tree" && go build -o "$dir/trueup-$t" ./cmd/trueup)
done

# wall seconds of a command, from GNU time
wall() { /usr/bin/time -f '%e' -o "$dir/t" "$@" >/dev/null 2>&1; cat "$dir/t"; }

echo "== demo, 306 nodes, two workers (s wall)"
for r in $(seq "$rounds"); do
	for t in old new; do
		echo "$t $(wall "$dir/trueup-$t" demo --quiet --workers 2 --out "$dir/demo-$t")" >> "$dir/demo.txt"
	done
done

echo "== reconcile, 39,442 nodes, mint + shrink, Parquet (s wall)"
for t in old new; do
	mkdir -p "$dir/rec-$t"
	(cd "${!t}" && go run ./bench/reconcile/gen -out "$dir/rec-$t" >/dev/null)
done
for r in $(seq "$rounds"); do
	for t in old new; do
		echo "$t $(wall "$dir/trueup-$t" reconcile --base "$dir/rec-$t/base.parquet" --residuals "$dir/rec-$t/residuals.parquet" \
			--hierarchy state,store --hierarchy category,department,item --method mint --cov shrink --out "$dir/recout-$t")" >> "$dir/reconcile.txt"
	done
done

echo "== read and aggregate ~10M item-level rows, one core (s per read)"
(cd "$new" && go run ./fixtures/cmd/gendemo -stores 200 -items 91 -format parquet -out "$dir/items" >/dev/null)
file=$(ls "$dir"/items/*.parquet | head -1)
for t in old new; do
	pkg=./engine
	[ -d "${!t}/internal/pipeline" ] && pkg=./internal/pipeline
	(cd "${!t}" && go test -c -o "$dir/ingest-$t.test" "$pkg" >/dev/null)
done
for r in $(seq "$rounds"); do
	for t in old new; do
		ns=$(cd "$dir" && GOMAXPROCS=1 TRUEUP_INGEST_FILE="$file" "./ingest-$t.test" -test.run '^$' \
			-test.bench 'BenchmarkReadAndAggregate$' -test.benchtime 3x | awk '/^Benchmark/ {print $3}')
		echo "$t $(awk -v ns="$ns" 'BEGIN {printf "%.3f", ns/1e9}')" >> "$dir/ingest.txt"
	done
done

for b in demo reconcile ingest; do
	awk -v b="$b" '{ v[$1] = v[$1] " " $2; s[$1] += $2; n[$1]++ }
		END { printf "%-9s old:%s  new:%s  mean ratio new/old %.2f\n", b, v["old"], v["new"], (s["new"]/n["new"]) / (s["old"]/n["old"]) }' "$dir/$b.txt"
done
