package blind

import (
	"bytes"
	"errors"
	"fmt"
	"math"
	"os"
	"regexp"
	"slices"
	"strings"

	"filippo.io/age"
	"filippo.io/age/agessh"
	"github.com/BurntSushi/toml"
	"golang.org/x/crypto/ssh"

	"tandem/compare"
	"tandem/compare/table"
)

// FormatV1 is the version line every tandem artifact carries.
const FormatV1 = "tandem/v1"

// Protocol is a campaign's campaign.toml: who takes part, what is compared,
// how it is blinded and what counts as agreement. SPEC.md describes it.
type Protocol struct {
	Format      string       `toml:"format"`
	Campaign    string       `toml:"campaign"`
	Description string       `toml:"description"`
	Custodian   string       `toml:"custodian"`
	Quorum      []string     `toml:"quorum"`
	Parties     []Party      `toml:"party"`
	Observables []Observable `toml:"observable"`
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

// Observable is one binned result both teams produce.
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
}

// Column is a blinded, compared value column of an observable.
type Column struct {
	Name   string   `toml:"name"`
	Errors []string `toml:"errors"`
	// Shift and Scale are the ranges [lo, hi] the blinding offset o and
	// factor s are drawn from; Shape draws them per bin instead of once.
	Shift []float64 `toml:"shift"`
	Scale []float64 `toml:"scale"`
	Shape bool      `toml:"shape"`
	// Tolerances, as `tandem compare` takes them.
	Correlation float64  `toml:"correlation"`
	Subset      bool     `toml:"subset"`
	MaxPull     *float64 `toml:"max_pull"`
	MinP        *float64 `toml:"min_p"`
	AbsTol      float64  `toml:"abs_tol"`
	RelTol      float64  `toml:"rel_tol"`
}

// Options returns the comparison options the column declares.
func (c *Column) Options() compare.Options {
	l := compare.DefaultLimits
	if c.MaxPull != nil {
		l.MaxPull = *c.MaxPull
	}
	if c.MinP != nil {
		l.MinP = *c.MinP
	}
	l.AbsTol, l.RelTol = c.AbsTol, c.RelTol
	return compare.Options{Correlation: c.Correlation, Subset: c.Subset, Limits: l}
}

// Selection returns the table columns this column compares.
func (c *Column) Selection() table.Selection {
	return table.Selection{Value: c.Name, Errors: c.Errors}
}

// Team lists the parties with role "team".
func (p *Protocol) Teams() []string {
	var out []string
	for _, q := range p.Parties {
		if q.Role == "team" {
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

// Recipient parses the custodian's recipient: an age X25519 recipient or an
// SSH public key.
func (p *Protocol) Recipient() (age.Recipient, error) {
	return ParseRecipient(p.Custodian)
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

var nameRE = regexp.MustCompile(`^[A-Za-z0-9][A-Za-z0-9_.-]{0,63}$`)

// ParseProtocol reads campaign.toml strictly: unknown keys, wrong types and
// impossible settings are errors that name the file and line.
func ParseProtocol(path string, data []byte) (*Protocol, error) {
	var p Protocol
	md, err := toml.NewDecoder(bytes.NewReader(data)).Decode(&p)
	if err != nil {
		var pe toml.ParseError
		if errors.As(err, &pe) {
			return nil, table.Errorf(path, pe.Position.Line, pe.Position.Col, "%s", pe.Message)
		}
		return nil, table.Errorf(path, 0, 0, "%v", err)
	}
	if und := md.Undecoded(); len(und) > 0 {
		k := und[0]
		return nil, table.Errorf(path, keyLine(data, k[len(k)-1]), 0, "unknown key %q", k.String())
	}
	if err := p.validate(); err != nil {
		return nil, table.Errorf(path, errLine(data, err), 0, "%v", err)
	}
	return &p, nil
}

// keyLine finds the first line that assigns key, for messages about keys
// the decoder reports without a position.
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
// point at the line that names it.
type fieldError struct {
	anchor string // text to look for, e.g. `name = "heron"`
	msg    string
}

func (e *fieldError) Error() string { return e.msg }

func errLine(data []byte, err error) int {
	var fe *fieldError
	if errors.As(err, &fe) && fe.anchor != "" {
		for i, line := range strings.Split(string(data), "\n") {
			if strings.Contains(strings.ReplaceAll(line, " ", ""), strings.ReplaceAll(fe.anchor, " ", "")) {
				return i + 1
			}
		}
	}
	return 0
}

func ferr(anchor, format string, args ...any) error {
	return &fieldError{anchor: anchor, msg: fmt.Sprintf(format, args...)}
}

func (p *Protocol) validate() error {
	if p.Format != FormatV1 {
		return ferr("format", "format must be %q, got %q", FormatV1, p.Format)
	}
	if !nameRE.MatchString(p.Campaign) {
		return ferr("campaign", "campaign id %q must be 1-64 letters, digits, '.', '_' or '-'", p.Campaign)
	}
	if _, err := p.Recipient(); err != nil {
		return ferr("custodian", "%v", err)
	}
	seenName, seenKey := map[string]bool{}, map[string]string{}
	teams := 0
	for i := range p.Parties {
		q := &p.Parties[i]
		anchor := fmt.Sprintf("name = %q", q.Name)
		if !nameRE.MatchString(q.Name) {
			return ferr(anchor, "party name %q must be 1-64 letters, digits, '.', '_' or '-'", q.Name)
		}
		if seenName[q.Name] {
			return ferr(anchor, "party %q is declared twice", q.Name)
		}
		seenName[q.Name] = true
		switch q.Role {
		case "team":
			teams++
		case "reviewer":
		default:
			return ferr(anchor, "party %q: role must be \"team\" or \"reviewer\", got %q", q.Name, q.Role)
		}
		pub, _, _, _, err := ssh.ParseAuthorizedKey([]byte(q.Key))
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
	if teams < 2 {
		return ferr("[[party]]", "a campaign needs at least two parties with role \"team\", found %d", teams)
	}
	if len(p.Quorum) == 0 {
		return ferr("quorum", "quorum is empty: name the parties whose sign-off unblinding needs")
	}
	seenQ := map[string]bool{}
	for _, n := range p.Quorum {
		if !seenName[n] {
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
		o := &p.Observables[i]
		anchor := fmt.Sprintf("name = %q", o.Name)
		if !nameRE.MatchString(o.Name) {
			return ferr(anchor, "observable name %q must be 1-64 letters, digits, '.', '_' or '-'", o.Name)
		}
		if seenObs[o.Name] {
			return ferr(anchor, "observable %q is declared twice", o.Name)
		}
		seenObs[o.Name] = true
		if len(o.Edges) == 0 {
			o.Edges = []string{table.DefaultLo, table.DefaultHi}
		}
		if len(o.Edges) != 2 || o.Edges[0] == o.Edges[1] || o.Edges[0] == "" || o.Edges[1] == "" {
			return ferr(anchor, "observable %q: edges must name two different columns", o.Name)
		}
		if len(o.Columns) == 0 {
			return ferr(anchor, "observable %q declares no columns", o.Name)
		}
		seenCol := map[string]bool{o.Edges[0]: true, o.Edges[1]: true}
		for j := range o.Columns {
			c := &o.Columns[j]
			canchor := fmt.Sprintf("name = %q", c.Name)
			where := fmt.Sprintf("observable %q column %q", o.Name, c.Name)
			if c.Name == "" || seenCol[c.Name] {
				return ferr(canchor, "%s: column names must be unique and not bin edges", where)
			}
			seenCol[c.Name] = true
			for _, e := range c.Errors {
				if e == c.Name || e == o.Edges[0] || e == o.Edges[1] {
					return ferr(canchor, "%s: error column %q cannot be the value or an edge", where, e)
				}
			}
			if err := checkRange(c.Shift, false); err != nil {
				return ferr(canchor, "%s: shift %v", where, err)
			}
			if err := checkRange(c.Scale, true); err != nil {
				return ferr(canchor, "%s: scale %v", where, err)
			}
			if c.Correlation < -1 || c.Correlation > 1 {
				return ferr(canchor, "%s: correlation %v is outside [-1, 1]", where, c.Correlation)
			}
			if c.Subset && c.Correlation != 0 {
				return ferr(canchor, "%s: subset and correlation cannot be used together", where)
			}
			if c.MaxPull != nil && (*c.MaxPull < 0 || math.IsInf(*c.MaxPull, 0)) {
				return ferr(canchor, "%s: max_pull must be >= 0", where)
			}
			if c.MinP != nil && (*c.MinP < 0 || *c.MinP >= 1) {
				return ferr(canchor, "%s: min_p must be in [0, 1)", where)
			}
			if c.AbsTol < 0 || c.RelTol < 0 {
				return ferr(canchor, "%s: abs_tol and rel_tol must be >= 0", where)
			}
		}
	}
	return nil
}

// checkRange checks a [lo, hi] blinding range. Scale ranges must be
// positive: a negative or sign-changing factor would flip pulls.
func checkRange(r []float64, scale bool) error {
	if len(r) == 0 {
		return nil
	}
	if len(r) != 2 {
		return fmt.Errorf("must be a range [lo, hi], got %d numbers", len(r))
	}
	lo, hi := r[0], r[1]
	if math.IsNaN(lo) || math.IsNaN(hi) || math.IsInf(lo, 0) || math.IsInf(hi, 0) || lo > hi {
		return fmt.Errorf("range [%v, %v] is not a finite interval with lo <= hi", lo, hi)
	}
	if scale && lo <= 0 {
		if hi >= 0 {
			return fmt.Errorf("range [%v, %v] contains 0", lo, hi)
		}
		return fmt.Errorf("range [%v, %v] is negative; factors must be positive so pulls keep their sign", lo, hi)
	}
	return nil
}

// LoadProtocol reads and checks DIR/campaign.toml.
func LoadProtocol(path string) (*Protocol, []byte, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, nil, table.Errorf(path, 0, 0, "%v", unwrapPath(err))
	}
	p, err := ParseProtocol(path, data)
	return p, data, err
}

func unwrapPath(err error) error {
	var pe *os.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	return err
}

// Column returns the named column of an observable, or nil.
func (o *Observable) Column(name string) *Column {
	i := slices.IndexFunc(o.Columns, func(c Column) bool { return c.Name == name })
	if i < 0 {
		return nil
	}
	return &o.Columns[i]
}

// FromObject names the columns of a table read from a ROOT histogram or
// graph (columns "value" and "err") after the observable's declaration,
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
