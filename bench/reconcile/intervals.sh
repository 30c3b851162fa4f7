#!/usr/bin/env bash
# Times trueup reconcile end to end (report.html included, Parquet) on
# run.sh's structure of 39,442 nodes with each interval method that
# reconcile offers: error-quantiles (the default: it also reconciles the
# 60 in-sample error columns, solved to a relative residual of 1e-6) and
# gaussian. The methods alternate within each round so that both meet the
# same machine load; prints wall s, user CPU s and peak KB of each, and
# the error-quantiles/gaussian ratios per round.
#   bench/reconcile/intervals.sh [ROUNDS]   (default 2)
# Needs GNU time (Debian package "time").
set -euo pipefail
rounds=${1:-2}
cd "$(dirname "$0")/../.."
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT
go build -o "$dir/trueup" ./cmd/trueup
go run ./bench/reconcile/gen -out "$dir" -format parquet >/dev/null
load() { cut -d' ' -f1-3 /proc/loadavg; }
for r in $(seq "$rounds"); do
  declare -A wall user
  for m in gaussian error-quantiles; do
    before=$(load)
    /usr/bin/time -f '%e %U %M' -o "$dir/t" "$dir/trueup" reconcile \
      --base "$dir/base.parquet" --residuals "$dir/residuals.parquet" \
      --hierarchy state,store --hierarchy category,department,item --method mint --cov shrink \
      --format parquet --out "$dir/out" --interval-method "$m" >/dev/null
    read -r w u k < "$dir/t"
    wall[$m]=$w
    user[$m]=$u
    echo "round $r $m: wall ${w}s user ${u}s peak ${k}KB; load $before -> $(load)"
  done
  awk -v qw="${wall[error-quantiles]}" -v gw="${wall[gaussian]}" -v qu="${user[error-quantiles]}" -v gu="${user[gaussian]}" -v r="$r" \
    'BEGIN {printf "round %d: error-quantiles/gaussian wall %.2f user %.2f\n", r, qw/gw, qu/gu}'
done
