#!/bin/sh
# The Beam fit stage against the local one on a large invented monthly
# chain (the generator of bench/chain/run.sh: 8 regions, 8 categories,
# STORES stores, six years of months): runs `trueup forecast --family auto`
# and `trueup-beam forecast` (prism, this machine) on the same file, one
# after the other in each of ROUNDS rounds (local first in odd rounds,
# Beam first in even ones, so that neither always meets the same load),
# each with two workers, writing Parquet and CSV; prints wall time, CPU
# and peak memory of each run and the stages from run.json, compares
# every output file (samesets.py) and prints each round's ratio of wall
# time and of user CPU, with their median and range.
#
#   sh dist/beam/bench/run.sh [STORES [ROUNDS [FAMILY]]]
#
# from anywhere; STORES defaults to 4436 (40,005 nodes), ROUNDS to 2,
# FAMILY to auto (seasonal-naive checks the same bytes in a minute).
# Needs GNU time and python3. Takes minutes per run at 40,005 nodes.
set -eu
stores=${1:-4436}
rounds=${2:-2}
family=${3:-auto}
here=$(cd "$(dirname "$0")/.." && pwd)
root=$(cd "$here/../.." && pwd)
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT
(cd "$root" && go build -o "$dir/trueup" ./cmd/trueup)
(cd "$here" && go build -o "$dir/trueup-beam" ./cmd/trueup-beam)
(cd "$root" && go run ./fixtures/cmd/gendemo --regions 8 --categories 8 --stores "$stores" \
	--format parquet --out "$dir" --name chain >/dev/null)
stages() {
	python3 - "$1" <<'PY'
import json, sys
r = json.load(open(sys.argv[1]))
t = r["timings_seconds"]
print("  nodes:", r["counts"]["nodes"], "; stages (s wall):", ", ".join(f"{k} {v:.2f}" for k, v in sorted(t.items())))
PY
}
round=1
while [ "$round" -le "$rounds" ]; do
	order="trueup trueup-beam"
	[ $((round % 2)) -eq 0 ] && order="trueup-beam trueup"
	for bin in $order; do
		echo "== round $round, $bin; load average before: $(cut -d' ' -f1-3 /proc/loadavg)"
		# Both write to the same folder name, so run.json and the report
		# name the same paths; the set is then moved aside.
		/usr/bin/time -f "  %e s wall, %U s user CPU, %S s system CPU, %M KB peak resident" -a -o "$dir/time-$bin" \
			"$dir/$bin" forecast --input "$dir/chain.parquet" --time period --value sales \
			--nest region,store --nest category --family "$family" --workers 2 --quiet --format parquet,csv \
			--out "$dir/out" >/dev/null 2>"$dir/stderr-$bin" || { cat "$dir/stderr-$bin"; exit 1; }
		tail -n 1 "$dir/time-$bin"
		stages "$dir/out/run.json"
		rm -rf "$dir/$bin-$round"
		mv "$dir/out" "$dir/$bin-$round"
	done
	python3 "$here/bench/samesets.py" "$dir/trueup-$round" "$dir/trueup-beam-$round"
	round=$((round + 1))
done
python3 - "$dir/time-trueup" "$dir/time-trueup-beam" <<'PY'
import statistics, sys
# One line a round in each file: "WALL s wall, USER s user CPU, ...".
runs = [[(float(l.split()[0]), float(l.split()[3])) for l in open(p)] for p in sys.argv[1:]]
for what, k in (("wall", 0), ("user CPU", 1)):
    ratios = [b[k] / l[k] for l, b in zip(*runs)]
    print(f"{what}: beam/local by round " + ", ".join(f"{r:.2f}" for r in ratios)
          + f"; median {statistics.median(ratios):.2f}, range {min(ratios):.2f} to {max(ratios):.2f}")
PY
