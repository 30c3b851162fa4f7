#!/bin/sh
# Wall time and peak memory of the whole demo run (306 nodes, automatic
# family choice per node, MinT with shrinkage) with two workers.
#   bench/demo/run.sh        (from anywhere; needs GNU time, Debian package "time")
set -eu
cd "$(dirname "$0")/../.."
bin=$(mktemp -d)
trap 'rm -rf "$bin"' EXIT
go build -o "$bin/trueup" ./cmd/trueup
/usr/bin/time -f 'demo: %e s wall, %U s user CPU, %M KB peak resident' \
	"$bin/trueup" demo --quiet --workers 2 --out "$bin/out" >/dev/null
python3 -c 'import json,sys; r=json.load(open(sys.argv[1])); print("stages (s):", {k: round(v, 2) for k, v in r["timings_seconds"].items()})' "$bin/out/run.json"
