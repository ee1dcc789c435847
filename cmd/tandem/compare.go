package main

import (
	"bytes"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"

	"gonum.org/v1/gonum/mat"

	"tandem/blind/safefile"
	"tandem/compare"
	"tandem/compare/input"
	"tandem/compare/table"
	"tandem/report"
)

const compareHelp = `Usage:
    tandem compare A B [flags]
    tandem compare DIR [--tables blinded|unblinded] [flags]

Compares the value columns of two binned tables (CSV or TSV with a header
row) and prints the verdict, the criteria and a per-bin table. With a
campaign folder it compares the teams' blinded tables as the protocol says.

Value columns: --value names them (repeatable); otherwise every column that
is not a bin edge or an uncertainty. Uncertainties: --error names them
(repeatable, added in quadrature, used for every value column); otherwise
columns named VALUE_err, VALUE_stat, VALUE_syst, VALUE_sys (and bare err,
stat, syst, sys when there is one value column).

Example:
    tandem compare heron.csv otter.csv --value rate --error stat --error syst \
        --correlation 0.6 --format json -o verdict.json
`

// compareFlags are the comparison settings shared by table and campaign mode.
type compareFlags struct {
	edges, format, output, name, tables string
	values, errs                        listFlag
	covA, covB, covAB                   string
	correlation, maxPull, minP          float64
	absTol, relTol, edgeTol             float64
	subset                              bool
	set                                 map[string]bool
}

func (cf *compareFlags) register(fs *flag.FlagSet) {
	fs.StringVar(&cf.edges, "edges", table.DefaultLo+","+table.DefaultHi, "names of the bin-edge columns `LO,HI`")
	fs.Var(&cf.values, "value", "value `COLUMN` to compare (repeatable)")
	fs.Var(&cf.errs, "error", "uncertainty `COLUMN` (repeatable, added in quadrature)")
	fs.Float64Var(&cf.correlation, "correlation", 0, "correlation `R` of the two chains' errors, in [-1, 1]")
	fs.BoolVar(&cf.subset, "subset", false, "one sample is a subset of the other: σ_d² = |σ_a² - σ_b²| (Barlow)")
	fs.StringVar(&cf.covA, "cov-a", "", "covariance matrix `FILE` of A (CSV, one row and column per bin)")
	fs.StringVar(&cf.covB, "cov-b", "", "covariance matrix `FILE` of B")
	fs.StringVar(&cf.covAB, "cov-ab", "", "cross-covariance matrix `FILE` between A and B (optional)")
	fs.Float64Var(&cf.maxPull, "max-pull", compare.DefaultLimits.MaxPull, "largest allowed |pull| `X` (0: no limit)")
	fs.Float64Var(&cf.minP, "min-p", compare.DefaultLimits.MinP, "smallest allowed p-value `P` (0: no limit)")
	fs.Float64Var(&cf.absTol, "abs-tol", 0, "absolute numerical tolerance per bin (chains that must agree to rounding)")
	fs.Float64Var(&cf.relTol, "rel-tol", 0, "relative numerical tolerance per bin")
	fs.Float64Var(&cf.edgeTol, "edge-tol", 1e-9, "relative tolerance on bin edges")
	fs.StringVar(&cf.format, "format", "text", "output `FORMAT`: text, json, markdown, junit or html")
	stringVar(fs, &cf.output, []string{"o", "output"}, "", "write the report to `FILE` (atomically) instead of stdout")
	fs.StringVar(&cf.name, "name", "", "observable `NAME` in the report (default: the first file's name)")
	fs.StringVar(&cf.tables, "tables", "blinded", "campaign mode: compare the `blinded` or the `unblinded` tables")
}

// check validates the flag values before any file is touched.
func (cf *compareFlags) check(fs *flag.FlagSet) error {
	cf.set = map[string]bool{}
	fs.Visit(func(f *flag.Flag) { cf.set[f.Name] = true })
	if !slices.Contains(report.Formats, cf.format) {
		return usageErr("--format %q is not one of %s", cf.format, strings.Join(report.Formats, ", "))
	}
	if math.IsNaN(cf.correlation) || cf.correlation < -1 || cf.correlation > 1 {
		return usageErr("--correlation %v is outside [-1, 1]", cf.correlation)
	}
	if cf.subset && cf.set["correlation"] {
		return withHint(usageErr("--subset and --correlation cannot be used together"),
			"--subset already accounts for the shared events of a subset analysis")
	}
	if (cf.covA == "") != (cf.covB == "") {
		return usageErr("--cov-a and --cov-b go together")
	}
	if cf.covAB != "" && cf.covA == "" {
		return usageErr("--cov-ab needs --cov-a and --cov-b")
	}
	if cf.covA != "" && (cf.subset || cf.set["correlation"]) {
		return withHint(usageErr("covariance matrices cannot be combined with --subset or --correlation"),
			"give the correlation between the chains as --cov-ab")
	}
	for _, v := range []struct {
		name string
		v    float64
	}{{"max-pull", cf.maxPull}, {"abs-tol", cf.absTol}, {"rel-tol", cf.relTol}, {"edge-tol", cf.edgeTol}} {
		if math.IsNaN(v.v) || v.v < 0 || math.IsInf(v.v, 0) {
			return usageErr("--%s must be a finite number >= 0, got %v", v.name, v.v)
		}
	}
	if math.IsNaN(cf.minP) || cf.minP < 0 || cf.minP >= 1 {
		return usageErr("--min-p must be in [0, 1), got %v", cf.minP)
	}
	if cf.tables != "blinded" && cf.tables != "unblinded" {
		return usageErr("--tables must be blinded or unblinded, got %q", cf.tables)
	}
	return nil
}

func (cf *compareFlags) limits() compare.Limits {
	return compare.Limits{MaxPull: cf.maxPull, MinP: cf.minP, AbsTol: cf.absTol, RelTol: cf.relTol}
}

func (cf *compareFlags) edgeNames() (string, string, error) {
	lo, hi, ok := strings.Cut(cf.edges, ",")
	lo, hi = strings.TrimSpace(lo), strings.TrimSpace(hi)
	if !ok || lo == "" || hi == "" || strings.Contains(hi, ",") {
		return "", "", usageErr("--edges wants two column names LO,HI, got %q", cf.edges)
	}
	return lo, hi, nil
}

func runCompare(e *env, args []string) error {
	fs := newFlags(e, "compare", compareHelp)
	var cf compareFlags
	cf.register(fs)
	pos, err := parse(fs, args)
	if err != nil {
		return err
	}
	if err := cf.check(fs); err != nil {
		return err
	}
	switch {
	case len(pos) == 1 && isDir(pos[0]):
		return compareCampaign(e, pos[0], &cf)
	case len(pos) != 2:
		return withHint(usageErr("compare wants two tables (or one campaign folder), got %d arguments", len(pos)),
			"tandem compare A.csv B.csv")
	}
	for _, p := range pos {
		if cf.output != "" && sameFile(p, cf.output) {
			return usageErr("output %s is also an input", cf.output)
		}
	}
	lo, hi, err := cf.edgeNames()
	if err != nil {
		return err
	}
	opt := table.CSVOptions{Lo: lo, Hi: hi}
	ts, err := input.ReadAll(opt, pos[0], pos[1])
	if err != nil {
		return inputErr(err)
	}
	a, b := ts[0], ts[1]
	for _, t := range ts {
		for _, n := range t.Notes {
			e.warnf("%s", n)
		}
	}
	var sels []compare.Selection
	if len(cf.values) == 0 {
		sels = table.DefaultSelections(a)
	}
	for _, v := range cf.values {
		if len(cf.errs) > 0 {
			sels = append(sels, compare.Selection{Value: v, Errors: cf.errs})
		} else {
			sels = append(sels, table.ConventionalSelection(a, v, len(cf.values) == 1))
		}
	}
	copt := compare.Options{Correlation: cf.correlation, Subset: cf.subset, Limits: cf.limits()}
	if cf.covA != "" {
		if err := readCovariances(&copt, &cf, a.Len()); err != nil {
			return err
		}
	}
	results, err := compare.Tables(a, b, sels, cf.edgeTol, copt)
	if err != nil {
		if errors.Is(err, compare.ErrNotPositiveDefinite) {
			return withHint(inputErr(err), "check that --cov-a, --cov-b and --cov-ab describe the same bins and that the cross-covariance is not too large")
		}
		return inputErr(err)
	}
	name := cf.name
	if name == "" {
		name = strings.TrimSuffix(filepath.Base(a.Source), filepath.Ext(a.Source))
	}
	s := &compare.Summary{Title: fmt.Sprintf("%s vs %s", a.Source, b.Source)}
	for _, r := range results {
		s.Entries = append(s.Entries, compare.Entry{Observable: name, Result: r})
	}
	if err := emit(e, s, cf.format, cf.output); err != nil {
		return err
	}
	if !s.Pass() {
		return silentFail
	}
	return nil
}

func readCovariances(opt *compare.Options, cf *compareFlags, n int) error {
	va, err := table.ReadMatrixFile(cf.covA, n, true)
	if err != nil {
		return inputErr(err)
	}
	vb, err := table.ReadMatrixFile(cf.covB, n, true)
	if err != nil {
		return inputErr(err)
	}
	opt.CovA, opt.CovB = symDense(va), symDense(vb)
	if cf.covAB != "" {
		c, err := table.ReadMatrixFile(cf.covAB, n, false)
		if err != nil {
			return inputErr(err)
		}
		opt.CovCross = mat.NewDense(n, n, flatten(c))
	}
	return nil
}

func symDense(m [][]float64) *mat.SymDense {
	return mat.NewSymDense(len(m), flatten(m))
}

func flatten(m [][]float64) []float64 {
	out := make([]float64, 0, len(m)*len(m))
	for _, r := range m {
		out = append(out, r...)
	}
	return out
}

// emit renders s to stdout or atomically to path.
func emit(e *env, s *compare.Summary, format, path string) error {
	st := report.Style{Color: path == "" && format == "text" && colorOK(e.stdout)}
	if path == "" {
		var buf bytes.Buffer
		if err := report.Render(&buf, format, s, st); err != nil {
			return err
		}
		_, err := e.stdout.Write(buf.Bytes())
		return err
	}
	err := safefile.WriteFrom(path, 0o644, func(w io.Writer) error { return report.Render(w, format, s, st) })
	if err != nil {
		return &exitError{code: 2, err: fmt.Errorf("writing %s: %v", path, err)}
	}
	e.infof("%s: wrote %s report (%s)", path, format, s.Verdict())
	return nil
}

func colorOK(w io.Writer) bool {
	if os.Getenv("NO_COLOR") != "" || os.Getenv("TERM") == "dumb" {
		return false
	}
	f, ok := w.(*os.File)
	if !ok {
		return false
	}
	fi, err := f.Stat()
	return err == nil && fi.Mode()&os.ModeCharDevice != 0
}

func isDir(p string) bool {
	fi, err := os.Stat(p)
	return err == nil && fi.IsDir()
}

func sameFile(a, b string) bool {
	fa, err1 := os.Stat(a)
	fb, err2 := os.Stat(b)
	if err1 == nil && err2 == nil {
		return os.SameFile(fa, fb)
	}
	aa, _ := filepath.Abs(a)
	bb, _ := filepath.Abs(b)
	return aa == bb
}
