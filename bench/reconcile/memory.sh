#!/usr/bin/env bash
# Runs trueup reconcile end to end (report.html included, Parquet) on
# run.sh's structure of 39,442 nodes with no TRUEUP_MEMORY and with each
# budget given, in turn: the budget is also the Go runtime's soft memory
# limit, so a tighter one trades collector work for a lower peak. Prints
# the exit status, wall s, user CPU s and peak KB of each.
#   bench/reconcile/memory.sh [BUDGET ...]   (default 700MiB 600MiB)
# Needs GNU time (Debian package "time").
set -euo pipefail
cd "$(dirname "$0")/../.."
budgets=("$@")
[ ${#budgets[@]} -gt 0 ] || budgets=(700MiB 600MiB)
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT
go build -o "$dir/trueup" ./cmd/trueup
go run ./bench/reconcile/gen -out "$dir" -format parquet >/dev/null
for b in unset "${budgets[@]}"; do
  before=$(cut -d' ' -f1-3 /proc/loadavg)
  status=0
  if [ "$b" = unset ]; then setting=(-u TRUEUP_MEMORY); else setting=("TRUEUP_MEMORY=$b"); fi
  env "${setting[@]}" /usr/bin/time -f '%e %U %M' -o "$dir/t" "$dir/trueup" reconcile \
    --base "$dir/base.parquet" --residuals "$dir/residuals.parquet" \
    --hierarchy state,store --hierarchy category,department,item --method mint --cov shrink \
    --format parquet --out "$dir/out" >/dev/null 2>"$dir/err" || status=$?
  read -r w u k < <(tail -1 "$dir/t")
  echo "TRUEUP_MEMORY=$b: exit $status, wall ${w}s user ${u}s peak ${k}KB; load $before"
  [ "$status" -eq 0 ] || head -1 "$dir/err"
done
