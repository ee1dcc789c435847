package blind_test

import (
	"bytes"
	"errors"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strings"
	"sync"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"tandem/blind"
	"tandem/blind/demo"
	"tandem/compare/table"
)

// needTool skips when an outside tool is missing, unless CI demands it
// (TANDEM_REQUIRE_TOOLS=1, set by .ci/run).
func needTool(t *testing.T, name string) string {
	t.Helper()
	p, err := exec.LookPath(name)
	if err != nil {
		if os.Getenv("TANDEM_REQUIRE_TOOLS") != "" {
			t.Fatalf("%s is required in CI but not installed", name)
		}
		t.Skipf("skipping: %s is not installed (apt-get install %s)", name, name)
	}
	return p
}

// buildDemo makes a demo campaign stopped before step (or complete).
func buildDemo(t *testing.T, stop string) string {
	t.Helper()
	dir := filepath.Join(t.TempDir(), "c")
	if err := demo.Build(dir, demo.Options{StopBefore: stop}); err != nil {
		t.Fatal(err)
	}
	return dir
}

func custodian(t *testing.T, dir string) *blind.Campaign {
	t.Helper()
	c, err := blind.Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	return c
}

func TestDemoVerifies(t *testing.T) {
	dir := buildDemo(t, "")
	if r := blind.Verify(dir); !r.OK() {
		t.Fatalf("verify: %v", r.Problems)
	}
	c := custodian(t, dir)
	blinded, _, err := c.Compare(blind.Blinded)
	if err != nil {
		t.Fatal(err)
	}
	truth, _, err := c.Compare(blind.Unblinded)
	if err != nil {
		t.Fatal(err)
	}
	// Pulls, χ² and p-values are the same on blinded and true tables
	// (shift, scale and per-bin shape blinding all occur in the demo).
	for i := range blinded.Entries {
		b, u := blinded.Entries[i], truth.Entries[i]
		for _, k := range [][2]float64{{b.Chi2, u.Chi2}, {b.PValue, u.PValue}, {b.KSP, u.KSP}, {b.RunsP, u.RunsP}, {b.MaxPullP, u.MaxPullP}} {
			if math.Abs(k[0]-k[1]) > 1e-12*math.Max(math.Abs(k[1]), 1e-300) {
				t.Errorf("%s: blinded %v vs true %v", b.Observable, k[0], k[1])
			}
		}
		for j := range b.Pulls {
			if math.Abs(b.Pulls[j]-u.Pulls[j]) > 1e-9*math.Max(1, math.Abs(u.Pulls[j])) {
				t.Errorf("%s bin %d: pull %v vs %v", b.Observable, j, b.Pulls[j], u.Pulls[j])
			}
		}
		if slices.Equal(b.A, u.A) {
			t.Errorf("%s: blinded values equal the true values", b.Observable)
		}
	}
}

// TestOffsetsUniform: the blinding parameters are a deterministic function
// of K and the info string, differ across observables, columns and bins,
// and are uniform over the declared range (χ² goodness of fit over 20
// equal cells for 4000 keys; fixed seed is irrelevant since keys come from
// the OS, so the threshold is 1e-4).
func TestOffsetsUniform(t *testing.T) {
	col := &blind.Column{Name: "rate", Shift: []float64{-5, 5}, Scale: []float64{0.5, 2}, Shape: true}
	const keys, cells = 4000, 20
	counts := make([]float64, cells)
	for i := 0; i < keys; i++ {
		k, err := blind.GenerateKey()
		if err != nil {
			t.Fatal(err)
		}
		m := k.ColumnMap("flux", col, 3)
		m2 := k.ColumnMap("flux", col, 3)
		if !slices.Equal(m.S, m2.S) || !slices.Equal(m.O, m2.O) {
			t.Fatal("map is not deterministic")
		}
		other := k.ColumnMap("ratio", col, 3)
		if m.O[0] == other.O[0] || m.O[0] == m.O[1] || m.S[1] == m.S[2] {
			t.Fatal("parameters repeat across observables or bins")
		}
		for _, o := range m.O {
			if o < -5 || o >= 5 {
				t.Fatalf("offset %v outside [-5, 5)", o)
			}
		}
		for _, s := range m.S {
			if s < 0.5 || s >= 2 {
				t.Fatalf("scale %v outside [0.5, 2)", s)
			}
		}
		counts[int((m.O[0]+5)/10*cells)]++
	}
	stat := 0.0
	for _, c := range counts {
		stat += (c - keys/cells) * (c - keys/cells) / (keys / cells)
	}
	if p := (distuv.ChiSquared{K: cells - 1}).Survival(stat); p < 1e-4 {
		t.Errorf("offsets not uniform: %v (p = %v)", counts, p)
	}
	if !strings.Contains(blind.Info("flux", "rate", "shift", 4), "flux\x00rate\x00shift\x004") {
		t.Errorf("info string layout changed")
	}
}

// TestKeyNeverFormatted: the key hides itself from fmt.
func TestKeyNeverFormatted(t *testing.T) {
	k, _ := blind.GenerateKey()
	var b bytes.Buffer
	for _, f := range []string{"%v", "%+v", "%#v", "%s"} {
		b.Reset()
		b.WriteString(strings.TrimSpace(sprintf(f, k)))
		if !strings.Contains(b.String(), "hidden") {
			t.Errorf("%s prints %q", f, b.String())
		}
	}
}

// TestAgeToolOpensSealedFile: Debian's age opens a sealed table with the
// custodian identity, and the plaintext is the documented text header plus
// CSV.
func TestAgeToolOpensSealedFile(t *testing.T) {
	agePath := needTool(t, "age")
	dir := buildDemo(t, "blind")
	out, err := exec.Command(agePath, "--decrypt", "-i", filepath.Join(dir, "keys", "custodian.key"),
		filepath.Join(dir, "sealed", "heron", "muon_rate.age")).Output()
	if err != nil {
		t.Fatalf("age --decrypt: %v", err)
	}
	if !strings.HasPrefix(string(out), "# tandem/v1 sealed table\n# campaign: kettlewell-muon-2026\n# team: heron\n") ||
		!strings.Contains(string(out), "\nlo,hi,rate,stat,syst\n") {
		t.Errorf("unexpected plaintext:\n%s", out)
	}
	if _, err := table.ParseCSV("age-out", out, table.CSVOptions{}); err != nil {
		t.Errorf("plaintext is not a readable CSV: %v", err)
	}
}

// TestSSHKeygenVerifiesSignoff: OpenSSH's ssh-keygen -Y verify accepts
// tandem's sign-off, and tandem accepts a sign-off signed by ssh-keygen -Y sign.
func TestSSHKeygenInterop(t *testing.T) {
	kg := needTool(t, "ssh-keygen")
	dir := buildDemo(t, "unblind")
	pub, _ := os.ReadFile(filepath.Join(dir, "keys", "heron.pub"))
	allowed := filepath.Join(t.TempDir(), "allowed_signers")
	os.WriteFile(allowed, []byte("heron "+string(pub)), 0o644)
	stmt := filepath.Join(dir, "signoffs", "heron.statement")
	cmd := exec.Command(kg, "-Y", "verify", "-n", blind.Namespace, "-f", allowed, "-I", "heron", "-s", stmt+".sig")
	cmd.Stdin, _ = os.Open(stmt)
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("ssh-keygen -Y verify rejected tandem's signature: %v\n%s", err, out)
	}
	// Now replace otter's signature with one made by ssh-keygen.
	otterStmt := filepath.Join(dir, "signoffs", "otter.statement")
	ours, _ := os.ReadFile(otterStmt + ".sig")
	os.Remove(otterStmt + ".sig")
	key := filepath.Join(dir, "keys", "otter")
	os.Chmod(key, 0o600)
	sign := exec.Command(kg, "-Y", "sign", "-n", blind.Namespace, "-f", key, otterStmt)
	if out, err := sign.CombinedOutput(); err != nil {
		t.Fatalf("ssh-keygen -Y sign: %v\n%s", err, out)
	}
	c := custodian(t, dir)
	st, _ := c.CheckSignoffs()
	for _, s := range st {
		if s.Party == "otter" && !s.Valid {
			t.Errorf("ssh-keygen's signature refused: %v", s.Problems)
		}
	}
	// Ed25519 signatures are deterministic, so ssh-keygen's SSHSIG file is
	// byte for byte the one tandem wrote, and the campaign still verifies.
	theirs, _ := os.ReadFile(otterStmt + ".sig")
	if !bytes.Equal(ours, theirs) {
		t.Errorf("ssh-keygen's signature differs from tandem's:\n%s\n%s", theirs, ours)
	}
	if r := blind.Verify(dir); !r.OK() {
		t.Errorf("verify: %v", r.Problems)
	}
}

func unblind(t *testing.T, dir string) error {
	t.Helper()
	id, _, err := blind.ReadIdentityFile(filepath.Join(dir, "keys", "custodian.key"))
	if err != nil {
		t.Fatal(err)
	}
	_, err = custodian(t, dir).Unblind(id)
	return err
}

func problems(err error) string {
	var re *blind.RefusedError
	if errors.As(err, &re) {
		return strings.Join(re.Problems, "\n")
	}
	if err == nil {
		return ""
	}
	return err.Error()
}

// TestUnblindRefusals: each missing party, a foreign key, a replayed or
// stale statement and a corrupted signature make unblind refuse, name the
// problem and write no unblinded/ folder.
func TestUnblindRefusals(t *testing.T) {
	cases := []struct {
		name  string
		spoil func(t *testing.T, dir string)
		want  string
	}{
		{"missing heron", func(t *testing.T, dir string) { removeSignoff(dir, "heron") }, "missing sign-off: heron"},
		{"missing otter", func(t *testing.T, dir string) { removeSignoff(dir, "otter") }, "missing sign-off: otter"},
		{"missing ibis", func(t *testing.T, dir string) { removeSignoff(dir, "ibis") }, "missing sign-off: ibis"},
		{"corrupted signature", func(t *testing.T, dir string) {
			p := filepath.Join(dir, "signoffs", "ibis.statement.sig")
			b, _ := os.ReadFile(p)
			b[len(b)/2] ^= 1
			os.WriteFile(p, b, 0o644)
		}, "ibis.statement.sig"},
		{"foreign key", func(t *testing.T, dir string) {
			// otter's statement signed with heron's key
			c := custodian(t, dir)
			st, _, _ := c.NewStatement("otter", "reason")
			s, _ := blind.ReadSigner(filepath.Join(dir, "keys", "heron"))
			sig, _ := blind.SignStatement(s, st)
			os.WriteFile(filepath.Join(dir, "signoffs", "otter.statement"), st.Encode(), 0o644)
			os.WriteFile(filepath.Join(dir, "signoffs", "otter.statement.sig"), sig, 0o644)
		}, "not by the expected key"},
		{"stale after re-seal", func(t *testing.T, dir string) {
			c := custodian(t, dir)
			tb, err := c.ReadTable(blind.Slot{Team: "heron", Observable: "muon_rate"}, blind.Blinded)
			if err != nil {
				t.Fatal(err)
			}
			if _, err := c.Seal("heron", "muon_rate", tb); err != nil {
				t.Fatal(err)
			}
		}, "stale"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			dir := buildDemo(t, "unblind")
			tc.spoil(t, dir)
			err := unblind(t, dir)
			if err == nil || !errors.Is(err, blind.ErrRefused) || !strings.Contains(problems(err), tc.want) {
				t.Errorf("got %v (%s), want refusal naming %q", err, problems(err), tc.want)
			}
			if _, err := os.Stat(filepath.Join(dir, "unblinded")); !os.IsNotExist(err) {
				t.Errorf("unblinded/ exists after a refusal")
			}
			if _, err := os.Stat(filepath.Join(dir, blind.RevealedFile)); !os.IsNotExist(err) {
				t.Errorf("key revealed after a refusal")
			}
		})
	}
}

// TestReplayedStatement: a sign-off from another campaign is refused.
func TestReplayedStatement(t *testing.T) {
	a := buildDemo(t, "unblind")
	b := buildDemo(t, "unblind")
	// b's parties have other keys, so copy a's keys' statement only after
	// making b trust the same keys: copy a's protocol-bound sign-off.
	for _, f := range []string{"heron.statement", "heron.statement.sig"} {
		data, _ := os.ReadFile(filepath.Join(a, "signoffs", f))
		os.WriteFile(filepath.Join(b, "signoffs", f), data, 0o644)
	}
	err := unblind(t, b)
	if err == nil || !strings.Contains(problems(err), "heron") {
		t.Errorf("replayed statement accepted: %v", err)
	}
}

func removeSignoff(dir, party string) {
	os.Remove(filepath.Join(dir, "signoffs", party+".statement"))
	os.Remove(filepath.Join(dir, "signoffs", party+".statement.sig"))
}

// TestTamperMatrix: one flipped byte in any campaign file, before and after
// unblinding, makes verify fail and name the file.
func TestTamperMatrix(t *testing.T) {
	for _, stage := range []string{"unblind", ""} {
		base := buildDemo(t, stage)
		var files []string
		filepath.WalkDir(base, func(p string, d os.DirEntry, err error) error {
			rel, _ := filepath.Rel(base, p)
			if d.IsDir() && (rel == "keys" || rel == "reports") {
				return filepath.SkipDir
			}
			if !d.IsDir() && !strings.HasPrefix(d.Name(), ".") {
				files = append(files, filepath.ToSlash(rel))
			}
			return nil
		})
		if len(files) < 10 {
			t.Fatalf("only %d files", len(files))
		}
		for _, rel := range files {
			t.Run(stage+"/"+rel, func(t *testing.T) {
				dir := filepath.Join(t.TempDir(), "c")
				copyDir(t, base, dir)
				p := filepath.Join(dir, rel)
				data, _ := os.ReadFile(p)
				data[len(data)/2] ^= 0x01
				os.WriteFile(p, data, 0o644)
				r := blind.Verify(dir)
				name := filepath.Base(rel)
				if rel == "campaign.toml" || rel == "ledger" {
					name = rel
				}
				all := strings.Join(r.Problems, "\n")
				if r.OK() || !strings.Contains(all, name) {
					t.Errorf("flipped byte in %s: verify problems %q", rel, r.Problems)
				}
			})
		}
	}
}

func copyDir(t *testing.T, src, dst string) {
	t.Helper()
	filepath.WalkDir(src, func(p string, d os.DirEntry, err error) error {
		rel, _ := filepath.Rel(src, p)
		target := filepath.Join(dst, rel)
		if d.IsDir() {
			return os.MkdirAll(target, 0o755)
		}
		data, err := os.ReadFile(p)
		if err != nil {
			t.Fatal(err)
		}
		info, _ := d.Info()
		return os.WriteFile(target, data, info.Mode().Perm())
	})
}

// TestConcurrentSeals: seals from many goroutines (each with its own
// Campaign, as separate processes would) leave a valid chain.
func TestConcurrentSeals(t *testing.T) {
	dir := buildDemo(t, "seal")
	rng := rand.New(rand.NewPCG(5, 5))
	tables := map[string]*table.Table{}
	for _, o := range []string{"muon_rate", "zenith", "energy_spectrum"} {
		n := 4
		tb := &table.Table{LoName: "lo", HiName: "hi"}
		for i := 0; i < n; i++ {
			tb.Lo, tb.Hi = append(tb.Lo, float64(i)), append(tb.Hi, float64(i+1))
		}
		cols := []string{"rate", "stat", "syst"}
		switch o {
		case "zenith":
			cols = []string{"events", "stat", "syst"}
		case "energy_spectrum":
			cols = []string{"counts", "stat"}
		}
		for _, c := range cols {
			v := make([]float64, n)
			for i := range v {
				v[i] = 1 + rng.Float64()
			}
			tb.Names, tb.Cols = append(tb.Names, c), append(tb.Cols, v)
		}
		tables[o] = tb
	}
	var wg sync.WaitGroup
	errs := make(chan error, 24)
	for i := 0; i < 4; i++ {
		for _, team := range []string{"heron", "otter"} {
			for o, tb := range tables {
				wg.Add(1)
				go func() {
					defer wg.Done()
					c, err := blind.Open(dir)
					if err != nil {
						errs <- err
						return
					}
					_, err = c.Seal(team, o, tb)
					errs <- err
				}()
			}
		}
	}
	wg.Wait()
	close(errs)
	for err := range errs {
		if err != nil {
			t.Fatal(err)
		}
	}
	c := custodian(t, dir)
	if len(c.Ledger) != 1+24 {
		t.Errorf("ledger has %d entries, want 25", len(c.Ledger))
	}
	if r := blind.Verify(dir); !r.OK() {
		t.Errorf("verify after concurrent seals: %v", r.Problems)
	}
	if st := c.State()[blind.Slot{Team: "heron", Observable: "zenith"}]; st.Version != 4 {
		t.Errorf("version %d, want 4", st.Version)
	}
}

func TestProtocolRefusals(t *testing.T) {
	dir := buildDemo(t, "init")
	good, _ := os.ReadFile(filepath.Join(dir, blind.ProtocolFile))
	cases := []struct {
		edit func(string) string
		want string
	}{
		{func(s string) string { return s + "\nsurprise = 1\n" }, `surprise"`},
		{func(s string) string { return strings.Replace(s, "scale = [0.6, 1.6]", "scale = [-0.5, 1.6]", 1) }, "contains 0"},
		{func(s string) string {
			return strings.Replace(s, `quorum = ["heron", "otter", "ibis"]`, "quorum = []", 1)
		}, "quorum is empty"},
		{func(s string) string { return strings.Replace(s, `name = "otter"`, `name = "heron"`, 1) }, `party "heron" is declared twice`},
		{func(s string) string { return strings.Replace(s, `format = "tandem/v1"`, `format = "tandem/v9"`, 1) }, "format must be"},
	}
	for _, c := range cases {
		_, err := blind.ParseProtocol("campaign.toml", []byte(c.edit(string(good))))
		if err == nil || !strings.Contains(err.Error(), c.want) || !strings.HasPrefix(err.Error(), "campaign.toml:") {
			t.Errorf("got %v, want %q with a line number", err, c.want)
		}
	}
	// duplicate keys: give ibis heron's key
	lines := strings.Split(string(good), "\n")
	var heronKey string
	for i, l := range lines {
		if strings.HasPrefix(l, `key = "ssh-ed25519`) && heronKey == "" {
			heronKey = l
		} else if strings.HasPrefix(l, `key = "ssh-ed25519`) && i > 0 && strings.Contains(lines[i-2], "ibis") {
			lines[i] = heronKey
		}
	}
	if _, err := blind.ParseProtocol("campaign.toml", []byte(strings.Join(lines, "\n"))); err == nil || !strings.Contains(err.Error(), "same key") {
		t.Errorf("duplicate key: %v", err)
	}
}

func TestSealRefusesUndeclaredColumn(t *testing.T) {
	dir := buildDemo(t, "seal")
	tb, _ := table.ParseCSV("x.csv", []byte("lo,hi,rate,stat,syst,secret\n0,1,1,1,1,42\n"), table.CSVOptions{})
	_, err := custodian(t, dir).Seal("heron", "muon_rate", tb)
	if err == nil || !strings.Contains(err.Error(), `column "secret" is not declared`) {
		t.Errorf("got %v", err)
	}
	if _, err := custodian(t, dir).Seal("ibis", "muon_rate", tb); err == nil {
		t.Errorf("a reviewer sealed a table")
	}
}

func TestWrongIdentity(t *testing.T) {
	dir := buildDemo(t, "blind")
	other := filepath.Join(t.TempDir(), "other.key")
	if _, err := blind.GenerateCustodian(other, nowForTest()); err != nil {
		t.Fatal(err)
	}
	id, _, _ := blind.ReadIdentityFile(other)
	_, err := custodian(t, dir).Blind(id)
	if !errors.Is(err, blind.ErrRefused) || !strings.Contains(problems(err), "not the custodian's") {
		t.Errorf("got %v", err)
	}
	if _, err := os.Stat(filepath.Join(dir, "blinded")); !os.IsNotExist(err) {
		t.Errorf("blinded/ written with a wrong identity")
	}
}
