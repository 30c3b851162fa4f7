package tableio_test

import (
	"fmt"
	"log"
	"os"
	"path/filepath"

	"trueup/tableio"
)

// ExampleRead reads a small CSV export of an invented chain, with dates on
// the last day of each month, into rows: periods, values and
// dictionary-encoded keys.
func ExampleRead() {
	dir, err := os.MkdirTemp("", "trueup-example")
	if err != nil {
		log.Fatal(err)
	}
	defer os.RemoveAll(dir)
	path := filepath.Join(dir, "sales.csv")
	csv := "month_end,store,sales\n" +
		"2026-01-31,Harrowgate,1200\n" +
		"2026-01-31,Quillmere,830.5\n" +
		"2026-02-28,Harrowgate,1175\n" +
		"2026-02-28,Quillmere,902\n"
	if err := os.WriteFile(path, []byte(csv), 0o644); err != nil {
		log.Fatal(err)
	}

	rows, err := tableio.Read(path, tableio.ReadOptions{Time: "month_end", Value: "sales", Keys: []string{"store"}})
	if err != nil {
		log.Fatal(err)
	}
	fmt.Println(rows.N, "rows; stores:", rows.KeyDict[0])
	for i := 0; i < rows.N; i++ {
		month, _ := rows.Periods[i].Coarsen(tableio.Month)
		fmt.Println(rows.Periods[i], "is in", month, rows.KeyDict[0][rows.KeyCodes[0][i]], rows.Values[i])
	}
	// Output:
	// 4 rows; stores: [Harrowgate Quillmere]
	// 2026-01-31 is in 2026-01 Harrowgate 1200
	// 2026-01-31 is in 2026-01 Quillmere 830.5
	// 2026-02-28 is in 2026-02 Harrowgate 1175
	// 2026-02-28 is in 2026-02 Quillmere 902
}
