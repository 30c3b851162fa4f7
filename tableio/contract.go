package tableio

// This file states the package's contract. The implementation lives in the
// other files of the package.

// Format is a file format for tables.
type Format string

// The supported table formats.
const (
	Parquet Format = "parquet"
	CSV     Format = "csv"
	Arrow   Format = "arrow" // Arrow IPC file format
)

// ReadOptions says which columns of the input carry what.
type ReadOptions struct {
	// Format overrides the format chosen by file extension when non-empty.
	Format Format
	// Time, Value name the period and value columns.
	Time, Value string
	// Keys name the key attribute columns (all attributes of all chains).
	Keys []string
	// TimeKind says whether a period column of bare integers holds years
	// or a step index; the zero value, TimeAuto, decides by the values.
	TimeKind TimeKind
	// Comma is the field separator of a CSV file. Zero means: detect it
	// from the header line, taking the most frequent of ',', ';' and tab
	// outside quotes (',' when there is none).
	Comma rune
	// MemoryBudget, when positive, is the memory in bytes the rows may
	// take: a file holding (or, for Parquet, declaring) more rows than
	// that holds is an input error before they are read
	// (internal/membudget). Zero checks nothing.
	MemoryBudget int64
}

// Rows is the input table reduced to the columns trueup uses. Key columns
// are dictionary-encoded so that ten million rows stay small in memory.
type Rows struct {
	Path    string
	SHA256  string   // of the input file's bytes, hex
	Columns []string // every column the file has, in file order
	N       int      // number of data rows
	// Periods holds each row's period at the grain the data carries
	// (Day for calendar dates and timestamps).
	Periods []Period
	// Notes says how the periods were read where that is not plain from
	// the file, such as timestamps read as local dates; shown with the
	// input checks.
	Notes  []string
	Values []float64
	// KeyNames equals ReadOptions.Keys; KeyCodes[k][row] indexes KeyDict[k].
	KeyNames []string
	KeyCodes [][]int32
	KeyDict  [][]string
	// KeyTypes gives each key column's type in the source: Int64 for an
	// integer column of a Parquet or Arrow file (its KeyDict entries are
	// the numbers in decimal), String otherwise, including every CSV key.
	// Writers use it to give integer keys their integer type back.
	KeyTypes []ColumnType
}

// ColumnType is the type of an output column.
type ColumnType int

// Output column types.
const (
	String ColumnType = iota
	Float64
	Int64
	// Date is a calendar day: Ints holds days since 1970-01-01. It is
	// written as a Parquet DATE (INT32), an Arrow date32 and YYYY-MM-DD
	// text in CSV.
	Date
	// Bool is true or false: Ints holds 1 or 0. It is written as a
	// Parquet BOOLEAN, an Arrow bool and true or false in CSV.
	Bool
)

// Column is one output column. Exactly one of Strings, Floats, Ints is used,
// according to Type (Ints for Int64, Date and Bool). Null, when non-nil, marks null entries; a NaN float is
// also written as null.
type Column struct {
	Name    string
	Type    ColumnType
	Strings []string
	Floats  []float64
	Ints    []int64
	Null    []bool
}

// Table is an output table: columns of equal length.
type Table struct {
	Columns []Column
}
