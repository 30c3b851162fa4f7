package reconcile

// exactGrowthMaxWork bounds the work of taking every node's own growth
// into a projection's variances (S·G·W_h·Gᵀ·Sᵀ with W_h = C_h·W·C_h over
// all nodes; see Solution.Variance): one factor of G per step, each with
// a column per residual period, nodes × steps × periods in all. Above it
// the growth is applied to the reconciled bottom series
// (S·C_h·G·W·Gᵀ·C_h·Sᵀ, bottom c_h), one factor for all steps. The bound
// is 5,000 nodes at 28 steps and 60 periods: at 4,732 nodes that took
// 3.7–4.0 s against 0.26 s (BenchmarkMinTNodeGrowth); at the benchmark's
// 39,442 nodes it took 21 s against 2.1 s (BenchmarkMinTRetail), over the
// 10 s a reconcile of that size must keep. (A variable so that tests can
// try the other formula on small structures.)
var exactGrowthMaxWork = 5000 * 28 * 60

// nodeGrowth reports whether a projection of n nodes, h steps and T
// residual periods uses every node's growth (see exactGrowthMaxWork).
func nodeGrowth(n, h, T int) bool {
	return int64(n)*int64(h)*int64(max(T, 1)) <= int64(exactGrowthMaxWork)
}
