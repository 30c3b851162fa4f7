#!/usr/bin/env bash
# Times trueup reconcile end to end, as users run it (report.html
# included), without and with a lock table, on run.sh's structure of
# 39,442 nodes: 23 locks at each of 28 steps (the total 5% above its base
# forecast, a state and a category at theirs, twenty items of one store
# at zero; gen -locks). One bottom series in fifty has base forecasts of
# -20 (gen -negative-every 50), so that with --nonnegative every step is
# solved by the non-negative programme, and with locks a second time
# without them for the report's comparison. Unlocked and locked runs
# alternate so that both meet the same machine load; prints wall s, user
# CPU s and peak KB of each, and the locked/unlocked ratios per round.
#   bench/reconcile/locks.sh [ROUNDS] [FORMAT]   (defaults 2, parquet)
# Needs GNU time (Debian package "time").
set -euo pipefail
rounds=${1:-2}
format=${2:-parquet}
cd "$(dirname "$0")/../.."
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT
go build -o "$dir/trueup" ./cmd/trueup
go run ./bench/reconcile/gen -out "$dir" -format "$format" -negative-every 50 -locks >/dev/null
load() { cut -d' ' -f1-3 /proc/loadavg; }
for r in $(seq "$rounds"); do
  for extra in "" --nonnegative; do
    declare -A wall user
    for lock in "" "--lock $dir/locks.$format"; do
      before=$(load)
      # shellcheck disable=SC2086 # $extra and $lock are word lists
      /usr/bin/time -f '%e %U %M' -o "$dir/t" "$dir/trueup" reconcile \
        --base "$dir/base.$format" --residuals "$dir/residuals.$format" \
        --hierarchy state,store --hierarchy category,department,item --method mint --cov shrink \
        --format "$format" --out "$dir/out" $extra $lock >/dev/null
      read -r w u m < "$dir/t"
      name=${lock:+locked}
      name=${name:-unlocked}
      wall[$name]=$w
      user[$name]=$u
      echo "round $r ${extra:-signed} $name: wall ${w}s user ${u}s peak ${m}KB; load $before -> $(load)"
    done
    awk -v lw="${wall[locked]}" -v uw="${wall[unlocked]}" -v lu="${user[locked]}" -v uu="${user[unlocked]}" -v r="$r" -v e="${extra:-signed}" \
      'BEGIN {printf "round %d %s: locked/unlocked wall %.2f user %.2f\n", r, e, lw/uw, lu/uu}'
  done
done
