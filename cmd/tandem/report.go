package main

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"io"
	"os"
	"slices"
	"strings"
	"sync"

	"tandem/compare/table"
	"tandem/report"
	"tandem/report/outfile"
)

// notComplete is exit status 1 with the verdict in words when the
// campaign is not complete, nil otherwise.
func notComplete(s *report.Summary) error {
	if s.Complete() {
		return nil
	}
	v, why := report.Headline(s)
	if len(s.Missing) > 0 {
		return refused(fmt.Errorf("the campaign is not complete (%s): %s", v, why))
	}
	return refused(fmt.Errorf("the campaign is not complete: the sign-offs of %s are stale (verdict %s)", strings.Join(staleParties(s), ", "), v))
}

// emit writes the report of s in format to path (stdout when empty),
// stamped with the digests of the tables it compares, and prints every
// warning of the comparisons on stderr.
func emit(e *env, s *report.Summary, format, path string) error {
	return emitStamped(e, s, format, path, nil)
}

// emitStamped is emit with a given stamp; nil stamps the report with the
// files of its entries (table mode).
func emitStamped(e *env, s *report.Summary, format, path string, stamp *report.Stamp) error {
	var wg sync.WaitGroup
	if stamp == nil {
		stamp = report.NewStamp()
		wg.Go(func() {
			stamp.Inputs = hashInputs(tableFiles(s))
			for i, in := range stamp.Inputs {
				if in.Name == table.StdinName && e.stdinDigest != nil {
					stamp.Inputs[i].SHA256 = e.stdinDigest()
				}
			}
		})
	}
	st := report.Style{Color: path == "" && format == "text" && colorOK(e.stdout), Stamp: stamp}
	// Reading the files again to hash them is cheap next to parsing them
	// (SHA-256 runs at over 1 GB/s with the CPU's SHA instructions).
	wg.Wait()
	printWarnings(e, s)
	if path == "" {
		// The renderers fail only when their writer does: the report
		// streams to stdout.
		return report.Render(e.stdout, format, s, st)
	}
	err := outfile.WriteFrom(path, 0o644, func(w io.Writer) error { return report.Render(w, format, s, st) })
	if err != nil {
		return &exitError{code: 2, err: fmt.Errorf("writing %s: %v", path, err)}
	}
	e.infof("%s: wrote %s report (%s)", path, format, s.Verdict())
	return nil
}

// printWarnings prints every warning of the comparisons of s on stderr:
// the reports show them too, but a report written with -o is not read in
// CI logs.
func printWarnings(e *env, s *report.Summary) {
	for _, w := range report.Warnings(s) {
		e.warnf("%s", w)
	}
}

// tableFiles are the distinct files the entries of s compare, in order.
func tableFiles(s *report.Summary) []string {
	var out []string
	for _, en := range s.Entries {
		for _, f := range en.Files {
			if f != "" && !slices.Contains(out, f) {
				out = append(out, f)
			}
		}
	}
	return out
}

// hashInputs returns each file with the SHA-256 of its bytes. A ROOT
// object (FILE.root:PATH) is hashed as its file; the standard input is
// hashed while it is read (see run), and a file that cannot be read again
// (a named pipe) has no digest.
func hashInputs(files []string) []report.Input {
	out := make([]report.Input, len(files))
	var wg sync.WaitGroup
	for i, f := range files {
		out[i].Name = f
		wg.Go(func() { out[i].SHA256 = hashFile(f) })
	}
	wg.Wait()
	return out
}

func hashFile(name string) string {
	if name == "-" || name == table.StdinName {
		return ""
	}
	path := name
	if i := strings.Index(path, ".root:"); i >= 0 {
		path = path[:i+len(".root")]
	}
	fi, err := os.Stat(path)
	if err != nil || !fi.Mode().IsRegular() {
		return ""
	}
	f, err := os.Open(path)
	if err != nil {
		return ""
	}
	defer f.Close()
	h := sha256.New()
	if _, err := io.Copy(h, f); err != nil {
		return ""
	}
	return hex.EncodeToString(h.Sum(nil))
}

// staleParties names the parties whose sign-offs are stale.
func staleParties(s *report.Summary) []string {
	var out []string
	for _, x := range s.Stale {
		p, _, _ := strings.Cut(x, ":")
		out = append(out, p)
	}
	return out
}
