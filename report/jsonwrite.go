package report

import (
	"runtime"
	"strconv"
	"unicode/utf8"
)

// jsonWriter writes the document of [JSONValue] by hand, byte for byte as
// encoding/json's Encoder with SetIndent("", "  ") behind a [jsonEscaper]
// writes it (TestJSONWriterMatchesEncoding holds it to that): the
// encoder's reflection, its validation of every number a MarshalJSON
// returns and its second pass to indent cost several times more than the
// writing itself for the per-bin lists.
type jsonWriter struct {
	b []byte
	// p, when set, is the page the document streams through: long lists
	// pass their bytes on to it as they grow, so that the document is
	// never held whole.
	p     *page
	depth int
	// first says that the innermost open object or list has no member
	// yet.
	first bool
}

// indent is a line break and enough indentation for the deepest level of
// the document (per-bin lists lie four levels deep).
const indent = "\n                "

func (j *jsonWriter) newline() {
	if n := 1 + 2*j.depth; n <= len(indent) {
		j.b = append(j.b, indent[:n]...)
		return
	}
	j.b = append(j.b, '\n')
	for range j.depth {
		j.b = append(j.b, "  "...)
	}
}

// open starts an object ('{') or a list ('[').
func (j *jsonWriter) open(c byte) {
	j.b = append(j.b, c)
	j.depth++
	j.first = true
}

// close ends an object ('}') or a list (']'); an empty one stays on its
// line, as "[]".
func (j *jsonWriter) close(c byte) {
	j.depth--
	if !j.first {
		j.newline()
	}
	j.b = append(j.b, c)
	j.first = false
}

// elem starts the next member of a list.
func (j *jsonWriter) elem() {
	if !j.first {
		j.b = append(j.b, ',')
	}
	j.newline()
	j.first = false
}

// key starts the next member of an object; k needs no escaping.
func (j *jsonWriter) key(k string) {
	j.elem()
	j.b = append(j.b, '"')
	j.b = append(j.b, k...)
	j.b = append(j.b, `": `...)
}

func (j *jsonWriter) str(s string) { j.b = appendJSONString(j.b, s) }

func (j *jsonWriter) num(v jnum) { j.b = appendJSONNumber(j.b, float64(v)) }

func (j *jsonWriter) int(n int) { j.b = strconv.AppendInt(j.b, int64(n), 10) }

func (j *jsonWriter) bool(v bool) {
	if v {
		j.b = append(j.b, "true"...)
	} else {
		j.b = append(j.b, "false"...)
	}
}

// list writes xs as a list, each element by elem; null for nil, as
// encoding/json writes a nil slice.
func list[T any](j *jsonWriter, xs []T, elem func(*T)) {
	if xs == nil {
		j.b = append(j.b, "null"...)
		return
	}
	j.open('[')
	for i := range xs {
		j.elem()
		elem(&xs[i])
	}
	j.close(']')
}

// strs writes a list of strings, null for nil.
func (j *jsonWriter) strs(xs []string) { list(j, xs, func(x *string) { j.str(*x) }) }

// ints writes a list of integers, null for nil.
func (j *jsonWriter) ints(xs []int) { list(j, xs, func(x *int) { j.int(*x) }) }

// nums writes a list of numbers from [numList]: a []float64 or [jnums].
func (j *jsonWriter) nums(v any) {
	var xs []float64
	switch v := v.(type) {
	case []float64:
		if v == nil {
			j.b = append(j.b, "null"...)
			return
		}
		xs = v
	case jnums:
		if v == nil {
			j.b = append(j.b, "[]"...) // jnums.MarshalJSON
			return
		}
		xs = v
	}
	if len(xs) == 0 {
		j.b = append(j.b, "[]"...)
		return
	}
	// one number a line, each indented one level deeper than the list
	j.depth++
	j.b = append(j.b, '[')
	if len(xs) >= 2*chunkNums && runtime.GOMAXPROCS(0) > 1 {
		j.numsParallel(xs)
		j.depth--
		j.newline()
		j.b = append(j.b, ']')
		j.first = false
		return
	}
	for i, x := range xs {
		if i > 0 {
			j.b = append(j.b, ',')
			if i&1023 == 0 {
				j.maybeFlush()
			}
		}
		j.newline()
		j.b = appendJSONNumber(j.b, x)
	}
	j.depth--
	j.newline()
	j.b = append(j.b, ']')
	j.first = false
}

// chunkNums is the number of list elements one goroutine formats at a
// time in [jsonWriter.numsParallel]: about 0.8 MB of text.
const chunkNums = 1 << 15

// numsParallel writes the elements of a long list (after its '[', before
// its closing line) as the loop of [jsonWriter.nums] writes them, with
// the numbers formatted on every core: formatting the shortest decimal of
// each number is most of the JSON report's time. Chunks of chunkNums
// elements are formatted ahead, at most GOMAXPROCS+1 at once (each in a
// buffer of its own, reused), and appended in order.
func (j *jsonWriter) numsParallel(xs []float64) {
	n := (len(xs) + chunkNums - 1) / chunkNums
	workers := runtime.GOMAXPROCS(0)
	free := make(chan []byte, workers+1)
	for range workers + 1 {
		free <- make([]byte, 0, chunkNums*(len(indent)+26))
	}
	type chunk struct {
		b    []byte
		done chan struct{}
	}
	chunks := make([]chunk, n)
	for k := range chunks {
		chunks[k].done = make(chan struct{})
	}
	var ind []byte
	{
		save := j.b
		j.b = nil
		j.newline()
		ind, j.b = j.b, save
	}
	go func() {
		for k := range chunks {
			buf := <-free
			go func() {
				lo, hi := k*chunkNums, min((k+1)*chunkNums, len(xs))
				b := buf[:0]
				for i := lo; i < hi; i++ {
					if i > 0 {
						b = append(b, ',')
					}
					b = append(b, ind...)
					b = appendJSONNumber(b, xs[i])
				}
				chunks[k].b = b
				close(chunks[k].done)
			}()
		}
	}()
	for k := range chunks {
		<-chunks[k].done
		j.b = append(j.b, chunks[k].b...)
		free <- chunks[k].b[:0]
		j.maybeFlush()
	}
}

// maybeFlush passes the document written so far on to the page's writer
// once it is large.
func (j *jsonWriter) maybeFlush() {
	if j.p == nil || len(j.b) < flushAt {
		return
	}
	j.p.b = j.b
	j.p.maybeFlush()
	j.b = j.p.b
}

func (j *jsonWriter) summary(s jsonSummary) {
	j.open('{')
	j.key("verdict")
	j.str(s.Verdict)
	if s.Title != "" {
		j.key("title")
		j.str(s.Title)
	}
	if s.Campaign != "" {
		j.key("campaign")
		j.str(s.Campaign)
	}
	if len(s.Notes) > 0 {
		j.key("notes")
		j.strs(s.Notes)
	}
	j.key("accepted_disagreements")
	j.acceptances(s.Accepted)
	if len(s.Teams) > 0 {
		j.key("teams")
		j.teams(s.Teams)
	}
	j.key("observables")
	list(j, s.Observables, j.entry)
	if len(s.Missing) > 0 {
		j.key("missing")
		list(j, s.Missing, func(m *jsonMissing) {
			j.open('{')
			j.key("name")
			j.str(m.Name)
			j.key("verdict")
			j.str(m.Verdict)
			j.key("reason")
			j.str(m.Reason)
			j.close('}')
		})
	}
	if len(s.Stale) > 0 {
		j.key("stale_signoffs")
		j.strs(s.Stale)
	}
	if st := s.Stamp; st != nil {
		j.key("stamp")
		j.open('{')
		j.key("tool")
		j.str(st.Tool)
		j.key("time")
		j.str(st.Time)
		j.key("inputs")
		list(j, st.Inputs, func(in *jsonInput) {
			j.open('{')
			j.key("file")
			j.str(in.File)
			j.key("sha256")
			j.str(in.SHA256)
			j.close('}')
		})
		j.close('}')
	}
	j.close('}')
}

func (j *jsonWriter) acceptances(as []Acceptance) {
	list(j, as, func(a *Acceptance) {
		j.open('{')
		j.key("by")
		j.strs(a.By)
		j.key("reason")
		j.str(a.Reason)
		j.close('}')
	})
}

func (j *jsonWriter) entry(e *jsonEntry) {
	j.open('{')
	j.key("name")
	j.str(e.Name)
	if e.Title != "" {
		j.key("title")
		j.str(e.Title)
	}
	j.key("column")
	j.str(e.Column)
	if len(e.Teams) > 0 {
		j.key("teams")
		j.strs(e.Teams)
	}
	j.key("labels")
	j.strs(e.Labels)
	if len(e.Files) > 0 {
		j.key("files")
		j.strs(e.Files)
	}
	j.key("blinded")
	j.bool(e.Blinded)
	j.key("bins")
	j.int(e.Bins)
	j.key("chi2")
	j.num(e.Chi2)
	j.key("ndf")
	j.int(e.NDF)
	j.key("p_value")
	j.num(e.PValue)
	j.key("pull_mean")
	j.num(e.PullMean)
	j.key("pull_mean_error")
	j.num(e.PullMeanErr)
	j.key("pull_width")
	j.num(e.PullWidth)
	j.key("pull_width_error")
	j.num(e.PullWidthErr)
	j.key("max_abs_pull")
	j.num(e.MaxAbsPull)
	j.key("max_pull_bin")
	if e.MaxPullBin == nil {
		j.b = append(j.b, "null"...)
	} else {
		j.int(*e.MaxPullBin)
	}
	j.key("max_pull_p_value")
	j.num(e.MaxPullP)
	j.key("ks_statistic")
	j.num(e.KSStatistic)
	j.key("ks_p_value")
	j.num(e.KSP)
	j.key("runs")
	j.int(e.Runs)
	j.key("runs_p_value")
	j.num(e.RunsP)
	j.key("verdict")
	j.str(e.Verdict)
	j.key("failures")
	j.strs(e.Failures)
	j.key("criteria")
	list(j, e.Criteria, j.criterion)
	j.key("limits")
	j.open('{')
	j.key("alpha")
	j.num(e.Limits.Alpha)
	if e.Limits.MaxPull != nil {
		j.key("max_pull")
		j.num(*e.Limits.MaxPull)
	}
	j.key("numerical_tolerance")
	j.bool(e.Limits.Numerical)
	j.close('}')
	j.key("family_size")
	j.int(e.Family)
	j.key("sources")
	list(j, e.Sources, func(so *jsonSource) {
		j.open('{')
		j.key("name")
		j.str(so.Name)
		j.key("rho")
		j.num(so.Rho)
		if so.PerBin != "" {
			j.key("per_bin")
			j.str(so.PerBin)
		}
		j.key("declared")
		j.bool(so.Declared)
		j.key("share")
		j.num(so.Share)
		j.close('}')
	})
	if len(e.Incomparable) > 0 {
		j.key("incomparable_bins")
		j.ints(e.Incomparable)
	}
	if e.Condition != 0 {
		j.key("condition_number")
		j.num(e.Condition)
	}
	j.key("accepted_disagreement")
	j.bool(e.AcceptedDisagreement)
	j.key("warnings")
	j.strs(e.Warnings)
	if len(e.ZeroSigmaBins) > 0 {
		j.key("zero_sigma_bins")
		j.ints(e.ZeroSigmaBins)
	}
	j.key("covariance")
	j.bool(e.Covariance)
	j.key("asymmetric_errors")
	j.bool(e.AsymmetricErrs)
	j.key("pulls")
	j.nums(e.Pulls)
	if len(e.Cells) > 0 {
		j.key("cells")
		j.cells(e.Cells)
	}
	j.key("per_bin")
	j.open('{')
	for _, l := range [...]struct {
		k string
		v any
	}{{"lo", e.PerBin.Lo}, {"hi", e.PerBin.Hi}, {"a", e.PerBin.A}, {"error_a", e.PerBin.ErrA}, {"b", e.PerBin.B},
		{"error_b", e.PerBin.ErrB}, {"difference", e.PerBin.Diff}, {"sigma_difference", e.PerBin.SigmaD}} {
		j.key(l.k)
		j.nums(l.v)
	}
	j.close('}')
	j.close('}')
}

func (j *jsonWriter) criterion(c *jsonCriterion) {
	j.open('{')
	j.key("name")
	j.str(c.Name)
	j.key("kind")
	j.str(c.Kind)
	j.key("value")
	j.num(c.Value)
	if c.Adjusted != nil {
		j.key("adjusted_p_value")
		j.num(*c.Adjusted)
	}
	j.key("limit")
	j.num(c.Limit)
	j.key("op")
	j.str(c.Op)
	j.key("pass")
	j.bool(c.Pass)
	if c.Detail != "" {
		j.key("detail")
		j.str(c.Detail)
	}
	if c.Note != "" {
		j.key("note")
		j.str(c.Note)
	}
	if len(c.Bins) > 0 {
		j.key("bins")
		j.ints(c.Bins)
	}
	j.close('}')
}

const hexDigits = "0123456789abcdef"

// appendJSONString appends s as a JSON string the way encoding/json
// writes it with HTML escaping on (", \, the controls below U+0020 with
// \b, \f, \n, \r and \t in short form, <, > and &, U+2028 and U+2029 as
// escapes, and each byte that is not UTF-8 as \ufffd), followed by what
// [jsonEscaper] does: the other characters [unsafeRune] names written as
// \u escapes.
func appendJSONString(b []byte, s string) []byte {
	b = append(b, '"')
	start := 0
	for i := 0; i < len(s); {
		c := s[i]
		if c < utf8.RuneSelf {
			if c >= 0x20 && c != '"' && c != '\\' && c != '<' && c != '>' && c != '&' {
				i++
				continue
			}
			b = append(b, s[start:i]...)
			switch c {
			case '"', '\\':
				b = append(b, '\\', c)
			case '\b':
				b = append(b, '\\', 'b')
			case '\f':
				b = append(b, '\\', 'f')
			case '\n':
				b = append(b, '\\', 'n')
			case '\r':
				b = append(b, '\\', 'r')
			case '\t':
				b = append(b, '\\', 't')
			default:
				b = append(b, '\\', 'u', '0', '0', hexDigits[c>>4], hexDigits[c&0xf])
			}
			i++
			start = i
			continue
		}
		r, n := utf8.DecodeRuneInString(s[i:])
		switch {
		case r == utf8.RuneError && n == 1:
			b = append(b, s[start:i]...)
			b = append(b, `\ufffd`...)
		case unsafeRune(r):
			b = append(b, s[start:i]...)
			b = append(b, '\\', 'u', hexDigits[r>>12&0xf], hexDigits[r>>8&0xf], hexDigits[r>>4&0xf], hexDigits[r&0xf])
		default:
			i += n
			continue
		}
		i += n
		start = i
	}
	b = append(b, s[start:]...)
	return append(b, '"')
}
