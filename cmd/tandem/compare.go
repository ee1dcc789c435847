package main

import (
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

	"tandem/blind/protocol"
	"tandem/compare"
	"tandem/compare/input"
	"tandem/compare/table"
	"tandem/report"
)

const compareHelp = `Usage:
    tandem compare A B [C ...] [flags]
    tandem compare DIR [--tables blinded|unblinded] [flags]

Compares the value columns of two binned tables and prints the verdict,
the criteria and a per-bin table. A table is CSV or TSV with a header row
(- reads one from the standard input), a JSON or TOML table (.json,
.toml), or a ROOT histogram or graph (FILE.root:PATH). With a campaign
folder it compares the teams' blinded tables as the protocol says.

Value columns: --value names them (repeatable); otherwise every column that
is not a bin edge or an uncertainty. Uncertainties: --error names them
(repeatable; each is an error source with its own correlation between the
two chains, set by --error-correlation NAME=RHO, where RHO is a number in
[-1, 1] or a column holding one value per bin; --correlation sets the
sources not named). Without --error: columns named VALUE_err, VALUE_stat,
VALUE_syst, VALUE_sys (and bare err, stat, syst, sys when there is one value
column). --overlap-count N --overlap-common C derive the correlation of the
"stat" source per bin as C/sqrt(N_A N_B) from event counts.

Counts: --counts declares that the value columns hold event counts
(non-negative integers; anything else is refused). Each bin is judged by
the exact binomial test of N_A given N_A + N_B (p0 = R/(1+R) with
--exposure-ratio R, default 1), or with --overlap-common C (events both
chains select, per bin) by McNemar's exact test on the discordant events.
Weighted counts: --sumw2 COL names the per-bin sum of squared weights (the
value column holds the sum of weights); they are judged by Gagunashvili's
chi-square test for weighted histograms and a test of the totals.
Across bins: the likelihood-ratio G with a Monte Carlo p-value
(--mc-samples, --seed), the randomized-PIT uniformity test, the Sidak
trials-corrected smallest bin p-value and the runs test.

Verdict: the chi-square, Kolmogorov-Smirnov, runs and trials-corrected
largest-pull p-values of every compared column are adjusted together
(Holm-Bonferroni) so that agreeing tables fail with probability at most
--alpha. --max-pull adds a raw limit on |pull| (not trials-corrected);
--abs-tol/--rel-tol require numerical agreement, and are the only criterion
when the tables have no uncertainties.

Three or more tables: each compared column gets the N-team consistency
test (chi-square of the teams against one common value per bin, N-1
degrees of freedom per bin) and every team's leave-one-out chi-square and
shift test against the combination of the others; the report names the
departing team. These p-values form the alpha family (Holm). The pairwise
comparisons are shown as diagnostics: their p-values are not in the family
(their comparable-bins check and declared tolerances count). Correlations
between teams are numbers; --cov-a, --subset, overlaps, --counts and
per-bin correlation columns are refused. --labels A,B,C names the tables
(default: the file stems).

Report: --format text (the default), json, markdown, junit or html. With
-o FILE and no --format, the extension chooses: .txt, .json, .md, .xml,
.html. Nothing is written when the input is bad.

Exit status: 0 agreement, 1 disagreement, 2 bad usage or input (also: no
uncertainty column and no tolerance, or no criterion left).

Example:
    tandem compare heron.csv otter.csv --value rate --error stat --error syst \
        --error-correlation stat=0.6 --error-correlation syst=1 -o verdict.json
`

// compareFlags are the comparison settings shared by table and campaign mode.
type compareFlags struct {
	edges, format, output, name, tables string
	values, errs, errCorr               listFlag
	covA, covB, covAB                   string
	correlation                         string
	alpha, maxPull, minP                float64
	absTol, relTol, edgeTol             float64
	subset                              bool
	delimiter                           string
	limits                              table.Limits
	overlapCount, overlapCommon         string
	overlapSource                       string
	labelA, labelB, labels              string
	title, xLabel, yLabel               string
	counts                              bool
	sumw2                               string
	exposureRatio                       float64
	mcSamples                           int
	seed                                uint64
	set                                 map[string]bool
	opt                                 compare.Options
}

// tableOnly are the flags that campaign mode refuses (the protocol sets them).
var tableOnly = []string{"counts", "sumw2", "exposure-ratio", "mc-samples", "seed", "alpha", "error-correlation", "overlap-count", "overlap-common", "overlap-source", "label-a", "label-b", "labels", "title", "x-label", "y-label", "edge-tol", "delimiter", "max-line-bytes", "max-columns", "max-input-bytes"}

func (cf *compareFlags) register(fs *flag.FlagSet) {
	d := compare.Defaults()
	fs.StringVar(&cf.edges, "edges", table.DefaultLo+","+table.DefaultHi, "names of the bin-edge columns `LO,HI`, or XLO,XHI,YLO,YHI for cells of a 2-D table")
	fs.Var(&cf.values, "value", "value `COLUMN` to compare (repeatable)")
	fs.Var(&cf.errs, "error", "uncertainty `COLUMN` (repeatable; one error source each)")
	fs.Var(&cf.errCorr, "error-correlation", "correlation of one error source between the chains, `NAME=RHO` (repeatable; RHO a number in [-1, 1] or a per-bin column)")
	fs.StringVar(&cf.correlation, "correlation", "0", "correlation `R` of the error sources not named by --error-correlation (a number in [-1, 1] or a per-bin column)")
	fs.BoolVar(&cf.subset, "subset", false, "one sample is a subset of the other: σ_d² = |σ_a² - σ_b²| (Barlow)")
	fs.StringVar(&cf.overlapCount, "overlap-count", "", "per-bin event-count `COLUMN` of each table (N_A in A, N_B in B), for ρ from the overlap")
	fs.StringVar(&cf.overlapCommon, "overlap-common", "", "per-bin `COLUMN` with the number of events both chains select")
	fs.StringVar(&cf.overlapSource, "overlap-source", compare.DefaultOverlapSource, "error `SOURCE` whose correlation the overlap sets")
	fs.BoolVar(&cf.counts, "counts", false, "the value columns hold event counts: exact per-bin tests (binomial, or McNemar with --overlap-common) and calibrated tests across bins")
	fs.StringVar(&cf.sumw2, "sumw2", "", "with --counts: the value columns hold sums of weights and `COLUMN` the per-bin sums of squared weights (weighted counts, Gagunashvili's χ² test)")
	fs.Float64Var(&cf.exposureRatio, "exposure-ratio", 1, "with --counts: exposure `R` of A over that of B (the expected ratio of the counts)")
	fs.IntVar(&cf.mcSamples, "mc-samples", compare.DefaultMCSamples, "with --counts: Monte Carlo samples `N` of the global statistic")
	fs.Uint64Var(&cf.seed, "seed", 0, "with --counts: `SEED` of the Monte Carlo and the randomized PIT")
	fs.StringVar(&cf.covA, "cov-a", "", "covariance matrix `FILE` of A (CSV, one row and column per bin)")
	fs.StringVar(&cf.covB, "cov-b", "", "covariance matrix `FILE` of B")
	fs.StringVar(&cf.covAB, "cov-ab", "", "cross-covariance matrix `FILE` between A and B (optional)")
	fs.Float64Var(&cf.alpha, "alpha", d.Alpha, "family-wise false-alarm rate `A` of the p-value criteria (0: no p-value criteria)")
	fs.Float64Var(&cf.minP, "min-p", d.Alpha, "deprecated: the same as --alpha")
	fs.Float64Var(&cf.maxPull, "max-pull", 0, "optional raw limit `X` on the largest |pull|, not trials-corrected (0: none)")
	fs.Float64Var(&cf.absTol, "abs-tol", 0, "absolute numerical tolerance `X` per bin (chains that must agree to rounding)")
	fs.Float64Var(&cf.relTol, "rel-tol", 0, "relative numerical tolerance `X` per bin")
	fs.Float64Var(&cf.edgeTol, "edge-tol", d.EdgeTol, "relative tolerance `X` on bin edges")
	fs.StringVar(&cf.format, "format", "text", "output `FORMAT`: text, json, markdown, junit or html")
	stringVar(fs, &cf.output, []string{"o", "output"}, "", "write the report to `FILE` (atomically; - is stdout) instead of stdout; its extension chooses the format when --format is not given")
	fs.StringVar(&cf.name, "name", "", "observable `NAME` in the report (default: the first file's name)")
	fs.StringVar(&cf.labelA, "label-a", "", "`LABEL` of the first table in the report (default: its file name)")
	fs.StringVar(&cf.labelB, "label-b", "", "`LABEL` of the second table in the report (default: its file name)")
	fs.StringVar(&cf.title, "title", "", "`TITLE` of the report and its page (default: \"A vs B\")")
	fs.StringVar(&cf.xLabel, "x-label", "", "`TEXT` under the x axis of the plots, e.g. \"energy [GeV]\"")
	fs.StringVar(&cf.yLabel, "y-label", "", "`TEXT` beside the y axis of the values plot, e.g. \"rate [Hz]\"")
	fs.StringVar(&cf.labels, "labels", "", "`LABELS` of the tables in the report, comma-separated, one per table (default: the file names; with three or more tables their stems)")
	fs.StringVar(&cf.tables, "tables", "blinded", "campaign mode: compare the `blinded` or the `unblinded` tables")
	registerLimits(fs, &cf.limits, &cf.delimiter)
}

// registerLimits adds the reader limits and the field separator.
func registerLimits(fs *flag.FlagSet, lim *table.Limits, delim *string) {
	d := table.DefaultLimits
	fs.IntVar(&lim.MaxLineBytes, "max-line-bytes", d.MaxLineBytes, "refuse a table line longer than `N` bytes")
	fs.IntVar(&lim.MaxColumns, "max-columns", d.MaxColumns, "refuse a table with more than `N` columns")
	fs.Int64Var(&lim.MaxBytes, "max-input-bytes", d.MaxBytes, "refuse an input larger than `N` bytes")
	fs.StringVar(delim, "delimiter", "", "field separator `C` of CSV tables: , or tab or ; (default: from the header)")
}

// csvOptions builds the reader options from the edge names, the limits
// and the separator.
func csvOptions(lo, hi, delim string, lim table.Limits) (table.CSVOptions, error) {
	opt := table.CSVOptions{Lo: lo, Hi: hi, Limits: lim}
	switch delim {
	case "":
	case ",", ";":
		opt.Delim = delim[0]
	case "tab", "\\t", "\t":
		opt.Delim = '\t'
	default:
		return opt, usageErr("--delimiter must be , or ; or tab, got %q", delim)
	}
	return opt, nil
}

// check validates the flag values before any file is touched, and builds
// the comparison options.
func (cf *compareFlags) check(fs *flag.FlagSet) error {
	cf.set = map[string]bool{}
	fs.Visit(func(f *flag.Flag) { cf.set[f.Name] = true })
	if cf.output == "-" {
		cf.output = "" // -o - is the standard output
	}
	for _, f := range []struct {
		name, why string
		list      []string
	}{
		{"value", "a column is compared once; a second comparison would count twice in the α family", cf.values},
		{"error", "an uncertainty source counts once in σ_d", cf.errs},
	} {
		for i, v := range f.list {
			if slices.Contains(f.list[:i], v) {
				return withHint(usageErr("--%s %s given twice", f.name, v), f.why)
			}
		}
	}
	if err := checkOutput(cf.output); err != nil {
		return err
	}
	if cf.output != "" && !cf.set["format"] {
		f, ok := formatFromPath(cf.output)
		if !ok {
			return withHint(usageErr("cannot tell the format of %s from its extension", cf.output),
				"give --format, or use .txt, .json, .md, .xml or .html")
		}
		cf.format = f
	}
	if !slices.Contains(report.Formats, cf.format) {
		return usageErr("--format %q is not one of %s", cf.format, strings.Join(report.Formats, ", "))
	}
	for _, f := range []struct{ name, v string }{{"label-a", cf.labelA}, {"label-b", cf.labelB}, {"labels", cf.labels}, {"name", cf.name}, {"title", cf.title}, {"x-label", cf.xLabel}, {"y-label", cf.yLabel}} {
		if err := protocol.CleanText(f.v); err != nil {
			return withHint(usageErr("--%s: %v", f.name, err), "labels and names are shown in reports: use printable text")
		}
	}
	if cf.tables != "blinded" && cf.tables != "unblinded" {
		return usageErr("--tables must be blinded or unblinded, got %q", cf.tables)
	}
	o := compare.Defaults()
	o.MaxPull, o.AbsTol, o.RelTol, o.EdgeTol, o.Subset = cf.maxPull, cf.absTol, cf.relTol, cf.edgeTol, cf.subset
	o.Alpha = cf.alpha
	if cf.set["min-p"] {
		if cf.set["alpha"] && cf.minP != cf.alpha {
			return usageErr("--min-p (deprecated) and --alpha disagree")
		}
		o.Alpha = cf.minP
	}
	if cf.set["correlation"] {
		r, err := compare.ParseRho(cf.correlation)
		if err != nil {
			return usageErr("--correlation: %v", err)
		}
		o.Default = r
	}
	for _, kv := range cf.errCorr {
		name, val, ok := strings.Cut(kv, "=")
		name = strings.TrimSpace(name)
		if !ok || name == "" {
			return withHint(usageErr("--error-correlation wants NAME=RHO, got %q", kv), "--error-correlation stat=0.6 or --error-correlation stat=rho_stat (a per-bin column)")
		}
		r, err := compare.ParseRho(val)
		if err != nil {
			return usageErr("--error-correlation %s: %v", name, err)
		}
		if _, dup := o.Correlations[name]; dup {
			return usageErr("--error-correlation names source %q twice", name)
		}
		if o.Correlations == nil {
			o.Correlations = map[string]compare.Rho{}
		}
		o.Correlations[name] = r
	}
	if cf.overlapCount != "" || cf.overlapCommon != "" {
		o.Overlap = compare.Overlap{Count: cf.overlapCount, Common: cf.overlapCommon, Source: cf.overlapSource}
	}
	for _, f := range []string{"exposure-ratio", "mc-samples", "seed", "sumw2"} {
		if cf.set[f] && !cf.counts {
			return withHint(usageErr("--%s applies to counts only", f), "add --counts when the value columns hold event counts")
		}
	}
	if cf.counts {
		o.Counts, o.Seed, o.SumW2 = true, cf.seed, strings.TrimSpace(cf.sumw2)
		if cf.set["sumw2"] && o.SumW2 == "" {
			return usageErr("--sumw2 wants a column name")
		}
		if cf.set["exposure-ratio"] {
			if !(cf.exposureRatio > 0) || math.IsInf(cf.exposureRatio, 0) {
				return usageErr("--exposure-ratio must be a finite number > 0, got %v", cf.exposureRatio)
			}
			o.ExposureRatio = cf.exposureRatio
		}
		if cf.set["mc-samples"] {
			if cf.mcSamples < 1 || cf.mcSamples > compare.MaxMCSamples {
				return usageErr("--mc-samples must be in [1, %d], got %d", compare.MaxMCSamples, cf.mcSamples)
			}
			o.MCSamples = cf.mcSamples
		}
		for _, f := range []string{"error", "error-correlation", "correlation", "subset", "cov-a", "overlap-count", "overlap-source"} {
			if cf.set[f] {
				return withHint(usageErr("--%s does not apply to --counts", f),
					"counts are their own uncertainty; give shared events per bin with --overlap-common COL")
			}
		}
	}
	if (cf.covA == "") != (cf.covB == "") {
		return usageErr("--cov-a and --cov-b go together")
	}
	if cf.covAB != "" && cf.covA == "" {
		return usageErr("--cov-ab needs --cov-a and --cov-b")
	}
	if cf.covA != "" && (cf.subset || len(cf.errCorr) > 0 || o.Overlap.Enabled() || o.Default.Column != "") {
		return withHint(usageErr("covariance matrices cannot be combined with --subset, per-source or per-bin correlations"),
			"give the correlation between the chains as --cov-ab, or as one number with --correlation")
	}
	if cf.covAB != "" && cf.set["correlation"] {
		return withHint(usageErr("--cov-ab and --correlation cannot be used together"), "the cross-covariance already says how the chains are correlated")
	}
	if cf.subset && (cf.set["correlation"] || len(cf.errCorr) > 0 || o.Overlap.Enabled()) {
		return withHint(usageErr("--subset and --correlation cannot be used together"),
			"--subset already accounts for the shared events of a subset analysis")
	}
	if err := o.Validate(); err != nil {
		return usageErr("%v", err)
	}
	if o.Alpha == 0 && o.MaxPull == 0 && o.AbsTol == 0 && o.RelTol == 0 {
		return withHint(usageErr("%v", compare.ErrNoCriterion), "keep the default --alpha 0.01, or declare --max-pull, --abs-tol or --rel-tol")
	}
	cf.opt = o
	return nil
}

// edgeNames splits --edges: two names (1-D bins) or four (2-D cells).
func (cf *compareFlags) edgeNames() ([]string, error) {
	names, ok := table.SplitEdges(cf.edges)
	if !ok {
		return nil, usageErr("--edges wants two different column names LO,HI (bins) or four XLO,XHI,YLO,YHI (cells of a 2-D table), got %q", cf.edges)
	}
	return names, nil
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
		for _, f := range tableOnly {
			if cf.set[f] {
				return withHint(usageErr("--%s does not apply to a campaign", f), "the protocol in campaign.toml declares columns and tolerances")
			}
		}
		return compareCampaign(e, pos[0], &cf)
	case len(pos) < 2:
		return withHint(usageErr("compare wants two or more tables (or one campaign folder), got %s", argCount(len(pos))),
			"tandem compare A.csv B.csv")
	}
	labels, err := cf.tableLabels(pos)
	if err != nil {
		return err
	}
	for _, p := range pos {
		if cf.output != "" && sameFile(p, cf.output) {
			return usageErr("output %s is also an input", cf.output)
		}
	}
	edges, err := cf.edgeNames()
	if err != nil {
		return err
	}
	opt, err := csvOptions(edges[0], edges[1], cf.delimiter, cf.limits)
	if err != nil {
		return err
	}
	if len(edges) == 4 {
		opt.YLo, opt.YHi = edges[2], edges[3]
	}
	ts, err := input.ReadAllWaiting(e.stdin, opt, e.waitNotice(), pos...)
	if err != nil {
		return inputErr(err)
	}
	for _, t := range ts {
		for _, n := range t.Notes {
			e.warnf("%s", n)
		}
	}
	if len(ts) > 2 {
		return compareTeams(e, &cf, ts, labels)
	}
	a, b := ts[0], ts[1]
	sels := cf.selections(a, b)
	copt := cf.opt
	if cf.covA != "" {
		if err := readCovariances(&copt, &cf, a.Len()); err != nil {
			return err
		}
	}
	results, err := compare.Columns(a, b, sels, copt)
	if err != nil {
		switch {
		case errors.Is(err, compare.ErrNotPositiveDefinite):
			return withHint(inputErr(err), "check that --cov-a, --cov-b and --cov-ab describe the same bins and that the cross-covariance is not too large")
		case errors.Is(err, compare.ErrNoUncertainty):
			return withHint(inputErr(err), "name the uncertainty columns with --error COL (repeatable), or judge by --abs-tol/--rel-tol")
		case errors.Is(err, compare.ErrNoCriterion):
			return withHint(inputErr(err), "keep the default --alpha 0.01, or declare --max-pull, --abs-tol or --rel-tol")
		}
		return inputErr(err)
	}
	// Every result warning, the counts hint included, reaches stderr
	// where the report is emitted.
	name := cf.name
	if name == "" {
		name = strings.TrimSuffix(filepath.Base(a.Source), filepath.Ext(a.Source))
	}
	s := &report.Summary{Title: fmt.Sprintf("%s vs %s", a.Source, b.Source)}
	for _, r := range results {
		if labels[0] != "" {
			r.LabelA = labels[0]
		}
		if labels[1] != "" {
			r.LabelB = labels[1]
		}
		s.Entries = append(s.Entries, report.Entry{Observable: name, Files: [2]string{a.Source, b.Source}, Result: r, XLabel: cf.xLabel, YLabel: cf.yLabel})
	}
	if labels[0] != "" || labels[1] != "" {
		s.Title = fmt.Sprintf("%s vs %s", results[0].LabelA, results[0].LabelB)
	}
	return cf.emitSummary(e, s)
}

// selections are the compared columns: --value (or every column that is
// not an edge, an uncertainty or a correlation or event-count column, and
// that both tables have), each
// with the --error sources or the conventionally named ones.
func (cf *compareFlags) selections(a, b *table.Table) []compare.Selection {
	if len(cf.values) == 0 && len(cf.errs) == 0 && !(cf.opt.Counts && (cf.opt.Overlap.Enabled() || cf.opt.SumW2 != "")) {
		return table.DefaultSelections(a)
	}
	values := cf.values
	if len(values) == 0 {
		aux := append(slices.Clone([]string(cf.errs)), cf.opt.Overlap.Count, cf.opt.Overlap.Common, cf.opt.Default.Column, cf.opt.SumW2)
		for _, r := range cf.opt.Correlations {
			aux = append(aux, r.Column)
		}
		for _, s := range table.DefaultSelections(a) {
			if !slices.Contains(aux, s.Value) && b.Column(s.Value) != nil {
				values = append(values, s.Value)
			}
		}
	}
	var sels []compare.Selection
	for _, v := range values {
		if len(cf.errs) > 0 {
			sels = append(sels, compare.Selection{Value: v, Errors: cf.errs})
		} else {
			sels = append(sels, table.ConventionalSelection(a, v, len(values) == 1))
		}
	}
	return sels
}

func readCovariances(opt *compare.Options, cf *compareFlags, n int) error {
	va, err := table.ReadMatrixFileLimits(cf.covA, n, true, cf.limits)
	if err != nil {
		return inputErr(err)
	}
	vb, err := table.ReadMatrixFileLimits(cf.covB, n, true, cf.limits)
	if err != nil {
		return inputErr(err)
	}
	opt.CovA, opt.CovB = symDense(va), symDense(vb)
	if cf.covAB != "" {
		c, err := table.ReadMatrixFileLimits(cf.covAB, n, false, cf.limits)
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
func colorOK(w io.Writer) bool {
	if os.Getenv("NO_COLOR") != "" || os.Getenv("TERM") == "dumb" {
		return false
	}
	f, ok := w.(*os.File)
	if !ok {
		return false
	}
	return isTerminal(f)
}

// checkOutput refuses an -o path that exists and is not a regular file:
// the report replaces the path atomically, which would replace a symlink
// or a device node (-o /dev/stdout) rather than write through it.
func checkOutput(path string) error {
	if path == "" {
		return nil
	}
	fi, err := os.Lstat(path)
	if err != nil || fi.Mode().IsRegular() {
		return nil
	}
	kind := "not a regular file"
	switch m := fi.Mode(); {
	case m&os.ModeSymlink != 0:
		kind = "a symbolic link"
	case m.IsDir():
		kind = "a directory"
	case m&(os.ModeDevice|os.ModeCharDevice) != 0:
		kind = "a device"
	case m&os.ModeNamedPipe != 0:
		kind = "a named pipe"
	}
	return withHint(usageErr("output %s is %s; -o writes a new file or replaces a regular one", path, kind),
		"leave out -o (or give -o -) to write the report to the standard output")
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

// waitNotice tells, on a terminal, of an input (a named pipe, a device,
// the standard input) that has given nothing for a few seconds, so that
// tandem never waits in silence.
func (e *env) waitNotice() input.Wait {
	f, ok := e.stderr.(*os.File)
	if !ok || !isTerminal(f) {
		return input.Wait{}
	}
	return input.Wait{After: input.DefaultWaitAfter, Notify: func(spec string) {
		if spec == input.Stdin {
			e.infof("waiting for the table on standard input (nothing has arrived for %v)", input.DefaultWaitAfter)
			return
		}
		e.infof("waiting for %s: nothing has been written to it for %v (a named pipe or device reads only once its writer starts)", spec, input.DefaultWaitAfter)
	}}
}

// tableLabels are the labels of the tables pos: --labels, else --label-a
// and --label-b for the first two. With two tables an empty label keeps
// the default (the file name); with three or more every table gets one,
// by default its file name's stem, and they must differ.
func (cf *compareFlags) tableLabels(pos []string) ([]string, error) {
	labels := make([]string, len(pos))
	if cf.labels != "" {
		if cf.labelA != "" || cf.labelB != "" {
			return nil, usageErr("--labels and --label-a/--label-b cannot be used together")
		}
		parts := strings.Split(cf.labels, ",")
		if len(parts) != len(pos) {
			return nil, withHint(usageErr("--labels gives %d labels for %d tables", len(parts), len(pos)),
				"one label per table, in the order of the tables, separated by commas")
		}
		for i, l := range parts {
			labels[i] = strings.TrimSpace(l)
			if labels[i] == "" {
				return nil, usageErr("--labels: label %d is empty", i+1)
			}
		}
	} else {
		labels[0], labels[1] = cf.labelA, cf.labelB
	}
	if len(pos) == 2 {
		return labels, nil
	}
	stems := make([]string, len(pos))
	for i, p := range pos {
		path, _, _ := strings.Cut(p, ".root:")
		stems[i] = strings.TrimSuffix(filepath.Base(path), filepath.Ext(path))
	}
	if hasDuplicate(stems) {
		copy(stems, pos)
	}
	for i := range labels {
		if labels[i] == "" {
			labels[i] = stems[i]
		}
	}
	if hasDuplicate(labels) {
		return nil, withHint(usageErr("two tables have the same label: %s", strings.Join(labels, ", ")),
			"name each table with --labels a,b,c")
	}
	return labels, nil
}

func hasDuplicate(xs []string) bool {
	for i := range xs {
		if slices.Contains(xs[i+1:], xs[i]) {
			return true
		}
	}
	return false
}

// compareTeams compares three or more tables: the N-team consistency test
// of each column judges, in one α family; every pair is shown as a
// diagnostic.
func compareTeams(e *env, cf *compareFlags, ts []*table.Table, labels []string) error {
	if cf.covA != "" {
		return withHint(usageErr("--cov-a/--cov-b describe two tables; they cannot be used with %d tables", len(ts)),
			"with three or more tables give --error sources and --error-correlation NAME=RHO")
	}
	name := cf.name
	if name == "" {
		name = strings.TrimSuffix(filepath.Base(ts[0].Source), filepath.Ext(ts[0].Source))
	}
	sels := cf.selections(ts[0], ts[1])
	tc, err := compare.Teams(ts, labels, name, sels, cf.opt)
	if err != nil {
		switch {
		case errors.Is(err, compare.ErrNoUncertainty):
			return withHint(inputErr(err), "name the uncertainty columns with --error COL (repeatable), or judge by --abs-tol/--rel-tol")
		case errors.Is(err, compare.ErrNoCriterion):
			return withHint(inputErr(err), "keep the default --alpha 0.01, or declare --max-pull, --abs-tol or --rel-tol")
		}
		return inputErr(err)
	}
	s := &report.Summary{Title: strings.Join(labels, " vs "), Teams: tc.Results}
	for _, p := range tc.Pairs {
		s.Entries = append(s.Entries, report.Entry{Observable: p.Observable, Teams: [2]string{labels[p.I], labels[p.J]}, Files: [2]string{ts[p.I].Source, ts[p.J].Source}, Result: p.Result, XLabel: cf.xLabel, YLabel: cf.yLabel})
	}
	return cf.emitSummary(e, s)
}

// emitSummary writes the report of a table-mode comparison, under the
// --title if one was given, and fails when the comparison does.
func (cf *compareFlags) emitSummary(e *env, s *report.Summary) error {
	if cf.title != "" {
		s.Title = cf.title
	}
	if err := emit(e, s, cf.format, cf.output); err != nil {
		return err
	}
	if !s.Pass() {
		return silentFail
	}
	return nil
}
