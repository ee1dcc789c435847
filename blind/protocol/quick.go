package protocol

import (
	"strconv"
	"unicode/utf8"

	"tandem/compare"
)

// quickDecode reads the plain shape most protocols have, about ten times
// faster than the general TOML decoder: every campaign command reads the
// whole protocol, so with hundreds of observables the decoder is most of
// what a seal costs. It reads exactly this subset of TOML, and reports
// false (the caller then uses the general decoder, which also words the
// errors) on anything else:
//
//   - lines ending in LF; blank lines; comments;
//   - the headers [[party]], [[observable]] and [[observable.column]],
//     written without inner spaces;
//   - key = value with a bare key the target table declares, each key at
//     most once per table;
//   - values: basic strings without escapes, decimal integers, decimal
//     floats, true, false, one-line arrays of those, and one-line inline
//     tables of them with bare keys (correlations).
//
// Everything else (escapes, literal or multi-line strings, inline tables,
// dotted or quoted keys, [events], multi-line arrays, unknown keys, a
// value of the wrong type) goes to the general decoder. On the subset the
// result equals the general decoder's (FuzzQuickDecode checks it against
// BurntSushi/toml on every input the quick path accepts).
func quickDecode(data []byte, p *Protocol) bool {
	if !utf8.Valid(data) {
		return false
	}
	q := quick{b: data}
	table := tableTop
	var seen uint32 // keys set in the current table
	var party *Party
	var obs *Observable
	var col *Column
	for q.i < len(q.b) {
		q.space()
		if q.i >= len(q.b) {
			break
		}
		switch c := q.b[q.i]; {
		case c == '\n':
			q.i++
			continue
		case c == '#':
			if !q.end() {
				return false
			}
			continue
		case c == '[':
			switch {
			case q.lit("[[party]]"):
				p.Parties = append(p.Parties, Party{})
				party, table = &p.Parties[len(p.Parties)-1], tableParty
			case q.lit("[[observable]]"):
				p.Observables = append(p.Observables, Observable{})
				obs, table = &p.Observables[len(p.Observables)-1], tableObservable
			case q.lit("[[observable.column]]"):
				if obs == nil {
					return false
				}
				obs.Columns = append(obs.Columns, Column{})
				col, table = &obs.Columns[len(obs.Columns)-1], tableColumn
			default:
				return false
			}
			seen = 0
			if !q.end() {
				return false
			}
			continue
		}
		key := q.key()
		if key == "" {
			return false
		}
		q.space()
		if !q.lit("=") {
			return false
		}
		q.space()
		v, ok := q.value()
		if !ok || !q.end() {
			return false
		}
		bit, ok := keyBits[table][key]
		if !ok || seen&bit != 0 {
			return false
		}
		seen |= bit
		var set bool
		switch table {
		case tableTop:
			set = p.setTop(key, v)
		case tableParty:
			set = party.set(key, v)
		case tableObservable:
			set = obs.set(key, v)
		case tableColumn:
			set = col.set(key, v)
		}
		if !set {
			return false
		}
	}
	return true
}

const (
	tableTop = iota
	tableParty
	tableObservable
	tableColumn
)

// quickKeys are the keys the quick path sets, per table; TestQuickKeys
// checks them against the toml tags of the structs.
var quickKeys = [...][]string{
	tableTop:        {"format", "campaign", "description", "custodian", "custodian_key", "alpha", "quorum"},
	tableParty:      {"name", "role", "key"},
	tableObservable: {"name", "title", "x_label", "y_label", "edges", "object"},
	tableColumn: {"name", "errors", "scale", "shift", "accept_risk", "covariance",
		"alpha", "max_pull", "abs_tol", "rel_tol", "edge_tol", "subset", "correlation", "correlations"},
}

var keyBits = func() (out [len(quickKeys)]map[string]uint32) {
	for t, keys := range quickKeys {
		out[t] = map[string]uint32{}
		for i, k := range keys {
			out[t][k] = 1 << i
		}
	}
	return out
}()

func (p *Protocol) setTop(key string, v any) bool {
	switch key {
	case "format":
		return setString(&p.Format, v)
	case "campaign":
		return setString(&p.Campaign, v)
	case "description":
		return setString(&p.Description, v)
	case "custodian":
		return setString(&p.Custodian, v)
	case "custodian_key":
		return setString(&p.CustodianKey, v)
	case "alpha":
		var a float64
		if !setFloat(&a, v) {
			return false
		}
		p.Alpha = &a
		return true
	case "quorum":
		return setStrings(&p.Quorum, v)
	}
	return false
}

func (q *Party) set(key string, v any) bool {
	switch key {
	case "name":
		return setString(&q.Name, v)
	case "role":
		return setString(&q.Role, v)
	case "key":
		return setString(&q.Key, v)
	}
	return false
}

func (o *Observable) set(key string, v any) bool {
	switch key {
	case "name":
		return setString(&o.Name, v)
	case "title":
		return setString(&o.Title, v)
	case "x_label":
		return setString(&o.XLabel, v)
	case "y_label":
		return setString(&o.YLabel, v)
	case "edges":
		return setStrings(&o.Edges, v)
	case "object":
		return setString(&o.Object, v)
	}
	return false
}

func (c *Column) set(key string, v any) bool {
	switch key {
	case "name":
		return setString(&c.Name, v)
	case "errors":
		return setStrings(&c.Errors, v)
	case "scale":
		return setFloats(&c.Scale, v)
	case "shift":
		return setFloats(&c.Shift, v)
	case "accept_risk":
		return setString(&c.AcceptRisk, v)
	case "covariance":
		return setBool(&c.Covariance, v)
	case "alpha":
		return setFloat(&c.Options.Alpha, v)
	case "max_pull":
		return setFloat(&c.MaxPull, v)
	case "abs_tol":
		return setFloat(&c.AbsTol, v)
	case "rel_tol":
		return setFloat(&c.RelTol, v)
	case "edge_tol":
		return setFloat(&c.EdgeTol, v)
	case "subset":
		return setBool(&c.Subset, v)
	case "correlation":
		return setRho(&c.Default, v)
	case "correlations":
		m, ok := v.(inline)
		if !ok {
			return false
		}
		c.Correlations = make(map[string]compare.Rho, len(m))
		for _, kv := range m {
			var r compare.Rho
			if !setRho(&r, kv.v) {
				return false
			}
			c.Correlations[kv.k] = r
		}
		return true
	}
	return false
}

// setRho hands the unmarshaler of a correlation the value the general
// decoder would.
func setRho(dst *compare.Rho, v any) bool {
	switch v.(type) {
	case string, int64, float64:
		return dst.UnmarshalTOML(v) == nil
	}
	return false
}

// inline is a one-line inline table { k = v, … } with bare keys, each
// once, in written order.
type inline []struct {
	k string
	v any
}

func setString(dst *string, v any) bool {
	s, ok := v.(string)
	*dst = s
	return ok
}

func setBool(dst *bool, v any) bool {
	b, ok := v.(bool)
	*dst = b
	return ok
}

// maxSafeInt is the largest integer the general decoder turns into a
// float64 (2^53).
const maxSafeInt = 1 << 53

func setFloat(dst *float64, v any) bool {
	switch x := v.(type) {
	case float64:
		*dst = x
		return true
	case int64:
		if x < -maxSafeInt || x > maxSafeInt {
			return false
		}
		*dst = float64(x)
		return true
	}
	return false
}

func setStrings(dst *[]string, v any) bool {
	a, ok := v.([]any)
	if !ok {
		return false
	}
	out := make([]string, len(a))
	for i := range a {
		if !setString(&out[i], a[i]) {
			return false
		}
	}
	*dst = out
	return true
}

func setFloats(dst *[]float64, v any) bool {
	a, ok := v.([]any)
	if !ok {
		return false
	}
	out := make([]float64, len(a))
	for i := range a {
		if !setFloat(&out[i], a[i]) {
			return false
		}
	}
	*dst = out
	return true
}

// quick is the cursor of [quickDecode].
type quick struct {
	b []byte
	i int
}

func (q *quick) space() {
	for q.i < len(q.b) && (q.b[q.i] == ' ' || q.b[q.i] == '\t') {
		q.i++
	}
}

func (q *quick) lit(s string) bool {
	if len(q.b)-q.i >= len(s) && string(q.b[q.i:q.i+len(s)]) == s {
		q.i += len(s)
		return true
	}
	return false
}

// end reads optional blanks and a comment up to the end of the line (or
// of the input) and the LF.
func (q *quick) end() bool {
	q.space()
	if q.i < len(q.b) && q.b[q.i] == '#' {
		for q.i++; q.i < len(q.b) && q.b[q.i] != '\n'; {
			c := q.b[q.i]
			if c == '\t' {
				q.i++
				continue
			}
			n, ok := q.plain()
			if !ok {
				return false
			}
			q.i += n
		}
	}
	if q.i == len(q.b) {
		return true
	}
	if q.b[q.i] != '\n' {
		return false
	}
	q.i++
	return true
}

// plain measures one printable character at q.i: ASCII from space to
// '~', or a non-ASCII character outside the C1 controls and not U+FEFF.
func (q *quick) plain() (int, bool) {
	c := q.b[q.i]
	if c < 0x80 {
		return 1, c >= 0x20 && c < 0x7f
	}
	r, n := utf8.DecodeRune(q.b[q.i:])
	return n, r != utf8.RuneError && r >= 0xa0 && r != 0xfeff
}

func (q *quick) key() string {
	j := q.i
	for j < len(q.b) {
		c := q.b[j]
		if !(c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' || c >= '0' && c <= '9' || c == '_' || c == '-') {
			break
		}
		j++
	}
	k := string(q.b[q.i:j])
	q.i = j
	return k
}

func (q *quick) value() (any, bool) {
	if q.i >= len(q.b) {
		return nil, false
	}
	switch c := q.b[q.i]; {
	case c == '"':
		return q.str()
	case c == '{':
		q.i++
		t := inline{}
		q.space()
		if q.lit("}") {
			return t, true
		}
		for {
			q.space()
			k := q.key()
			if k == "" {
				return nil, false
			}
			for _, kv := range t {
				if kv.k == k {
					return nil, false
				}
			}
			q.space()
			if !q.lit("=") {
				return nil, false
			}
			q.space()
			v, ok := q.value()
			if !ok {
				return nil, false
			}
			t = append(t, struct {
				k string
				v any
			}{k, v})
			q.space()
			if q.lit("}") {
				return t, true
			}
			if !q.lit(",") {
				return nil, false
			}
		}
	case c == '[':
		q.i++
		a := []any{}
		for {
			q.space()
			if q.lit("]") {
				return a, true
			}
			v, ok := q.value()
			if !ok {
				return nil, false
			}
			a = append(a, v)
			q.space()
			if q.lit("]") {
				return a, true
			}
			if !q.lit(",") {
				return nil, false
			}
		}
	case q.lit("true"):
		return true, q.boundary()
	case q.lit("false"):
		return false, q.boundary()
	}
	return q.number()
}

// boundary reports whether a bare value ends at q.i.
func (q *quick) boundary() bool {
	if q.i == len(q.b) {
		return true
	}
	switch q.b[q.i] {
	case ' ', '\t', '\n', ',', ']', '}', '#':
		return true
	}
	return false
}

func (q *quick) str() (any, bool) {
	j := q.i + 1
	for j < len(q.b) && q.b[j] != '"' {
		if q.b[j] == '\\' {
			return nil, false
		}
		save := q.i
		q.i = j
		n, ok := q.plain()
		q.i = save
		if !ok {
			return nil, false
		}
		j += n
	}
	if j >= len(q.b) {
		return nil, false
	}
	s := string(q.b[q.i+1 : j])
	q.i = j + 1
	return s, true
}

// number reads [+-]?(0|[1-9][0-9]*)(\.[0-9]+)?([eE][+-]?[0-9]+)?, an
// integer when it has neither fraction nor exponent.
func (q *quick) number() (any, bool) {
	start := q.i
	j := q.i
	digits := func() int {
		k := j
		for j < len(q.b) && q.b[j] >= '0' && q.b[j] <= '9' {
			j++
		}
		return j - k
	}
	if j < len(q.b) && (q.b[j] == '+' || q.b[j] == '-') {
		j++
	}
	intStart := j
	n := digits()
	if n == 0 || (n > 1 && q.b[intStart] == '0') {
		return nil, false
	}
	isFloat := false
	if j < len(q.b) && q.b[j] == '.' {
		j++
		if digits() == 0 {
			return nil, false
		}
		isFloat = true
	}
	if j < len(q.b) && (q.b[j] == 'e' || q.b[j] == 'E') {
		j++
		if j < len(q.b) && (q.b[j] == '+' || q.b[j] == '-') {
			j++
		}
		if digits() == 0 {
			return nil, false
		}
		isFloat = true
	}
	q.i = j
	if !q.boundary() {
		return nil, false
	}
	s := string(q.b[start:j])
	if isFloat {
		f, err := strconv.ParseFloat(s, 64)
		return f, err == nil
	}
	v, err := strconv.ParseInt(s, 10, 64)
	return v, err == nil
}
