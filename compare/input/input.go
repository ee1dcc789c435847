// Package input reads a table from any format tandem understands, chosen by
// the name: "FILE.root" or "FILE.root:PATH" (a ROOT histogram or graph),
// ".json" and ".toml" (tandem's own layouts, see package table), "-" for a
// CSV or TSV table on the standard input, and anything else as CSV, or TSV
// for ".tsv" or a tab-separated header. Every reader keeps to the
// [table.Limits] of the options.
package input

import (
	"io"
	"os"
	"strings"
	"sync"

	"tandem/compare/rootfile"
	"tandem/compare/table"
)

// Stdin is the spec that names the standard input.
const Stdin = "-"

// Read reads the table named by spec; "-" reads the standard input.
func Read(spec string, opt table.CSVOptions) (*table.Table, error) {
	return ReadFrom(spec, os.Stdin, opt)
}

// ReadFrom is [Read] with stdin as the standard input.
func ReadFrom(spec string, stdin io.Reader, opt table.CSVOptions) (*table.Table, error) {
	if spec == Stdin {
		return table.ReadCSV(table.StdinName, stdin, opt)
	}
	if rootfile.IsSpec(spec) {
		return rootfile.Read(spec)
	}
	lower := strings.ToLower(spec)
	switch {
	case strings.HasSuffix(lower, ".json"):
		return table.ReadJSONFile(spec, opt)
	case strings.HasSuffix(lower, ".toml"):
		return table.ReadTOMLFile(spec, opt)
	}
	return table.ReadFile(spec, opt)
}

// ReadAll reads several tables at once, one goroutine each; the error is
// that of the first failing spec in order. At most one spec may be "-".
func ReadAll(opt table.CSVOptions, specs ...string) ([]*table.Table, error) {
	return ReadAllFrom(os.Stdin, opt, specs...)
}

// ReadAllFrom is [ReadAll] with stdin as the standard input.
func ReadAllFrom(stdin io.Reader, opt table.CSVOptions, specs ...string) ([]*table.Table, error) {
	if err := checkStdinOnce(specs); err != nil {
		return nil, err
	}
	out := make([]*table.Table, len(specs))
	errs := make([]error, len(specs))
	var wg sync.WaitGroup
	for i, s := range specs {
		wg.Add(1)
		go func() {
			defer wg.Done()
			out[i], errs[i] = ReadFrom(s, stdin, opt)
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

// checkStdinOnce refuses specs that name the standard input more than once.
func checkStdinOnce(specs []string) error {
	n := 0
	for _, s := range specs {
		if s == Stdin {
			n++
		}
	}
	if n > 1 {
		return table.Errorf("", 0, 0, "the standard input (-) can be read only once, but is named %d times", n)
	}
	return nil
}
