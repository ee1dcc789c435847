package main

import (
	"bytes"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"runtime/debug"
	"slices"
	"strconv"
	"strings"
	"time"

	"tandem/blind/protocol"
	"tandem/compare/events"
	"tandem/compare/table"
	"tandem/report"
	"tandem/report/outfile"
)

const syncHelp = `Usage:
    tandem sync A B --key COL[,COL…] [flags]
    tandem sync merge SUMMARY… [--format F] [-o FILE] [--overlap-out FILE]

Matches the events of two event tables by their key columns, compares the
variables of the common events within tolerance, and compares the two cut
flows with McNemar's exact test on the events one chain keeps and the other
drops. A and B are CSV or TSV files (header row), Parquet files (.parquet)
or ROOT trees (file.root:tree, file.root:dir/tree).

Variables: --var names them (repeatable); otherwise every numeric or
boolean column both tables have that is not a key or a cut (booleans may be
spelt 1/0, true/false in any case, or T/F, and count as 1 and 0).
Tolerance per variable: --tol NAME=ABS[,REL] means
|a-b| <= max(ABS, REL*max(|a|,|b|)). The default, ABS 0 and REL 1e-5, is set
by what chains store: float32 keeps a relative unit roundoff of 2^-24
(about 6e-8), and two values printed to 6 significant digits differ by up
to one unit in the sixth digit (1e-5 of the value). Values printed with a
fixed number of decimals need an ABS for their last decimal; chains that
must agree to float64 rounding can ask for --tol NAME=0,1e-12.

Output: text on stdout, or --format text|json|markdown|junit|html; with
-o FILE the extension chooses the format (.txt .json .md .xml .html), and
a --format that contradicts it is refused.

Unsorted tables (events in processing order) are hash-partitioned on the
key: --mem MB of rows stay in memory (default 256; the process stays
within about MB + 64), the rest goes to --temp-dir and is removed
afterwards. The report says whether the tables were sorted and how much
spilled. A long run shows its progress on stderr when stderr is a
terminal.

In a campaign: --campaign DIR applies the map of every event-level
variable the protocol's [events] table names blinded to both tables
(one factor and one offset per variable, derived from the campaign key).
Tolerances are judged on the true values, so which events agree and the
cut flow do not depend on the map; the report shows only blinded values,
marks each blinded variable, and hides the per-bin counts when the binning
variable is blinded. Opening the key needs the custodian identity:
--identity FILE, or TANDEM_CUSTODIAN_IDENTITY (the identity itself) or
TANDEM_CUSTODIAN_IDENTITY_FILE (its path).

For batch systems: run sync on each partition of the data (for example a
run range) with --summary-out, then "tandem sync merge" the summaries: every
count, discordant count and histogram adds exactly.

Example:
    tandem sync heron.csv otter.parquet --key run,event --cuts trigger,quality,fiducial \
        --tol energy=0,1e-6 --bin-var energy --bin-edges 0,10,20,50 --overlap-out rho.csv
`

// syncMemMargin is the memory sync allows itself beyond --mem.
const syncMemMargin = 48 << 20

type syncFlags struct {
	keys, cuts, edges, binVar string
	vars, tols                listFlag
	format, output            string
	overlapOut, unmatchedOut  string
	summaryOut, tempDir       string
	labelA, labelB            string
	campaign, identity        string
	alpha, cl                 float64
	memMB                     int
}

func runSync(e *env, args []string) error {
	if len(args) > 0 && args[0] == "merge" {
		return runSyncMerge(e, args[1:])
	}
	fs := newFlags(e, "sync", syncHelp)
	var sf syncFlags
	fs.StringVar(&sf.keys, "key", "", "key `COLUMNS`, comma-separated (for example run,event)")
	fs.Var(&sf.vars, "var", "variable `NAME` to compare (repeatable; default all common numeric columns)")
	fs.StringVar(&sf.cuts, "cuts", "", "cut `COLUMNS` in selection order, comma-separated (booleans or 0/1)")
	fs.Var(&sf.tols, "tol", "tolerance `NAME=ABS[,REL]` of one variable (repeatable)")
	fs.Float64Var(&sf.alpha, "alpha", events.DefaultAlpha, "family-wise false-alarm rate `A` of the cut-flow tests")
	fs.Float64Var(&sf.cl, "cl", events.DefaultCL, "confidence level of the Clopper-Pearson efficiency intervals")
	fs.StringVar(&sf.binVar, "bin-var", "", "binning variable `NAME` for the per-bin overlap")
	fs.StringVar(&sf.edges, "bin-edges", "", "bin `EDGES`, comma-separated and increasing")
	fs.StringVar(&sf.overlapOut, "overlap-out", "", "write the per-bin overlap (lo,hi,n_a,n_b,n_common,rho) to `FILE`")
	fs.StringVar(&sf.unmatchedOut, "unmatched-out", "", "write every unmatched key (side,keys…,position) to `FILE`")
	fs.StringVar(&sf.summaryOut, "summary-out", "", "write the summary for \"tandem sync merge\" to `FILE`")
	fs.StringVar(&sf.format, "format", "text", "output `FORMAT`: text, json, markdown, junit or html (default: from the -o extension, else text)")
	stringVar(fs, &sf.output, []string{"o", "output"}, "", "write the report to `FILE` (atomically) instead of stdout; its extension chooses the format")
	fs.StringVar(&sf.labelA, "label-a", "", "name of chain A in the report (default: the file name)")
	fs.StringVar(&sf.labelB, "label-b", "", "name of chain B in the report")
	fs.StringVar(&sf.tempDir, "temp-dir", "", "`DIR` for spilling unsorted inputs (default the system's)")
	fs.IntVar(&sf.memMB, "mem", 256, "`MB` of rows held in memory before spilling unsorted inputs")
	fs.StringVar(&sf.campaign, "campaign", "", "campaign `DIR` whose protocol names the blinded variables")
	stringVar(fs, &sf.identity, []string{"identity", "i"}, "", "custodian identity `FILE` (age or SSH) that opens the campaign key")
	pos, err := parse(fs, args)
	if err != nil {
		return err
	}
	if sf.format, sf.output, err = syncFormat(fs, sf.format, sf.output); err != nil {
		return err
	}
	if len(pos) != 2 {
		return withHint(usageErr("sync wants two event tables, got %d arguments", len(pos)),
			"tandem sync A.csv B.csv --key run,event")
	}
	opt, err := sf.options()
	if err != nil {
		return err
	}
	outs := []string{sf.output, sf.overlapOut, sf.unmatchedOut, sf.summaryOut}
	if err := checkOutputs(pos, outs); err != nil {
		return err
	}
	var tabs [2]events.Source
	for i, p := range pos {
		t, err := events.OpenSource(p, treeFuncs)
		if err != nil {
			return inputErr(err)
		}
		tabs[i] = t
	}
	if err := sf.campaignBlind(e, tabs, &opt); err != nil {
		return err
	}
	var unmatched bytes.Buffer
	if sf.unmatchedOut != "" {
		opt.Unmatched = &unmatched
	}
	// The budget bounds the rows held; the soft limit makes the garbage
	// collector return what the unsorted path frees (its chunks after the
	// reading, its sort buffers) before the heap grows past the budget plus
	// a margin for buffers and the runtime. GOMEMLIMIT, when set, wins.
	if os.Getenv("GOMEMLIMIT") == "" {
		debug.SetMemoryLimit(opt.MemBudget + syncMemMargin)
	}
	var prog *progressLine
	if f, ok := e.stderr.(*os.File); ok && isTerminal(f) {
		prog = &progressLine{w: f, start: time.Now()}
		opt.Progress = prog.show
	}
	s, err := events.Sync(tabs[0], tabs[1], opt)
	prog.end()
	if err != nil {
		var te *table.Error
		if errors.As(err, &te) {
			return inputErr(err)
		}
		return withHint(inputErr(err), "tandem sync -h lists the flags")
	}
	r := events.Evaluate(s)
	if sf.summaryOut != "" {
		if err := outfile.WriteFrom(sf.summaryOut, 0o644, func(w io.Writer) error { return events.WriteSummary(w, s) }); err != nil {
			return &exitError{code: 2, err: fmt.Errorf("writing %s: %v", sf.summaryOut, err)}
		}
	}
	if sf.unmatchedOut != "" {
		if err := outfile.Write(sf.unmatchedOut, unmatched.Bytes(), 0o644); err != nil {
			return &exitError{code: 2, err: fmt.Errorf("writing %s: %v", sf.unmatchedOut, err)}
		}
	}
	return finishSync(e, r, sf.format, sf.output, sf.overlapOut)
}

// campaignBlind fills opt.Blind from the campaign's protocol: the map of
// every blinded variable that sync compares or bins by. A blinded name
// used as a key or a cut is refused: keys and cut decisions are shown as
// they are.
func (sf *syncFlags) campaignBlind(e *env, tabs [2]events.Source, opt *events.Options) error {
	if sf.campaign == "" {
		if sf.identity != "" {
			return usageErr("--identity goes with --campaign")
		}
		return nil
	}
	c, err := openCampaign(sf.campaign)
	if err != nil {
		return err
	}
	vars := c.Protocol.BlindedVars()
	if len(vars) == 0 {
		e.warnf("%s names no blinded event-level variables ([events] blinded): nothing is blinded", c.Path(protocol.File))
		return nil
	}
	var cols [2][]events.ColumnInfo
	for i, t := range tabs {
		if cols[i], err = t.Columns(); err != nil {
			return inputErr(err)
		}
	}
	l := opt.Layout
	l, err = events.ResolveLayout(cols[0], cols[1], tabs[0].Name(), tabs[1].Name(), l.Keys, l.Vars, l.Cuts)
	if err != nil {
		return withHint(inputErr(err), "tandem sync -h lists the flags")
	}
	var use []string
	for _, v := range vars {
		if slices.Contains(l.Keys, v.Name) || slices.Contains(l.Cuts, v.Name) {
			return usageErr("%s names %q blinded, which is a key or cut column here: sync shows keys and cut decisions as they are", c.Path(protocol.File), v.Name)
		}
		if slices.Contains(l.Vars, v.Name) || (opt.Binning != nil && opt.Binning.Var == v.Name) {
			use = append(use, v.Name)
		}
	}
	if len(use) == 0 {
		return nil
	}
	ids, _, err := readCustodianIdentity(e, sf.identity, c.Protocol.Custodian)
	if err != nil {
		return err
	}
	maps, err := c.EventMaps(ids)
	if err != nil {
		return campaignErr(err)
	}
	opt.Blind = map[string]events.Affine{}
	for _, n := range use {
		opt.Blind[n] = maps[n]
	}
	e.infof("blinded with the map of campaign %s: %s", c.Protocol.Campaign, strings.Join(use, ", "))
	return nil
}

// syncFormat settles the report format: an -o extension chooses it, and
// an explicit --format must not contradict it. "-o -" is the standard
// output.
func syncFormat(fs *flag.FlagSet, format, output string) (string, string, error) {
	given := false
	fs.Visit(func(f *flag.Flag) { given = given || f.Name == "format" })
	if output == "-" {
		output = ""
	}
	if given && !slices.Contains(report.SyncFormats, format) {
		return "", "", usageErr("--format %q is not one of %s", format, strings.Join(report.SyncFormats, ", "))
	}
	if output == "" {
		return format, output, nil
	}
	ext, ok := formatFromPath(output)
	switch {
	case !ok && !given:
		return "", "", withHint(usageErr("cannot tell the format of %s from its extension", output),
			"use .txt, .json, .md, .xml or .html, or give --format")
	case ok && given && ext != format:
		return "", "", withHint(usageErr("--format %s contradicts -o %s, whose extension means %s", format, output, ext),
			fmt.Sprintf("drop --format, or name the file for %s output", format))
	case ok:
		format = ext
	}
	return format, output, nil
}

// progressLine shows a long synchronisation's progress on a terminal:
// nothing in the first two seconds, then one line rewritten in place at
// most twice a second, erased at the end.
type progressLine struct {
	w     io.Writer
	start time.Time
	last  time.Time
	shown bool
}

func (p *progressLine) show(pr events.Progress) {
	now := time.Now()
	if now.Sub(p.start) < 2*time.Second || now.Sub(p.last) < 500*time.Millisecond {
		return
	}
	p.last, p.shown = now, true
	msg := fmt.Sprintf("tandem: sync: %.1f M rows read", float64(pr.Rows[0]+pr.Rows[1])/1e6)
	if pr.Unsorted {
		msg += " (tables not sorted by key: partitioning)"
	}
	if pr.Parts > 0 {
		msg = fmt.Sprintf("tandem: sync: %d of %d partitions merged", pr.PartsDone, pr.Parts)
	}
	fmt.Fprintf(p.w, "\r\x1b[K%s, %.0f s", msg, now.Sub(p.start).Seconds())
}

func (p *progressLine) end() {
	if p != nil && p.shown {
		fmt.Fprint(p.w, "\r\x1b[K")
	}
}

// checkOutputs refuses an output that is also an input or another output.
func checkOutputs(inputs, outs []string) error {
	for i, o := range outs {
		if o == "" {
			continue
		}
		for _, p := range inputs {
			if sameFile(strings.SplitN(p, ".root:", 2)[0], o) {
				return usageErr("output %s is also an input", o)
			}
		}
		for _, o2 := range outs[:i] {
			if o2 != "" && sameFile(o, o2) {
				return usageErr("%s is named as two outputs", o)
			}
		}
	}
	return nil
}

func finishSync(e *env, r *events.Result, format, output, overlapOut string) error {
	if overlapOut != "" {
		if r.Binning == nil {
			return usageErr("--overlap-out needs --bin-var and --bin-edges")
		}
		if err := outfile.WriteFrom(overlapOut, 0o644, r.WriteOverlap); err != nil {
			return &exitError{code: 2, err: fmt.Errorf("writing %s: %v", overlapOut, err)}
		}
	}
	st := report.Style{Color: output == "" && format == "text" && colorOK(e.stdout)}
	if output == "" {
		var buf bytes.Buffer
		if err := report.RenderSync(&buf, format, r, st); err != nil {
			return err
		}
		if _, err := e.stdout.Write(buf.Bytes()); err != nil {
			return err
		}
	} else {
		if err := outfile.WriteFrom(output, 0o644, func(w io.Writer) error { return report.RenderSync(w, format, r, st) }); err != nil {
			return &exitError{code: 2, err: fmt.Errorf("writing %s: %v", output, err)}
		}
		e.infof("%s: wrote %s report (%s)", output, format, map[bool]string{true: "pass", false: "fail"}[r.Pass])
	}
	if !r.Pass {
		return silentFail
	}
	return nil
}

func splitList(s string) []string {
	if strings.TrimSpace(s) == "" {
		return nil
	}
	var out []string
	for _, f := range strings.Split(s, ",") {
		out = append(out, strings.TrimSpace(f))
	}
	return out
}

// options checks the flags before any file is read.
func (sf *syncFlags) options() (events.Options, error) {
	var o events.Options
	keys := splitList(sf.keys)
	if len(keys) == 0 {
		return o, withHint(usageErr("sync needs --key"), "name the columns that identify an event, e.g. --key run,event")
	}
	o.Layout = events.Layout{Keys: keys, Vars: sf.vars, Cuts: splitList(sf.cuts)}
	for _, list := range [][]string{keys, o.Layout.Cuts} {
		for _, n := range list {
			if n == "" {
				return o, usageErr("empty column name in --key or --cuts")
			}
		}
	}
	o.Tols = map[string]events.Tolerance{}
	for _, t := range sf.tols {
		name, spec, ok := strings.Cut(t, "=")
		if !ok || name == "" {
			return o, usageErr("--tol wants NAME=ABS[,REL], got %q", t)
		}
		parts := strings.Split(spec, ",")
		if len(parts) > 2 {
			return o, usageErr("--tol wants NAME=ABS[,REL], got %q", t)
		}
		var v [2]float64
		for i, p := range parts {
			f, err := strconv.ParseFloat(strings.TrimSpace(p), 64)
			if err != nil || f < 0 || math.IsNaN(f) || math.IsInf(f, 0) {
				return o, usageErr("--tol %s: %q is not a finite number >= 0", name, p)
			}
			v[i] = f
		}
		if _, dup := o.Tols[name]; dup {
			return o, usageErr("--tol given twice for %s", name)
		}
		o.Tols[name] = events.Tolerance{Abs: v[0], Rel: v[1]}
	}
	if !(sf.alpha > 0 && sf.alpha < 1) {
		return o, usageErr("--alpha must lie in (0, 1), got %v", sf.alpha)
	}
	if !(sf.cl > 0 && sf.cl < 1) {
		return o, usageErr("--cl must lie in (0, 1), got %v", sf.cl)
	}
	o.Alpha, o.CL = sf.alpha, sf.cl
	if (sf.binVar == "") != (sf.edges == "") {
		return o, usageErr("--bin-var and --bin-edges go together")
	}
	if sf.overlapOut != "" && sf.binVar == "" {
		return o, usageErr("--overlap-out needs --bin-var and --bin-edges")
	}
	if sf.binVar != "" {
		var edges []float64
		for _, p := range splitList(sf.edges) {
			f, err := strconv.ParseFloat(p, 64)
			if err != nil || math.IsNaN(f) || math.IsInf(f, 0) {
				return o, usageErr("--bin-edges: %q is not a finite number", p)
			}
			edges = append(edges, f)
		}
		if len(edges) < 2 {
			return o, usageErr("--bin-edges needs at least two edges")
		}
		for i := 1; i < len(edges); i++ {
			if !(edges[i] > edges[i-1]) {
				return o, usageErr("--bin-edges must increase (%v after %v)", edges[i], edges[i-1])
			}
		}
		o.Binning = &events.Binning{Var: sf.binVar, Edges: edges}
	}
	if sf.memMB < 1 {
		return o, usageErr("--mem must be at least 1")
	}
	o.MemBudget = int64(sf.memMB) << 20
	o.TempDir, o.LabelA, o.LabelB = sf.tempDir, sf.labelA, sf.labelB
	return o, nil
}

func runSyncMerge(e *env, args []string) error {
	fs := newFlags(e, "sync merge", syncHelp)
	var format, output, overlapOut string
	fs.StringVar(&format, "format", "text", "output `FORMAT`: text, json, markdown, junit or html (default: from the -o extension, else text)")
	stringVar(fs, &output, []string{"o", "output"}, "", "write the report to `FILE` (atomically) instead of stdout; its extension chooses the format")
	fs.StringVar(&overlapOut, "overlap-out", "", "write the merged per-bin overlap to `FILE`")
	var summaryOut string
	fs.StringVar(&summaryOut, "summary-out", "", "write the merged summary to `FILE`")
	pos, err := parse(fs, args)
	if err != nil {
		return err
	}
	if format, output, err = syncFormat(fs, format, output); err != nil {
		return err
	}
	if len(pos) == 0 {
		return withHint(usageErr("sync merge wants one or more summary files"), "write them with tandem sync … --summary-out FILE")
	}
	if err := checkOutputs(pos, []string{output, overlapOut, summaryOut}); err != nil {
		return err
	}
	var parts []*events.Summary
	for _, p := range pos {
		data, err := os.ReadFile(p)
		if err != nil {
			return inputErr(table.Errorf(p, 0, 0, "%v", errors.Unwrap(err)))
		}
		s, err := events.ReadSummary(p, data)
		if err != nil {
			return inputErr(err)
		}
		parts = append(parts, s)
	}
	s, warns, err := events.Merge(parts, pos)
	var dup *events.DuplicateError
	if errors.As(err, &dup) {
		return withHint(inputErr(err), "name each partition's summary once (a glob that matched a file twice, or a copy of it?)")
	}
	if err != nil {
		return inputErr(err)
	}
	for _, w := range warns {
		e.warnf("%s", w)
	}
	if summaryOut != "" {
		if err := outfile.WriteFrom(summaryOut, 0o644, func(w io.Writer) error { return events.WriteSummary(w, s) }); err != nil {
			return &exitError{code: 2, err: fmt.Errorf("writing %s: %v", summaryOut, err)}
		}
	}
	return finishSync(e, events.Evaluate(s), format, output, overlapOut)
}

// treeFuncs reads ROOT trees for sync (compare/rootfile).
var treeFuncs events.TreeFuncs
