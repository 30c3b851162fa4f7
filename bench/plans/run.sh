#!/bin/sh
# The demo (306 nodes, automatic choice per node, MinT with shrinkage,
# report included) with and without --plan-grain quarter,year, two workers,
# run alternately ROUNDS times (default 3): wall and user CPU of each run,
# the medians and their ratios (target: wall ratio at most 1.2), and the
# seconds the plan totals themselves took (run.json's "plans" stage).
#   sh bench/plans/run.sh [ROUNDS]     (needs GNU time, Debian package "time")
set -eu
cd "$(dirname "$0")/../.."
rounds=${1:-3}
bin=$(mktemp -d)
trap 'rm -rf "$bin"' EXIT
go build -o "$bin/trueup" ./cmd/trueup
echo "load average before: $(cut -d' ' -f1-3 /proc/loadavg)"
i=1
while [ "$i" -le "$rounds" ]; do
	for mode in plain plans; do
		extra=""
		[ "$mode" = plans ] && extra="--plan-grain quarter,year"
		rm -rf "$bin/out-$mode"
		# shellcheck disable=SC2086
		/usr/bin/time -f "%e %U" -o "$bin/t" "$bin/trueup" demo --quiet --workers 2 --out "$bin/out-$mode" $extra >/dev/null
		read -r wall user <"$bin/t"
		echo "$mode $wall $user" >>"$bin/times"
		echo "round $i $mode: $wall s wall, $user s user"
	done
	i=$((i + 1))
done
python3 - "$bin/times" "$bin/out-plans/run.json" <<'PY'
import json, statistics, sys
runs = {}
for line in open(sys.argv[1]):
    mode, wall, user = line.split()
    runs.setdefault(mode, []).append((float(wall), float(user)))
med = {m: (statistics.median(w for w, _ in r), statistics.median(u for _, u in r)) for m, r in runs.items()}
for m in ("plain", "plans"):
    print(f"{m:6} median {med[m][0]:.2f} s wall, {med[m][1]:.2f} s user")
print(f"ratio plans/plain: wall {med['plans'][0]/med['plain'][0]:.3f}, user {med['plans'][1]/med['plain'][1]:.3f} (target wall ≤ 1.2)")
print("plan totals stage:", round(json.load(open(sys.argv[2]))["timings_seconds"].get("plans", 0), 4), "s")
PY
