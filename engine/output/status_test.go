package output_test

import (
	"testing"

	"trueup/engine"
	"trueup/engine/output"
)

// TestNodeStatusAndVarianceScale checks the models table's status and
// variance_scale wording: a closed node keeps the family its history was
// fitted with and says it is closed in its status; a node that opened
// late says so; a variance from a log or Box–Cox fit is labelled with
// that scale.
func TestNodeStatusAndVarianceScale(t *testing.T) {
	logFit := map[string]any{"transform": map[string]any{"kind": "log"}}
	boxcoxFit := map[string]any{"transform": map[string]any{"kind": "boxcox", "lambda": 0.3}}
	plain := map[string]any{"transform": map[string]any{"kind": "none"}}
	thetaSeasonal := map[string]any{"seasonal_indices": []float64{1.1, 0.9}}
	for _, c := range []struct {
		fit           engine.NodeFit
		status, scale string
	}{
		{engine.NodeFit{Family: "ets", First: 0, Params: plain}, "trading", "data"},
		{engine.NodeFit{Family: "arima", First: 5, Params: logFit}, "opened late", "log"},
		{engine.NodeFit{Family: "arima", First: 5, Closed: true, Params: boxcoxFit}, "closed", "Box-Cox"},
		{engine.NodeFit{Family: "theta", Params: thetaSeasonal}, "trading", "seasonally adjusted"},
	} {
		if got := output.NodeStatus(c.fit); got != c.status {
			t.Errorf("%+v: status %q, want %q", c.fit, got, c.status)
		}
		if got := output.VarianceScale(c.fit); got != c.scale {
			t.Errorf("%+v: scale %q, want %q", c.fit, got, c.scale)
		}
	}
}
