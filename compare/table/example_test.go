package table_test

import (
	"fmt"

	"tandem/compare/table"
)

// A table is read strictly: a value that is not a number is refused with
// the file, line and column where it stands, so an analyst can go straight
// to it.
func ExampleParseCSV() {
	good := "lo,hi,rate,stat\n0,1,12.5,0.4\n1,2,11.0,0.4\n"
	t, err := table.ParseCSV("heron.csv", []byte(good), table.CSVOptions{})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(t.Len(), "bins")

	bad := "lo,hi,rate,stat\n0,1,12.5,0.4\n1,2,eleven,0.4\n"
	_, err = table.ParseCSV("otter.csv", []byte(bad), table.CSVOptions{})
	fmt.Println(err)
	// Output:
	// 2 bins
	// otter.csv:3:5: column "rate": cannot parse "eleven" as a number
}
