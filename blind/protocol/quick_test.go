package protocol

import (
	"bytes"
	"crypto/ed25519"
	"crypto/rand"
	"fmt"
	"reflect"
	"regexp"
	"slices"
	"strings"
	"testing"

	"filippo.io/age"
	"github.com/BurntSushi/toml"
	"golang.org/x/crypto/ssh"

	"tandem/compare/fuzzseed"
)

// general decodes data with BurntSushi/toml, the reference of the quick
// path.
func general(data []byte) (*Protocol, toml.MetaData, error) {
	var p Protocol
	md, err := toml.NewDecoder(bytes.NewReader(data)).Decode(&p)
	return &p, md, err
}

// agree fails t when the quick path accepts data and BurntSushi/toml does
// not decode it to the same value.
func agree(t *testing.T, data []byte) bool {
	t.Helper()
	var q Protocol
	if !quickDecode(data, &q) {
		return false
	}
	g, md, err := general(data)
	if err != nil {
		t.Fatalf("quick path accepted what BurntSushi/toml refuses (%v):\n%s", err, data)
	}
	if und := md.Undecoded(); len(und) > 0 {
		t.Fatalf("quick path accepted the undecoded key %v:\n%s", und, data)
	}
	if !reflect.DeepEqual(&q, g) {
		t.Fatalf("quick path and BurntSushi/toml differ:\nquick   %+v\ngeneral %+v\ninput:\n%s", q, *g, data)
	}
	return true
}

func FuzzQuickDecode(f *testing.F) {
	for _, b := range fuzzseed.Load(f, "*.toml") {
		f.Add(b)
	}
	f.Add([]byte(Template("x", "", "")))
	f.Fuzz(func(t *testing.T, data []byte) { agree(t, data) })
}

func filledTemplate(t testing.TB) string {
	key := func(name string) string {
		pub, _, _ := ed25519.GenerateKey(rand.Reader)
		k, _ := ssh.NewPublicKey(pub)
		return strings.TrimSpace(string(ssh.MarshalAuthorizedKey(k))) + " " + name
	}
	id, _ := age.GenerateX25519Identity()
	text := Template("spectrum-2026", id.Recipient().String(), key("custodian"))
	for _, p := range []string{"team-a", "team-b", "reviewer"} {
		text = strings.Replace(text, `"ssh-ed25519 AAAA... `+p+`"`, `"`+key(p)+`"`, 1)
	}
	return text
}

// TestQuickPathTaken: the shapes tandem writes and documents (the
// template, the demo, the benchmark's protocol) take the quick path and
// decode as BurntSushi/toml decodes them.
func TestQuickPathTaken(t *testing.T) {
	inputs := map[string][]byte{"template": []byte(filledTemplate(t))}
	for i, b := range fuzzseed.Load(t, "demo.toml") {
		inputs[fmt.Sprint("demo", i)] = b
	}
	for i, b := range fuzzseed.Load(t, "quick-subset.toml") {
		inputs[fmt.Sprint("subset", i)] = b
	}
	var sb strings.Builder
	fmt.Fprintf(&sb, "format = \"tandem/v2\"\ncampaign = \"bench\"\nquorum = [\"a\", \"b\"]\n")
	for i := 0; i < 3; i++ {
		fmt.Fprintf(&sb, "[[observable]]\nname = \"obs%03d\"\n  [[observable.column]]\n  name = \"counts\"\n  errors = [\"stat\"]\n  scale = [0.5, 2.0]\n  shift = [-2000.0, 2000.0]\n  correlation = 0.5\n  accept_risk = \"benchmark data\"\n", i)
	}
	inputs["bench"] = []byte(sb.String())
	for name, data := range inputs {
		if !agree(t, data) {
			t.Errorf("%s: the quick path handed the protocol to the general decoder", name)
		}
	}
}

// TestQuickFallsBack: inputs outside the subset go to the general decoder,
// and Parse then gives exactly what the general decoder gives.
func TestQuickFallsBack(t *testing.T) {
	base := "format = \"tandem/v2\"\ncampaign = \"c\"\n"
	for _, extra := range []string{
		`description = "esc\"aped"`,           // escape
		`description = 'literal'`,             // literal string
		"description = \"\"\"\nmulti\"\"\"",   // multi-line string
		"description = \"tab\there\"",         // tab in a string
		"description = \"c1\u0085\"",          // C1 control
		"quorum = [\n\"a\"]",                  // multi-line array
		`"campaign" = "q"`,                    // quoted key
		`a.b = "dotted"`,                      // dotted key
		`campaign = "twice"`,                  // duplicate key
		`Campaign = "case"`,                   // matched case-insensitively by the general decoder
		`unknown = 1`,                         // unknown key
		`alpha = 1_0`,                         // underscore
		`alpha = inf`,                         // special float
		`alpha = 01.5`,                        // leading zero
		`alpha = 1.`,                          // bad float
		`alpha = 1e400`,                       // out of range
		`alpha = 9007199254740993`,            // integer not exact as a float
		`alpha = 1979-05-27`,                  // date
		`alpha = "0.5"`,                       // wrong type
		`quorum = "a"`,                        // wrong type
		`quorum = [1]`,                        // wrong element type
		"[events]\nblinded = []",              // [events]
		"[[observable.column]]\nname = \"x\"", // column before any observable
		"[[ party ]]",                         // spaced header
		"[[observable]]\ncolumn = 1",          // a value where a table goes
		"[[observable]]\n[[observable.column]]\ncorrelations = { a = 1, a = 2 }", // duplicate inline key
		"[[observable]]\n[[observable.column]]\ncorrelations = { a = 1, }",       // trailing comma
		"[[observable]]\n[[observable.column]]\noverlap = { count = \"n\" }",     // overlap
		"\ufefftitle = 1", // byte-order mark
		"x = 1\r",         // CR
		"bad = \"\xff\"",  // invalid UTF-8
	} {
		data := []byte(base + extra + "\n")
		var q Protocol
		if quickDecode(data, &q) {
			t.Errorf("%q: the quick path accepted it", extra)
			continue
		}
		_, err1 := Parse("p.toml", data)
		_, err2 := parseGeneral("p.toml", data)
		if fmt.Sprint(err1) != fmt.Sprint(err2) {
			t.Errorf("%q: Parse says %v, the general decoder %v", extra, err1, err2)
		}
	}
}

// TestQuickKeys holds the quick path's keys to the toml tags of the
// structs: each key it sets is a tag of its table, and each tag it leaves
// to the general decoder is one listed here.
func TestQuickKeys(t *testing.T) {
	left := [...][]string{
		tableTop:        {"party", "observable", "events"},
		tableParty:      nil,
		tableObservable: {"column"},
		tableColumn:     {"overlap"},
	}
	types := [...]reflect.Type{
		tableTop:        reflect.TypeFor[Protocol](),
		tableParty:      reflect.TypeFor[Party](),
		tableObservable: reflect.TypeFor[Observable](),
		tableColumn:     reflect.TypeFor[Column](),
	}
	for tb, typ := range types {
		tags := tomlTags(typ)
		want := append(slices.Clone(quickKeys[tb]), left[tb]...)
		slices.Sort(tags)
		slices.Sort(want)
		if !slices.Equal(tags, want) {
			t.Errorf("%s: toml keys %v, the quick path sets or leaves %v", typ, tags, want)
		}
		if len(quickKeys[tb]) > 32 {
			t.Errorf("%s: more keys than bits", typ)
		}
	}
}

// tomlTags lists the keys BurntSushi/toml decodes into a struct: the
// toml tags (untagged embedded structs contribute theirs; "-" and
// unexported fields none).
func tomlTags(typ reflect.Type) []string {
	var out []string
	for i := 0; i < typ.NumField(); i++ {
		f := typ.Field(i)
		tag := strings.Split(f.Tag.Get("toml"), ",")[0]
		switch {
		case tag == "-", !f.IsExported():
		case f.Anonymous && tag == "":
			out = append(out, tomlTags(f.Type)...)
		case tag == "":
			out = append(out, f.Name)
		default:
			out = append(out, tag)
		}
	}
	return out
}

// TestValidName holds ValidName to the regular expression it replaced
// (the name rule of the package documentation).
func TestValidName(t *testing.T) {
	re := regexp.MustCompile(`^[A-Za-z0-9][A-Za-z0-9_.-]{0,63}$`)
	alphabet := []string{"a", "Z", "0", "9", "_", ".", "-", " ", "/", "\x00", "é", "["}
	var names []string
	for _, a := range alphabet {
		names = append(names, a)
		for _, b := range alphabet {
			names = append(names, a+b)
		}
	}
	for _, n := range []int{63, 64, 65} {
		names = append(names, strings.Repeat("x", n), "-"+strings.Repeat("x", n-1), strings.Repeat("x", n-1)+"-")
	}
	names = append(names, "", "obs001", "a\n")
	for _, s := range names {
		if ValidName(s) != re.MatchString(s) {
			t.Errorf("%q: ValidName %v, the expression %v", s, ValidName(s), re.MatchString(s))
		}
	}
}

// TestQuickInterleaved: a column header after another table still belongs
// to the latest observable, blank and comment lines anywhere, no final
// LF, as BurntSushi/toml reads them.
func TestQuickInterleaved(t *testing.T) {
	for _, text := range []string{
		"[[observable]]\nname = \"a\"\n[[party]]\nname = \"p\"\n[[observable.column]]\nname = \"c\"\n",
		"[[observable]]\nname = \"a\"\n[[observable.column]]\nname = \"c\"\n[[observable]]\nname = \"b\"\n[[observable.column]]\nname = \"d\"\n[[observable.column]]\nname = \"e\"",
		"# top\n\n  \t\nformat = \"x\" # c\n[[party]] # c\n\n# c\nname = \"p\"\nrole = \"team\"\n",
		"quorum = []\nalpha = -0\n[[observable]]\nedges = [ ]\n[[observable.column]]\ncorrelations = {}\nscale = [1, -2.5e-3, 0.0]\n",
		"",
	} {
		if !agree(t, []byte(text)) {
			t.Errorf("%q: the quick path handed it to the general decoder", text)
		}
	}
}
