package engine

import (
	"fmt"

	"trueup/hierarchy"
	"trueup/inputerr"
	"trueup/internal/membudget"
	"trueup/reconcile"
	"trueup/tableio"
)

// The memory checks made before the large allocations of a run. Each
// estimate but the structure's is a lower bound of what the step holds at
// once (the sizes of its largest arrays), so a run is refused only when
// it certainly cannot fit in the budget (membudget.Budget: TRUEUP_MEMORY,
// or the memory available). Each message says what was asked and what it
// would take.

// memoryBudget is membudget.Budget, with a bad TRUEUP_MEMORY as an input
// error.
func memoryBudget() (int64, error) {
	b, err := membudget.Budget()
	if err != nil {
		return 0, inputerr.New("%v", err)
	}
	return b, nil
}

// checkMemory is membudget.Check as an input error.
func checkMemory(budget int64, what string, need int64) error {
	if err := membudget.Check(budget, what, need); err != nil {
		return &inputerr.Error{Err: err}
	}
	return nil
}

// checkPanelMemory checks the panel of m series over the span of
// periods first..last (its values, their presence flags and the
// duplicate check's bit per cell) before BuildPanel allocates it. A span
// blown up by one mistyped year shows in the periods named.
func checkPanelMemory(budget int64, m int, first, last tableio.Period) error {
	span := int64(last.Index-first.Index) + 1
	need := membudget.Mul(int64(m), span, 9)
	return checkMemory(budget, fmt.Sprintf("a table of %d series over %d periods (%s to %s)", m, span, first, last), need)
}

// checkStructureMemory checks the grouped structure before it is built:
// crossed chains give Π (chain length + 1) levels, each with up to one
// node per bottom series, and each node holds one key per attribute (a
// string header, 16 bytes, and at least one byte of text joined into its
// lookup key, 8 bytes with padding), its members and its map entry (about
// 112 bytes; hierarchy.Build measured at 930 bytes a node with 16
// attributes and 57 KB with 2,000).
func checkStructureMemory(budget int64, chains []hierarchy.Chain, bottom int) error {
	levels, attrs := int64(1), int64(0)
	for _, c := range chains {
		levels = membudget.Mul(levels, int64(len(c)+1))
		attrs += int64(len(c))
	}
	need := membudget.Mul(levels, int64(bottom), 24*attrs+112)
	what := fmt.Sprintf("the structure of %d chains (%d key columns, %s levels) over %d bottom series",
		len(chains), attrs, levelCount(levels), bottom)
	if budget > 0 && need > budget {
		// Counting the nodes of every level would itself take levels ×
		// bottom steps, so the estimate takes the most there can be.
		return &inputerr.Error{Option: "Chains", Err: &membudget.Error{What: what, Need: need, Budget: budget, About: true}}
	}
	return nil
}

// levelCount writes a level count, saturated counts as "more than 9e18".
func levelCount(l int64) string {
	if l == 1<<63-1 {
		return "more than 9e18"
	}
	return fmt.Sprint(l)
}

// checkHistoryMemory checks the histories of every node (n × T values,
// the aggregate and a like-for-like copy), which every command with a
// structure builds.
func checkHistoryMemory(budget int64, n, T int) error {
	return checkMemory(budget, fmt.Sprintf("the histories of %d nodes over %d periods", n, T), membudget.Mul(int64(n), int64(T), 16))
}

// checkRunMemory checks a run over n nodes with attrs key columns, T
// history periods (span names the first and last) and horizon h before
// the fitting: the histories,
// residuals and forecasts (8 bytes per node and period, several copies),
// the output tables (rows per node: one per history period of the
// history and residual tables that forecast writes and reconcile does
// not, and one per forecast period, with a key per attribute) and, for a
// projection (mint), the T × T Gram matrix of the shrinkage estimate.
func checkRunMemory(budget int64, n, attrs, T, h, rows int, span string, mint bool) error {
	N, TT, H := int64(n), int64(T), int64(h)
	need := membudget.Add(
		membudget.Mul(N, TT, 8*3),
		membudget.Mul(N, H, 8*4),
		membudget.Mul(N, int64(rows), 16*int64(attrs)+40))
	if mint {
		need = membudget.Add(need, membudget.Mul(TT, TT, 8))
	}
	return checkMemory(budget, fmt.Sprintf("a run of %d nodes over %d history periods (%s) and %d ahead", n, T, span, h), need)
}

// isProjection reports whether method is a projection (mint), the methods
// whose covariance estimate holds a T × T matrix.
func isProjection(method reconcile.Method) bool {
	_, ok := method.(reconcile.Projection)
	return ok
}
