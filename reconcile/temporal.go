package reconcile

import (
	"fmt"

	"gonum.org/v1/gonum/mat"

	"trueup/inputerr"
)

// TemporalBase holds every node's base forecasts of the series summed
// over blocks of Every consecutive periods, the blocks ending at the
// forecast origin: Base is n rows × ⌈h/Every⌉ blocks, block b covering
// forecast steps b·Every … (b+1)·Every − 1.
type TemporalBase struct {
	Every int
	Base  [][]float64
}

// TemporalFactors are the block lengths a temporal hierarchy of seasonal
// period m uses besides single periods: a quarter of the season when m is
// a multiple of four (3 months, 13 weeks) and the whole season (a year of
// months or weeks, a week of days). Periods of 1 have none.
func TemporalFactors(m int) []int {
	if m <= 1 {
		return nil
	}
	if m%4 == 0 && m/4 > 1 {
		return []int{m / 4, m}
	}
	return []int{m}
}

// Temporal reconciles across time, then across the structure: each
// node's base forecasts of single periods, of quarters of the season and
// of whole seasons (Problem.Temporal) are combined within each season
// ahead by the temporal hierarchy's projection with structural scaling,
// ỹ = S(S′Λ⁻¹S)⁻¹S′Λ⁻¹ŷ with Λ = diag(S·1), each aggregate weighted by
// the inverse of the number of periods it sums (Athanasopoulos,
// Hyndman, Kourentzes & Petropoulos 2017, "Forecasting with temporal
// hierarchies", European Journal of Operational Research 262(1), §3–4);
// the temporally reconciled single-period forecasts are then reconciled
// across the structure by MinT with the shrinkage covariance (the
// sequential cross-temporal approach of Kourentzes & Athanasopoulos 2019,
// "Cross-temporal coherent forecasts for Australian tourism", Annals of
// Tourism Research 75). Steps after the last whole season within the
// horizon keep their single-period base forecasts. The variances are the
// single-period base variances carried through the cross-sectional step
// (the temporal combination's effect on them is not modelled).
type Temporal struct{}

var _ Method = Temporal{}

// Name implements Method.
func (Temporal) Name() string { return "temporal" }

// Reconcile implements Method.
func (Temporal) Reconcile(p Problem) (Solution, error) {
	if len(p.Temporal) == 0 {
		return Solution{}, inputerr.ForOption("Method", "the temporal method needs forecasts of the series summed over quarters and seasons, which a season length above 1 gives")
	}
	m := 0
	for _, tb := range p.Temporal {
		m = max(m, tb.Every)
	}
	g, err := temporalProjection(m, p.Temporal)
	if err != nil {
		return Solution{}, err
	}
	q := p
	q.Base = make([][]float64, len(p.Base))
	y := make([]float64, g.cols)
	for i, base := range p.Base {
		out := append([]float64(nil), base...)
		for start := 0; start+m <= len(base); start += m {
			// The season's base forecasts: single periods, then each
			// factor's blocks, in the order temporalProjection expects.
			copy(y, base[start:start+m])
			at := m
			for _, tb := range p.Temporal {
				for b := 0; b < m/tb.Every; b++ {
					y[at] = tb.Base[i][start/tb.Every+b]
					at++
				}
			}
			for j := 0; j < m; j++ {
				v := 0.0
				for c, x := range y {
					v += g.at(j, c) * x
				}
				out[start+j] = v
			}
		}
		q.Base[i] = out
	}
	return Projection{Cov: CovShrink}.Reconcile(q)
}

// projection is a dense rows × cols matrix.
type projection struct {
	rows, cols int
	v          []float64
}

func (p projection) at(r, c int) float64 { return p.v[r*p.cols+c] }

// temporalProjection returns G = (S′Λ⁻¹S)⁻¹S′Λ⁻¹, m × (m + Σ m/k), which
// maps a season's base forecasts (m single periods, then the m/k blocks
// of each factor k in order) to its reconciled single periods. S stacks
// the identity and, per factor, the rows summing each block; Λ =
// diag(S·1) holds the number of periods each row sums.
func temporalProjection(m int, factors []TemporalBase) (projection, error) {
	cols := m
	for _, tb := range factors {
		if tb.Every < 2 || m%tb.Every != 0 {
			return projection{}, fmt.Errorf("reconcile: temporal block of %d periods in a season of %d", tb.Every, m)
		}
		cols += m / tb.Every
	}
	s := mat.NewDense(cols, m, nil)
	w := make([]float64, cols) // Λ⁻¹
	for j := 0; j < m; j++ {
		s.Set(j, j, 1)
		w[j] = 1
	}
	r := m
	for _, tb := range factors {
		for b := 0; b < m/tb.Every; b++ {
			for j := b * tb.Every; j < (b+1)*tb.Every; j++ {
				s.Set(r, j, 1)
			}
			w[r] = 1 / float64(tb.Every)
			r++
		}
	}
	var stw mat.Dense // S′Λ⁻¹
	stw.CloneFrom(s.T())
	for c := 0; c < cols; c++ {
		for j := 0; j < m; j++ {
			stw.Set(j, c, stw.At(j, c)*w[c])
		}
	}
	var a, inv, g mat.Dense
	a.Mul(&stw, s)
	if err := inv.Inverse(&a); err != nil {
		return projection{}, fmt.Errorf("reconcile: temporal projection: %w", err)
	}
	g.Mul(&inv, &stw)
	out := projection{rows: m, cols: cols, v: make([]float64, m*cols)}
	for j := 0; j < m; j++ {
		for c := 0; c < cols; c++ {
			out.v[j*cols+c] = g.At(j, c)
		}
	}
	return out, nil
}
