package campaign

// The test vectors of blind/SPEC.md: known answers (HKDF, the key → (s, o)
// map, both commitments, numbers, ledger lines, statements, the comparison
// digest) and whole campaigns, each with the one outcome a verifier must
// reach. TestVectors checks every vector with this package and with the
// second implementation in testdata/vectors/verify.py; TestVectorsUpToDate
// regenerates them from fixed seeds and fails when the code now writes
// other bytes:
//
//	go test ./blind/campaign -run 'TestVectors' -update
//
// regenerates them after a deliberate format change.

import (
	"bytes"
	"crypto/ed25519"
	"crypto/hkdf"
	"crypto/hmac"
	"crypto/sha256"
	"encoding/hex"
	"flag"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"
	"testing/cryptotest"
	"time"

	"filippo.io/age"
	"golang.org/x/crypto/ssh"

	"tandem/blind"
	"tandem/blind/internal/format"
	"tandem/blind/internal/sshsig"
	"tandem/blind/protocol"
	"tandem/compare"
	"tandem/compare/table"
	"tandem/report"
)

var updateVectors = flag.Bool("update", false, "regenerate testdata/vectors from fixed seeds")

const vectorsDir = "../../testdata/vectors"

// Outcomes a vector may expect, in the order a verifier reports them when
// several hold (SPEC.md, "Outcomes").
var outcomes = []string{
	"ok", "non-canonical", "broken-chain", "fork", "bad-signature", "unknown-party", "second-init",
	"out-of-order", "bad-entry", "protocol-changed", "private-key", "bad-digest", "uncovered-file",
	"bad-commitment", "bad-signoff", "comparison-mismatch", "stale-signoff", "missing-signoff", "missing",
}

// Header keys each kind of vector may have, besides kind, expect,
// description and source.
var vectorKeys = map[string][]string{
	"hkdf":              {"ikm", "salt", "info", "length", "prk", "okm"},
	"map":               {"key", "observable", "column", "scope", "param", "bin", "lo", "hi", "info", "okm", "n", "u", "value"},
	"key-commitment":    {"key", "salt", "commitment"},
	"seal-commitment":   {"campaign", "team", "observable", "version", "nonce", "commitment"},
	"number":            {},
	"number-reject":     {},
	"ledger-line":       {"hash", "signed-hash"},
	"statement":         {},
	"key-file":          {},
	"comparison-digest": {"digest"},
	"campaign":          {"campaign", "verdicts"},
}

// vector is one file of testdata/vectors: "key: value" header lines, a
// blank line, then the payload.
type vector struct {
	name    string
	headers [][2]string
	payload []byte
}

func (v *vector) get(k string) string {
	for _, h := range v.headers {
		if h[0] == k {
			return h[1]
		}
	}
	return ""
}

func (v *vector) encode() []byte {
	var b bytes.Buffer
	for _, h := range v.headers {
		fmt.Fprintf(&b, "%s: %s\n", h[0], h[1])
	}
	b.WriteByte('\n')
	b.Write(v.payload)
	return b.Bytes()
}

func parseVector(name string, data []byte) (*vector, error) {
	head, payload, ok := bytes.Cut(data, []byte("\n\n"))
	if !ok {
		return nil, fmt.Errorf("%s: no blank line after the header", name)
	}
	v := &vector{name: name, payload: payload}
	seen := map[string]bool{}
	for i, line := range strings.Split(string(head), "\n") {
		k, val, ok := strings.Cut(line, ": ")
		if !ok || k == "" {
			return nil, fmt.Errorf("%s:%d: expected \"key: value\"", name, i+1)
		}
		if seen[k] {
			return nil, fmt.Errorf("%s:%d: key %q twice", name, i+1, k)
		}
		seen[k] = true
		v.headers = append(v.headers, [2]string{k, val})
	}
	kind := v.get("kind")
	allowed, known := vectorKeys[kind]
	if !known {
		return nil, fmt.Errorf("%s: unknown kind %q", name, kind)
	}
	if !slices.Contains(outcomes, v.get("expect")) {
		return nil, fmt.Errorf("%s: unknown outcome %q", name, v.get("expect"))
	}
	for _, h := range v.headers {
		if !slices.Contains(allowed, h[0]) && !slices.Contains([]string{"kind", "expect", "description", "source"}, h[0]) {
			return nil, fmt.Errorf("%s: unknown key %q for kind %s", name, h[0], kind)
		}
	}
	if !seen["description"] {
		return nil, fmt.Errorf("%s: no description", name)
	}
	return v, nil
}

// readVectors reads every vector file; a glob matching nothing fails.
func readVectors(t *testing.T, dir string) []*vector {
	t.Helper()
	files, err := filepath.Glob(filepath.Join(dir, "*.txt"))
	if err != nil || len(files) == 0 {
		t.Fatalf("no vectors match %s/*.txt", dir)
	}
	var out []*vector
	for _, f := range files {
		data, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		v, err := parseVector(filepath.Base(f), data)
		if err != nil {
			t.Fatal(err)
		}
		out = append(out, v)
	}
	return out
}

// ---- checking ----

// TestVectors checks every vector against this implementation.
func TestVectors(t *testing.T) {
	for _, v := range readVectors(t, vectorsDir) {
		t.Run(strings.TrimSuffix(v.name, ".txt"), func(t *testing.T) {
			if got := checkVector(t, v); got != v.get("expect") {
				t.Errorf("outcome %q, vector expects %q", got, v.get("expect"))
			}
		})
	}
}

func mustHex(t *testing.T, s string) []byte {
	t.Helper()
	b, err := hex.DecodeString(s)
	if err != nil {
		t.Fatalf("bad hex %q", s)
	}
	return b
}

// checkVector returns the outcome this implementation reaches.
func checkVector(t *testing.T, v *vector) string {
	t.Helper()
	eq := func(what, got, want string) {
		t.Helper()
		if got != want {
			t.Errorf("%s = %s, want %s", what, got, want)
		}
	}
	switch v.get("kind") {
	case "hkdf":
		// RFC 5869 Appendix A, through the same HKDF the map uses.
		prk := hkdfExtract(mustHex(t, v.get("salt")), mustHex(t, v.get("ikm")))
		eq("prk", hex.EncodeToString(prk), v.get("prk"))
		n, _ := strconv.Atoi(v.get("length"))
		eq("okm", hex.EncodeToString(hkdfOKM(t, v, n)), v.get("okm"))
	case "map":
		k, err := blind.KeyFromBytes(mustHex(t, v.get("key")))
		if err != nil {
			t.Fatal(err)
		}
		bin, _ := strconv.Atoi(v.get("bin"))
		info := blind.Info(v.get("observable"), v.get("column"), v.get("scope"), v.get("param"), bin)
		eq("info", hex.EncodeToString([]byte(info)), v.get("info"))
		okm := hkdfExpand(hkdfExtract(nil, k.Bytes()), []byte(info), 8)
		eq("okm", hex.EncodeToString(okm), v.get("okm"))
		eq("n", strconv.FormatUint(beUint64(okm)>>11, 10), v.get("n"))
		u := k.Uniform(info)
		eq("u", table.Format(u), v.get("u"))
		n, _ := strconv.ParseUint(v.get("n"), 10, 64)
		eq("n/2^53", table.Format(float64(n)/(1<<53)), v.get("u"))
		r := blind.Range{Lo: parseNum(t, v.get("lo")), Hi: parseNum(t, v.get("hi"))}
		eq("value", table.Format(r.Draw(u)), v.get("value"))
		m := k.Map(blind.MapSpec{Observable: v.get("observable"), Column: v.get("column"), Scope: v.get("scope"), Scale: r, Shift: r}, bin+1)
		got := m.S[bin]
		if v.get("param") == "shift" {
			got = m.O[bin]
		}
		eq("map", table.Format(got), v.get("value"))
		if v.get("observable") == protocol.EventsObservable {
			// The map sync --campaign applies: [protocol.EventVar.MapSpec], one bin.
			ev := protocol.EventVar{Name: v.get("column"), Scale: []float64{r.Lo, r.Hi}, Shift: []float64{r.Lo, r.Hi}}
			em := k.Map(ev.MapSpec(), 1)
			got := em.S[0]
			if v.get("param") == "shift" {
				got = em.O[0]
			}
			eq("event map", table.Format(got), v.get("value"))
			if bin != 0 || v.get("scope") != blind.CommonScope {
				t.Errorf("an event-level map has one bin in the common scope")
			}
		}
	case "key-commitment":
		k, err := blind.KeyFromBytes(mustHex(t, v.get("key")))
		if err != nil {
			t.Fatal(err)
		}
		c := k.Commitment(mustHex(t, v.get("salt")))
		eq("commitment", hex.EncodeToString(c[:]), v.get("commitment"))
	case "seal-commitment":
		ver, _ := strconv.Atoi(v.get("version"))
		tb, err := table.ParseCSV(v.name, v.payload, table.CSVOptions{Lo: "lo", Hi: "hi", Delim: ','})
		if err != nil {
			t.Fatal(err)
		}
		var csv bytes.Buffer
		tb.WriteCSV(&csv)
		eq("canonical CSV", csv.String(), string(v.payload))
		f := &format.TableFile{Kind: format.Sealed, Campaign: v.get("campaign"), Team: v.get("team"), Observable: v.get("observable"), Version: ver, Nonce: mustHex(t, v.get("nonce")), Table: tb}
		eq("commitment", f.Commitment(), v.get("commitment"))
	case "number":
		for _, line := range strings.Split(strings.TrimSuffix(string(v.payload), "\n"), "\n") {
			bits, text, _ := strings.Cut(line, " ")
			u, err := strconv.ParseUint(bits, 16, 64)
			if err != nil {
				t.Fatalf("bad bits %q", bits)
			}
			eq("Format("+bits+")", table.Format(math.Float64frombits(u)), text)
		}
	case "number-reject":
		for _, text := range strings.Split(strings.TrimSuffix(string(v.payload), "\n"), "\n") {
			if numberAccepted(text) {
				t.Errorf("a table file with the number %q was accepted", text)
			}
		}
		return "non-canonical"
	case "ledger-line":
		e, err := format.DecodeEntry(bytes.TrimSuffix(v.payload, []byte("\n")))
		if err != nil {
			return "non-canonical"
		}
		eq("hash", e.Hash(), v.get("hash"))
		eq("signed-hash", format.Digest(e.SignedBytes()), v.get("signed-hash"))
	case "statement":
		if _, err := format.ParseStatement(v.name, v.payload); err != nil {
			return "non-canonical"
		}
	case "key-file":
		if _, err := format.DecodeKey(v.payload); err != nil {
			return "non-canonical"
		}
	case "comparison-digest":
		eq("sha256(payload)", format.Digest(v.payload), v.get("digest"))
		eq("ComparisonDigest", ComparisonDigest(kat.protocolDigest, katComparison()), v.get("digest"))
	case "campaign":
		return checkCampaign(t, vectorsDir, v)
	}
	return "ok"
}

// numberAccepted reports whether a blinded table file holding text as its
// only value is accepted.
func numberAccepted(text string) bool {
	data := "# tandem/v2 blinded table\n# campaign: c\n# team: t\n# observable: o\n# version: 1\n# map: common\n# sealed: " +
		strings.Repeat("0", 64) + "\nlo,hi,v\n0,1," + text + "\n"
	_, err := format.DecodeTableFile("n", []byte(data), format.Blinded, "lo", "hi")
	return err == nil
}

func parseNum(t *testing.T, s string) float64 {
	t.Helper()
	f, err := strconv.ParseFloat(s, 64)
	if err != nil || table.Format(f) != s {
		t.Fatalf("not a canonical number: %q", s)
	}
	return f
}

// hkdfExtract is RFC 5869's HKDF-Extract written out with HMAC, so the
// RFC's PRK is checked too; hkdfOKM checks crypto/hkdf (which blind.Key
// derives with) and this file's HKDF-Expand against the RFC's OKM.
func hkdfExtract(salt, ikm []byte) []byte {
	if len(salt) == 0 {
		salt = make([]byte, sha256.Size)
	}
	return hmacSHA256(salt, ikm)
}

func hkdfOKM(t *testing.T, v *vector, n int) []byte {
	t.Helper()
	salt, ikm, info := mustHex(t, v.get("salt")), mustHex(t, v.get("ikm")), mustHex(t, v.get("info"))
	std, err := hkdf.Key(sha256.New, ikm, salt, string(info), n)
	if err != nil {
		t.Fatal(err)
	}
	mine := hkdfExpand(hkdfExtract(salt, ikm), info, n)
	if !bytes.Equal(std, mine) {
		t.Errorf("crypto/hkdf and the HKDF written out here disagree")
	}
	return std
}

func beUint64(b []byte) uint64 {
	var u uint64
	for _, c := range b[:8] {
		u = u<<8 | uint64(c)
	}
	return u
}

// ---- campaign vectors ----

// outcomeOf reduces verify's problems to the first outcome in [outcomes].
func outcomeOf(r *Report) string {
	if r.OK() {
		return "ok"
	}
	have := map[string]bool{}
	for _, p := range r.Problems {
		have[string(p.Kind)] = true
	}
	for _, o := range outcomes {
		if have[o] {
			return o
		}
	}
	var ks []string
	for k := range have {
		ks = append(ks, k)
	}
	slices.Sort(ks)
	return strings.Join(ks, "+")
}

// checkCampaign verifies the campaign folder of v below root.
func checkCampaign(t *testing.T, root string, v *vector) string {
	t.Helper()
	dir := filepath.Join(root, "campaigns", v.get("campaign"))
	man, err := manifest(dir)
	if err != nil {
		t.Fatal(err)
	}
	if string(man) != string(v.payload) {
		t.Errorf("%s does not hold exactly the files the vector lists (a file missing from git?)", dir)
	}
	// Verify reads only, but work on a copy so no lock file lands in testdata.
	tmp := filepath.Join(t.TempDir(), "c")
	if err := os.CopyFS(tmp, os.DirFS(dir)); err != nil {
		t.Fatal(err)
	}
	if got, want := recomputedVerdicts(t, tmp), v.get("verdicts"); got != want {
		t.Errorf("the comparisons of the blinded tables give verdicts %q, the vector says %q", got, want)
	}
	r := Verify(tmp)
	for _, p := range r.Problems {
		t.Logf("problem %s: %s", p.Kind, p)
	}
	return outcomeOf(r)
}

// recomputedVerdicts is the per-comparison verdicts of a campaign's
// blinded tables in the comparison digest's order, space-separated, or ""
// when its tables cannot be compared (a tampered table, nothing open).
func recomputedVerdicts(t *testing.T, dir string) string {
	t.Helper()
	c, err := open(dir)
	if err != nil {
		return ""
	}
	cmp, err := c.Compare()
	if err != nil {
		return ""
	}
	var vs []string
	for _, l := range comparedLines(cmp) {
		vs = append(vs, l[strings.LastIndexByte(l, ' ')+1:])
	}
	return strings.Join(vs, " ")
}

// manifest lists every file below dir as "SHA256 SP path LF", sorted.
func manifest(dir string) ([]byte, error) {
	var lines []string
	err := filepath.WalkDir(dir, func(p string, d os.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		data, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(dir, p)
		lines = append(lines, format.Digest(data)+" "+filepath.ToSlash(rel))
		return nil
	})
	slices.SortFunc(lines, func(a, b string) int { return strings.Compare(a[65:], b[65:]) })
	return []byte(strings.Join(lines, "\n") + "\n"), err
}

// TestVectorsPython runs the second implementation, testdata/vectors/verify.py
// (Python 3 standard library and ssh-keygen only), on every vector; its
// outcome must be the one each vector expects.
func TestVectorsPython(t *testing.T) {
	py, err := exec.LookPath("python3")
	if err != nil {
		if os.Getenv("TANDEM_REQUIRE_TOOLS") != "" {
			t.Fatal("python3 is required in CI but not installed")
		}
		t.Skip("skipping: python3 is not installed (apt-get install python3)")
	}
	if _, err := exec.LookPath("ssh-keygen"); err != nil {
		if os.Getenv("TANDEM_REQUIRE_TOOLS") != "" {
			t.Fatal("ssh-keygen is required in CI but not installed")
		}
		t.Skip("skipping: ssh-keygen is not installed (apt-get install openssh-client)")
	}
	vs := readVectors(t, vectorsDir)
	args := []string{filepath.Join(vectorsDir, "verify.py")}
	for _, v := range vs {
		args = append(args, filepath.Join(vectorsDir, v.name))
	}
	cmd := exec.Command(py, args...)
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("verify.py: %v\n%s", err, stderr.String())
	}
	got := map[string]string{}
	for _, line := range strings.Split(strings.TrimSpace(string(out)), "\n") {
		name, outcome, _ := strings.Cut(line, " ")
		got[name] = outcome
	}
	for _, v := range vs {
		if got[v.name] != v.get("expect") {
			t.Errorf("%s: verify.py says %q, the vector expects %q", v.name, got[v.name], v.get("expect"))
		}
	}
	if len(got) != len(vs) {
		t.Errorf("verify.py reported %d vectors, there are %d", len(got), len(vs))
	}
}

// ---- generation ----

// TestVectorsUpToDate regenerates every vector from fixed seeds (with
// -update, into testdata/vectors). Known answers hold no randomness and
// must equal the committed files byte for byte. Campaigns draw keys,
// salts and nonces from a seeded stream, so their bytes change whenever
// the campaign code draws in another order; for them the test requires
// that the regenerated campaign still reaches its vector's outcome (the
// committed ones are checked by TestVectors).
func TestVectorsUpToDate(t *testing.T) {
	out := t.TempDir()
	if *updateVectors {
		out = vectorsDir
		os.RemoveAll(filepath.Join(out, "campaigns"))
		old, _ := filepath.Glob(filepath.Join(out, "*.txt"))
		for _, f := range old {
			os.Remove(f)
		}
	}
	vs := generate(t, out)
	for _, v := range vs {
		if err := os.WriteFile(filepath.Join(out, v.name), v.encode(), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	if *updateVectors {
		return
	}
	want, _ := filepath.Glob(filepath.Join(vectorsDir, "*.txt"))
	if len(want) != len(vs) {
		t.Errorf("%d vectors committed, the generator makes %d (run with -update)", len(want), len(vs))
	}
	for _, v := range vs {
		old, err := os.ReadFile(filepath.Join(vectorsDir, v.name))
		switch {
		case err != nil:
			t.Errorf("%s: %v (run with -update)", v.name, err)
		case v.get("kind") == "campaign":
			if got := checkCampaign(t, out, v); got != v.get("expect") {
				t.Errorf("regenerated %s: outcome %q, want %q", v.name, got, v.get("expect"))
			}
		case !bytes.Equal(old, v.encode()):
			t.Errorf("%s differs from what the code writes now (after a deliberate format change: go test ./blind/campaign -run TestVectorsUpToDate -update)", v.name)
		}
	}
}

func hdr(kv ...string) [][2]string {
	var out [][2]string
	for i := 0; i+1 < len(kv); i += 2 {
		out = append(out, [2]string{kv[i], kv[i+1]})
	}
	return out
}

// kat holds the fixed inputs of the known answers. The key and salt are
// invented bytes (SHA-256 of a label), not secrets of any campaign.
var kat = struct {
	key, salt, nonce []byte
	protocolDigest   string
}{
	key:            sum("tandem vectors: key"),
	salt:           sum("tandem vectors: salt"),
	nonce:          sum("tandem vectors: nonce"),
	protocolDigest: hex.EncodeToString(sum("tandem vectors: protocol")),
}

func sum(s string) []byte { h := sha256.Sum256([]byte(s)); return h[:] }

func generate(t *testing.T, out string) []*vector {
	var vs []*vector
	vs = append(vs, rfc5869Vectors()...)
	vs = append(vs, mapVectors(t)...)
	k, _ := blind.KeyFromBytes(kat.key)
	c := k.Commitment(kat.salt)
	vs = append(vs, &vector{name: "key-commitment.txt", headers: hdr("kind", "key-commitment", "expect", "ok",
		"description", "SHA-256(\"tandem/v2 key-commitment\" 0x00 salt K)",
		"key", hex.EncodeToString(kat.key), "salt", hex.EncodeToString(kat.salt), "commitment", hex.EncodeToString(c[:]))})
	vs = append(vs, sealCommitmentVector(t))
	vs = append(vs, numberVectors()...)
	vs = append(vs, ledgerLineVectors(t)...)
	vs = append(vs, statementVectors()...)
	vs = append(vs, keyFileVectors(k)...)
	vs = append(vs, comparisonDigestVector())
	vs = append(vs, campaignVectors(t, out)...)
	return vs
}

// rfc5869Vectors are the SHA-256 test cases of RFC 5869, Appendix A.1–A.3
// (values from the RFC; the same three cases are in Go's
// crypto/hkdf/hkdf_test.go, against which they were checked).
func rfc5869Vectors() []*vector {
	seq := func(from, to int) string {
		var b []byte
		for i := from; i <= to; i++ {
			b = append(b, byte(i))
		}
		return hex.EncodeToString(b)
	}
	ikm := strings.Repeat("0b", 22)
	cases := []struct{ name, ikm, salt, info, l, prk, okm string }{
		{"A.1", ikm, seq(0, 0x0c), seq(0xf0, 0xf9), "42",
			"077709362c2e32df0ddc3f0dc47bba6390b6c73bb50f9c3122ec844ad7c2b3e5",
			"3cb25f25faacd57a90434f64d0362f2a2d2d0a90cf1a5a4c5db02d56ecc4c5bf34007208d5b887185865"},
		{"A.2", seq(0, 0x4f), seq(0x60, 0xaf), seq(0xb0, 0xff), "82",
			"06a6b88c5853361a06104c9ceb35b45cef760014904671014a193f40c15fc244",
			"b11e398dc80327a1c8e7f78c596a49344f012eda2d4efad8a050cc4c19afa97c59045a99cac7827271cb41c65e590e09da3275600c2f09b8367793a9aca3db71cc30c58179ec3e87c14c01d5c1f3434f1d87"},
		{"A.3", ikm, "", "", "42",
			"19ef24a32c717b167f33a91d6f648bdf96596776afdb6377ac434c1c293ccb04",
			"8da4e775a563c18f715f802a063c5a31b8a11f5c5ee1879ec3454e5f3c738d2d9d201395faa4b61a96c8"},
	}
	var vs []*vector
	for _, c := range cases {
		vs = append(vs, &vector{name: "hkdf-rfc5869-" + strings.ReplaceAll(c.name, ".", "") + ".txt", headers: hdr(
			"kind", "hkdf", "expect", "ok", "description", "HKDF-SHA256 test case "+c.name,
			"source", "RFC 5869 Appendix "+c.name,
			"ikm", c.ikm, "salt", c.salt, "info", c.info, "length", c.l, "prk", c.prk, "okm", c.okm)})
	}
	return vs
}

func mapVectors(t *testing.T) []*vector {
	k, _ := blind.KeyFromBytes(kat.key)
	cases := []struct {
		obs, col, scope, param string
		bin                    int
		lo, hi                 float64
	}{
		{"flux", "value", blind.CommonScope, "scale", 0, 0.5, 2},
		{"flux", "value", blind.CommonScope, "shift", 0, -100, 100},
		{"flux", "value", blind.CommonScope, "scale", 3, 0.5, 2},
		{"flux", "value", blind.TeamScope("team-a"), "scale", 0, 0.5, 2},
		{"flux", "value", blind.TeamScope("team-a"), "shift", 1, -100, 100},
		{"ratio", "r", blind.CommonScope, "shift", 2, -1e-6, 1e-6},
		{"ratio", "r", blind.CommonScope, "scale", 12, 1e-6, 1e6},
		// The map of an event-level variable (tandem sync --campaign):
		// observable "[events]", the common scope, bin 0.
		{protocol.EventsObservable, "energy", blind.CommonScope, "scale", 0, 0.5, 2},
		{protocol.EventsObservable, "energy", blind.CommonScope, "shift", 0, -50, 50},
	}
	var vs []*vector
	for i, c := range cases {
		info := blind.Info(c.obs, c.col, c.scope, c.param, c.bin)
		okm := hkdfExpand(hkdfExtract(nil, kat.key), []byte(info), 8)
		n := beUint64(okm) >> 11
		u := k.Uniform(info)
		desc := fmt.Sprintf("%s of %s/%s bin %d in scope %q from a fixed key", c.param, c.obs, c.col, c.bin, c.scope)
		if c.obs == protocol.EventsObservable {
			desc = fmt.Sprintf("%s of the event-level variable %s (observable %s, one bin, common scope) from a fixed key", c.param, c.col, c.obs)
		}
		vs = append(vs, &vector{name: fmt.Sprintf("map-%d.txt", i+1), headers: hdr(
			"kind", "map", "expect", "ok",
			"description", desc,
			"key", hex.EncodeToString(kat.key), "observable", c.obs, "column", c.col, "scope", c.scope,
			"param", c.param, "bin", strconv.Itoa(c.bin), "lo", table.Format(c.lo), "hi", table.Format(c.hi),
			"info", hex.EncodeToString([]byte(info)), "okm", hex.EncodeToString(okm),
			"n", strconv.FormatUint(n, 10), "u", table.Format(u),
			"value", table.Format(blind.Range{Lo: c.lo, Hi: c.hi}.Draw(u)))})
	}
	return vs
}

func sealCommitmentVector(t *testing.T) *vector {
	csv := "lo,hi,value,stat\n0,1,10.5,1.5\n1,2,1.234567e+06,0.00012\n2,1e+06,-3.25e-07,1e-05\n"
	tb, err := table.ParseCSV("kat", []byte(csv), table.CSVOptions{Lo: "lo", Hi: "hi", Delim: ','})
	if err != nil {
		t.Fatal(err)
	}
	f := &format.TableFile{Kind: format.Sealed, Campaign: "vectors-2026", Team: "team-a", Observable: "flux", Version: 2, Nonce: kat.nonce, Table: tb}
	return &vector{name: "seal-commitment.txt", headers: hdr("kind", "seal-commitment", "expect", "ok",
		"description", "SHA-256(\"tandem/v2 seal-commitment\" 0x00 campaign 0x00 team 0x00 observable 0x00 version 0x00 nonce CSV); the payload is the canonical CSV",
		"campaign", f.Campaign, "team", f.Team, "observable", f.Observable, "version", "2",
		"nonce", hex.EncodeToString(kat.nonce), "commitment", f.Commitment()), payload: []byte(csv)}
}

func numberVectors() []*vector {
	vals := []float64{
		0, math.Copysign(0, -1), 1, -1, 2.5, 0.1, 0.1 + 0.2, 1.0 / 3, 100, 123456, 999999, 999999.5,
		1e6, -1e6, 1234567, 1e21, 1e22, 1e100, 0.001, 0.0001, 0.00012, 1e-5, 1.5e-7, -3.25e-7,
		math.MaxFloat64, math.SmallestNonzeroFloat64, 0x1p-1022, 9007199254740993, 1e15, 1e16, 123456789012345680,
		5e-324, 2.2250738585072014e-308, 4.35, 0.3, 1e-4 * 3,
	}
	var b strings.Builder
	for _, v := range vals {
		fmt.Fprintf(&b, "%016x %s\n", math.Float64bits(v), table.Format(v))
	}
	// Random bit patterns over the whole finite range, and random values
	// near the switch between plain and exponent form (10^-5 … 10^7),
	// from a fixed seed.
	r := rand.New(rand.NewPCG(5869, 2119))
	var rb strings.Builder
	for n := 0; n < 1200; {
		v := math.Float64frombits(r.Uint64())
		if n%2 == 1 {
			v = math.Pow(10, -5+12*r.Float64())
			if r.IntN(2) == 0 {
				v = -v
			}
		}
		if math.IsNaN(v) || math.IsInf(v, 0) {
			continue
		}
		fmt.Fprintf(&rb, "%016x %s\n", math.Float64bits(v), table.Format(v))
		n++
	}
	return []*vector{
		{name: "number.txt", headers: hdr("kind", "number", "expect", "ok",
			"description", "binary64 bits (hex) and the one text a table number is written as"), payload: []byte(b.String())},
		{name: "number-random.txt", headers: hdr("kind", "number", "expect", "ok",
			"description", "1200 binary64 values from a fixed seed: random bit patterns, and values of 10^-5 to 10^7 around the switch to exponent form"), payload: []byte(rb.String())},
		{name: "number-reject.txt", headers: hdr("kind", "number-reject", "expect", "non-canonical",
			"description", "texts that read as a number but are not its canonical form: a reader refuses each"),
			payload: []byte("1e6\n1e+6\n1E+06\n+1\n1.0\n01\n-0\n0.0\n.5\n5.\n1000000\n0.00001\n1.50\n0x10\nNaN\nInf\n+Inf\n-Inf\n1_000\n 1\n")},
	}
}

func ledgerLineVectors(t *testing.T) []*vector {
	e := format.Entry{Seq: 7, Prev: hex.EncodeToString(sum("tandem vectors: prev")), Step: "seal", Time: "2026-12-01T09:30:00Z", Actor: "team-a",
		Files: map[string]string{"sealed/team-a/flux.v2.age": hex.EncodeToString(sum("file"))},
		Data:  map[string]string{"team": "team-a", "observable": "flux", "version": "2", "commitment": hex.EncodeToString(sum("c")), "reason": `a<b&c "quoted" back\slash é € 𝄞 >`},
		Sig:   "U1NIU0lHAAAAAQ=="}
	line := e.Line()
	enc, _ := format.DecodeEntry(line)
	ok := &vector{name: "ledger-line.txt", headers: hdr("kind", "ledger-line", "expect", "ok",
		"description", "a canonical ledger line: members in fixed order, map keys sorted, only \" and \\ escaped, UTF-8 as is",
		"hash", enc.Hash(), "signed-hash", format.Digest(e.SignedBytes())), payload: append(line, '\n')}
	s := string(line)
	bad := []struct{ name, line string }{
		{"escaped-lt", strings.Replace(s, "a<b&c", `a\u003cb\u0026c`, 1)},
		{"escaped-slash", strings.Replace(s, "sealed/team-a", `sealed\/team-a`, 1)},
		{"space", strings.Replace(s, `"seq":7,`, `"seq": 7,`, 1)},
		{"unsorted", strings.Replace(s, `"commitment":`, `"zz":"1","commitment":`, 1)},
		{"empty-files", strings.Replace(s, `"files":{"sealed/team-a/flux.v2.age":"`+hex.EncodeToString(sum("file"))+`"},`, `"files":{},`, 1)},
		{"seq-leading-zero", strings.Replace(s, `"seq":7`, `"seq":07`, 1)},
		{"member-order", strings.Replace(strings.Replace(s, `{"seq":7,"prev":`, `{"prev":`, 1), `,"step":`, `,"seq":7,"step":`, 1)},
		{"upper-key", strings.Replace(s, `"actor":`, `"Actor":`, 1)},
		{"unknown-member", strings.Replace(s, `,"sig":`, `,"note":"x","sig":`, 1)},
		{"c1-control", strings.Replace(s, "é", "\u0085", 1)},
		{"bidi-override", strings.Replace(s, "é", "\u202e", 1)},
		{"line-separator", strings.Replace(s, "é", "\u2028", 1)},
		{"bad-time", strings.Replace(s, `"time":"2026-12-01T09:30:00Z"`, `"time":"2026-12-01T24:30:00Z"`, 1)},
		{"time-offset", strings.Replace(s, `"time":"2026-12-01T09:30:00Z"`, `"time":"2026-12-01T09:30:00+00:00"`, 1)},
	}
	vs := []*vector{ok}
	for _, b := range bad {
		if _, err := format.DecodeEntry([]byte(b.line)); err == nil {
			t.Fatalf("ledger vector %s is accepted", b.name)
		}
		vs = append(vs, &vector{name: "ledger-line-" + b.name + ".txt", headers: hdr("kind", "ledger-line", "expect", "non-canonical",
			"description", "not the canonical line: "+b.name), payload: []byte(b.line + "\n")})
	}
	return vs
}

func katStatement() *format.Statement {
	h := func(s string) string { return hex.EncodeToString(sum(s)) }
	fp := func(name string) string { return ssh.FingerprintSHA256(fixedSigner(nil, name).PublicKey()) }
	st := &format.Statement{Campaign: "vectors-2026", Party: "reviewer", Role: "reviewer", Date: "2026-12-01T10:00:00Z",
		Protocol: kat.protocolDigest, KeyCommitment: h("kc"), LedgerSeq: 9, LedgerHash: h("head"),
		Sealed:   []string{"team-a/flux v1 " + h("s1") + " by team-a " + fp("team-a"), "team-b/flux v1 " + h("s2") + " by team-b " + fp("team-b")},
		Blinded:  []string{"team-a/flux " + h("b1"), "team-b/flux " + h("b2")},
		Compared: []string{"flux value team-a team-b pass", "flux width team-a team-b fail"},
		Verdict:  "fail", Accepted: []string{"flux width team-a team-b the tilt is understood"}, AcceptedRisks: []string{"flux/value the errors are public anyway"}}
	d, err := st.ComparisonDigest()
	if err != nil {
		panic(err) // the lines above name only listed slots
	}
	st.Comparison = d
	return st
}

func statementVectors() []*vector {
	s := string(katStatement().Encode())
	mk := func(name, expect, desc, body string) *vector {
		return &vector{name: "statement-" + name + ".txt", headers: hdr("kind", "statement", "expect", expect, "description", desc), payload: []byte(body)}
	}
	return []*vector{
		mk("ok", "ok", "a canonical sign-off statement with every optional line", s),
		mk("crlf", "non-canonical", "CR LF line ends", strings.ReplaceAll(s, "\n", "\r\n")),
		mk("tab", "non-canonical", "a tab instead of the space after a colon", strings.Replace(s, "party: ", "party:\t", 1)),
		mk("no-final-lf", "non-canonical", "no LF after the last line", strings.TrimSuffix(s, "\n")),
		mk("order", "non-canonical", "blinded line before a sealed line", strings.Replace(strings.Replace(s, "blinded: team-a/flux", "BLINDED", 1), "sealed: team-a/flux", "blinded: team-a/flux", 1)),
		mk("unknown-key", "non-canonical", "a key the format does not have", strings.Replace(s, "verdict: fail\n", "verdict: fail\nnote: x\n", 1)),
		mk("v1", "non-canonical", "a tandem/v1 statement", strings.Replace(s, "tandem/v2", "tandem/v1", 1)),
		mk("upper-hex", "non-canonical", "the protocol digest in uppercase hex", strings.Replace(s, "protocol: "+kat.protocolDigest, "protocol: "+strings.ToUpper(kat.protocolDigest), 1)),
		mk("short-commitment", "non-canonical", "a key commitment of 63 hex digits", regexpReplace(s, `(?m)^(key-commitment: [0-9a-f]{63})[0-9a-f]$`, "$1")),
		mk("bad-date", "non-canonical", "a date that does not exist (30 February)", strings.Replace(s, "date: 2026-12-01T10:00:00Z", "date: 2026-02-30T10:00:00Z", 1)),
		mk("date-offset", "non-canonical", "a time with a +00:00 offset instead of Z", strings.Replace(s, "date: 2026-12-01T10:00:00Z", "date: 2026-12-01T10:00:00+00:00", 1)),
		mk("head-leading-zero", "non-canonical", "a ledger-head entry number with a leading zero", strings.Replace(s, "ledger-head: 9 ", "ledger-head: 09 ", 1)),
		mk("bad-party", "non-canonical", "a party that is not a name", strings.Replace(s, "party: reviewer", "party: -reviewer", 1)),
		mk("fingerprint-bits", "non-canonical", "a key fingerprint whose last base64 character has unused bits set", badFingerprint(s)),
		mk("sealed-by-other", "non-canonical", "team-b's seal listed as made by team-a", regexpReplace(s, `(?m)^(sealed: team-b/flux v1 [0-9a-f]{64}) by team-b `, "$1 by team-a ")),
		mk("no-compared", "non-canonical", "no compared line", regexpReplace(s, `(?m)^compared: .*\n`, "")),
		mk("compared-unlisted", "non-canonical", "a compared line naming team-c, which has no blinded line", strings.Replace(s, "compared: flux width team-a team-b fail", "compared: flux width team-a team-c fail", 1)),
		mk("compared-self", "non-canonical", "a team compared with itself", strings.Replace(s, "compared: flux width team-a team-b fail", "compared: flux width team-a team-a fail", 1)),
		mk("compared-edited", "non-canonical", "a compared line's verdict changed after the comparison digest was computed: the digest no longer hashes the listed lines", strings.Replace(s, "compared: flux value team-a team-b pass", "compared: flux value team-a team-b fail", 1)),
		mk("verdict-pass-with-fail", "non-canonical", "verdict pass (without a reason) while a compared line fails; the digest is that of the lines", string(katVariant(func(st *format.Statement) { st.Verdict, st.Accepted = "pass", nil }))),
		mk("pass-with-reason", "non-canonical", "every compared line passes, verdict pass, with an accepted-disagreement line; the digest is that of the lines", string(katVariant(func(st *format.Statement) {
			st.Compared[1] = strings.Replace(st.Compared[1], " fail", " pass", 1)
			st.Verdict = "pass"
		}))),
		mk("accept-one-for-two", "non-canonical", "two compared lines fail, and one accepted-disagreement line gives a reason for only one of them: each failing comparison needs its own, bound to it", string(katVariant(func(st *format.Statement) {
			st.Compared[0] = strings.Replace(st.Compared[0], " pass", " fail", 1)
		}))),
		mk("accept-each", "ok", "two compared lines fail, each with its own accepted-disagreement line, in the order of the compared lines", string(katVariant(func(st *format.Statement) {
			st.Compared[0] = strings.Replace(st.Compared[0], " pass", " fail", 1)
			st.Accepted = []string{"flux value team-a team-b the value shift is the known calibration offset", st.Accepted[0]}
		}))),
		mk("accept-wrong-order", "non-canonical", "two compared lines fail, each with an accepted-disagreement line, but the lines are not in the order of the compared lines", string(katVariant(func(st *format.Statement) {
			st.Compared[0] = strings.Replace(st.Compared[0], " pass", " fail", 1)
			st.Accepted = []string{st.Accepted[0], "flux value team-a team-b the value shift is the known calibration offset"}
		}))),
		mk("pass", "ok", "every compared line passes, verdict pass, no accepted-disagreement line", string(katVariant(func(st *format.Statement) {
			st.Compared[1] = strings.Replace(st.Compared[1], " fail", " pass", 1)
			st.Verdict, st.Accepted = "pass", nil
		}))),
		mk("c1-reason", "non-canonical", "the accepted-disagreement reason holds U+0085 (a C1 control)", strings.Replace(s, "the tilt is", "the tilt\u0085is", 1)),
		mk("bidi-reason", "non-canonical", "the accepted-disagreement reason holds U+202E (right-to-left override)", strings.Replace(s, "the tilt is", "the tilt \u202eis", 1)),
	}
}

// katVariant is the known-answer statement changed by f, with the
// comparison digest of its changed lines.
func katVariant(f func(*format.Statement)) []byte {
	st := katStatement()
	f(st)
	d, err := st.ComparisonDigest()
	if err != nil {
		panic(err)
	}
	st.Comparison = d
	return st.Encode()
}

func regexpReplace(s, re, repl string) string {
	out := regexp.MustCompile(re).ReplaceAllString(s, repl)
	if out == s {
		panic("vector edit " + re + " changed nothing")
	}
	return out
}

// badFingerprint sets the unused low bits of the last base64 character of
// the first fingerprint in s (32 bytes are 42 characters and 4 bits).
func badFingerprint(s string) string {
	const b64 = "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/"
	i := strings.Index(s, "SHA256:") + len("SHA256:") + 42
	c := strings.IndexByte(b64, s[i])
	return s[:i] + string(b64[c|1]) + s[i+1:]
}

func keyFileVectors(k *blind.Key) []*vector {
	s := string(format.EncodeKey(k))
	mk := func(name, expect, desc, body string) *vector {
		return &vector{name: "key-file-" + name + ".txt", headers: hdr("kind", "key-file", "expect", expect, "description", desc), payload: []byte(body)}
	}
	return []*vector{
		mk("ok", "ok", "the key file (plaintext of key.age, and key.revealed)", s),
		mk("upper", "non-canonical", "uppercase hex", format.KeyHeader+"key: "+strings.ToUpper(hex.EncodeToString(k.Bytes()))+"\n"),
		mk("short", "non-canonical", "31 key bytes", strings.Replace(s, s[len(s)-3:], "\n", 1)),
		mk("no-lf", "non-canonical", "no final LF", strings.TrimSuffix(s, "\n")),
	}
}

// katComparison is a comparison of two observables, one compared and one
// incomplete, for the comparison-digest known answer.
func katComparison() *Comparison {
	h := func(s string) string { return hex.EncodeToString(sum(s)) }
	cmp := &Comparison{Summary: &report.Summary{}, Tables: map[Slot]*Published{
		{"team-a", "flux"}: {Digest: h("b1")}, {"team-b", "flux"}: {Digest: h("b2")}, {"team-c", "flux"}: {Digest: h("b3")},
	}, Verdict: Incomplete, Incomplete: []Pending{{Observable: "ratio", Reason: "not sealed yet"}}}
	for _, p := range [][2]string{{"team-a", "team-b"}, {"team-a", "team-c"}, {"team-b", "team-c"}} {
		for _, col := range []string{"value", "width"} {
			cmp.Summary.Entries = append(cmp.Summary.Entries, report.Entry{Observable: "flux", Teams: p,
				Result: &compare.Result{Column: col, Pass: !(p[1] == "team-c" && col == "width")}})
		}
	}
	return cmp
}

func comparisonDigestVector() *vector {
	cmp := katComparison()
	var b strings.Builder
	fmt.Fprintf(&b, "tandem/v2 comparison\nprotocol: %s\n", kat.protocolDigest)
	for _, e := range cmp.Summary.Entries {
		fmt.Fprintf(&b, "%s %s %s %s %s %s %s\n", e.Observable, e.Column, e.Teams[0], e.Teams[1],
			cmp.Tables[Slot{e.Teams[0], e.Observable}].Digest, cmp.Tables[Slot{e.Teams[1], e.Observable}].Digest, e.Verdict())
	}
	b.WriteString("ratio incomplete\nverdict: incomplete\n")
	return &vector{name: "comparison-digest.txt", headers: hdr("kind", "comparison-digest", "expect", "ok",
		"description", "the comparison digest of three teams on one observable, one observable incomplete; the payload is the hashed text",
		"digest", ComparisonDigest(kat.protocolDigest, cmp)), payload: []byte(b.String())}
}

// ---- campaigns ----

// gen builds one campaign with fixed keys, a fixed clock and a fixed
// random stream.
type gen struct {
	t       *testing.T
	dir     string
	signers map[string]ssh.Signer
	ids     []age.Identity
	tick    int
	// statementHash, when set, is the SSHSIG hash forgeSign signs with.
	statementHash string
	// unblindData, when set, edits the data of forgeUnblind's entry.
	unblindData func(map[string]string)
}

func (g *gen) now() time.Time {
	g.tick++
	return time.Date(2026, 12, 1, 9, 0, 0, 0, time.UTC).Add(time.Duration(g.tick) * time.Minute)
}

func (g *gen) open() *Campaign {
	g.t.Helper()
	c, err := open(g.dir)
	if err != nil {
		g.t.Fatal(err)
	}
	c.Now = g.now
	return c
}

func fixedSigner(t *testing.T, name string) ssh.Signer {
	s, err := ssh.NewSignerFromKey(ed25519.NewKeyFromSeed(sum("tandem vectors: ssh key of " + name)))
	if err != nil {
		panic(err) // an ed25519 key always makes a signer
	}
	return s
}

func authorized(s ssh.Signer, name string) string {
	return strings.TrimSpace(string(ssh.MarshalAuthorizedKey(s.PublicKey()))) + " " + name
}

const vectorProtocol = `format = "tandem/v2"
campaign = "vectors-2026"
description = "test vectors of SPEC.md: invented numbers, fixed keys"
custodian = "%s"
custodian_key = "%s"
quorum = ["team-a", "team-b", "reviewer"]

[[party]]
name = "team-a"
role = "team"
key = "%s"

[[party]]
name = "team-b"
role = "team"
key = "%s"

[[party]]
name = "reviewer"
role = "reviewer"
key = "%s"

[[observable]]
name = "flux"
title = "a flux in four bins"

  [[observable.column]]
  name = "value"
  errors = ["stat", "syst"]
  scale = [0.5, 2.0]
  shift = [-100.0, 100.0]
  correlation = 0.5

[[observable]]
name = "ratio"
edges = ["from", "to"]

  [[observable.column]]
  name = "r"
  errors = ["err"]
  scale = [0.25, 4.0]
  shift = [-1e-6, 1e-6]
`

var vectorTables = map[string]string{
	"team-a/flux":   "lo,hi,value,stat,syst\n0,1,10.5,1.5,0.5\n1,2,20.25,2,0.75\n2,4,15,1.75,0.5\n4,8,8.125,1.25,0.25\n",
	"team-b/flux":   "lo,hi,value,stat,syst\n0,1,10,1.5,0.5\n1,2,21,2,0.75\n2,4,14.5,1.75,0.5\n4,8,8.5,1.25,0.25\n",
	"team-a/ratio":  "from,to,r,err\n0,0.5,1.5e-07,2e-08\n0.5,1.5,1.25e-07,2e-08\n1.5,1e+06,9e-08,1.5e-08\n",
	"team-b/ratio":  "from,to,r,err\n0,0.5,1.4e-07,2e-08\n0.5,1.5,1.3e-07,2e-08\n1.5,1e+06,9.5e-08,1.5e-08\n",
	"team-a/events": "lo,hi,n\n0,1,12\n1,2,7\n2,3,3\n3,4,0\n4,5,1\n",
	"team-b/events": "lo,hi,n\n0,1,9\n1,2,8\n2,3,2\n3,4,1\n4,5,0\n",
	"team-a/flux2":  "lo,hi,value,stat,syst\n0,1,10.25,1.5,0.5\n1,2,20.5,2,0.75\n2,4,15,1.75,0.5\n4,8,8.25,1.25,0.25\n",
}

func newGen(t *testing.T) *gen {
	cryptotest.SetGlobalRandom(t, 2026)
	g := &gen{t: t, dir: filepath.Join(t.TempDir(), "c"), signers: map[string]ssh.Signer{}}
	for _, n := range []string{"custodian", "team-a", "team-b", "reviewer", "mallory"} {
		g.signers[n] = fixedSigner(t, n)
	}
	id, err := age.GenerateX25519Identity()
	if err != nil {
		t.Fatal(err)
	}
	g.ids = []age.Identity{id}
	toml := fmt.Sprintf(vectorProtocol, id.Recipient(), authorized(g.signers["custodian"], "custodian"),
		authorized(g.signers["team-a"], "team-a"), authorized(g.signers["team-b"], "team-b"), authorized(g.signers["reviewer"], "reviewer"))
	if err := os.MkdirAll(g.dir, 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(g.dir, ProtocolFile), []byte(toml), 0o644); err != nil {
		t.Fatal(err)
	}
	g.init()
	return g
}

// init is [Campaign.Init] with the generator's clock.
func (g *gen) init() {
	if err := g.open().Init(g.signers["custodian"]); err != nil {
		g.t.Fatal(err)
	}
}

func (g *gen) seal(team, obs, tableKey, reason string) {
	g.t.Helper()
	c := g.open()
	o := c.Protocol.Observable(obs)
	tb, err := table.ParseCSV(tableKey, []byte(vectorTables[tableKey]), table.CSVOptions{Lo: o.Edges[0], Hi: o.Edges[1], Delim: ','})
	if err != nil {
		g.t.Fatal(err)
	}
	if _, err := c.Seal(team, obs, tb, g.signers[team], reason); err != nil {
		g.t.Fatal(err)
	}
}

func (g *gen) blind() {
	g.t.Helper()
	if _, err := g.open().Blind(g.ids, g.signers["custodian"]); err != nil {
		g.t.Fatal(err)
	}
}

func (g *gen) sign(party string) {
	g.t.Helper()
	c := g.open()
	st, _, err := c.Draft(party, "")
	if err != nil {
		g.t.Fatal(err)
	}
	if _, err := c.Sign(st, g.signers[party]); err != nil {
		g.t.Fatal(err)
	}
}

func (g *gen) unblind() {
	g.t.Helper()
	if _, err := g.open().Unblind(g.ids, g.signers["custodian"]); err != nil {
		g.t.Fatal(err)
	}
}

// blinded: both observables sealed by both teams and opened, with one
// team-map step in between.
func (g *gen) blinded() *gen {
	g.seal("team-a", "flux", "team-a/flux", "")
	g.blind() // team-a's flux in its own map: nobody else has sealed
	g.seal("team-b", "flux", "team-b/flux", "")
	g.seal("team-a", "ratio", "team-a/ratio", "")
	g.seal("team-b", "ratio", "team-b/ratio", "")
	g.blind() // both observables open
	return g
}

// countsObservable is the observable of event counts the counts vectors
// add by an amendment (SPEC.md, section 7.1).
const countsObservable = `
[[observable]]
name = "events"
title = "event counts in five bins"

  [[observable.column]]
  name = "n"
  counts = true
  seed = 2026
  mc_samples = 1000
  scale = [0.5, 2.0]
  shift = [-50.0, 50.0]
  accept_risk = "five bins of invented counts: the self-audit may break a random key of so small a table"
`

// withCounts: the reviewer amends the protocol to add the observable
// events, compared as counts, and both teams seal it.
func (g *gen) withCounts() *gen {
	g.t.Helper()
	c := g.open()
	cur, err := os.ReadFile(filepath.Join(g.dir, ProtocolFile))
	if err != nil {
		g.t.Fatal(err)
	}
	if _, err := c.Amend("reviewer", append(cur, countsObservable...), "add the event counts of the sparse tail", g.signers["reviewer"]); err != nil {
		g.t.Fatal(err)
	}
	g.seal("team-a", "events", "team-a/events", "")
	g.seal("team-b", "events", "team-b/events", "")
	return g
}

func (g *gen) signed() *gen {
	g.blinded()
	for _, p := range []string{"team-a", "team-b", "reviewer"} {
		g.sign(p)
	}
	return g
}

// rawAppend adds an entry to the actor's log, signed by signer, naming
// the heads of every other log, bypassing every check: how a forger
// outside tandem would write it.
func (g *gen) rawAppend(e format.Entry, signer ssh.Signer) {
	g.t.Helper()
	c := g.open()
	own := c.logs[e.Actor]
	e.Seq, e.Prev = len(own)+1, format.Genesis
	if len(own) > 0 {
		e.Prev = c.Ledger[own[len(own)-1]].Hash()
	}
	if e.Time == "" {
		e.Time = g.now().UTC().Format(time.RFC3339)
	}
	data := map[string]string{}
	for k, v := range e.Data {
		data[k] = v
	}
	for log, seq := range c.Heads() {
		if log != e.Actor {
			data[afterPrefix+log] = ref{seq, c.Ledger[c.logs[log][seq-1]].Hash()}.String()
		}
	}
	e.Data = data
	g.writeEntry(&e, signer)
}

// writeEntry signs e with signer and writes it as its file.
func (g *gen) writeEntry(e *format.Entry, signer ssh.Signer) {
	g.t.Helper()
	sig, err := sshsig.Sign(signer, format.LedgerNamespace, e.SignedBytes())
	if err != nil {
		g.t.Fatal(err)
	}
	e.Sig = sshsig.Flatten(sig)
	e.SetHash(format.HashLine(e.Line()))
	if err := g.open().root.CreateExclusive(EntryPath(e), format.EncodeEntryFile(e), 0o644); err != nil {
		g.t.Fatal(err)
	}
}

// entry returns the last entry of a log and its file.
func (g *gen) last(log string) (format.Entry, string) {
	c := g.open()
	l := c.logs[log]
	i := l[len(l)-1]
	return c.Ledger[i], filepath.Join(g.dir, filepath.FromSlash(c.paths[i]))
}

// reentry replaces the last entry of a log by edit's version of it,
// re-signed by signer (nil: the entry's sig is kept) and filed under its
// new hash: a forger rewriting an entry nothing names yet.
func (g *gen) reentry(log string, signer ssh.Signer, edit func(e *format.Entry)) {
	g.t.Helper()
	e, p := g.last(log)
	if err := os.Remove(p); err != nil {
		g.t.Fatal(err)
	}
	edit(&e)
	if signer != nil {
		g.writeEntry(&e, signer)
		return
	}
	e.SetHash(format.HashLine(e.Line()))
	if err := g.open().root.CreateExclusive(EntryPath(&e), format.EncodeEntryFile(&e), 0o644); err != nil {
		g.t.Fatal(err)
	}
}

// forgeUnblind is unblind without its checks (no quorum, no audit), as a
// rogue custodian would run it; tamper may alter what is revealed.
func (g *gen) forgeUnblind(tamperTable func(s Slot, f *format.TableFile), revealKey *blind.Key) {
	t := g.t
	c := g.open()
	k, err := c.openKey(StepUnblind, g.ids)
	if err != nil {
		t.Fatal(err)
	}
	out := map[string]string{}
	for _, s := range c.Slots() {
		f, err := c.openSealed(StepUnblind, c.State().Observables[s.Observable].Latest[s.Team], g.ids)
		if err != nil {
			t.Fatal(err)
		}
		u := *f
		u.Kind = format.Unblinded
		if tamperTable != nil {
			tamperTable(s, &u)
		}
		out[s.UnblindedPath()] = string(u.Encode())
	}
	if revealKey == nil {
		revealKey = k
	}
	out[RevealedFile] = string(format.EncodeKey(revealKey))
	digests := map[string]string{}
	for rel, data := range out {
		if err := c.root.CreateExclusive(rel, []byte(data), 0o644); err != nil {
			t.Fatal(err)
		}
		digests[rel] = format.Digest([]byte(data))
	}
	var signers []string
	for _, s := range c.Signoffs() {
		if s.Present {
			signers = append(signers, s.Party)
		}
	}
	salt, _, _ := c.KeyCommitment()
	data := map[string]string{"signed_by": strings.Join(signers, ","), "key_salt": hex.EncodeToString(salt)}
	if g.unblindData != nil {
		g.unblindData(data)
	}
	g.rawAppend(format.Entry{Step: string(StepUnblind), Actor: "custodian", Files: digests, Data: data}, g.signers["custodian"])
}

// forgeSign writes a sign-off whose statement was altered after drafting
// and signs the statement file with sigBy's key; the ledger entry is the
// party's own.
func (g *gen) forgeSign(party, sigBy string, alter func(*Statement)) {
	g.forgeSignMod(party, sigBy, alter, nil)
}

// forgeSignMod is forgeSign whose mod may change the signature file's
// bytes and the entry's files and data before they are written.
func (g *gen) forgeSignMod(party, sigBy string, alter func(*Statement), mod func(sig []byte, files, data map[string]string) []byte) {
	t := g.t
	c := g.open()
	st, _, err := c.Draft(party, "")
	if err != nil {
		t.Fatal(err)
	}
	if alter != nil {
		alter(st)
	}
	body := st.Encode()
	alg := "sha512"
	if g.statementHash != "" {
		alg = g.statementHash
	}
	sig, err := sshsig.SignHash(g.signers[sigBy], SignoffNamespace, body, alg)
	if err != nil {
		t.Fatal(err)
	}
	sp, gp := SignoffPaths(party, 1, format.Digest(body))
	files, data := map[string]string{sp: format.Digest(body)}, signData(st)
	if mod != nil {
		sig = mod(sig, files, data)
	}
	files[gp] = format.Digest(sig)
	if err := c.root.CreateExclusive(sp, body, 0o644); err != nil {
		t.Fatal(err)
	}
	if err := c.root.CreateExclusive(gp, sig, 0o644); err != nil {
		t.Fatal(err)
	}
	g.rawAppend(format.Entry{Step: string(StepSign), Actor: party, Files: files, Data: data}, g.signers[party])
}

// forgeSeal seals a table of the vectors as team, with the version and
// the reason given and the file named for pathVersion, without the
// checks Seal makes.
func (g *gen) forgeSeal(team, obs, tableKey string, version, pathVersion int, reason string) {
	t := g.t
	c := g.open()
	o := c.Protocol.Observable(obs)
	tb, err := table.ParseCSV(tableKey, []byte(vectorTables[tableKey]), table.CSVOptions{Lo: o.Edges[0], Hi: o.Edges[1], Delim: ','})
	if err != nil {
		t.Fatal(err)
	}
	ct, err := Canonical(o, tb)
	if err != nil {
		t.Fatal(err)
	}
	nonce, _ := format.NewNonce()
	rcpt, _ := c.Protocol.Recipient()
	f := &format.TableFile{Kind: format.Sealed, Campaign: c.Protocol.Campaign, Team: team, Observable: obs, Version: version, Nonce: nonce, Table: ct}
	ciphertext, err := encrypt(rcpt, f.Encode())
	if err != nil {
		t.Fatal(err)
	}
	com := f.Commitment()
	rel := Slot{team, obs}.SealedPath(pathVersion, com)
	if err := c.root.CreateExclusive(rel, ciphertext, 0o644); err != nil {
		t.Fatal(err)
	}
	data := map[string]string{"team": team, "observable": obs, "commitment": com, "version": strconv.Itoa(version)}
	if reason != "" {
		data["reason"] = reason
	}
	g.rawAppend(format.Entry{Step: string(StepSeal), Actor: team, Files: map[string]string{rel: format.Digest(ciphertext)}, Data: data}, g.signers[team])
}

// glob is the one file of the campaign matching pattern, relative.
func (g *gen) glob(pattern string) string {
	g.t.Helper()
	m, _ := filepath.Glob(filepath.Join(g.dir, filepath.FromSlash(pattern)))
	if len(m) != 1 {
		g.t.Fatalf("%s matches %d files", pattern, len(m))
	}
	rel, _ := filepath.Rel(g.dir, m[0])
	return filepath.ToSlash(rel)
}

// rewrap re-armors an SSH signature in lines of n columns.
func rewrap(sig []byte, n int) []byte {
	b64 := sshsig.Flatten(sig)
	var out strings.Builder
	out.WriteString("-----BEGIN SSH SIGNATURE-----\n")
	for len(b64) > n {
		out.WriteString(b64[:n] + "\n")
		b64 = b64[n:]
	}
	out.WriteString(b64 + "\n-----END SSH SIGNATURE-----\n")
	return []byte(out.String())
}

// signData is the data of a sign entry for st.
func signData(st *Statement) map[string]string {
	d := map[string]string{"party": st.Party, "verdict": st.Verdict}
	if len(st.Accepted) > 0 {
		d["accepted_disagreement"] = format.AcceptedMember(st.Accepted)
	}
	return d
}

// editFile rewrites one file of the campaign through f.
func (g *gen) editFile(rel string, f func(string) string) {
	p := filepath.Join(g.dir, filepath.FromSlash(rel))
	data, err := os.ReadFile(p)
	if err != nil {
		g.t.Fatal(err)
	}
	if err := os.WriteFile(p, []byte(f(string(data))), 0o644); err != nil {
		g.t.Fatal(err)
	}
}

func campaignVectors(t *testing.T, out string) []*vector {
	type cv struct {
		name, expect, desc string
		build              func(g *gen)
	}
	cases := []cv{
		{"ok-blinded", "ok", "both teams sealed both observables, one team-map step, then both opened", func(g *gen) { g.blinded() }},
		{"ok-signed", "ok", "every party of the quorum signed the passing comparison", func(g *gen) { g.signed() }},
		{"ok-unblinded", "ok", "unblinded after the quorum signed: verify recomputes every blinded table from the true tables and K", func(g *gen) { g.signed().unblind() }},
		{"ok-resealed", "ok", "team-a re-sealed flux after every party signed and the custodian opened round 2: the sign-offs are stale, which before unblinding is a note, not a problem", func(g *gen) {
			g.signed()
			g.seal("team-a", "flux", "team-a/flux2", "a corrected efficiency")
			g.blind()
		}},
		{"ok-protocol-reformatted", "ok", "as ok-signed, with campaign.toml given CRLF line ends and a comment line (as core.autocrlf or an editor makes it): its meaning is unchanged, so the lock holds", func(g *gen) {
			g.signed()
			g.editFile(ProtocolFile, func(s string) string {
				return "# a comment added after init\r\n" + strings.ReplaceAll(s, "\n", "\r\n")
			})
		}},
		{"ok-leftover-seal", "ok", "as ok-blinded, with a sealed file an interrupted seal left without its entry: a note only, the next seal of the slot removes it", func(g *gen) {
			g.blinded()
			if err := os.WriteFile(filepath.Join(g.dir, "sealed", "team-a", "flux.v2-0123456789ab.age"), []byte("age-encryption.org/v1\n"), 0o644); err != nil {
				t.Fatal(err)
			}
		}},
		{"stale-signoff", "stale-signoff", "as ok-resealed, then unblinded by a custodian who skipped the checks: every sign-off predates round 2", func(g *gen) {
			g.signed()
			g.seal("team-a", "flux", "team-a/flux2", "a corrected efficiency")
			g.blind()
			g.unblindData = func(d map[string]string) { d["signed_by"] = "" } // no sign-off holds
			g.forgeUnblind(nil, nil)
		}},
		{"missing-signoff", "missing-signoff", "unblinded by a custodian who skipped the checks before the reviewer (in the quorum) signed", func(g *gen) {
			g.blinded()
			g.sign("team-a")
			g.sign("team-b")
			g.forgeUnblind(nil, nil)
		}},
		{"broken-chain", "broken-chain", "the time of team-a's first entry edited (its file renamed to the new hash): team-a's entry 2 no longer names its hash", func(g *gen) {
			g.signed()
			c := g.open()
			i := c.logs["team-a"][0]
			e := c.Ledger[i]
			os.Remove(filepath.Join(g.dir, filepath.FromSlash(c.paths[i])))
			e.Time = strings.Replace(e.Time, "T09:", "T08:", 1)
			e.SetHash(format.HashLine(e.Line()))
			if err := c.root.CreateExclusive(EntryPath(&e), format.EncodeEntryFile(&e), 0o644); err != nil {
				t.Fatal(err)
			}
		}},
		{"broken-chain-cut", "broken-chain", "team-a's last entry (its seal of ratio) removed, with its sealed file; the custodian's open entry names it, so the cut is found", func(g *gen) {
			g.blinded()
			e, p := g.last("team-a")
			os.Remove(p)
			for f := range e.Files {
				os.Remove(filepath.Join(g.dir, filepath.FromSlash(f)))
			}
		}},
		{"fork", "fork", "team-a signed in two clones at once and both were merged: two entries 1 in team-a's log", func(g *gen) {
			g.blinded()
			g.sign("team-b")
			clone := *g
			clone.dir = filepath.Join(t.TempDir(), "clone")
			if err := copyCampaign(g.dir, clone.dir); err != nil {
				t.Fatal(err)
			}
			g.sign("team-a")
			clone.tick += 7
			clone.sign("team-a")
			if err := copyCampaign(clone.dir, g.dir); err != nil {
				t.Fatal(err)
			}
		}},
		{"bad-signature", "bad-signature", "the time of the reviewer's sign entry edited and its file renamed to the new hash: nothing names it, but its signature fails", func(g *gen) {
			g.signed()
			g.reentry("reviewer", nil, func(e *format.Entry) { e.Time = strings.Replace(e.Time, "T09:", "T10:", 1) })
		}},
		{"bad-signature-sha256", "bad-signature", "the reviewer's sign entry re-signed by the reviewer with the SSHSIG hash sha256 (SPEC requires sha512)", func(g *gen) {
			g.signed()
			g.reentry("reviewer", nil, func(e *format.Entry) {
				sig, err := sshsig.SignHash(g.signers["reviewer"], format.LedgerNamespace, e.SignedBytes(), "sha256")
				if err != nil {
					t.Fatal(err)
				}
				e.Sig = sshsig.Flatten(sig)
			})
		}},
		{"out-of-order-time", "out-of-order", "the reviewer's sign entry dated 2020, before init, re-signed by the reviewer: times never go back along what an entry follows", func(g *gen) {
			g.signed()
			g.reentry("reviewer", g.signers["reviewer"], func(e *format.Entry) { e.Time = "2020-01-01T00:00:00Z" })
		}},
		{"bad-entry-foreign-file", "bad-entry", "team-a's sign entry also logs a new digest for team-b's sealed file, which team-a replaced: a step logs only its own paths, and a logged path is never logged again", func(g *gen) {
			g.blinded()
			g.sign("team-b")
			sealed := g.glob("sealed/team-b/flux.v1-*.age")
			g.editFile(sealed, func(s string) string { return s + "x" })
			data, _ := os.ReadFile(filepath.Join(g.dir, filepath.FromSlash(sealed)))
			g.forgeSignMod("team-a", "team-a", nil, func(sig []byte, files, _ map[string]string) []byte {
				files[sealed] = format.Digest(data)
				return sig
			})
		}},
		{"bad-entry-key-age", "bad-entry", "the reviewer replaced key.age with an age file of its own and its sign entry logs the new digest", func(g *gen) {
			g.blinded()
			g.sign("team-a")
			g.sign("team-b")
			g.editFile(KeyFile, func(s string) string { return s + "\n" })
			data, _ := os.ReadFile(filepath.Join(g.dir, KeyFile))
			g.forgeSignMod("reviewer", "reviewer", nil, func(sig []byte, files, _ map[string]string) []byte {
				files[KeyFile] = format.Digest(data)
				return sig
			})
		}},
		{"bad-entry-signed-by", "bad-entry", "unblinded after the quorum signed, but the unblind entry names team-a alone in signed_by (re-signed by the custodian)", func(g *gen) {
			g.signed()
			g.unblindData = func(d map[string]string) { d["signed_by"] = "team-a" }
			g.forgeUnblind(nil, nil)
		}},
		{"bad-entry-salt", "bad-entry", "unblinded after the quorum signed, but the unblind entry's key_salt is not the init entry's", func(g *gen) {
			g.signed()
			g.unblindData = func(d map[string]string) { d["key_salt"] = hex.EncodeToString(sum("another salt")) }
			g.forgeUnblind(nil, nil)
		}},
		{"bad-entry-reseal-no-reason", "bad-entry", "team-a re-sealed flux after it was opened, without the REQUIRED reason (the entry made outside tandem)", func(g *gen) {
			g.blinded()
			g.forgeSeal("team-a", "flux", "team-a/flux2", 2, 2, "")
		}},
		{"bad-entry-version-file", "bad-entry", "team-a's seal entry says version 2 but logs the file of version 1", func(g *gen) {
			g.blinded()
			g.forgeSeal("team-a", "flux", "team-a/flux2", 2, 1, "a corrected efficiency")
		}},
		{"bad-entry-reserved-member", "bad-entry", "team-a's sign entry holds the member observable, reserved for staged unblinding and not a v3 member", func(g *gen) {
			g.blinded()
			g.forgeSignMod("team-a", "team-a", nil, func(sig []byte, _, data map[string]string) []byte {
				data["observable"] = "flux"
				return sig
			})
		}},
		{"ok-counts", "ok", "the protocol amended to add events, a column of event counts (counts = true); both teams sealed it, the custodian's open entry logs the count tests it ran on the true counts (counts/events.r1-….txt), every party signed and the custodian unblinded: verify recomputes the logged tests from the unblinded tables", func(g *gen) {
			g.withCounts().signed().unblind()
		}},
		{"bad-digest-counts", "bad-digest", "as ok-counts before signing, with a per-bin p-value of the logged count tests edited after the open entry logged the file", func(g *gen) {
			g.withCounts().blinded()
			g.editFile(g.glob("counts/events.r1-*.txt"), func(s string) string {
				return strings.Replace(s, "bin: binomial ", "bin: binomial 0", 1)
			})
		}},
		{"bad-entry-counts-missing", "bad-entry", "the protocol amended to add events, compared as counts, both teams sealed it and the custodian opened it, but its open entry logs no count tests (re-signed by the custodian, the file removed)", func(g *gen) {
			g.withCounts().blind()
			f := g.glob("counts/events.r1-*.txt")
			os.Remove(filepath.Join(g.dir, filepath.FromSlash(f)))
			g.reentry("custodian", g.signers["custodian"], func(e *format.Entry) {
				if e.Data["observable"] == "events" && e.Step == "open" {
					delete(e.Files, f)
				}
			})
		}},
		{"private-key", "private-key", "as ok-blinded, with the custodian's age identity copied into the campaign folder", func(g *gen) {
			g.blinded()
			id := g.ids[0].(*age.X25519Identity)
			if err := os.WriteFile(filepath.Join(g.dir, "custodian.key"), []byte("# an identity\n"+id.String()+"\n"), 0o644); err != nil {
				t.Fatal(err)
			}
		}},
		{"uncovered-file-unblind-cut", "uncovered-file", "unblinded, then the unblind entry removed: key.revealed and unblinded/ stay without the entry that writes them", func(g *gen) {
			g.signed().unblind()
			_, p := g.last("custodian")
			os.Remove(p)
		}},
		{"uncovered-file-signs-cut", "uncovered-file", "every sign entry removed: the statements stay without their entries", func(g *gen) {
			g.signed()
			for _, p := range []string{"team-a", "team-b", "reviewer"} {
				_, f := g.last(p)
				os.Remove(f)
			}
		}},
		{"bad-signoff-verdict", "bad-signoff", "the reviewer's sign entry logs verdict fail with a reason while its signed statement says pass", func(g *gen) {
			g.blinded()
			g.sign("team-a")
			g.sign("team-b")
			g.forgeSignMod("reviewer", "reviewer", nil, func(sig []byte, _, data map[string]string) []byte {
				data["verdict"], data["accepted_disagreement"] = "fail", "we think flux differs"
				return sig
			})
		}},
		{"bad-signoff-reason", "bad-signoff", "the reviewer signed a failing statement with one accepted-disagreement reason; its sign entry logs another", func(g *gen) {
			g.blinded()
			g.sign("team-a")
			g.sign("team-b")
			g.forgeSignMod("reviewer", "reviewer", func(st *Statement) {
				st.Compared[0] = strings.Replace(st.Compared[0], " pass", " fail", 1)
				st.Verdict, st.Accepted = "fail", []string{strings.TrimSuffix(st.Compared[0], " fail") + " we think flux differs"}
				d, err := st.ComparisonDigest()
				if err != nil {
					t.Fatal(err)
				}
				st.Comparison = d
			}, func(sig []byte, _, data map[string]string) []byte {
				data["accepted_disagreement"] = "a reason the statement does not give"
				return sig
			})
		}},
		{"bad-signoff-sha256", "bad-signoff", "the reviewer's statement signed by the reviewer with the SSHSIG hash sha256 (SPEC requires sha512)", func(g *gen) {
			g.blinded()
			g.sign("team-a")
			g.sign("team-b")
			g.statementHash = "sha256"
			g.forgeSign("reviewer", "reviewer", nil)
		}},
		{"bad-signoff-armor", "bad-signoff", "the reviewer's statement signature re-armored in lines of 76 columns (SPEC requires 70), its digest logged as it stands", func(g *gen) {
			g.blinded()
			g.sign("team-a")
			g.sign("team-b")
			g.forgeSignMod("reviewer", "reviewer", nil, func(sig []byte, _, _ map[string]string) []byte { return rewrap(sig, 76) })
		}},
		{"bad-signoff-stale-key", "bad-signoff", "the reviewer signed a statement naming another key commitment, then team-a re-sealed: the sign-off is stale and still refused", func(g *gen) {
			g.blinded()
			g.forgeSign("reviewer", "reviewer", func(st *Statement) { st.KeyCommitment = hex.EncodeToString(sum("other key")) })
			g.seal("team-a", "flux", "team-a/flux2", "a corrected efficiency")
			g.blind()
		}},
		{"unknown-party", "unknown-party", "an entry by \"mallory\", who is not a party, correctly chained and signed with mallory's key", func(g *gen) {
			g.blinded()
			g.rawAppend(format.Entry{Step: "sign", Actor: "mallory", Data: map[string]string{"party": "mallory", "verdict": "pass"}}, g.signers["mallory"])
		}},
		{"second-init", "second-init", "a second init entry by the custodian, correctly chained and signed, logging a new key commitment", func(g *gen) {
			g.blinded()
			g.rawAppend(format.Entry{Step: "init", Actor: "custodian", Data: map[string]string{"campaign": "vectors-2026",
				"key_salt": hex.EncodeToString(sum("salt2")), "key_commitment": hex.EncodeToString(sum("com2"))}}, g.signers["custodian"])
		}},
		{"out-of-order", "out-of-order", "a sign entry by team-a after the unblind entry, correctly chained and signed", func(g *gen) {
			g.signed().unblind()
			g.rawAppend(format.Entry{Step: "sign", Actor: "team-a", Data: map[string]string{"party": "team-a", "verdict": "pass"}}, g.signers["team-a"])
		}},
		{"protocol-changed", "protocol-changed", "campaign.toml's description changed after init without an amend entry (a change of meaning, not of form)", func(g *gen) {
			g.blinded()
			g.editFile(ProtocolFile, func(s string) string { return strings.Replace(s, "invented numbers", "other numbers", 1) })
		}},
		{"bad-digest", "bad-digest", "one number of a published blinded table changed (still canonical)", func(g *gen) {
			g.blinded()
			g.editFile(g.glob("blinded/team-b/ratio.v1-????????????.csv"), func(s string) string {
				lines := strings.Split(s, "\n")
				lines[8] = strings.Replace(lines[8], "0,0.5,", "0,0.25,", 1)
				return strings.Join(lines, "\n")
			})
		}},
		{"uncovered-file", "uncovered-file", "a file the ledger does not cover, in blinded/", func(g *gen) {
			g.blinded()
			if err := os.WriteFile(filepath.Join(g.dir, "blinded", "team-a", "notes.txt"), []byte("added by hand\n"), 0o644); err != nil {
				t.Fatal(err)
			}
		}},
		{"bad-commitment-table", "bad-commitment", "a custodian who skipped the checks revealed a true table that is not the one team-b sealed", func(g *gen) {
			g.signed()
			g.forgeUnblind(func(s Slot, f *format.TableFile) {
				if s.Team == "team-b" && s.Observable == "flux" {
					cols := slices.Clone(f.Table.Cols)
					cols[0] = slices.Clone(cols[0])
					cols[0][1] = 20.5
					tb := *f.Table
					tb.Cols = cols
					f.Table = &tb
				}
			}, nil)
		}},
		{"bad-commitment-key", "bad-commitment", "a custodian who skipped the checks published a key that does not open the commitment logged at init", func(g *gen) {
			g.signed()
			other, _ := blind.KeyFromBytes(sum("another key"))
			g.forgeUnblind(nil, other)
		}},
		{"bad-signoff", "bad-signoff", "the reviewer signed a statement whose comparison digest is not the one recomputed from the campaign", func(g *gen) {
			g.blinded()
			g.sign("team-a")
			g.sign("team-b")
			g.forgeSign("reviewer", "reviewer", func(st *Statement) { st.Comparison = hex.EncodeToString(sum("other comparison")) })
		}},
		{"bad-signoff-signature", "bad-signoff", "the reviewer's statement is signed with team-a's key (the ledger entry itself is the reviewer's)", func(g *gen) {
			g.blinded()
			g.sign("team-a")
			g.sign("team-b")
			g.forgeSign("reviewer", "team-a", nil)
		}},
		{"comparison-mismatch", "comparison-mismatch", "the reviewer signed a statement listing flux/value team-a vs team-b as fail (with a reason, verdict fail, and the comparison digest of the listed lines); the blinded tables give pass (header verdicts)", func(g *gen) {
			g.blinded()
			g.sign("team-a")
			g.sign("team-b")
			g.forgeSign("reviewer", "reviewer", func(st *Statement) {
				st.Compared[0] = strings.Replace(st.Compared[0], " pass", " fail", 1)
				st.Verdict, st.Accepted = "fail", []string{strings.TrimSuffix(st.Compared[0], " fail") + " we think flux differs"}
				d, err := st.ComparisonDigest()
				if err != nil {
					t.Fatal(err)
				}
				st.Comparison = d
			})
		}},
		{"bad-signoff-compared", "bad-signoff", "the reviewer's statement lists flux/value team-a vs team-b as fail, but its comparison digest is that of the true lines: the statement contradicts itself", func(g *gen) {
			g.blinded()
			g.sign("team-a")
			g.sign("team-b")
			g.forgeSign("reviewer", "reviewer", func(st *Statement) {
				st.Compared[0] = strings.Replace(st.Compared[0], " pass", " fail", 1)
				st.Verdict, st.Accepted = "fail", []string{strings.TrimSuffix(st.Compared[0], " fail") + " we think flux differs"}
			})
		}},
	}
	var vs []*vector
	for _, c := range cases {
		g := newGen(t)
		c.build(g)
		dst := filepath.Join(out, "campaigns", c.name)
		if err := copyCampaign(g.dir, dst); err != nil {
			t.Fatal(err)
		}
		man, err := manifest(dst)
		if err != nil {
			t.Fatal(err)
		}
		h := hdr("kind", "campaign", "expect", c.expect, "description", c.desc, "campaign", c.name)
		if verdicts := recomputedVerdicts(t, g.dir); verdicts != "" {
			h = append(h, [2]string{"verdicts", verdicts})
		}
		vs = append(vs, &vector{name: "campaign-" + c.name + ".txt", headers: h, payload: man})
	}
	return vs
}

// copyCampaign copies a campaign without its dot-files and reports/.
func copyCampaign(src, dst string) error {
	return filepath.WalkDir(src, func(p string, d os.DirEntry, err error) error {
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(src, p)
		if rel != "." && (strings.HasPrefix(d.Name(), ".") || rel == ReportsDir) {
			if d.IsDir() {
				return filepath.SkipDir
			}
			return nil
		}
		if d.IsDir() {
			return os.MkdirAll(filepath.Join(dst, rel), 0o755)
		}
		data, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		return os.WriteFile(filepath.Join(dst, rel), data, 0o644)
	})
}

func hmacSHA256(key, msg []byte) []byte {
	m := hmac.New(sha256.New, key)
	m.Write(msg)
	return m.Sum(nil)
}

// hkdfExpand is RFC 5869's HKDF-Expand: T(i) = HMAC(PRK, T(i-1) | info | i).
func hkdfExpand(prk, info []byte, n int) []byte {
	var out, prev []byte
	for i := byte(1); len(out) < n; i++ {
		prev = hmacSHA256(prk, append(append(slices.Clone(prev), info...), i))
		out = append(out, prev...)
	}
	return out[:n]
}
