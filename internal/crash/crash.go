// Package crash carries a panic out of the goroutine it happened in, so
// that a programming error ends the program the same way wherever it
// happens: one line and exit status 1 from the command's main (which
// recovers), never the runtime's dump of every goroutine and status 2,
// which a script would take for an input error.
//
// An unrecovered panic in any goroutine kills the process before main can
// do anything, so every goroutine the program starts recovers with Catch
// or runs under a Group.
package crash

import (
	"fmt"
	"runtime/debug"
	"sync"
)

// Panic is a recovered panic: its value and the stack where it happened.
type Panic struct {
	Value any
	Stack []byte
}

func (p *Panic) Error() string { return fmt.Sprintf("internal error: %v", p.Value) }

// From wraps a recovered value with the current stack (call it in the
// deferred function that recovered); a *Panic already carried is kept.
func From(r any) *Panic {
	if p, ok := r.(*Panic); ok {
		return p
	}
	return &Panic{Value: r, Stack: debug.Stack()}
}

// Catch, deferred, turns a panic of the deferring function into a *Panic
// stored in *err.
func Catch(err *error) {
	if r := recover(); r != nil {
		*err = From(r)
	}
}

// Group runs goroutines and waits for them, as a sync.WaitGroup does;
// Wait raises again, in the waiting goroutine, the first panic any of
// them raised.
type Group struct {
	wg    sync.WaitGroup
	mu    sync.Mutex
	first *Panic
}

// Go runs f in a goroutine of the group.
func (g *Group) Go(f func()) {
	g.wg.Add(1)
	go func() {
		defer g.wg.Done()
		defer func() {
			if r := recover(); r != nil {
				g.mu.Lock()
				if g.first == nil {
					g.first = From(r)
				}
				g.mu.Unlock()
			}
		}()
		f()
	}()
}

// Wait waits for every goroutine of the group and panics with the first
// *Panic one of them raised.
func (g *Group) Wait() {
	g.wg.Wait()
	if g.first != nil {
		panic(g.first)
	}
}
