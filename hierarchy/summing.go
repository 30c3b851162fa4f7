package hierarchy

// SumMatrix is the n × m summing matrix S of a grouped structure, stored
// sparsely: row i lists the bottom series that node i adds up. Entries are
// all one, so only the column indices are kept (compressed sparse rows).
// Bottom nodes are the last m rows, in the same order as the columns, so
// S = [C; I] with C the aggregation rows.
type SumMatrix struct {
	rows, cols int
	rowPtr     []int // len rows+1; row i's columns are col[rowPtr[i]:rowPtr[i+1]]
	col        []int // ascending within a row
}

// NewSumMatrix builds S from each node's list of bottom indices. The lists
// must be ascending and in 0..m−1; NewSumMatrix copies them.
func NewSumMatrix(m int, members [][]int) *SumMatrix {
	s := &SumMatrix{rows: len(members), cols: m, rowPtr: make([]int, len(members)+1)}
	nnz := 0
	for _, r := range members {
		nnz += len(r)
	}
	s.col = make([]int, 0, nnz)
	for i, r := range members {
		for _, j := range r {
			if j < 0 || j >= m {
				panic("hierarchy: summing matrix column out of range")
			}
		}
		s.col = append(s.col, r...)
		s.rowPtr[i+1] = len(s.col)
	}
	return s
}

// Dims returns n (nodes) and m (bottom series).
func (s *SumMatrix) Dims() (n, m int) { return s.rows, s.cols }

// NNZ is the number of stored ones.
func (s *SumMatrix) NNZ() int { return len(s.col) }

// Row returns the bottom indices that node i sums. The slice must not be
// modified.
func (s *SumMatrix) Row(i int) []int { return s.col[s.rowPtr[i]:s.rowPtr[i+1]] }

// At returns S[i][j] (0 or 1).
func (s *SumMatrix) At(i, j int) float64 {
	for _, c := range s.Row(i) {
		if c == j {
			return 1
		}
	}
	return 0
}

// MulVec sets dst = S·b (len(dst) = n, len(b) = m) and returns dst. If dst
// is nil it is allocated.
func (s *SumMatrix) MulVec(dst, b []float64) []float64 {
	if len(b) != s.cols {
		panic("hierarchy: MulVec length mismatch")
	}
	if dst == nil {
		dst = make([]float64, s.rows)
	}
	for i := 0; i < s.rows; i++ {
		var sum float64
		for _, j := range s.col[s.rowPtr[i]:s.rowPtr[i+1]] {
			sum += b[j]
		}
		dst[i] = sum
	}
	return dst
}

// MulTransVec sets dst = Sᵀ·y (len(dst) = m, len(y) = n) and returns dst.
// If dst is nil it is allocated.
func (s *SumMatrix) MulTransVec(dst, y []float64) []float64 {
	if len(y) != s.rows {
		panic("hierarchy: MulTransVec length mismatch")
	}
	if dst == nil {
		dst = make([]float64, s.cols)
	} else {
		for j := range dst {
			dst[j] = 0
		}
	}
	for i := 0; i < s.rows; i++ {
		yi := y[i]
		for _, j := range s.col[s.rowPtr[i]:s.rowPtr[i+1]] {
			dst[j] += yi
		}
	}
	return dst
}

// Aggregate sums bottom series (m rows of equal length T) into all n node
// series. NaN entries count as zero so that a store that has not opened yet
// adds nothing to its region; a node whose every member is NaN at a period
// is NaN there (it did not exist).
func (s *SumMatrix) Aggregate(bottom [][]float64) [][]float64 {
	if len(bottom) != s.cols {
		panic("hierarchy: Aggregate needs one row per bottom series")
	}
	T := 0
	if s.cols > 0 {
		T = len(bottom[0])
	}
	out := make([][]float64, s.rows)
	for i := range out {
		row := make([]float64, T)
		seen := make([]bool, T)
		for _, j := range s.Row(i) {
			for t, v := range bottom[j] {
				if v == v { // not NaN
					row[t] += v
					seen[t] = true
				}
			}
		}
		for t := range row {
			if !seen[t] {
				row[t] = nan
			}
		}
		out[i] = row
	}
	return out
}
