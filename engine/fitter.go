package engine

import (
	"context"
	"math"
	"sync"

	"trueup/internal/crash"
	"trueup/models"
	"trueup/models/families"
)

// FitJob is one node to fit, as plain data: a future distributed fit
// stage can send it to another process unchanged.
type FitJob struct {
	// Node is the node's index in the structure (or the series' index);
	// results are placed by it.
	Node int
	// Series is the node's history on the panel calendar, NaN outside the
	// node's span (before it opened, after it closed).
	Series []float64
	// Model says which family (and form) to fit.
	Model families.Spec
	// Period is the seasonal period; Horizon the number of steps to
	// forecast.
	Period, Horizon int
}

// NodeFit is the fitted model of one node as plain data, aligned to the
// panel's calendar: what reconciliation, the tables and the report need.
type NodeFit struct {
	Family string // registry name of the fitted family; "closed" for a closed node
	Spec   string // the fitted form in words, e.g. "ARIMA(0,1,1)(0,1,1) m=12"
	// Params are the estimates, JSON-marshalable (see models.Model).
	Params   map[string]any
	Criteria models.Criteria
	Sigma2   float64
	NObs     int
	// First and Last are the panel columns of the node's first and last
	// observation; both −1 for a node with none.
	First, Last int
	Mean        []float64 // h base forecasts
	Variance    []float64 // h base forecast-error variances
	// Residuals are the in-sample one-step errors over First..Last, NaN
	// where the model has no one-step forecast.
	Residuals []float64
	// Path is the model's linear innovations form, from which the
	// bootstrap intervals simulate paths; nil when the model has none
	// (see models.Simulator) or the node is closed.
	Path    *models.PathForm
	Warning string
	Closed  bool // the node stopped trading before the panel's last period
	// Fitted reports whether a model was fitted at all (false only for a
	// node with no observations).
	Fitted bool
}

// Fitter fits a batch of jobs and returns one NodeFit per job, in job
// order. Implementations must be deterministic: the same jobs give the
// same fits whatever the parallelism. progress, when non-nil, is called
// after each job with the number done so far; calls are serialised.
//
// Local is the in-process implementation; a distributed fit stage is
// another.
type Fitter interface {
	Fit(ctx context.Context, jobs []FitJob, progress func(done, total int)) ([]NodeFit, error)
}

// FitterFunc adapts an ordinary function to the Fitter interface, as
// http.HandlerFunc does for handlers.
type FitterFunc func(ctx context.Context, jobs []FitJob, progress func(done, total int)) ([]NodeFit, error)

// Fit calls f.
func (f FitterFunc) Fit(ctx context.Context, jobs []FitJob, progress func(done, total int)) ([]NodeFit, error) {
	return f(ctx, jobs, progress)
}

// Local fits jobs in this process on a pool of goroutines.
type Local struct {
	// Workers is the number of jobs fitted in parallel; < 1 means 1. It
	// is lowered to the number of jobs and to MaxWorkers: each worker is
	// a goroutine, and a million of them idle would take gigabytes.
	Workers int
}

// MaxWorkers is the most workers Local runs: fitting is CPU-bound, so more
// workers than cores only wait (the largest machines have a few hundred).
const MaxWorkers = 1024

var _ Fitter = Local{}

// Fit fits every job with FitOne. Results are placed by job position, so
// the output does not depend on the number of workers or the order in
// which they finish. It stops early, returning ctx.Err(), when ctx is
// cancelled.
func (l Local) Fit(ctx context.Context, jobs []FitJob, progress func(done, total int)) ([]NodeFit, error) {
	n := len(jobs)
	fits := make([]NodeFit, n)
	work := make(chan int)
	var wg sync.WaitGroup
	var mu sync.Mutex
	done := 0
	workers := min(max(l.Workers, 1), max(n, 1), MaxWorkers)
	var firstErr error
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range work {
				f, err := fitCaught(jobs[i])
				mu.Lock()
				if err != nil && firstErr == nil {
					firstErr = err
				}
				fits[i] = f
				done++
				if progress != nil {
					progress(done, n)
				}
				mu.Unlock()
			}
		}()
	}
	var err error
loop:
	for i := 0; i < n; i++ {
		select {
		case work <- i:
		case <-ctx.Done():
			err = ctx.Err()
			break loop
		}
	}
	close(work)
	wg.Wait()
	if err != nil {
		return nil, err
	}
	if firstErr != nil {
		return nil, firstErr
	}
	return fits, nil
}

// fitCaught is FitOne with a panic outside the model families (which
// safeFit already catches per node) returned as a *crash.Panic, so that it
// ends the run as an internal error instead of killing the process.
func fitCaught(job FitJob) (f NodeFit, err error) {
	defer crash.Catch(&err)
	return FitOne(job)
}

// StdError is the base forecast's standard error at step k (0-based).
func (nf *NodeFit) StdError(k int) float64 { return math.Sqrt(math.Max(nf.Variance[k], 0)) }

// Bounds is the central Gaussian prediction interval of the base forecast
// at step k (0-based) for a level in percent: mean ± z·StdError(k).
func (nf *NodeFit) Bounds(k int, level float64) (lo, hi float64) {
	z := Quantile(level)
	return nf.Mean[k] - z*nf.StdError(k), nf.Mean[k] + z*nf.StdError(k)
}
