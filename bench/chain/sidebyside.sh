#!/bin/sh
# The whole run of bench/chain/run.sh for this tree and for an earlier
# revision, side by side: `trueup forecast --family auto --workers 2` on
# one invented monthly chain (Parquet), the two binaries alternating so
# that both see the same machine load. Prints each run's wall time, user
# CPU and peak memory, the medians and the ratios new / old, and whether
# the two wrote the same tables (SHA-256 of every Parquet file).
#
#   sh bench/chain/sidebyside.sh REV [STORES [ROUNDS]]
#
# REV is a commit (e.g. HEAD~5), exported with git archive; STORES defaults
# to 200 (1,881 nodes), ROUNDS to 3. Needs GNU time and python3.
set -eu
rev=${1:?give the revision to compare with}
stores=${2:-200}
rounds=${3:-3}
cd "$(dirname "$0")/../.."
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT
mkdir "$dir/old"
git archive "$rev" | tar -x -C "$dir/old"
(cd "$dir/old" && go build -o "$dir/trueup-old" ./cmd/trueup)
go build -o "$dir/trueup-new" ./cmd/trueup
go run ./fixtures/cmd/gendemo --regions 8 --categories 8 --stores "$stores" \
	--format parquet --out "$dir" --name chain >/dev/null
for r in $(seq "$rounds"); do
	for t in old new; do
		rm -rf "$dir/out-$t"
		/usr/bin/time -f "$t %e %U %M $(cut -d' ' -f1 /proc/loadavg)" -a -o "$dir/times" \
			"$dir/trueup-$t" forecast --input "$dir/chain.parquet" --time period --value sales \
			--hierarchy region,store --hierarchy category --family auto --workers 2 --quiet \
			--out "$dir/out-$t" >/dev/null
	done
done
python3 - "$dir/times" "$stores" <<'EOF'
import statistics, sys
runs = {"old": [], "new": []}
for line in open(sys.argv[1]):
    t, wall, user, kb, load = line.split()
    runs[t].append((float(wall), float(user), int(kb), load))
print(f"== forecast --family auto, {sys.argv[2]} stores, two workers")
for t in ("old", "new"):
    for wall, user, kb, load in runs[t]:
        print(f"{t}: {wall:.1f} s wall, {user:.1f} s user CPU, {kb / 1024:.0f} MB peak (load average {load} before)")
med = {t: (statistics.median(r[0] for r in runs[t]), statistics.median(r[1] for r in runs[t])) for t in runs}
for t in ("old", "new"):
    print(f"{t} median: {med[t][0]:.1f} s wall, {med[t][1]:.1f} s user CPU")
print(f"new / old: wall {med['new'][0] / med['old'][0]:.2f}, user CPU {med['new'][1] / med['old'][1]:.2f}")
EOF
for f in "$dir"/out-old/*.parquet; do
	name=$(basename "$f")
	if cmp -s "$f" "$dir/out-new/$name"; then
		echo "$name: same bytes"
	else
		echo "$name: DIFFERS"
	fi
done
