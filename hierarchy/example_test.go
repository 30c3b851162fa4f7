package hierarchy_test

import (
	"fmt"
	"log"

	"trueup/hierarchy"
)

// ExampleBuild builds the grouped structure of an invented chain: stores
// nest in regions, and categories cross them. Every level the chains
// allow is built, and the summing matrix adds bottom series up to every
// node.
func ExampleBuild() {
	chains, err := hierarchy.ParseNest([]string{"region,store", "category"})
	if err != nil {
		log.Fatal(err)
	}
	bottom := [][]string{
		{"North", "Harrowgate", "Bakery"}, {"North", "Harrowgate", "Garden"},
		{"North", "Quillmere", "Bakery"}, {"South", "Tansy Cross", "Garden"},
	}
	st, err := hierarchy.Build(chains, bottom)
	if err != nil {
		log.Fatal(err)
	}
	for _, l := range st.Levels {
		fmt.Printf("%-22s %d nodes\n", l.Name, len(l.Nodes))
	}
	n, m := st.S.Dims()
	fmt.Printf("summing matrix: %d nodes × %d bottom series\n", n, m)
	fmt.Println("node 1:", st.Label(1))
	// Output:
	// total                  1 nodes
	// category               2 nodes
	// region                 2 nodes
	// region+category        3 nodes
	// region+store           3 nodes
	// region+store+category  4 nodes
	// summing matrix: 15 nodes × 4 bottom series
	// node 1: category=Bakery
}
