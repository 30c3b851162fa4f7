// Package glossary reads docs/glossary.md, the one list of every name a
// user sees (flags, table columns, JSON keys, report labels), and
// checks the names a program actually shows against it.
//
// The file is Markdown: a "## " heading opens a section, and every line
// of the form "- `name`: meaning" in it is an entry. A name may hold
// placeholders in braces, {N} for a whole number (pi{N}_lower) and {text}
// for any text without a line break, so that one entry covers every
// interval level or every node name.
package glossary

import (
	"bufio"
	"fmt"
	"os"
	"regexp"
	"sort"
	"strings"
)

// Glossary holds the entries of each section, by section heading.
type Glossary struct {
	sections map[string][]entry
}

type entry struct {
	name    string
	pattern *regexp.Regexp
}

var entryLine = regexp.MustCompile("^- `([^`]+)`: \\S")

// Load reads a glossary file. An entry without a meaning, an entry
// before any section or a name given twice in a section is an error:
// each name has one meaning.
func Load(path string) (*Glossary, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	g := &Glossary{sections: map[string][]entry{}}
	section := ""
	seen := map[string]bool{}
	sc := bufio.NewScanner(f)
	for line := 1; sc.Scan(); line++ {
		text := sc.Text()
		if strings.HasPrefix(text, "## ") {
			section = strings.TrimSpace(text[3:])
			continue
		}
		if !strings.HasPrefix(text, "- `") {
			continue
		}
		m := entryLine.FindStringSubmatch(text)
		if m == nil || section == "" {
			return nil, fmt.Errorf("%s:%d: an entry is \"- `name`: meaning\" under a \"## \" section", path, line)
		}
		key := section + "\x00" + m[1]
		if seen[key] {
			return nil, fmt.Errorf("%s:%d: %q is listed twice in %q", path, line, m[1], section)
		}
		seen[key] = true
		g.sections[section] = append(g.sections[section], entry{name: m[1], pattern: compile(m[1])})
	}
	if err := sc.Err(); err != nil {
		return nil, err
	}
	return g, nil
}

// compile turns an entry's name into an anchored pattern: {N} matches a
// whole or decimal number, any other {…} any text.
func compile(name string) *regexp.Regexp {
	var b strings.Builder
	b.WriteString("^")
	rest := name
	for {
		i := strings.Index(rest, "{")
		j := strings.Index(rest, "}")
		if i < 0 || j < i {
			b.WriteString(regexp.QuoteMeta(rest))
			break
		}
		b.WriteString(regexp.QuoteMeta(rest[:i]))
		if rest[i+1:j] == "N" {
			b.WriteString(`[0-9]+(\.[0-9]+)?`)
		} else {
			b.WriteString(`.+`)
		}
		rest = rest[j+1:]
	}
	b.WriteString("$")
	return regexp.MustCompile(b.String())
}

// Names lists a section's entries as written.
func (g *Glossary) Names(section string) []string {
	var out []string
	for _, e := range g.sections[section] {
		out = append(out, e.name)
	}
	return out
}

// Check compares the names a program shows with a section: unknown are
// the shown names no entry covers, unused the entries no shown name
// matches. Both are sorted and free of repeats.
func (g *Glossary) Check(section string, shown []string) (unknown, unused []string) {
	entries := g.sections[section]
	used := make([]bool, len(entries))
	bad := map[string]bool{}
	for _, name := range shown {
		found := false
		for i, e := range entries {
			if e.pattern.MatchString(name) {
				used[i], found = true, true
			}
		}
		if !found {
			bad[name] = true
		}
	}
	for name := range bad {
		unknown = append(unknown, name)
	}
	for i, e := range entries {
		if !used[i] {
			unused = append(unused, e.name)
		}
	}
	sort.Strings(unknown)
	sort.Strings(unused)
	return unknown, unused
}
