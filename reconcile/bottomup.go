package reconcile

// BottomUp keeps the bottom-level base forecasts and adds them up:
// ỹ = S·b̂ (common practice; see e.g. Hyndman & Athanasopoulos, Forecasting:
// Principles and Practice, 3rd ed., §11.2).
type BottomUp struct{}

var _ Method = BottomUp{}

// Name implements Method.
func (BottomUp) Name() string { return "bottom-up" }

// Reconcile implements Method.
func (BottomUp) Reconcile(p Problem) (Solution, error) {
	off := p.Structure.BottomOffset()
	bottom := make([][]float64, p.Structure.NumBottom())
	for j := range bottom {
		bottom[j] = append([]float64(nil), p.Base[off+j]...)
	}
	return coherent(p.Structure, bottom), nil
}
