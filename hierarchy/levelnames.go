package hierarchy

import "trueup/inputerr"

// checkLevelNames refuses chains whose levels would share a name, which
// every output table, the report and the backtest's scores tell levels
// apart by: a key column named "total" (the top level's name), or one
// named "region+store" beside the chains region and store.
func checkLevelNames(chains []Chain) error {
	seen := map[string]bool{}
	depth := make([]int, len(chains))
	var visit func(c int) error
	visit = func(c int) error {
		if c == len(chains) {
			name := levelName(chains, depth)
			if seen[name] {
				return inputerr.ForOption("Chains", "two levels would both be named %q; rename the key column %q", name, name)
			}
			seen[name] = true
			return nil
		}
		for d := 0; d <= len(chains[c]); d++ {
			depth[c] = d
			if err := visit(c + 1); err != nil {
				return err
			}
		}
		return nil
	}
	return visit(0)
}
