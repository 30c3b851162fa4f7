package models

import (
	"fmt"
	"sort"
	"strings"
)

// Registry maps family names to families. The zero value is empty and ready
// to use.
type Registry struct {
	byName map[string]Family
}

// Register adds f under f.Name(). It panics on a duplicate name, which is a
// programming error.
func (r *Registry) Register(f Family) {
	if r.byName == nil {
		r.byName = make(map[string]Family)
	}
	if _, dup := r.byName[f.Name()]; dup {
		panic("models: family registered twice: " + f.Name())
	}
	r.byName[f.Name()] = f
}

// Lookup returns the family named name, or an error listing the known names.
func (r *Registry) Lookup(name string) (Family, error) {
	if f, ok := r.byName[name]; ok {
		return f, nil
	}
	return nil, fmt.Errorf("unknown model family %q (known: %s)", name, strings.Join(r.Names(), ", "))
}

// Names returns the registered names in sorted order.
func (r *Registry) Names() []string {
	names := make([]string, 0, len(r.byName))
	for n := range r.byName {
		names = append(names, n)
	}
	sort.Strings(names)
	return names
}
