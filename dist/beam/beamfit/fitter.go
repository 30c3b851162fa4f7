// Package beamfit is an engine.Fitter whose fit stage is an Apache Beam
// pipeline: the jobs are written as rows to an exchange folder, a pipeline
// reads them, fits every node with engine.FitOne (the local fitter's own
// function) and writes the fits as rows, and the driver reads them back
// and places them by job position. Reconciliation and everything after it
// stay on the driver, so the output is the local run's, byte for byte.
package beamfit

import (
	"context"
	"crypto/rand"
	"encoding/gob"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"

	"github.com/apache/beam/sdks/v2/go/pkg/beam"
	"github.com/apache/beam/sdks/v2/go/pkg/beam/io/filesystem"
	_ "github.com/apache/beam/sdks/v2/go/pkg/beam/io/filesystem/local" // plain paths
	"github.com/apache/beam/sdks/v2/go/pkg/beam/register"
	"github.com/apache/beam/sdks/v2/go/pkg/beam/transforms/stats"

	"trueup/engine"
)

// Fitter fits jobs on a Beam runner.
type Fitter struct {
	// Run runs a pipeline on the chosen runner (beamx.Run reads --runner
	// and the other Beam flags; prism, in this process, by default).
	Run func(context.Context, *beam.Pipeline) error
	// Exchange is the folder the jobs and fits go through, on a file
	// system every worker can reach (a local path under prism; a bucket
	// URL on a cluster). Empty means a new temporary folder on this
	// machine. Each Fit uses, and then removes, a fresh folder inside it.
	Exchange string
	// ShardJobs is the number of jobs per job file; < 1 means 1,000.
	ShardJobs int
	// Workers is the number of nodes each Beam worker fits in parallel
	// within a bundle (engine.Local's Workers).
	Workers int
}

var _ engine.Fitter = Fitter{}

// Fit writes the jobs, runs the pipeline and reads the fits back, one per
// job in job order. progress is called once, when all are back: the
// workers' progress is on the runner's own pages.
func (f Fitter) Fit(ctx context.Context, jobs []engine.FitJob, progress func(done, total int)) ([]engine.NodeFit, error) {
	if len(jobs) == 0 {
		return []engine.NodeFit{}, nil
	}
	dir, cleanup, err := f.folder()
	if err != nil {
		return nil, err
	}
	defer cleanup()
	shards, err := writeJobs(ctx, dir, jobs, f.ShardJobs)
	if err != nil {
		return nil, err
	}
	p := pipeline(shards, join(dir, "fits"), f.Workers)
	if err := f.Run(ctx, p); err != nil {
		return nil, fmt.Errorf("fit pipeline: %w", err)
	}
	out, err := readFits(ctx, join(dir, "fits"), len(jobs))
	if err != nil {
		return nil, err
	}
	if progress != nil {
		progress(len(jobs), len(jobs))
	}
	return out, nil
}

// pipeline is the fit pipeline: the job files, spread over the workers,
// each fitted by fitShard into a fit file in fits.
func pipeline(shards []string, fits string, workers int) *beam.Pipeline {
	p, s := beam.NewPipelineWithRoot()
	files := beam.CreateList(s, shards)
	files = beam.Reshuffle(s, files)
	written := beam.ParDo(s, &fitShard{Dir: fits, Workers: workers}, files)
	// Nothing reads this count: it is there so that the fit stage has an
	// output consumed outside it. Prism (v2.78.0) waits for a bundle of a
	// stage with no such output by selecting on a channel that is
	// already closed, a busy loop that took 30% of the CPU of a whole run
	// on 2 cores (profiled at 4,041 nodes); with an output it waits
	// blocked until the bundle's output is complete.
	stats.CountElms(s, written)
	return p
}

// folder makes this Fit's exchange folder and returns a function that
// removes it.
func (f Fitter) folder() (string, func(), error) {
	if f.Exchange == "" {
		dir, err := os.MkdirTemp("", "trueup-beam-")
		if err != nil {
			return "", nil, err
		}
		return dir, func() { os.RemoveAll(dir) }, nil
	}
	dir := join(strings.TrimSuffix(f.Exchange, "/"), "trueup-fit-"+randomName())
	return dir, func() { removeAll(dir) }, nil
}

// removeAll removes the files under dir when its file system can remove
// (a local folder also loses its empty subfolders).
func removeAll(dir string) {
	if !strings.Contains(dir, "://") {
		os.RemoveAll(dir)
		return
	}
	ctx := context.Background()
	fs, err := filesystem.New(ctx, dir)
	if err != nil {
		return
	}
	defer fs.Close()
	rm, ok := fs.(filesystem.Remover)
	if !ok {
		return
	}
	names, _ := fs.List(ctx, dir+"/*/*")
	for _, n := range names {
		rm.Remove(ctx, n)
	}
}

// writeJobs writes the jobs as rows, perShard to a file, and returns the
// files' names.
func writeJobs(ctx context.Context, dir string, jobs []engine.FitJob, perShard int) ([]string, error) {
	if perShard < 1 {
		perShard = 1000
	}
	var names []string
	for start := 0; start < len(jobs); start += perShard {
		name := join(dir, "jobs", fmt.Sprintf("%08d.gob", start/perShard))
		rows := make([]JobRow, 0, perShard)
		for i := start; i < min(start+perShard, len(jobs)); i++ {
			rows = append(rows, jobRow(i, jobs[i]))
		}
		if err := writeRows(ctx, name, rows); err != nil {
			return nil, err
		}
		names = append(names, name)
	}
	return names, nil
}

// writeRows writes rows to one file as a gob stream.
func writeRows[T any](ctx context.Context, name string, rows []T) (err error) {
	if !strings.Contains(name, "://") {
		if err := os.MkdirAll(filepath.Dir(name), 0o755); err != nil {
			return err
		}
	}
	fs, err := filesystem.New(ctx, name)
	if err != nil {
		return err
	}
	defer fs.Close()
	w, err := fs.OpenWrite(ctx, name)
	if err != nil {
		return err
	}
	defer func() {
		if cerr := w.Close(); err == nil {
			err = cerr
		}
	}()
	enc := gob.NewEncoder(w)
	for _, r := range rows {
		if err := enc.Encode(r); err != nil {
			return fmt.Errorf("write %s: %w", name, err)
		}
	}
	return nil
}

// readRows calls each for every row of a gob stream file.
func readRows[T any](ctx context.Context, name string, each func(T) error) error {
	fs, err := filesystem.New(ctx, name)
	if err != nil {
		return err
	}
	defer fs.Close()
	r, err := fs.OpenRead(ctx, name)
	if err != nil {
		return err
	}
	defer r.Close()
	dec := gob.NewDecoder(r)
	for {
		var row T
		if err := dec.Decode(&row); err == io.EOF {
			return nil
		} else if err != nil {
			return fmt.Errorf("read %s: %w", name, err)
		}
		if err := each(row); err != nil {
			return err
		}
	}
}

// fitShard fits the jobs of one job file with engine.Local, Workers at a
// time, and writes their fits as rows to a file of its own in Dir. A job
// file, not a job, is the pipeline's element: a runner may hand a worker
// its elements in bundles of any size, down to one, and a file's
// thousand jobs keep every core of the worker busy whatever the bundle.
// A file the runner fits again (after a failure) gives a second file of
// the same rows (fits are deterministic); readFits keeps one of each.
// It outputs the fit file's name, which only a count reads (the driver
// lists the folder; Fit says why the stage needs an output).
type fitShard struct {
	Dir     string
	Workers int
}

func (w *fitShard) ProcessElement(ctx context.Context, name string) (string, error) {
	var jobs []engine.FitJob
	var index []int64
	err := readRows(ctx, name, func(r JobRow) error {
		jobs = append(jobs, r.job())
		index = append(index, r.Index)
		return nil
	})
	if err != nil {
		return "", err
	}
	fits, err := engine.Local{Workers: w.Workers}.Fit(ctx, jobs, nil)
	if err != nil {
		return "", err
	}
	rows := make([]FitRow, len(fits))
	for i, f := range fits {
		if rows[i], err = fitRow(index[i], f); err != nil {
			return "", err
		}
	}
	out := join(w.Dir, randomName()+".gob")
	return out, writeRows(ctx, out, rows)
}

// readFits reads every fit file in dir and places the fits by job index;
// every job must have one. A file cut short (by a worker that failed
// while writing it; the runner then ran its bundle again) gives the rows
// it holds whole.
func readFits(ctx context.Context, dir string, n int) ([]engine.NodeFit, error) {
	fs, err := filesystem.New(ctx, dir)
	if err != nil {
		return nil, err
	}
	names, err := fs.List(ctx, join(dir, "*.gob"))
	fs.Close()
	if err != nil {
		return nil, err
	}
	fits := make([]engine.NodeFit, n)
	got := make([]bool, n)
	for _, name := range names {
		err := readRows(ctx, name, func(r FitRow) error {
			if r.Index < 0 || r.Index >= int64(n) {
				return fmt.Errorf("read %s: fit of job %d, of %d jobs", name, r.Index, n)
			}
			if got[r.Index] {
				return nil
			}
			f, err := r.fit()
			if err != nil {
				return err
			}
			fits[r.Index], got[r.Index] = f, true
			return nil
		})
		if err != nil && !errors.Is(err, io.ErrUnexpectedEOF) {
			return nil, err
		}
	}
	for i, ok := range got {
		if !ok {
			return nil, fmt.Errorf("fit pipeline: no fit came back for job %d of %d", i, n)
		}
	}
	return fits, nil
}

// join joins a folder name and names below it with slashes. Unlike
// path.Join it keeps the double slash of a URL such as gs://bucket.
func join(dir string, elem ...string) string {
	return strings.Join(append([]string{dir}, elem...), "/")
}

func randomName() string {
	var b [12]byte
	rand.Read(b[:])
	return hex.EncodeToString(b[:])
}

// Registration lets a remote worker, running this same binary, find the
// functions and types the pipeline names.
func init() {
	register.DoFn2x2[context.Context, string, string, error](&fitShard{})
}
