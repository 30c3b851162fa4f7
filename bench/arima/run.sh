#!/bin/sh
# Side-by-side timing of the seasonal ARIMA engine against R's stats::arima
# and statsmodels' SARIMAX, all on one core, in one run so that the shared
# machine's load affects them alike. Run from anywhere:
#   bench/arima/run.sh
# Needs Go; R (Debian r-base-core) and /usr/bin/python3 with Debian's
# python3-statsmodels are used when present and skipped otherwise.
set -eu
cd "$(dirname "$0")/../.."
export OPENBLAS_NUM_THREADS=1 OMP_NUM_THREADS=1 MKL_NUM_THREADS=1

out=$(GOMAXPROCS=1 go test -run '^$' -bench 'AirlineFixed|AutoSelect96' -benchtime 200x -count 5 -cpu 1 ./models/arima/)
median() { sort -n | awk '{a[NR]=$1} END {m=(NR%2)?a[(NR+1)/2]:(a[NR/2]+a[NR/2+1])/2; printf "%.3f\n", m}'; }
airline=$(echo "$out" | awk '/^BenchmarkAirlineFixed/ {print $3/1e6}' | median)
auto=$(echo "$out" | awk '/^BenchmarkAutoSelect96/ {print $3/1e6}' | median)

echo "seasonal ARIMA timings, median ms per fit on one core ($(date -u +%Y-%m-%dT%H:%MZ))"
printf '%-44s %10s %10s\n' "case" "ms" "target"
printf '%-44s %10s %10s\n' "trueup airline fixed, 144 months" "$airline" "3"
printf '%-44s %10s %10s\n' "trueup automatic selection, 96 months" "$auto" "40"

if command -v Rscript >/dev/null 2>&1; then
	r=$(Rscript bench/arima/r_airline.R 50)
	printf '%-44s %10s %10s\n' "$(Rscript -e 'cat(R.version.string)' | cut -d' ' -f1-3) stats::arima airline" "$r" ""
	echo "ratio R / trueup (airline): $(awk -v a="$r" -v b="$airline" 'BEGIN {printf "%.1f", a/b}')"
fi
if /usr/bin/python3 -c 'import statsmodels' 2>/dev/null; then
	s=$(/usr/bin/python3 bench/arima/sm_airline.py 10)
	v=$(/usr/bin/python3 -c 'import statsmodels; print(statsmodels.__version__)')
	printf '%-44s %10s %10s\n' "statsmodels $v SARIMAX airline" "$s" ""
	echo "ratio statsmodels / trueup (airline): $(awk -v a="$s" -v b="$airline" 'BEGIN {printf "%.1f", a/b}')"
fi
