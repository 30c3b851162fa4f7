#!/bin/sh
# Per-node cost of the automatic choice (models/choose.Standard) on the demo
# chain's store x category series: 72 monthly and 260 weekly points, one
# core. Prints the benchmark lines and the top of a CPU profile.
# Run from the repository root: sh bench/choice/run.sh
set -e
out=$(mktemp -d)
trap 'rm -rf "$out"' EXIT
GOMAXPROCS=1 go test ./bench/choice -run '^$' -bench . -benchtime 5x \
	-cpuprofile "$out/cpu.prof" -o "$out/choice.test" | grep -E '^Benchmark'
echo "profile, top functions by cumulative CPU:"
go tool pprof -top -cum "$out/choice.test" "$out/cpu.prof" 2>/dev/null |
	grep -E 'trueup|gonum' | head -15
