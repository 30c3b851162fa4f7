// Package membudget is the memory a run may plan to use, and the check
// made before a large allocation: a small input (many crossed chains, a
// mistyped year, a file declaring a hundred million rows) can ask for far
// more memory than the machine has, and it is better refused up front,
// with what was asked and what it would take, than killed midway.
//
// The budget is the environment variable TRUEUP_MEMORY when set ("16GB",
// "512MB", "2GiB" or a number of bytes), otherwise the memory available
// now: MemAvailable of /proc/meminfo, or the cgroup's limit when lower,
// or 8 GiB where neither can be read. Estimates are lower bounds of what
// the work needs, so that only work that certainly cannot fit is
// refused, unless the Error says it is only an estimate (About).
package membudget

import (
	"bufio"
	"errors"
	"fmt"
	"math"
	"os"
	"runtime/debug"
	"strconv"
	"strings"
)

// Env names the environment variable that sets the budget.
const Env = "TRUEUP_MEMORY"

// fallback is the budget where the available memory cannot be read.
const fallback = 8 << 30

// Error says that some work needs more memory than the budget.
type Error struct {
	What   string // the work, in words, e.g. "4,001 levels × 20 bottom series"
	Need   int64  // bytes the work needs at least
	Budget int64  // bytes allowed
	// About says Need is an estimate that may exceed what the work takes,
	// rather than the least it takes.
	About bool
}

func (e *Error) Error() string {
	bound := "at least"
	if e.About {
		bound = "about"
	}
	return fmt.Sprintf("%s would need %s %s of memory, more than the %s available to this run (set %s, e.g. %s=64GB, to allow more)",
		e.What, bound, Format(e.Need), Format(e.Budget), Env, Env)
}

// Check returns an *Error when need exceeds budget. A budget of zero or
// less checks nothing.
func Check(budget int64, what string, need int64) error {
	if budget > 0 && need > budget {
		return &Error{What: what, Need: need, Budget: budget}
	}
	return nil
}

// Budget returns the budget in bytes: TRUEUP_MEMORY, or the memory
// available now. A TRUEUP_MEMORY that is not a size is an error.
func Budget() (int64, error) {
	if s, ok := os.LookupEnv(Env); ok && strings.TrimSpace(s) != "" {
		b, err := Parse(s)
		if err != nil {
			return 0, fmt.Errorf("%s=%q: %w", Env, s, err)
		}
		return b, nil
	}
	return available(), nil
}

// LimitRuntime makes the budget the Go runtime's soft memory limit
// (runtime/debug.SetMemoryLimit), unless the environment sets one with
// GOMEMLIMIT, and returns the limit set (0 when none). Without a limit
// the collector lets the heap grow to about twice the live data (GOGC's
// default) before collecting, so a run whose live data fits the budget
// (which is all the checks ask) could still be killed by the machine
// for memory it would have freed; with it the collector works harder as
// the heap nears the budget. A TRUEUP_MEMORY that is not a size sets no
// limit here; the run's own checks report it.
func LimitRuntime() int64 {
	if _, ok := os.LookupEnv("GOMEMLIMIT"); ok {
		return 0
	}
	b, err := Budget()
	if err != nil || b <= 0 {
		return 0
	}
	debug.SetMemoryLimit(b)
	return b
}

// Parse reads a size: a number of bytes, or a number with the unit KB,
// MB, GB, TB (powers of 1000) or KiB, MiB, GiB, TiB (powers of 1024).
func Parse(s string) (int64, error) {
	t := strings.ToUpper(strings.TrimSpace(s))
	units := []struct {
		suffix string
		scale  float64
	}{{"KIB", 1 << 10}, {"MIB", 1 << 20}, {"GIB", 1 << 30}, {"TIB", 1 << 40},
		{"KB", 1e3}, {"MB", 1e6}, {"GB", 1e9}, {"TB", 1e12}, {"B", 1}}
	scale := 1.0
	for _, u := range units {
		if strings.HasSuffix(t, u.suffix) {
			t, scale = strings.TrimSpace(strings.TrimSuffix(t, u.suffix)), u.scale
			break
		}
	}
	v, err := strconv.ParseFloat(t, 64)
	if err != nil || !(v > 0) || v*scale > math.MaxInt64/2 {
		return 0, errors.New("not a memory size: write it as 16GB, 512MB or 2GiB")
	}
	return int64(v * scale), nil
}

// Format writes bytes for people: "73.0 GB", "512.0 MB" (powers of 1000).
func Format(b int64) string {
	v := float64(b)
	for _, u := range []string{"B", "KB", "MB", "GB", "TB", "PB"} {
		if v < 1000 || u == "PB" {
			if u == "B" {
				return fmt.Sprintf("%d B", b)
			}
			return fmt.Sprintf("%.1f %s", v, u)
		}
		v /= 1000
	}
	return ""
}

// Mul multiplies non-negative counts and byte sizes, saturating at
// math.MaxInt64 instead of overflowing (2^40 levels times anything is
// "too much", not a negative number).
func Mul(xs ...int64) int64 {
	p := int64(1)
	for _, x := range xs {
		if x <= 0 {
			return 0
		}
		if p > math.MaxInt64/x {
			return math.MaxInt64
		}
		p *= x
	}
	return p
}

// Add adds non-negative sizes, saturating at math.MaxInt64.
func Add(xs ...int64) int64 {
	s := int64(0)
	for _, x := range xs {
		if s > math.MaxInt64-x {
			return math.MaxInt64
		}
		s += x
	}
	return s
}

// available is MemAvailable, or the cgroup v2 limit when lower, or
// fallback.
func available() int64 {
	avail := int64(0)
	if f, err := os.Open("/proc/meminfo"); err == nil {
		sc := bufio.NewScanner(f)
		for sc.Scan() {
			fields := strings.Fields(sc.Text())
			if len(fields) >= 2 && fields[0] == "MemAvailable:" {
				if kb, err := strconv.ParseInt(fields[1], 10, 64); err == nil {
					avail = kb << 10
				}
			}
		}
		f.Close()
	}
	if b, err := os.ReadFile("/sys/fs/cgroup/memory.max"); err == nil {
		if lim, err := strconv.ParseInt(strings.TrimSpace(string(b)), 10, 64); err == nil && lim > 0 && (avail == 0 || lim < avail) {
			avail = lim
		}
	}
	if avail <= 0 {
		return fallback
	}
	return avail
}
