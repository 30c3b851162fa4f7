#!/usr/bin/env bash
# Times the benchmark's reconcile commands (see run.sh: 39,442 nodes,
# mint + shrink, report.html included; Parquet and CSV in and out, each
# without and with --nonnegative) for this tree and for an earlier
# revision, alternating the two binaries so that both see the same machine
# load. Prints wall s, user CPU s, system CPU s and peak KB of each run,
# with the load average before and after it.
#   bench/reconcile/beforeafter.sh REV [ROUNDS]   (ROUNDS default 2)
# The earlier revision is unpacked with git archive (no worktree). Needs
# GNU time (Debian package "time").
set -euo pipefail
rev=${1:?give the revision to compare with}
rounds=${2:-2}
cd "$(dirname "$0")/../.."
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT
mkdir -p "$dir/old"
git archive "$rev" | tar -x -C "$dir/old"
(cd "$dir/old" && go build -o "$dir/trueup-old" ./cmd/trueup)
go build -o "$dir/trueup-new" ./cmd/trueup
for f in parquet csv; do
  mkdir -p "$dir/$f"
  go run ./bench/reconcile/gen -out "$dir/$f" -format "$f" >/dev/null
done
load() { cut -d' ' -f1-3 /proc/loadavg; }
for r in $(seq "$rounds"); do
  for f in parquet csv; do
    for extra in "" --nonnegative; do
      for t in old new; do
        before=$(load)
        /usr/bin/time -f '%e %U %S %M' -o "$dir/t" "$dir/trueup-$t" reconcile \
          --base "$dir/$f/base.$f" --residuals "$dir/$f/residuals.$f" \
          --hierarchy state,store --hierarchy category,department,item --method mint --cov shrink \
          --format "$f" --out "$dir/out-$t" $extra >/dev/null
        echo "round $r $t $f ${extra:-plain}: wall/user/sys/peakKB $(cat "$dir/t"); load $before -> $(load)"
      done
    done
  done
done
