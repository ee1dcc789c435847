// Package protocol reads and checks a campaign's protocol, campaign.toml:
// who takes part and with which keys, what is compared, how each column is
// blinded and what counts as agreement. Each column's comparison settings
// decode into [compare.Options], the one definition of a comparison's
// options.
package protocol

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"maps"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"unicode/utf8"

	"filippo.io/age"
	"filippo.io/age/agessh"
	"github.com/BurntSushi/toml"
	"golang.org/x/crypto/ssh"

	"tandem/blind"
	"tandem/blind/internal/format"
	"tandem/compare"
	"tandem/compare/table"
)

// File is the protocol's name inside a campaign folder.
const File = "campaign.toml"

// EdgeTolerance is the relative tolerance on bin edges between two teams'
// tables (see [table.SameEdges]).
const EdgeTolerance = compare.DefaultEdgeTol

// Roles of parties.
const (
	RoleTeam      = "team"
	RoleReviewer  = "reviewer"
	RoleCustodian = "custodian"
)

// Protocol is a parsed campaign.toml.
type Protocol struct {
	Format      string `toml:"format"`
	Campaign    string `toml:"campaign"`
	Description string `toml:"description"`
	// Custodian is the age recipient (age1…) or SSH public key the sealed
	// tables and the key are encrypted to.
	Custodian string `toml:"custodian"`
	// CustodianKey is the SSH public key that signs the custodian's ledger
	// entries (init, blind, open, unblind).
	CustodianKey string       `toml:"custodian_key"`
	Alpha        *float64     `toml:"alpha"`
	Quorum       []string     `toml:"quorum"`
	Parties      []Party      `toml:"party"`
	Observables  []Observable `toml:"observable"`
	// Events holds the event-level sync settings (see events.go).
	Events *Events `toml:"events"`

	custodianPub ssh.PublicKey
	raw          []byte // the parsed bytes, for Canonical
}

// Party is a team or a reviewer with the SSH public key it signs with.
type Party struct {
	Name string `toml:"name"`
	Role string `toml:"role"` // "team" or "reviewer"
	Key  string `toml:"key"`
	pub  ssh.PublicKey
}

// PublicKey returns the parsed SSH key of the party.
func (p *Party) PublicKey() ssh.PublicKey { return p.pub }

// Observable is one binned result every team produces.
type Observable struct {
	Name   string   `toml:"name"`
	Title  string   `toml:"title"`
	XLabel string   `toml:"x_label"`
	YLabel string   `toml:"y_label"`
	Edges  []string `toml:"edges"`
	// Object names a histogram or graph inside a ROOT file, for teams that
	// seal ROOT output.
	Object  string   `toml:"object"`
	Columns []Column `toml:"column"`
	// Extra lists the per-bin columns the comparison settings name
	// (correlation columns, event counts of an overlap), which the tables
	// carry unblinded after the declared columns.
	Extra []string `toml:"-"`
}

func dedupe(s []string) []string {
	var out []string
	for _, x := range s {
		if !slices.Contains(out, x) {
			out = append(out, x)
		}
	}
	return out
}

// Column is a blinded, compared value column of an observable.
type Column struct {
	Name   string   `toml:"name"`
	Errors []string `toml:"errors"`
	// Scale and Shift are the ranges [lo, hi] every bin's blinding factor
	// s_i and offset o_i are drawn from. Both are required.
	Scale []float64 `toml:"scale"`
	Shift []float64 `toml:"shift"`
	// AcceptRisk, when set, lets blind publish a map that one of the
	// standard attacks breaks; the reason is shown in every report.
	AcceptRisk string `toml:"accept_risk"`
	// Covariance says that each team's table carries the column's
	// covariance matrix as the columns NAME.cov.1 … NAME.cov.n (row i of
	// the table holds V_i1 … V_in). Blinding scales V_ij by s_i·s_j, and
	// the comparison computes χ² = dᵀ W⁻¹ d with W = V_a + V_b − C − Cᵀ.
	Covariance bool `toml:"covariance"`
	// Options are the comparison settings, decoded from the same TOML
	// table with the keys [compare.Options] names (max_pull, abs_tol,
	// rel_tol, edge_tol, subset, correlation, correlations, overlap); the
	// family-wise alpha is campaign-wide and set at the top level.
	compare.Options
}

// CovColumn is the name of column j (0-based) of a column's covariance
// matrix in a table: NAME.cov.J+1.
func CovColumn(name string, j int) string { return fmt.Sprintf("%s.cov.%d", name, j+1) }

// CompareOptions returns the comparison options the column declares,
// with the campaign's family-wise alpha.
func (c *Column) CompareOptions(alpha float64) compare.Options {
	o := c.Options
	o.Alpha = alpha
	if o.EdgeTol == 0 {
		o.EdgeTol = EdgeTolerance
	}
	return o
}

// Selection returns the table columns this column compares.
func (c *Column) Selection() table.Selection {
	return table.Selection{Value: c.Name, Errors: c.Errors}
}

// ScaleRange and ShiftRange return the declared ranges.
func (c *Column) ScaleRange() blind.Range { return blind.Range{Lo: c.Scale[0], Hi: c.Scale[1]} }
func (c *Column) ShiftRange() blind.Range { return blind.Range{Lo: c.Shift[0], Hi: c.Shift[1]} }

// MapSpec returns the column's map in a scope (see [blind.CommonScope]).
func (c *Column) MapSpec(observable, scope string) blind.MapSpec {
	return blind.MapSpec{Observable: observable, Column: c.Name, Scope: scope, Scale: c.ScaleRange(), Shift: c.ShiftRange()}
}

// Teams lists the parties with role "team", in declared order.
func (p *Protocol) Teams() []string {
	var out []string
	for _, q := range p.Parties {
		if q.Role == RoleTeam {
			out = append(out, q.Name)
		}
	}
	return out
}

// Party returns the named party, or nil.
func (p *Protocol) Party(name string) *Party {
	for i := range p.Parties {
		if p.Parties[i].Name == name {
			return &p.Parties[i]
		}
	}
	return nil
}

// Observable returns the named observable, or nil.
func (p *Protocol) Observable(name string) *Observable {
	for i := range p.Observables {
		if p.Observables[i].Name == name {
			return &p.Observables[i]
		}
	}
	return nil
}

// ObservableNames lists the observables in declared order.
func (p *Protocol) ObservableNames() []string {
	out := make([]string, len(p.Observables))
	for i, o := range p.Observables {
		out[i] = o.Name
	}
	return out
}

// FamilyAlpha is the campaign's family-wise false-alarm rate (default 0.01).
func (p *Protocol) FamilyAlpha() float64 {
	if p.Alpha != nil {
		return *p.Alpha
	}
	return 0.01
}

// Recipient parses the custodian's age recipient.
func (p *Protocol) Recipient() (age.Recipient, error) { return ParseRecipient(p.Custodian) }

// CustodianPublicKey is the SSH key that signs the custodian's steps.
func (p *Protocol) CustodianPublicKey() ssh.PublicKey { return p.custodianPub }

// SignerKey returns the key that must sign a ledger entry by actor: a
// party's key, or the custodian's for "custodian". Nil for anyone else.
func (p *Protocol) SignerKey(actor string) ssh.PublicKey {
	if actor == RoleCustodian {
		return p.custodianPub
	}
	if q := p.Party(actor); q != nil {
		return q.pub
	}
	return nil
}

// ParseRecipient parses an age X25519 recipient or an SSH public key.
func ParseRecipient(s string) (age.Recipient, error) {
	s = strings.TrimSpace(s)
	if strings.HasPrefix(s, "age1") {
		return age.ParseX25519Recipient(s)
	}
	if strings.HasPrefix(s, "ssh-") {
		return agessh.ParseRecipient(s)
	}
	return nil, fmt.Errorf("custodian %q is neither an age recipient (age1...) nor an SSH public key", s)
}

// Digest is the hex SHA-256 of the protocol's bytes, as init logs it.
func Digest(data []byte) string {
	h := sha256.Sum256(data)
	return hex.EncodeToString(h[:])
}

// ValidName reports whether s is a valid campaign, party, observable or
// column name: 1–64 ASCII letters, digits, '.', '_' or '-', starting with a
// letter or digit (the regular expression ^[A-Za-z0-9][A-Za-z0-9_.-]{0,63}$,
// which TestValidName holds it to). It is the name rule of the campaign
// format's common grammar.
func ValidName(s string) bool { return format.ValidName(s) }

// nameAnchor is the line "name = "NAME"" a validation error points at.
func nameAnchor(name string) string { return "name = " + strconv.Quote(name) }

// Parse reads campaign.toml strictly: unknown keys, wrong types and
// impossible settings are errors that name the file and line. A tandem/v1
// protocol is refused with a message saying so.
func Parse(path string, data []byte) (*Protocol, error) {
	var p Protocol
	md, err := toml.NewDecoder(bytes.NewReader(data)).Decode(&p)
	if err != nil {
		var pe toml.ParseError
		if errors.As(err, &pe) {
			return nil, table.Errorf(path, pe.Position.Line, pe.Position.Col, "%s", pe.Message)
		}
		return nil, table.Errorf(path, 0, 0, "%v", err)
	}
	if p.Format != "tandem/v1" { // check words that refusal
		if und := md.Undecoded(); len(und) > 0 {
			k := und[0]
			return nil, table.Errorf(path, keyLine(data, k[len(k)-1]), 0, "unknown key %q", k.String())
		}
	}
	p.raw = bytes.Clone(data)
	return p.check(path, data)
}

// check refuses a tandem/v1 protocol and validates a decoded one.
func (p *Protocol) check(path string, data []byte) (*Protocol, error) {
	if p.Format == "tandem/v1" {
		return nil, table.Errorf(path, keyLine(data, "format"), 0, "a tandem/v1 protocol: this version of tandem reads %s campaigns only; start a new campaign with \"tandem init\"", blind.Version)
	}
	if err := p.validate(); err != nil {
		line, col := errPos(data, err)
		return nil, table.Errorf(path, line, col, "%v", err)
	}
	return p, nil
}

// keyLine finds the first line that assigns key.
func keyLine(data []byte, key string) int {
	re := regexp.MustCompile(`^\s*"?` + regexp.QuoteMeta(key) + `"?\s*=`)
	for i, line := range strings.Split(string(data), "\n") {
		if re.MatchString(line) {
			return i + 1
		}
	}
	return 0
}

// fieldError is a validation error about a named thing, so the message can
// point at the line, and where it can the column, that names it.
type fieldError struct {
	// anchors are found in order, each on a line at or after the previous
	// one: "name = "spectrum"" then "name = "rate"" finds a column of an
	// observable. Spaces are ignored and 'literal' quotes count as "basic".
	anchors []string
	// key, when set, is a key assigned in the TOML table (block) that holds
	// the last anchor, and token a string value of it, found for the nth
	// time (1-based) from the key on.
	key   string
	token string
	nth   int
	msg   string
}

func (e *fieldError) Error() string { return e.msg }

// errPos finds the 1-based line and column an error points at (0 when
// unknown).
func errPos(data []byte, err error) (line, col int) {
	var fe *fieldError
	if !errors.As(err, &fe) || len(fe.anchors) == 0 {
		return 0, 0
	}
	lines := strings.Split(string(data), "\n")
	norm := func(s string) string { return strings.ReplaceAll(strings.ReplaceAll(s, " ", ""), "'", `"`) }
	at := -1
	for _, a := range fe.anchors {
		want := norm(a)
		for i := at + 1; i < len(lines); i++ {
			if strings.Contains(norm(lines[i]), want) {
				at = i
				break
			}
		}
	}
	if at < 0 {
		return 0, 0
	}
	line = at + 1
	if fe.key == "" {
		return line, 0
	}
	// The block of the anchor: from the table header before it to the
	// next header.
	header := func(s string) bool { return strings.HasPrefix(strings.TrimSpace(s), "[") }
	start, end := at, at+1
	for start > 0 && !header(lines[start]) {
		start--
	}
	for end < len(lines) && !header(lines[end]) {
		end++
	}
	re := regexp.MustCompile(`^\s*["']?` + regexp.QuoteMeta(fe.key) + `["']?\s*=`)
	for i := start; i < end; i++ {
		if !re.MatchString(lines[i]) {
			continue
		}
		line, col = i+1, strings.Index(lines[i], strings.TrimSpace(lines[i]))+1
		if fe.token == "" {
			return line, col
		}
		seen := 0
		for j := i; j < end; j++ {
			for _, q := range []string{strconv.Quote(fe.token), "'" + fe.token + "'"} {
				rest, off := lines[j], 0
				for {
					k := strings.Index(rest, q)
					if k < 0 {
						break
					}
					if seen++; seen == max(fe.nth, 1) {
						return j + 1, utf8.RuneCountInString(lines[j][:off+k]) + 1
					}
					rest, off = rest[k+len(q):], off+k+len(q)
				}
			}
		}
		return line, col
	}
	return line, 0
}

func ferr(anchor, format string, args ...any) error {
	return &fieldError{anchors: []string{anchor}, msg: fmt.Sprintf(format, args...)}
}

// colErr is an error about a value of key in a column's block.
func colErr(o *Observable, c *Column, key, token string, nth int, format string, args ...any) error {
	return &fieldError{anchors: []string{nameAnchor(o.Name), nameAnchor(c.Name)}, key: key, token: token, nth: nth, msg: fmt.Sprintf(format, args...)}
}

func parseSSHKey(s string) (ssh.PublicKey, error) {
	pub, _, _, _, err := ssh.ParseAuthorizedKey([]byte(s))
	return pub, err
}

func (p *Protocol) validate() error {
	if p.Format != blind.Version {
		return ferr("format", "format must be %q, got %q", blind.Version, p.Format)
	}
	if !ValidName(p.Campaign) {
		return ferr("campaign", "campaign id %q must be 1-64 letters, digits, '.', '_' or '-'", p.Campaign)
	}
	if err := CleanText(p.Description); err != nil {
		return ferr("description", "description: %v", err)
	}
	if _, err := p.Recipient(); err != nil {
		return ferr("custodian", "%v", err)
	}
	if p.Alpha != nil && !(*p.Alpha > 0 && *p.Alpha < 1) {
		return ferr("alpha", "alpha must be in (0, 1), got %v", *p.Alpha)
	}
	seenName := map[string]bool{RoleCustodian: true}
	seenKey := map[string]string{}
	teams := 0
	for i := range p.Parties {
		q := &p.Parties[i]
		anchor := nameAnchor(q.Name)
		if !ValidName(q.Name) {
			return ferr(anchor, "party name %q must be 1-64 letters, digits, '.', '_' or '-'", q.Name)
		}
		if seenName[q.Name] {
			if q.Name == RoleCustodian {
				return ferr(anchor, "party name %q is reserved for the custodian", q.Name)
			}
			return ferr(anchor, "party %q is declared twice", q.Name)
		}
		seenName[q.Name] = true
		switch q.Role {
		case RoleTeam:
			teams++
		case RoleReviewer:
		default:
			return ferr(anchor, "party %q: role must be \"team\" or \"reviewer\", got %q", q.Name, q.Role)
		}
		pub, err := parseSSHKey(q.Key)
		if err != nil {
			return ferr(anchor, "party %q: key is not an SSH public key: %v", q.Name, err)
		}
		q.pub = pub
		fp := ssh.FingerprintSHA256(pub)
		if other, dup := seenKey[fp]; dup {
			return ferr(anchor, "parties %q and %q have the same key", other, q.Name)
		}
		seenKey[fp] = q.Name
	}
	pub, err := parseSSHKey(p.CustodianKey)
	if err != nil {
		return ferr("custodian_key", "custodian_key is not an SSH public key (it signs the custodian's steps): %v", err)
	}
	p.custodianPub = pub
	if other, dup := seenKey[ssh.FingerprintSHA256(pub)]; dup {
		return ferr("custodian_key", "the custodian and %q have the same key", other)
	}
	if teams < 2 {
		return ferr("[[party]]", "a campaign needs at least two parties with role \"team\", found %d", teams)
	}
	if len(p.Quorum) == 0 {
		return ferr("quorum", "quorum is empty: name the parties whose sign-off unblinding needs")
	}
	seenQ := map[string]bool{}
	for _, n := range p.Quorum {
		if !seenName[n] || n == RoleCustodian {
			return ferr("quorum", "quorum names %q, which is not a declared party", n)
		}
		if seenQ[n] {
			return ferr("quorum", "quorum names %q twice", n)
		}
		seenQ[n] = true
	}
	for _, t := range p.Teams() {
		if !seenQ[t] {
			return ferr("quorum", "quorum must include every team; %q is missing", t)
		}
	}
	if len(p.Observables) == 0 {
		return ferr("[[observable]]", "no observables declared")
	}
	seenObs := map[string]bool{}
	for i := range p.Observables {
		if err := p.Observables[i].validate(seenObs, p.FamilyAlpha()); err != nil {
			return err
		}
	}
	return p.Events.validate()
}

func (o *Observable) validate(seen map[string]bool, alpha float64) error {
	anchor := nameAnchor(o.Name)
	if !ValidName(o.Name) {
		return ferr(anchor, "observable name %q must be 1-64 letters, digits, '.', '_' or '-'", o.Name)
	}
	if seen[o.Name] {
		return ferr(anchor, "observable %q is declared twice", o.Name)
	}
	seen[o.Name] = true
	for _, s := range []string{o.Title, o.XLabel, o.YLabel} {
		if err := CleanText(s); err != nil {
			return ferr(anchor, "observable %q: %v", o.Name, err)
		}
	}
	if len(o.Edges) == 0 {
		o.Edges = []string{table.DefaultLo, table.DefaultHi}
	}
	if len(o.Edges) != 2 || o.Edges[0] == o.Edges[1] || !ValidName(o.Edges[0]) || !ValidName(o.Edges[1]) {
		return &fieldError{anchors: []string{anchor}, key: "edges", msg: fmt.Sprintf("observable %q: edges must name two different columns", o.Name)}
	}
	if len(o.Columns) == 0 {
		return ferr(anchor, "observable %q declares no columns", o.Name)
	}
	// Every name a table of this observable holds must be unique, or no
	// table could carry the observable: the edges, each value column, the
	// value's uncertainty columns, the covariance columns C.cov.j and the
	// per-bin correlation columns.
	isEdge := func(n string) bool { return n == o.Edges[0] || n == o.Edges[1] }
	value := map[string]bool{}
	for j := range o.Columns {
		c := &o.Columns[j]
		where := "observable " + strconv.Quote(o.Name) + " column " + strconv.Quote(c.Name)
		switch {
		case !ValidName(c.Name):
			return colErr(o, c, "name", c.Name, 1, "%s: a column name must be 1-64 letters, digits, '.', '_' or '-'", where)
		case isEdge(c.Name):
			return colErr(o, c, "name", c.Name, 1, "%s: the name is a bin edge of the observable", where)
		case value[c.Name]: // point at the second declaration
			return &fieldError{anchors: []string{nameAnchor(o.Name), nameAnchor(c.Name), nameAnchor(c.Name)}, key: "name", token: c.Name, nth: 1, msg: where + " is declared twice"}
		}
		value[c.Name] = true
	}
	errOf := map[string]string{} // uncertainty column → the value column it belongs to
	for j := range o.Columns {
		c := &o.Columns[j]
		where := "observable " + strconv.Quote(o.Name) + " column " + strconv.Quote(c.Name)
		for k, e := range c.Errors {
			switch {
			case !ValidName(e):
				return colErr(o, c, "errors", e, 1, "%s: error column %q must be 1-64 letters, digits, '.', '_' or '-'", where, e)
			case isEdge(e):
				return colErr(o, c, "errors", e, 1, "%s: error column %q is a bin edge", where, e)
			case e == c.Name:
				return colErr(o, c, "errors", e, 1, "%s: error column %q is the value column itself", where, e)
			case value[e]:
				return colErr(o, c, "errors", e, 1, "%s: error column %q is the value column of column %q; a table holds one column of each name", where, e, e)
			case slices.Contains(c.Errors[:k], e):
				return colErr(o, c, "errors", e, 2, "%s: error column %q is listed twice; a table holds one column of each name", where, e)
			case errOf[e] != "":
				return colErr(o, c, "errors", e, 1, "%s: error column %q is also an error column of column %q; give each column its own uncertainty columns (a table holds one column of each name)", where, e, errOf[e])
			}
			errOf[e] = c.Name
		}
	}
	// Names C.cov.j are the covariance matrix of a column C that declares
	// covariance = true.
	covOwner := func(n string) string {
		for _, c := range o.Columns {
			if c.Covariance && strings.HasPrefix(n, c.Name+".cov.") {
				return c.Name
			}
		}
		return ""
	}
	for j := range o.Columns {
		c := &o.Columns[j]
		where := "observable " + strconv.Quote(o.Name) + " column " + strconv.Quote(c.Name)
		if cv := covOwner(c.Name); cv != "" {
			return colErr(o, c, "name", c.Name, 1, "%s: names %s.cov.N hold the covariance matrix of column %q", where, cv, cv)
		}
		for _, e := range c.Errors {
			if cv := covOwner(e); cv != "" {
				return colErr(o, c, "errors", e, 1, "%s: error column %q: names %s.cov.N hold the covariance matrix of column %q", where, e, cv, cv)
			}
		}
	}
	var extra []string
	defer func() { o.Extra = dedupe(extra) }()
	for j := range o.Columns {
		c := &o.Columns[j]
		where := "observable " + strconv.Quote(o.Name) + " column " + strconv.Quote(c.Name)
		if len(c.Scale) != 2 {
			return colErr(o, c, "scale", "", 0, "%s: scale must be a range [lo, hi] (an undeclared or single-number range makes no map)", where)
		}
		if len(c.Shift) != 2 {
			return colErr(o, c, "shift", "", 0, "%s: shift must be a range [lo, hi] comparable to the values (an undeclared range makes no map)", where)
		}
		if err := blind.CheckScale(c.ScaleRange()); err != nil {
			return colErr(o, c, "scale", "", 0, "%s: scale %v", where, err)
		}
		if err := blind.CheckShift(c.ShiftRange()); err != nil {
			return colErr(o, c, "shift", "", 0, "%s: shift %v", where, err)
		}
		if err := CleanText(c.AcceptRisk); err != nil {
			return colErr(o, c, "accept_risk", "", 0, "%s: accept_risk: %v", where, err)
		}
		if c.Options.Alpha != 0 {
			return colErr(o, c, "alpha", "", 0, "%s: alpha is the campaign's family-wise rate; set it once at the top of the protocol", where)
		}
		opt := c.CompareOptions(alpha)
		if err := opt.Validate(); err != nil {
			return colErr(o, c, "", "", 0, "%s: %v", where, err)
		}
		if c.Covariance && (len(c.Correlations) > 0 || c.Subset || c.Default.Column != "") {
			return colErr(o, c, "covariance", "", 0, "%s: with covariance matrices give the correlation between the chains as one number (correlation = ρ), not per source, per bin or by the subset rule", where)
		}
		// In key order: the per-bin columns follow the declared ones in
		// this order in every canonical table.
		for _, k := range slices.Sorted(maps.Keys(c.Correlations)) {
			rho := c.Correlations[k]
			if !slices.Contains(c.Errors, k) && !slices.Contains(c.Errors, c.Name+"_"+k) {
				return colErr(o, c, "correlations", "", 0, "%s: correlations names %q, which is not one of its error columns", where, k)
			}
			if rho.Column != "" {
				if err := o.checkRhoColumn(c, "correlations", rho.Column, isEdge, value, covOwner); err != nil {
					return err
				}
				if !slices.Contains(c.Errors, rho.Column) {
					extra = append(extra, rho.Column)
				}
			}
		}
		if c.Default.Column != "" {
			if err := o.checkRhoColumn(c, "correlation", c.Default.Column, isEdge, value, covOwner); err != nil {
				return err
			}
			extra = append(extra, c.Default.Column)
		}
		if c.Counts && c.SumW2 != "" {
			return colErr(o, c, "sumw2", "", 0, "%s: weighted counts (sumw2) are not compared in a campaign: the test of weighted histograms needs the true sums of weights; compare them as plain counts or in table mode after unblinding", where)
		}
		if c.Counts && (len(c.Errors) != 0 || c.Covariance) {
			return colErr(o, c, "errors", "", 0, "%s: a counts column in a campaign names no error column: σ = √N, blinded to s·√N beside s·N + o, gives the map away (s = (σ′_A² − σ′_B²)/(v′_A − v′_B) in the common map); the exact tests need only the counts, and run on the true ones at the opening", where)
		}
		if c.Overlap.Enabled() {
			return colErr(o, c, "overlap", "", 0, "%s: overlap is not available in a campaign: the per-bin event counts would publish the true counts; declare the correlation per source (a number or a per-bin column) instead", where)
		}
	}
	return nil
}

// checkRhoColumn refuses a per-bin correlation column that a table could
// not hold beside the others, or that blinding would change: an edge, a
// value column or a covariance column.
func (o *Observable) checkRhoColumn(c *Column, key, name string, isEdge func(string) bool, value map[string]bool, covOwner func(string) string) error {
	where := "observable " + strconv.Quote(o.Name) + " column " + strconv.Quote(c.Name)
	switch {
	case !ValidName(name):
		return colErr(o, c, key, name, 1, "%s: correlation column %q must be 1-64 letters, digits, '.', '_' or '-'", where, name)
	case isEdge(name):
		return colErr(o, c, key, name, 1, "%s: correlation column %q is a bin edge", where, name)
	case value[name]:
		return colErr(o, c, key, name, 1, "%s: correlation column %q is a blinded value column; per-bin correlations need a column of their own", where, name)
	case covOwner(name) != "":
		return colErr(o, c, key, name, 1, "%s: correlation column %q is part of the covariance matrix of column %q", where, name, covOwner(name))
	}
	return nil
}

// Column returns the named column of an observable, or nil.
func (o *Observable) Column(name string) *Column {
	i := slices.IndexFunc(o.Columns, func(c Column) bool { return c.Name == name })
	if i < 0 {
		return nil
	}
	return &o.Columns[i]
}

// DisplayTitle is the title, or the name when no title is declared.
func (o *Observable) DisplayTitle() string {
	if o.Title != "" {
		return o.Title
	}
	return o.Name
}

// FromObject names the columns of a table read from a ROOT histogram or
// graph (columns value and errName) after the observable's declaration,
// which must then have one column with one uncertainty.
func (o *Observable) FromObject(t *table.Table, value, errName string) (*table.Table, error) {
	if len(o.Columns) != 1 || len(o.Columns[0].Errors) != 1 {
		return nil, table.Errorf(t.Source, 0, 0, "observable %q declares %d columns; a ROOT object fills one value column with one uncertainty", o.Name, len(o.Columns))
	}
	c := o.Columns[0]
	out := *t
	out.LoName, out.HiName = o.Edges[0], o.Edges[1]
	out.Names = nil
	for _, n := range t.Names {
		switch n {
		case value:
			out.Names = append(out.Names, c.Name)
		case errName:
			out.Names = append(out.Names, c.Errors[0])
		default:
			return nil, table.Errorf(t.Source, 0, 0, "the object has asymmetric errors (%s); sealing supports symmetric errors only", n)
		}
	}
	return &out, nil
}

// Compatible reports why an amended protocol cannot replace p: an amendment
// may change observables, tolerances, the quorum and the description, but
// not the campaign id, the custodian or any party's name, role or key,
// because earlier ledger entries are checked against those keys.
func (p *Protocol) Compatible(next *Protocol) error {
	if next.Campaign != p.Campaign {
		return fmt.Errorf("the campaign id cannot change (%q → %q)", p.Campaign, next.Campaign)
	}
	if next.Custodian != p.Custodian || next.CustodianKey != p.CustodianKey {
		return errors.New("the custodian's recipient and signing key cannot change")
	}
	if len(next.Parties) != len(p.Parties) {
		return errors.New("parties cannot be added or removed")
	}
	for i := range p.Parties {
		a, b := p.Parties[i], next.Parties[i]
		if a.Name != b.Name || a.Role != b.Role || a.Key != b.Key {
			return fmt.Errorf("party %q cannot change its name, role or key", a.Name)
		}
	}
	return nil
}
