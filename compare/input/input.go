// Package input reads a table from any format tandem understands, chosen by
// the name: "FILE.root" or "FILE.root:PATH" (a ROOT histogram or graph),
// ".json" and ".toml" (tandem's own layouts, see package table), and
// anything else as CSV, or TSV for ".tsv" or a tab-separated header.
package input

import (
	"os"
	"strings"
	"sync"

	"tandem/compare/rootfile"
	"tandem/compare/table"
)

// Read reads the table named by spec.
func Read(spec string, opt table.CSVOptions) (*table.Table, error) {
	if rootfile.IsSpec(spec) {
		return rootfile.Read(spec)
	}
	lower := strings.ToLower(spec)
	switch {
	case strings.HasSuffix(lower, ".json"), strings.HasSuffix(lower, ".toml"):
		data, err := os.ReadFile(spec)
		if err != nil {
			if pe, ok := err.(*os.PathError); ok {
				err = pe.Err
			}
			return nil, table.Errorf(spec, 0, 0, "%v", err)
		}
		if strings.HasSuffix(lower, ".json") {
			return table.ParseJSON(spec, data, opt)
		}
		return table.ParseTOML(spec, data, opt)
	}
	return table.ReadFile(spec, opt)
}

// ReadAll reads several tables at once, one goroutine each; the error is
// that of the first failing spec in order.
func ReadAll(opt table.CSVOptions, specs ...string) ([]*table.Table, error) {
	out := make([]*table.Table, len(specs))
	errs := make([]error, len(specs))
	var wg sync.WaitGroup
	for i, s := range specs {
		wg.Add(1)
		go func() {
			defer wg.Done()
			out[i], errs[i] = Read(s, opt)
		}()
	}
	wg.Wait()
	for _, err := range errs {
		if err != nil {
			return nil, err
		}
	}
	return out, nil
}
