//go:build !linux

package output

// exchange swaps the folders at a and b. Without an atomic exchange on this
// platform it takes two renames, so for a moment the path b does not exist
// (a reader sees no folder, never a mixed one).
func exchange(a, b string) error { return twoRenames(a, b) }
