// Package report renders a forecast run as one self-contained HTML file,
// report.html: what was run, the total's history and forecast with its
// prediction intervals, small multiples of each level's largest nodes, any
// node on demand (history, base and reconciled forecasts, intervals, model,
// parameters, warnings, residual ACF and PACF, Ljung–Box test), the nodes
// whose residuals fail that test, and the accuracy tables of a backtest
// when the output folder has them.
//
// The report is built from the run's tables (forecasts, models, residuals,
// history) and run.json, never from anything else, so a report written
// with a run and one rendered later from its folder (FromDir) are the
// same. Charts are drawn in the browser by uPlot (MIT licence, vendored in
// assets/); the node data are embedded gzip-compressed and base64-encoded
// and decoded with the browser's DecompressionStream. The file loads
// nothing over the network.
//
// Importing the package registers the output format "report" (see
// output.Register), which writes report.html.
package report

import (
	"bytes"
	"compress/gzip"
	"embed"
	"encoding/base64"
	"encoding/binary"
	"encoding/json"
	"fmt"
	"html"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"

	"trueup/engine"
	"trueup/engine/output"
	"trueup/inputerr"
	"trueup/tableio"
)

// FileName is the report's file name in an output folder.
const FileName = "report.html"

// resultTables are the tables of a forecast run the report reads.
var resultTables = []string{"forecasts", "plans", "models", "residuals", "history"}

// Input is what a report is made from: run.json as a JSON object, the
// run's tables by name (forecasts is required) and any accuracy tables.
type Input struct {
	Run      map[string]any
	Tables   map[string]*tableio.Table
	Accuracy []Table
}

// FromResult gathers the input of a report from a result in memory: its
// tables as engine/output makes them and its run report. Accuracy tables
// are read from dir when it has them ("" reads none).
func FromResult(res *engine.Result, dir string) (*Input, error) {
	return fromTables(res, output.Tables(res), dir)
}

// fromTables is FromResult with the result's tables already built.
func fromTables(res *engine.Result, tables []output.Table, dir string) (*Input, error) {
	in := &Input{Tables: map[string]*tableio.Table{}}
	for _, t := range tables {
		in.Tables[t.Name] = t.Table
	}
	b, err := json.Marshal(&res.Report)
	if err != nil {
		return nil, err
	}
	if err := json.Unmarshal(b, &in.Run); err != nil {
		return nil, err
	}
	if dir != "" {
		if in.Accuracy, err = readAccuracy(dir); err != nil {
			return nil, err
		}
	}
	return in, nil
}

// FromDir reads the input of a report from the output folder of an
// earlier run: run.json and the tables, in whichever of the formats
// parquet, arrow or csv the folder has (in that order of preference). A
// backtest's folder, with accuracy tables and no forecasts, gives a report
// of its accuracy alone: a backtest command writes its report with
// Write(dir, FromDir(dir)) after its tables and run.json.
func FromDir(dir string) (*Input, error) {
	in := &Input{Tables: map[string]*tableio.Table{}}
	b, err := os.ReadFile(filepath.Join(dir, "run.json"))
	if err != nil {
		return nil, &inputerr.Error{File: filepath.Join(dir, "run.json"), Option: "From", Msg: "cannot read the run's summary (is this a trueup output folder?)", Err: err}
	}
	if err := json.Unmarshal(b, &in.Run); err != nil {
		return nil, &inputerr.Error{File: filepath.Join(dir, "run.json"), Msg: "not valid JSON", Err: err}
	}
	for _, name := range resultTables {
		t, err := readTable(dir, name)
		if err != nil {
			return nil, err
		}
		if t != nil {
			in.Tables[name] = t
		}
	}
	if in.Accuracy, err = readAccuracy(dir); err != nil {
		return nil, err
	}
	if in.Tables["forecasts"] == nil && len(in.Accuracy) == 0 {
		return nil, &inputerr.Error{File: dir, Option: "From", Msg: "has no forecasts table (forecasts.parquet, .arrow or .csv) and no backtest tables"}
	}
	return in, nil
}

// readTable reads table name from dir in the first format present; a
// missing table is nil without error.
func readTable(dir, name string) (*tableio.Table, error) {
	for _, f := range []tableio.Format{tableio.Parquet, tableio.Arrow, tableio.CSV} {
		path := filepath.Join(dir, name+f.Ext())
		if _, err := os.Stat(path); err != nil {
			continue
		}
		return tableio.ReadTable(path, f)
	}
	return nil, nil
}

// Write renders the report of in into dir/report.html (dir is created if
// needed), atomically, and returns its path.
func Write(dir string, in *Input) (string, error) {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return "", &inputerr.Error{File: dir, Option: "Out", Msg: "cannot create the output directory", Err: err}
	}
	return writeInto(dir, in)
}

// writeInto renders the report of in into dir/report.html, atomically; dir
// must exist. The output writer uses it on a staging folder, which must
// not be created again once an interrupt has removed it.
func writeInto(dir string, in *Input) (string, error) {
	var buf bytes.Buffer
	if err := Render(&buf, in); err != nil {
		return "", err
	}
	path := filepath.Join(dir, FileName)
	if err := tableio.WriteFileAtomic(path, buf.Bytes()); err != nil {
		return "", fmt.Errorf("write %s: %w", path, err)
	}
	return path, nil
}

// Render writes the report of in as HTML to w.
func Render(w io.Writer, in *Input) error {
	d, err := build(in)
	if err != nil {
		return fmt.Errorf("report: %w", err)
	}
	meta, err := json.Marshal(&d.Meta)
	if err != nil {
		return fmt.Errorf("report: %w", err)
	}
	metaB64, err := gzipBase64(meta)
	if err != nil {
		return err
	}
	seriesB64, err := gzipBase64(shuffle(d.Series.fields()))
	if err != nil {
		return err
	}
	title := "trueup forecast report"
	if cmd, ok := in.Run["command"].(string); ok && cmd != "" {
		title = "trueup " + cmd + " report"
	}
	page := strings.NewReplacer(
		"/*UPLOT_CSS*/", string(mustAsset("assets/uplot-1.6.32.min.css")),
		"/*REPORT_CSS*/", string(mustAsset("assets/report.css")),
		"/*UPLOT_JS*/", string(mustAsset("assets/uplot-1.6.32.min.js")),
		"/*REPORT_JS*/", string(mustAsset("assets/report.js")),
		"{{TITLE}}", html.EscapeString(title),
		"{{META}}", metaB64,
		"{{SERIES}}", seriesB64,
	).Replace(string(mustAsset("assets/report.html")))
	_, err = io.WriteString(w, page)
	return err
}

//go:embed assets
var assets embed.FS

func mustAsset(name string) []byte {
	b, err := assets.ReadFile(name)
	if err != nil {
		panic("report: missing embedded asset " + name)
	}
	return b
}

// fields returns the series in the order the page reads them: history,
// base, forecast, each interval's lower and upper bounds (or the standard
// deviations they follow from), ACF, PACF.
func (s *Series) fields() [][]float32 {
	out := [][]float32{s.History, s.Base, s.Forecast}
	for l := range s.Lower {
		out = append(out, s.Lower[l], s.Upper[l])
	}
	if s.SD != nil {
		out = append(out, s.SD)
	}
	return append(out, s.ACF, s.PACF)
}

// shuffle lays out float32 values as four byte planes (all first bytes in
// little-endian order, then all second bytes, …), which gzip compresses
// far better than interleaved floats because sign and exponent bytes
// repeat. The page undoes it.
func shuffle(fields [][]float32) []byte {
	n := 0
	for _, f := range fields {
		n += len(f)
	}
	out := make([]byte, 4*n)
	i := 0
	var b [4]byte
	for _, f := range fields {
		for _, v := range f {
			binary.LittleEndian.PutUint32(b[:], math.Float32bits(v))
			out[i], out[n+i], out[2*n+i], out[3*n+i] = b[0], b[1], b[2], b[3]
			i++
		}
	}
	return out
}

func gzipBase64(b []byte) (string, error) {
	var buf bytes.Buffer
	zw, err := gzip.NewWriterLevel(&buf, gzip.DefaultCompression)
	if err != nil {
		return "", err
	}
	if _, err := zw.Write(b); err != nil {
		return "", err
	}
	if err := zw.Close(); err != nil {
		return "", err
	}
	return base64.StdEncoding.EncodeToString(buf.Bytes()), nil
}

// writer is the "report" output format.
type writer struct{}

// Write gathers the result's input and writes dir/report.html.
func (w writer) Write(dir string, res *engine.Result) ([]string, error) {
	return w.WriteTables(dir, res, output.Tables(res))
}

// WriteTables implements output.TableWriter: Write with the tables the
// set's other writers use.
func (writer) WriteTables(dir string, res *engine.Result, tables []output.Table) ([]string, error) {
	in, err := fromTables(res, tables, dir)
	if err != nil {
		return nil, err
	}
	path, err := writeInto(dir, in)
	if err != nil {
		return nil, err
	}
	return []string{path}, nil
}

func init() { output.Register("report", writer{}) }
