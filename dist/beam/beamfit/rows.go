package beamfit

import (
	"bytes"
	"encoding/gob"
	"fmt"

	"trueup/engine"
	"trueup/models"
	"trueup/models/families"
)

// JobRow is one engine.FitJob as a row of plain fields, the element type
// of the pipeline's job collection. Index is the job's position in the
// batch, by which its fit is placed.
type JobRow struct {
	Index     int64
	Node      int64
	Series    []float64
	Family    string
	Form      string
	Transform string
	Constant  bool
	Period    int64
	Horizon   int64
}

// FitRow is one engine.NodeFit as a row of plain fields. Params, whose
// values are of any type, travel gob-encoded (see encodeParams).
type FitRow struct {
	Index                int64
	Family, Spec         string
	Params               []byte
	LogLik, AIC, AICc    float64
	BIC                  float64
	K, N                 int64
	Sigma2               float64
	NObs, First, Last    int64
	Mean, Variance       []float64
	Residuals            []float64
	Path                 []byte // gob-encoded models.PathForm, nil for none
	Warning              string
	Closed, Fitted       bool
	HasMean, HasVariance bool // whether Mean, Variance were non-nil
	HasResiduals         bool // whether Residuals was non-nil
}

// The types models' Params hold inside interface values (gob names the
// basic types and their slices itself): gob needs them named before it
// can carry them, in the driver and in every worker. A family whose
// Params hold another type makes its fits fail with "type not
// registered", and TestDemoSameBytes with them.
func init() {
	gob.Register(map[string]any{})
	gob.Register(map[string]int{})
	gob.Register(map[string]float64{})
	gob.Register(map[string]string{})
	gob.Register(map[string]bool{})
	gob.Register([]any{})
	gob.Register([]map[string]any{})
	gob.Register(models.Estimate{})
	gob.Register([]models.Estimate{})
}

// jobRow turns the i-th job into a row.
func jobRow(i int, j engine.FitJob) JobRow {
	return JobRow{Index: int64(i), Node: int64(j.Node), Series: j.Series,
		Family: j.Model.Family, Form: j.Model.Form, Transform: j.Model.Transform, Constant: j.Model.Constant,
		Period: int64(j.Period), Horizon: int64(j.Horizon)}
}

// job is the engine.FitJob a row carries.
func (r JobRow) job() engine.FitJob {
	return engine.FitJob{Node: int(r.Node), Series: r.Series,
		Model:  families.Spec{Family: r.Family, Form: r.Form, Transform: r.Transform, Constant: r.Constant},
		Period: int(r.Period), Horizon: int(r.Horizon)}
}

// fitRow turns the fit of job index into a row.
func fitRow(index int64, f engine.NodeFit) (FitRow, error) {
	params, err := encodeParams(f.Params)
	if err != nil {
		return FitRow{}, err
	}
	path, err := encodePath(f.Path)
	if err != nil {
		return FitRow{}, err
	}
	c := f.Criteria
	return FitRow{Path: path, Index: index, Family: f.Family, Spec: f.Spec, Params: params,
		LogLik: c.LogLik, AIC: c.AIC, AICc: c.AICc, BIC: c.BIC, K: int64(c.K), N: int64(c.N),
		Sigma2: f.Sigma2, NObs: int64(f.NObs), First: int64(f.First), Last: int64(f.Last),
		Mean: f.Mean, Variance: f.Variance, Residuals: f.Residuals, Warning: f.Warning,
		Closed: f.Closed, Fitted: f.Fitted,
		HasMean: f.Mean != nil, HasVariance: f.Variance != nil, HasResiduals: f.Residuals != nil}, nil
}

// fit is the engine.NodeFit a row carries, equal to the one it was made
// from: same numbers bit for bit, same Params types, nil slices nil.
func (r FitRow) fit() (engine.NodeFit, error) {
	params, err := decodeParams(r.Params)
	if err != nil {
		return engine.NodeFit{}, err
	}
	path, err := decodePath(r.Path)
	if err != nil {
		return engine.NodeFit{}, err
	}
	return engine.NodeFit{Family: r.Family, Spec: r.Spec, Params: params, Path: path,
		Criteria: models.Criteria{LogLik: r.LogLik, AIC: r.AIC, AICc: r.AICc, BIC: r.BIC, K: int(r.K), N: int(r.N)},
		Sigma2:   r.Sigma2, NObs: int(r.NObs), First: int(r.First), Last: int(r.Last),
		Mean: slice(r.Mean, r.HasMean), Variance: slice(r.Variance, r.HasVariance),
		Residuals: slice(r.Residuals, r.HasResiduals),
		Warning:   r.Warning, Closed: r.Closed, Fitted: r.Fitted}, nil
}

// slice is s, non-nil when it was non-nil before encoding (encodings do
// not tell an empty slice from a nil one).
func slice(s []float64, nonNil bool) []float64 {
	if nonNil && s == nil {
		return []float64{}
	}
	if !nonNil {
		return nil
	}
	return s
}

// encodeParams gob-encodes a fit's parameters; a nil map stays nil.
func encodeParams(p map[string]any) ([]byte, error) {
	if p == nil {
		return nil, nil
	}
	var b bytes.Buffer
	if err := gob.NewEncoder(&b).Encode(p); err != nil {
		return nil, fmt.Errorf("encode parameters: %w", err)
	}
	return b.Bytes(), nil
}

func decodeParams(b []byte) (map[string]any, error) {
	if len(b) == 0 {
		return nil, nil
	}
	p := map[string]any{}
	if err := gob.NewDecoder(bytes.NewReader(b)).Decode(&p); err != nil {
		return nil, fmt.Errorf("decode parameters: %w", err)
	}
	return p, nil
}

// encodePath gob-encodes a fit's path form (models.PathForm: plain
// numbers, flags and nested forms); nil stays nil.
func encodePath(p *models.PathForm) ([]byte, error) {
	if p == nil {
		return nil, nil
	}
	var b bytes.Buffer
	if err := gob.NewEncoder(&b).Encode(p); err != nil {
		return nil, fmt.Errorf("encode path form: %w", err)
	}
	return b.Bytes(), nil
}

func decodePath(b []byte) (*models.PathForm, error) {
	if len(b) == 0 {
		return nil, nil
	}
	p := &models.PathForm{}
	if err := gob.NewDecoder(bytes.NewReader(b)).Decode(p); err != nil {
		return nil, fmt.Errorf("decode path form: %w", err)
	}
	return p, nil
}
