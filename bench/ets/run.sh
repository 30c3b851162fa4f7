#!/bin/sh
# Speed of automatic ETS and of the full per-node automatic choice, on one
# core, beside statsmodels' time for the same ETS search.
#
#   sh bench/ets/run.sh        (from the repository root; needs Debian
#                               python3-statsmodels for the ratio)
#
# Go figures are medians of 5 benchmark runs (-cpu 1). cpu-ms/op is the
# process CPU time per operation, which stays meaningful when other work
# shares the machine; ns/op is wall time.
set -eu
cd "$(dirname "$0")/../.."
out=$(mktemp)
trap 'rm -f "$out"' EXIT
go test ./models/ets ./models/choose -run '^$' -bench 'Auto96' -benchtime 20x -count 5 -cpu 1 >"$out"
median() { sort -n | awk '{a[NR]=$1} END {print a[int((NR+1)/2)]}'; }
ets_wall=$(awk '/^pkg: trueup\/models\/ets/{p=1} /^pkg: trueup\/models\/choose/{p=0} p && /^BenchmarkAuto96/{print $3/1e6}' "$out" | median)
ets_cpu=$(awk '/^pkg: trueup\/models\/ets/{p=1} /^pkg: trueup\/models\/choose/{p=0} p && /^BenchmarkAuto96/{print $5}' "$out" | median)
auto_wall=$(awk '/^pkg: trueup\/models\/choose/{p=1} p && /^BenchmarkAuto96/{print $3/1e6}' "$out" | median)
auto_cpu=$(awk '/^pkg: trueup\/models\/choose/{p=1} p && /^BenchmarkAuto96/{print $5}' "$out" | median)
printf 'automatic ETS, 96 months:      %8.1f ms wall  %8.1f ms CPU  (target 20 ms)\n' "$ets_wall" "$ets_cpu"
printf 'automatic choice per node:     %8.1f ms wall  %8.1f ms CPU  (target 150 ms)\n' "$auto_wall" "$auto_cpu"
if [ -x /usr/bin/python3 ] && /usr/bin/python3 -c 'import statsmodels' 2>/dev/null; then
	sm=$(/usr/bin/python3 bench/ets/statsmodels_auto.py | tail -1)
	printf 'statsmodels, same ETS search:  %8.1f ms wall  ratio %.0fx\n' "$sm" "$(echo "$sm $ets_wall" | awk '{print $1/$2}')"
else
	echo "statsmodels not installed: no ratio (apt-get install python3-statsmodels)"
fi
