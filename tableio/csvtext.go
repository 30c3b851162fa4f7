package tableio

// Spreadsheets run a CSV cell that starts with "=", "+", "-" or "@" (and,
// in some, tab or carriage return) as a formula: a key such as
// =HYPERLINK(...) in a sales export would become a live formula in the
// finance team's workbook. The practice OWASP describes under "CSV
// Injection" is to put a single quote before such a cell, which makes the
// spreadsheet take it as text. WriteTable does so for text cells and
// column names of CSV tables; ReadTable and Read take the quote off again,
// so trueup reads its own CSV tables back exactly.
//
// A cell that already starts with a quote followed by one of those
// characters or by a second quote gets one more quote, so that taking
// one off is exact: "'=x" is written "''=x". A quote before anything else
// ("'s-Hertogenbosch") is left alone.

// formulaStart reports whether c starts a cell that a spreadsheet may
// run as a formula.
func formulaStart(c byte) bool {
	switch c {
	case '=', '+', '-', '@', '\t', '\r':
		return true
	}
	return false
}

// quoted reports whether s is a cell that protectCSV quoted.
func quoted(s string) bool {
	return len(s) > 1 && s[0] == '\'' && (formulaStart(s[1]) || s[1] == '\'')
}

// protectCSV returns s with a leading single quote when a spreadsheet
// would run it as a formula, or when it would otherwise be read back
// without its own leading quote.
func protectCSV(s string) string {
	if s != "" && formulaStart(s[0]) || quoted(s) {
		return "'" + s
	}
	return s
}

// unprotectCSV undoes protectCSV.
func unprotectCSV(s string) string {
	if quoted(s) {
		return s[1:]
	}
	return s
}

// unprotectTable undoes protectCSV on the column names and text cells of
// a table read from CSV.
func unprotectTable(t *Table) {
	for j := range t.Columns {
		c := &t.Columns[j]
		c.Name = unprotectCSV(c.Name)
		for i, s := range c.Strings {
			c.Strings[i] = unprotectCSV(s)
		}
	}
}
