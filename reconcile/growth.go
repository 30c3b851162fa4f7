package reconcile

// exactGrowthMaxNodes is the largest structure whose projections take
// every node's own growth into their variances (S·G·W_h·Gᵀ·Sᵀ with
// W_h = C_h·W·C_h over all nodes; see Solution.Variance): that needs one
// factor of G per step, h times the work of one. Above it the growth is
// applied to the reconciled bottom series (S·C_h·G·W·Gᵀ·C_h·Sᵀ, bottom
// c_h), one factor for all steps. At the benchmark's 39,442 nodes and 28
// steps every node's growth took 21 s against 2.1 s
// (BenchmarkMinTRetail), over the 10 s a reconcile of that size must
// keep; at 5,000 nodes the per-step factors cost about as much as the
// point forecasts of the 39,442-node run. (A variable so that tests can
// try the other formula on small structures.)
var exactGrowthMaxNodes = 5000

// nodeGrowth reports whether a projection of n nodes uses every node's
// growth (see exactGrowthMaxNodes).
func nodeGrowth(n int) bool { return n <= exactGrowthMaxNodes }
