#!/bin/sh
# The Beam fit stage against the local one on a large invented monthly
# chain (the generator of bench/chain/run.sh: 8 regions, 8 categories,
# STORES stores, six years of months): runs `trueup forecast --family auto`
# and `trueup-beam forecast` (prism, this machine) on the same file,
# alternating ROUNDS times, each with two workers, writing Parquet and
# CSV; prints wall time, CPU and peak memory of each run and the stages
# from run.json, compares every output file (samesets.py) and prints the
# ratio of the median wall times.
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
	for bin in trueup trueup-beam; do
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
walls = [[float(l.split()[0]) for l in open(p)] for p in sys.argv[1:]]
local, beam = (statistics.median(w) for w in walls)
print(f"median wall: local {local:.1f} s, beam (prism) {beam:.1f} s; ratio {beam / local:.2f}")
PY
