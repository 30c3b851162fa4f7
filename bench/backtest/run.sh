#!/bin/sh
# What a backtest costs: the engine side by side (go run ./bench/backtest:
# K forecasts on the cut histories vs one backtest of five methods over the
# same K origins), then the command line end to end on the demo chain with
# two workers (target under 60 s).
#   bench/backtest/run.sh        (from anywhere; needs GNU time, Debian package "time")
set -eu
cd "$(dirname "$0")/../.."
go run ./bench/backtest -origins 4 -workers 2 -rounds 2
bin=$(mktemp -d)
trap 'rm -rf "$bin"' EXIT
go build -o "$bin/trueup" ./cmd/trueup
"$bin/trueup" demo --quiet --workers 2 --out "$bin/demo" >/dev/null
/usr/bin/time -f 'trueup backtest --origins 4 (5 methods): %e s wall, %U s user CPU, %M KB peak resident' \
	"$bin/trueup" backtest --input "$bin/demo/demo_sales.parquet" --hierarchy region,store --hierarchy category \
	--origins 4 --workers 2 --quiet --out "$bin/bt" >/dev/null
python3 -c 'import json,sys; r=json.load(open(sys.argv[1])); print("stages (s):", {k: round(v, 2) for k, v in r["timings_seconds"].items()})' "$bin/bt/run.json"
