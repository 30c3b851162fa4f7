package output

import (
	"errors"
	"os"

	"golang.org/x/sys/unix"
)

// exchange swaps the folders at a and b in one step (renameat2 with
// RENAME_EXCHANGE, Linux 3.15 and later), so that a reader of either path
// sees the old folder or the new one, never neither. On a filesystem that
// does not support the exchange it falls back to two renames.
func exchange(a, b string) error {
	err := unix.Renameat2(unix.AT_FDCWD, a, unix.AT_FDCWD, b, unix.RENAME_EXCHANGE)
	if errors.Is(err, unix.EINVAL) || errors.Is(err, unix.ENOSYS) {
		return twoRenames(a, b)
	}
	if err != nil {
		return &os.LinkError{Op: "exchange", Old: a, New: b, Err: err}
	}
	return nil
}
