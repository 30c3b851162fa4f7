package tableio

// interner returns one shared string per distinct text of a column, so
// that reading a table of n rows whose text columns repeat a few values
// (keys, period labels) allocates one string per distinct value instead
// of one per cell. A column with many distinct values stops being
// interned once it has maxInterned of them, and each later new value is
// allocated on its own (the map would cost more than it saves).
type interner struct {
	m    map[string]string
	last string
	full bool
}

// maxInterned bounds the distinct values one column's interner keeps.
const maxInterned = 1 << 16

// bytes returns the string of b, shared with every earlier equal value.
func (in *interner) bytes(b []byte) string {
	if len(b) == 0 {
		return ""
	}
	if string(b) == in.last { // no allocation: compared in place
		return in.last
	}
	if in.m == nil {
		in.m = make(map[string]string)
	}
	s, ok := in.m[string(b)] // no allocation for the lookup
	if !ok {
		s = string(b)
		if !in.full {
			in.m[s] = s
			in.full = len(in.m) >= maxInterned
		}
	}
	in.last = s
	return s
}

// str is bytes for a string that may point into a reused or larger
// buffer: the result never does.
func (in *interner) str(s string) string {
	if s == "" {
		return ""
	}
	if s == in.last {
		return in.last
	}
	if in.m == nil {
		in.m = make(map[string]string)
	}
	t, ok := in.m[s]
	if !ok {
		t = string([]byte(s)) // a copy
		if !in.full {
			in.m[t] = t
			in.full = len(in.m) >= maxInterned
		}
	}
	in.last = t
	return t
}
