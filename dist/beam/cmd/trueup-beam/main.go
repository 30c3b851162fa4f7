// Command trueup-beam runs trueup's forecast, backtest and demo with the
// fit stage as an Apache Beam pipeline (package beamfit); loading,
// reconciliation, intervals, scores and the output files stay on this
// machine and are the same bytes as trueup's. The pipeline runs on Beam's
// embedded runner (prism) unless Beam's flags (--runner, --endpoint, …)
// name another: see dist/beam/README.md.
//
// The same binary is the pipeline's worker on a cluster: started with
// Beam's --worker flag, it serves the runner instead.
package main

import (
	"flag"
	"os"
	"slices"

	"github.com/apache/beam/sdks/v2/go/pkg/beam"
	beamlog "github.com/apache/beam/sdks/v2/go/pkg/beam/log"
	"github.com/apache/beam/sdks/v2/go/pkg/beam/x/beamx"

	"trueup/cmd/trueup/cli"
	"trueup/dist/beam/beamfit"
	"trueup/engine"
)

var exchange = flag.String("exchange", "", "folder for the jobs and fits, reachable by every worker (a bucket URL on a cluster); default a temporary folder on this machine")

func main() {
	if isWorker(os.Args[1:]) {
		flag.Parse()
	} else {
		// The driver's terminal shows trueup's messages; Beam's own
		// progress lines only at warning level and above.
		beamlog.LogLevel = "warn"
	}
	// As a worker, Init serves the runner and exits; as a driver it only
	// marks Beam as initialised.
	beam.Init()
	cli.Main(os.Args[1:], cli.Config{
		Name:     "trueup-beam",
		Commands: []string{"forecast", "backtest", "demo"},
		Flags:    flag.CommandLine,
		Fitter: func(workers int) engine.Fitter {
			return beamfit.Fitter{Run: beamx.Run, Exchange: *exchange, Workers: workers}
		},
	})
}

// isWorker says whether a runner started this binary as a worker: Beam's
// containers pass --worker (Go flag syntax, one or two dashes).
func isWorker(args []string) bool {
	return slices.ContainsFunc(args, func(a string) bool {
		return a == "--worker" || a == "-worker" || a == "--worker=true" || a == "-worker=true"
	})
}
