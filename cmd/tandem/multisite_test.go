package main

// The many-site test: a campaign kept in one git repository and worked on
// from separate clones, one per party, the way collaborations use it (each
// team at its own institute, the custodian as a job on the shared
// repository). It drives the tandem binary and git only through their
// command lines, so it holds whatever file layout a campaign has.

import (
	"bytes"
	"crypto/ed25519"
	"crypto/rand"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"encoding/pem"
	"fmt"
	"io/fs"
	"maps"
	"math"
	mrand "math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"sync/atomic"
	"testing"
	"time"

	"filippo.io/age"
	"golang.org/x/crypto/ssh"
)

// Parties of the many-site campaign: three teams, a reviewer and the
// custodian, each with its own clone.
var siteParties = []struct{ name, role string }{
	{"heron", "team"}, {"otter", "team"}, {"ibis", "team"}, {"egret", "reviewer"}, {"custodian", "custodian"},
}

// siteObservables are the two observables of the protocol, with the column
// each table has besides its edges.
var siteObservables = []struct {
	name, column string
	errors       []string
	bins         int
}{
	{"flux", "rate", []string{"stat"}, 8},
	{"angle", "events", []string{"stat", "syst"}, 6},
}

const (
	campaignDir    = "campaign" // the campaign folder inside each clone
	schedulesFull  = 50
	schedulesShort = 5
	randomTicks    = 40 // random actions at most before the schedule is driven to the end
	finishRounds   = 4  // rounds allowed to drive it to unblinded
	maxFailed      = 3  // schedules that may fail before the test stops
)

// TestManySites runs random schedules of seals, blinds, sign-offs and the
// unblind taken in separate git clones of one bare repository, synchronised
// with git pull (merge or rebase) and git push (retried after a refusal).
// Every schedule must end with no git conflict, no lost step, the campaign
// unblinded, and tandem verify passing on a fresh clone and on a clone made
// with core.autocrlf=true.
//
// The test builds the tandem command once; TANDEM_BIN names another
// binary to test instead.
func TestManySites(t *testing.T) {
	gitBin, bin, keys, root := siteSetup(t)
	n := schedulesFull
	if testing.Short() {
		n = schedulesShort
	}
	// Schedules run two at a time (go test's -parallel, GOMAXPROCS by
	// default); each has its own seed, repository and clones. After
	// maxFailed failures the rest are skipped: on a format that conflicts,
	// every schedule fails the same way.
	var failed atomic.Int32
	t.Run("schedules", func(t *testing.T) {
		for i := 0; i < n; i++ {
			seed := uint64(19000 + i)
			t.Run(fmt.Sprintf("seed=%d", seed), func(t *testing.T) {
				t.Parallel()
				if failed.Load() >= maxFailed {
					t.Skipf("skipped: %d schedules failed already", maxFailed)
				}
				t.Cleanup(func() {
					if t.Failed() {
						failed.Add(1)
					}
				})
				s := newSchedule(t, seed, gitBin, bin, keys, filepath.Join(root, strconv.Itoa(i)))
				defer os.RemoveAll(s.root)
				s.run()
			})
		}
	})
}

// TestManySitesTwoWriters: one party acting in two clones at once (the
// custodian's job run on two runners from the same push), or two parties
// amending the protocol in their own clones, must not end in a git
// conflict either. After the pull, the tool either accepts the merged
// campaign (then it is driven to unblinded and checked like a schedule)
// or explains it and names the command that resolves it.
func TestManySitesTwoWriters(t *testing.T) {
	gitBin, bin, keys, root := siteSetup(t)
	for i, mode := range []string{"--no-rebase", "--rebase"} {
		t.Run("custodian-twice/pull"+mode, func(t *testing.T) {
			s := newSchedule(t, uint64(29000+i), gitBin, bin, keys, filepath.Join(root, "twice"+mode))
			s.pullMode = mode
			s.setUp()
			ci := s.addClone("ci", "custodian")
			for _, st := range s.sites {
				if st.role == "team" {
					s.pull(st)
					s.seal(st, []int{0, 1}, "")
					s.push(st)
				}
			}
			cust := s.site("custodian")
			s.pull(cust)
			s.pull(ci)
			s.blind(cust)
			// The second runner starts in a later second, so its entries
			// differ from the first's (in the same second both runs could
			// write the same bytes, which git merges trivially).
			for now := time.Now().Unix(); time.Now().Unix() == now; {
				time.Sleep(20 * time.Millisecond)
			}
			s.blind(ci)
			s.push(cust)
			s.push(ci) // refused, then pulled: the two runs meet here
			// The resolution is the tool's: run each full command the
			// explanation quotes, as printed.
			s.settle(ci, func(explained string) {
				ran := false
				for _, m := range regexp.MustCompile(`"tandem ([^"]+)"`).FindAllStringSubmatch(explained, -1) {
					args := strings.Fields(m[1])
					if len(args) < 2 || !slices.Contains(args, campaignDir) {
						continue // a command named, not a command line
					}
					if code, _, stderr := s.tandem(ci, args...); code != 0 {
						s.fail("ci: the command verify prints, tandem %s, is refused: %s", m[1], stderr)
					}
					ran = true
				}
				if !ran {
					s.fail("ci: verify names no command line to run:\n%s", explained)
				}
				s.commit(ci, "ci: resolve")
				s.push(ci)
			})
		})
		t.Run("two-amends/pull"+mode, func(t *testing.T) {
			s := newSchedule(t, uint64(29100+i), gitBin, bin, keys, filepath.Join(root, "amends"+mode))
			s.pullMode = mode
			s.setUp()
			// heron changes the description (the top of the protocol),
			// otter an observable's title (the bottom): git merges both.
			heron, otter := s.site("heron"), s.site("otter")
			s.amend(heron, `description = "many-site git test`, `description = "many-site git test, amended by heron`)
			s.amend(otter, `title = "invented angle"`, `title = "invented angle, amended by otter"`)
			s.push(heron)
			s.push(otter)
			// The parties agree on the merged protocol, and heron records
			// it with an amend that follows both.
			s.settle(otter, func(string) {
				s.pull(heron)
				text, err := os.ReadFile(filepath.Join(heron.camp(), "campaign.toml"))
				if err != nil {
					s.t.Fatal(err)
				}
				f := filepath.Join(heron.scratch, "agreed.toml")
				if err := os.WriteFile(f, text, 0o644); err != nil {
					s.t.Fatal(err)
				}
				if code, _, stderr := s.tandem(heron, "amend", campaignDir, "--as", "heron", "--reason", "both amendments, as merged", "--key", s.keys.key("heron"), f); code != 0 {
					s.fail("heron: the amend that records the merged protocol is refused: %s", stderr)
				}
				s.commit(heron, "heron: amend")
				s.push(heron)
			})
		})
	}
}

// siteSetup finds git (skipping without it), builds tandem once and
// makes the keys.
func siteSetup(t *testing.T) (gitBin, bin string, keys *siteKeys, root string) {
	t.Helper()
	gitBin, err := exec.LookPath("git")
	if err != nil {
		if os.Getenv("TANDEM_REQUIRE_TOOLS") != "" {
			t.Fatal("git is required in CI but not installed")
		}
		t.Skip("skipping: git is not installed (apt-get install git)")
	}
	root = t.TempDir()
	bin = os.Getenv("TANDEM_BIN")
	if bin != "" {
		if bin, err = filepath.Abs(bin); err != nil {
			t.Fatal(err)
		}
	} else {
		// Built once, without the test's flags: a binary built with -race
		// (as CI runs the tests) took 1.1 s to start a command on the shared
		// 2-core machine this was written on, against 0.01 s without.
		bin = filepath.Join(root, "bin", "tandem")
		if out, err := exec.Command("go", "build", "-o", bin, ".").CombinedOutput(); err != nil {
			t.Fatalf("go build -o %s .: %v\n%s", bin, err, out)
		}
	}
	keys, err = makeSiteKeys(filepath.Join(root, "keys"))
	if err != nil {
		t.Fatal(err)
	}
	return gitBin, bin, keys, root
}

// siteKeys are the test's keys, kept outside every clone: an SSH ed25519
// key per party and for the custodian, and the custodian's age identity.
type siteKeys struct {
	dir       string
	pub       map[string]string // party -> authorized_keys line
	identity  string            // path of the custodian's age identity
	recipient string
}

func makeSiteKeys(dir string) (*siteKeys, error) {
	if err := os.MkdirAll(dir, 0o700); err != nil {
		return nil, err
	}
	k := &siteKeys{dir: dir, pub: map[string]string{}}
	for _, p := range siteParties {
		pub, priv, err := ed25519.GenerateKey(rand.Reader)
		if err != nil {
			return nil, err
		}
		block, err := ssh.MarshalPrivateKey(priv, p.name+"@sites")
		if err != nil {
			return nil, err
		}
		if err := os.WriteFile(filepath.Join(dir, p.name), pem.EncodeToMemory(block), 0o600); err != nil {
			return nil, err
		}
		sp, err := ssh.NewPublicKey(pub)
		if err != nil {
			return nil, err
		}
		k.pub[p.name] = strings.TrimSpace(string(ssh.MarshalAuthorizedKey(sp))) + " " + p.name + "@sites"
	}
	id, err := age.GenerateX25519Identity()
	if err != nil {
		return nil, err
	}
	k.identity = filepath.Join(dir, "custodian.age")
	k.recipient = id.Recipient().String()
	text := "# custodian identity of the many-site test\n# public key: " + k.recipient + "\n" + id.String() + "\n"
	if err := os.WriteFile(k.identity, []byte(text), 0o600); err != nil {
		return nil, err
	}
	return k, nil
}

func (k *siteKeys) key(party string) string { return filepath.Join(k.dir, party) }

// site is one party's clone.
type site struct {
	name, role string
	dir        string // the clone
	scratch    string // the party's own files, outside the clone (tables)
	synced     string // the shared main this clone last pulled or pushed
	pending    bool   // commits not yet pushed
	spare      bool   // a party's second clone, whose steps may be superseded
}

func (st *site) camp() string { return filepath.Join(st.dir, campaignDir) }

// schedule is one random interleaving, with what it has done so far.
type schedule struct {
	t        *testing.T
	seed     uint64
	rng      *mrand.Rand
	git, bin string
	keys     *siteKeys
	root     string
	bare     string
	env      []string
	sites    []*site
	log      []string

	seals       map[string]int    // "team/observable" -> seals that exited 0
	commitments []string          // every commitment a seal printed
	written     map[string]string // files steps said they wrote (path in a clone) -> SHA-256
	signs       int
	reseals     int
	unblinded   bool
	pullMode    string // --rebase or --no-rebase; random when empty
}

func newSchedule(t *testing.T, seed uint64, gitBin, bin string, keys *siteKeys, root string) *schedule {
	s := &schedule{
		t: t, seed: seed, rng: mrand.New(mrand.NewPCG(seed, 0x6e17)),
		git: gitBin, bin: bin, keys: keys, root: root,
		seals: map[string]int{}, written: map[string]string{},
	}
	if err := os.MkdirAll(root, 0o755); err != nil {
		t.Fatal(err)
	}
	s.env = siteEnv(filepath.Join(root, "home"))
	if err := os.MkdirAll(filepath.Join(root, "home"), 0o755); err != nil {
		t.Fatal(err)
	}
	return s
}

// siteEnv is the environment of every command: no user or system git
// configuration, a fixed author, committer and date, no editor, no prompt,
// no transport but local files, and no custodian identity or SSH agent
// from the caller.
func siteEnv(home string) []string {
	var env []string
	for _, kv := range os.Environ() {
		k, _, _ := strings.Cut(kv, "=")
		if strings.HasPrefix(k, "GIT_") || strings.HasPrefix(k, "TANDEM_CUSTODIAN") ||
			k == "SSH_AUTH_SOCK" || k == "HOME" || k == "LANG" || strings.HasPrefix(k, "LC_") {
			continue
		}
		env = append(env, kv)
	}
	return append(env,
		"HOME="+home, "LC_ALL=C", "NO_COLOR=1",
		"GIT_CONFIG_GLOBAL=/dev/null", "GIT_CONFIG_NOSYSTEM=1",
		"GIT_AUTHOR_NAME=Site Test", "GIT_AUTHOR_EMAIL=sites@example.invalid",
		"GIT_COMMITTER_NAME=Site Test", "GIT_COMMITTER_EMAIL=sites@example.invalid",
		"GIT_AUTHOR_DATE=2026-01-15T12:00:00Z", "GIT_COMMITTER_DATE=2026-01-15T12:00:00Z",
		"GIT_TERMINAL_PROMPT=0", "GIT_EDITOR=true", "GIT_MERGE_AUTOEDIT=no",
		"GIT_ALLOW_PROTOCOL=file",
		"GIT_CONFIG_COUNT=4",
		"GIT_CONFIG_KEY_0=init.defaultBranch", "GIT_CONFIG_VALUE_0=main",
		"GIT_CONFIG_KEY_1=commit.gpgSign", "GIT_CONFIG_VALUE_1=false",
		"GIT_CONFIG_KEY_2=gc.auto", "GIT_CONFIG_VALUE_2=0",
		"GIT_CONFIG_KEY_3=maintenance.auto", "GIT_CONFIG_VALUE_3=false",
	)
}

func (s *schedule) logf(format string, a ...any) {
	s.log = append(s.log, fmt.Sprintf(format, a...))
}

// fail ends the schedule, naming its seed and printing its step log.
func (s *schedule) fail(format string, a ...any) {
	s.t.Helper()
	s.t.Fatalf("schedule seed %d: %s\nstep log (rerun: go test ./cmd/tandem -run '%s$'):\n  %s",
		s.seed, fmt.Sprintf(format, a...), s.t.Name(), strings.Join(s.log, "\n  "))
}

// exec runs a command in dir and returns its exit status and output.
func (s *schedule) exec(dir string, stdin []byte, name string, args ...string) (code int, stdout, stderr string) {
	s.t.Helper()
	cmd := exec.Command(name, args...)
	cmd.Dir, cmd.Env = dir, s.env
	if stdin != nil {
		cmd.Stdin = bytes.NewReader(stdin)
	}
	var out, errb bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &errb
	err := cmd.Run()
	if err != nil {
		if ee, ok := err.(*exec.ExitError); ok {
			return ee.ExitCode(), out.String(), errb.String()
		}
		s.fail("cannot run %s: %v", name, err)
	}
	return 0, out.String(), errb.String()
}

// gitOK runs git in dir and fails the schedule unless it exits 0.
func (s *schedule) gitOK(dir string, args ...string) string {
	s.t.Helper()
	code, out, errs := s.exec(dir, nil, s.git, args...)
	if code != 0 {
		s.fail("git %s in %s: exit %d\n%s%s", strings.Join(args, " "), dir, code, out, errs)
	}
	return out
}

// tandem runs a tandem step in a clone. Exit 0 is success and exit 1 a
// refusal, which must leave the clone as it was; anything else (bad input,
// a crash) fails the schedule.
func (s *schedule) tandem(st *site, args ...string) (code int, stdout, stderr string) {
	s.t.Helper()
	return s.tandemIn(st, nil, args...)
}

// tandemIn is tandem with stdin as the standard input.
func (s *schedule) tandemIn(st *site, stdin []byte, args ...string) (code int, stdout, stderr string) {
	s.t.Helper()
	before := snapshot(st.dir)
	code, stdout, stderr = s.exec(st.dir, stdin, s.bin, args...)
	pipe := ""
	if stdin != nil {
		pipe = " < table"
	}
	s.logf("%s: tandem %s%s -> exit %d%s", st.name, s.short(args), pipe, code, firstLine(stderr, code))
	if code > 1 || code < 0 || strings.Contains(stderr, "panic:") || strings.Contains(stderr, "goroutine ") {
		s.fail("%s: tandem %s exited %d (only 0 or 1 may happen here)\nstdout:\n%s\nstderr:\n%s", st.name, strings.Join(args, " "), code, stdout, stderr)
	}
	if code == 1 {
		if diff := snapshotDiff(before, snapshot(st.dir)); diff != "" {
			s.fail("%s: the refused step tandem %s changed %s", st.name, args[0], diff)
		}
	}
	return code, stdout, stderr
}

// short is a command line for the step log, with the schedule's and the
// keys' folders left out of paths.
func (s *schedule) short(args []string) string {
	line := strings.Join(args, " ")
	line = strings.ReplaceAll(line, s.keys.dir+string(filepath.Separator), "")
	return strings.ReplaceAll(line, s.root+string(filepath.Separator), "")
}

// firstLine is the start of a refusal's message, for the step log.
func firstLine(stderr string, code int) string {
	if code == 0 {
		return ""
	}
	line := strings.Join(strings.Fields(stderr), " ")
	if len(line) > 200 {
		line = line[:200] + "…"
	}
	return " (" + line + ")"
}

// run plays the schedule: set-up, random actions, then rounds that drive
// the campaign to unblinded, then the checks on fresh clones.
func (s *schedule) run() {
	s.setUp()
	// Random actions: a party with commits not yet pushed pushes them or
	// takes another step; otherwise it pulls (or not, working on what it
	// has) and takes a step. Parties' sessions overlap, so steps taken
	// between two syncs of one clone meet other clones' steps at the pull.
	for tick := 0; tick < randomTicks && !s.unblinded; tick++ {
		// the custodian, often a job run on every push, acts twice as often
		st := s.sites[min(s.rng.IntN(len(s.sites)+1), len(s.sites)-1)]
		r := s.rng.Float64()
		switch {
		case st.pending && r < 0.6:
			s.push(st)
		case st.pending:
			s.step(st)
		case r < 0.7:
			s.pull(st)
			s.step(st)
		default:
			s.step(st)
		}
	}
	for round := 0; round < finishRounds && !s.unblinded; round++ {
		s.finishRound(round)
	}
	// every site publishes what it still holds
	for _, i := range s.rng.Perm(len(s.sites)) {
		s.pull(s.sites[i])
		s.push(s.sites[i])
	}
	if !s.unblinded {
		s.fail("the campaign was not unblinded after %d rounds", finishRounds)
	}
	s.checkFresh("fresh", false)
	s.checkFresh("fresh-crlf", true)
}

// setUp makes the bare repository, the custodian's clone with the
// campaign started in it, and one clone per other party.
func (s *schedule) setUp() {
	s.bare = filepath.Join(s.root, "shared.git")
	s.gitOK(s.root, "init", "-q", "--bare", s.bare)
	for _, p := range siteParties {
		st := &site{name: p.name, role: p.role, dir: filepath.Join(s.root, "clone-"+p.name), scratch: filepath.Join(s.root, "scratch-"+p.name)}
		if err := os.MkdirAll(st.scratch, 0o755); err != nil {
			s.t.Fatal(err)
		}
		s.sites = append(s.sites, st)
	}
	cust := s.site("custodian")
	s.gitOK(s.root, "clone", "-q", s.bare, cust.dir)
	if err := os.WriteFile(filepath.Join(cust.dir, "README"), []byte("analysis repository of the many-site test\n"), 0o644); err != nil {
		s.t.Fatal(err)
	}
	// The protocol as the README documents it: init writes a starting
	// protocol, which the coordinator fills in; init again starts it.
	if code, _, stderr := s.tandem(cust, "init", campaignDir, "--custodian", s.keys.recipient); code != 0 {
		s.fail("init (template): %s", stderr)
	}
	tmpl, err := os.ReadFile(filepath.Join(cust.camp(), "campaign.toml"))
	if err != nil {
		s.fail("init wrote no campaign.toml: %v", err)
	}
	format := regexp.MustCompile(`(?m)^format = .*$`).Find(tmpl)
	if format == nil {
		s.fail("the starting protocol has no format line:\n%s", tmpl)
	}
	if err := os.WriteFile(filepath.Join(cust.camp(), "campaign.toml"), []byte(s.protocol(string(format))), 0o644); err != nil {
		s.t.Fatal(err)
	}
	if code, _, stderr := s.tandem(cust, "init", campaignDir, "--key", s.keys.key("custodian")); code != 0 {
		s.fail("init: %s", stderr)
	}
	s.commit(cust, "custodian: init")
	s.push(cust)
	// The other parties' clones: copies of the custodian's fresh clone,
	// which is what git clone would give them now, without running it four
	// more times (the fresh clones at the end are made by git clone).
	for _, st := range s.sites {
		if st != cust {
			if err := os.CopyFS(st.dir, os.DirFS(cust.dir)); err != nil {
				s.t.Fatal(err)
			}
			st.synced = cust.synced
		}
	}
}

// addClone makes a further clone for a party, in step with the shared
// repository.
func (s *schedule) addClone(name, role string) *site {
	st := &site{name: name, role: role, dir: filepath.Join(s.root, "clone-"+name), scratch: filepath.Join(s.root, "scratch-"+name), spare: true}
	if err := os.MkdirAll(st.scratch, 0o755); err != nil {
		s.t.Fatal(err)
	}
	s.gitOK(s.root, "clone", "-q", s.bare, st.dir)
	st.synced = s.sharedHead()
	s.sites = append(s.sites, st)
	return st
}

// amend replaces old with new in the party's campaign.toml, as a new
// protocol file outside the clone, and amends the campaign with it.
func (s *schedule) amend(st *site, old, new string) {
	text, err := os.ReadFile(filepath.Join(st.camp(), "campaign.toml"))
	if err != nil {
		s.fail("%s: %v", st.name, err)
	}
	if !bytes.Contains(text, []byte(old)) {
		s.fail("%s: campaign.toml has no %q", st.name, old)
	}
	f := filepath.Join(st.scratch, "amended.toml")
	if err := os.WriteFile(f, bytes.Replace(text, []byte(old), []byte(new), 1), 0o644); err != nil {
		s.t.Fatal(err)
	}
	code, _, stderr := s.tandem(st, "amend", campaignDir, "--as", st.name, "--reason", "a clearer protocol", "--key", s.keys.key(st.name), f)
	if code != 0 {
		s.fail("%s: amend refused: %s", st.name, stderr)
	}
	s.commit(st, st.name+": amend")
}

// settle judges a clone that has just merged two writers' steps: tandem
// status and verify must run (exit 0 or 1), and when verify refuses the
// campaign it must explain why, naming the command that resolves it; then
// resolve (given the explanation) takes that way out, after which verify
// must accept the campaign. It is then driven to unblinded and checked on
// fresh clones like a schedule.
func (s *schedule) settle(st *site, resolve func(explained string)) {
	s.t.Helper()
	s.tandem(st, "status", campaignDir)
	code, stdout, stderr := s.tandem(st, "verify", campaignDir)
	if code != 0 {
		if !regexp.MustCompile(`tandem [a-z]{3,}`).MatchString(stdout + stderr) {
			s.fail("%s: after the merge verify refuses the campaign without naming the command that resolves it:\n%s%s", st.name, stdout, stderr)
		}
		s.logf("%s: verify explains: %s", st.name, strings.Join(strings.Fields(stdout+stderr), " "))
		resolve(stdout + stderr)
		s.pull(st)
		if code, stdout, stderr := s.tandem(st, "verify", campaignDir); code != 0 {
			s.fail("%s: verify still refuses after the resolution:\n%s%s", st.name, stdout, stderr)
		}
	}
	for round := 0; round < finishRounds && !s.unblinded; round++ {
		s.finishRound(round)
	}
	for _, other := range s.sites {
		s.pull(other)
		s.push(other)
	}
	if !s.unblinded {
		s.fail("the campaign was not unblinded after %d rounds", finishRounds)
	}
	s.checkFresh("fresh", false)
	s.checkFresh("fresh-crlf", true)
}

func (s *schedule) site(name string) *site {
	for _, st := range s.sites {
		if st.name == name {
			return st
		}
	}
	s.t.Fatalf("no site %s", name)
	return nil
}

// protocol is the filled-in campaign.toml. The accepted risks keep the
// blind step's self-audit, whose findings depend on the random campaign
// key, from refusing a map: this test is about git, not about the audit.
func (s *schedule) protocol(format string) string {
	var b strings.Builder
	fmt.Fprintf(&b, "# The many-site test's protocol (invented tables).\n%s\n", format)
	fmt.Fprintf(&b, "campaign = \"sites-%d\"\ndescription = \"many-site git test, schedule %d\"\n", s.seed, s.seed)
	fmt.Fprintf(&b, "custodian = %q\ncustodian_key = %q\nalpha = 0.01\n", s.keys.recipient, s.keys.pub["custodian"])
	fmt.Fprintf(&b, "quorum = [\"heron\", \"otter\", \"ibis\", \"egret\"]\n")
	for _, p := range siteParties[:4] {
		fmt.Fprintf(&b, "\n[[party]]\nname = %q\nrole = %q\nkey = %q\n", p.name, p.role, s.keys.pub[p.name])
	}
	for _, o := range siteObservables {
		fmt.Fprintf(&b, "\n[[observable]]\nname = %q\ntitle = \"invented %s\"\nx_label = \"x\"\ny_label = \"y\"\nedges = [\"lo\", \"hi\"]\n", o.name, o.name)
		fmt.Fprintf(&b, "\n  [[observable.column]]\n  name = %q\n  errors = [\"%s\"]\n", o.column, strings.Join(o.errors, "\", \""))
		fmt.Fprintf(&b, "  scale = [0.5, 2.0]\n  shift = [-20000.0, 20000.0]\n")
		if len(o.errors) == 1 {
			fmt.Fprintf(&b, "  correlations = { stat = 0.5 }\n")
		} else {
			fmt.Fprintf(&b, "  correlations = { stat = 0.5, syst = 1.0 }\n")
		}
		fmt.Fprintf(&b, "  accept_risk = \"invented test tables; the test is about git, not the audit\"\n")
	}
	return b.String()
}

// table is a team's invented true table of an observable: a shared truth
// with shared fluctuations (half the statistical variance, hence the
// protocol's stat correlation 0.5), the team's own fluctuations, and a
// systematic both teams take from the same source (correlation 1).
func (s *schedule) table(team string, obs int, version int) []byte {
	o := siteObservables[obs]
	shared := mrand.New(mrand.NewPCG(s.seed, uint64(obs)))
	h := sha256.Sum256([]byte(fmt.Sprintf("%s/%d/%d", team, obs, version)))
	own := mrand.New(mrand.NewPCG(s.seed, uint64(h[0])|uint64(h[1])<<8|uint64(h[2])<<16))
	var b strings.Builder
	b.WriteString("lo,hi," + o.column + "," + strings.Join(o.errors, ",") + "\n")
	for i := 0; i < o.bins; i++ {
		truth := 4000 * (1 + 0.3*math.Sin(float64(i)+float64(obs)))
		stat := math.Sqrt(truth)
		v := truth + math.Sqrt(0.5)*stat*(shared.NormFloat64()+own.NormFloat64())
		fmt.Fprintf(&b, "%d,%d,%.3f,%.3f", i, i+1, v, stat)
		if len(o.errors) == 2 {
			fmt.Fprintf(&b, ",%.3f", 0.01*truth)
		}
		b.WriteString("\n")
	}
	return []byte(b.String())
}

// step attempts a step the party may take now, as far as it knows.
func (s *schedule) step(st *site) {
	switch st.role {
	case "team":
		var unsealed []int
		for i, o := range siteObservables {
			if s.seals[st.name+"/"+o.name] == 0 {
				unsealed = append(unsealed, i)
			}
		}
		switch {
		case len(unsealed) > 0 && s.rng.IntN(2) == 0:
			s.seal(st, unsealed, "")
		case len(unsealed) > 0:
			s.seal(st, unsealed[:1], "")
		case s.reseals < 2 && !s.unblinded && s.rng.IntN(3) == 0:
			// a team that finds a mistake after the comparison opened
			// (as its clone shows) seals a corrected table, a new round
			if open := s.openIn(st); len(open) > 0 {
				s.seal(st, open[s.rng.IntN(len(open)):][:1], "a corrected efficiency")
			} else {
				s.sign(st)
			}
		default:
			s.sign(st)
		}
	case "reviewer":
		s.sign(st)
	case "custodian":
		if s.rng.IntN(10) < 7 {
			s.blind(st)
		} else {
			s.unblind(st)
		}
	}
}

// siteStatus is the part of tandem status --format json the test reads.
type siteStatus struct {
	State       string `json:"state"`
	Observables []struct {
		Name  string `json:"name"`
		State string `json:"state"`
		Teams []struct {
			Team    string `json:"team"`
			Version int    `json:"version"`
		} `json:"teams"`
	} `json:"observables"`
}

func (s *schedule) status(st *site) *siteStatus {
	code, stdout, stderr := s.tandem(st, "status", campaignDir, "--format", "json")
	if code != 0 {
		s.fail("%s: tandem status: exit %d\n%s", st.name, code, stderr)
	}
	var status siteStatus
	if err := json.Unmarshal([]byte(stdout), &status); err != nil {
		s.fail("%s: tandem status --format json: %v\n%s", st.name, err, stdout)
	}
	return &status
}

// openIn lists the observables open for comparison in a clone.
func (s *schedule) openIn(st *site) []int {
	var open []int
	for _, o := range s.status(st).Observables {
		for i, so := range siteObservables {
			if o.Name == so.name && o.State == "open" {
				open = append(open, i)
			}
		}
	}
	return open
}

// seal seals the given observables: one with --observable, its table
// from a file or piped in as a chain would, several with --table. A reason
// marks a replacement.
func (s *schedule) seal(st *site, obs []int, reason string) {
	args := []string{"seal", campaignDir, "--team", st.name, "--key", s.keys.key(st.name)}
	if reason != "" {
		args = append(args, "--reason", reason)
	}
	var files []string
	var tables [][]byte
	for _, i := range obs {
		o := siteObservables[i]
		f := filepath.Join(st.scratch, fmt.Sprintf("%s.v%d.csv", o.name, s.seals[st.name+"/"+o.name]+1))
		tb := s.table(st.name, i, s.seals[st.name+"/"+o.name]+1)
		if err := os.WriteFile(f, tb, 0o644); err != nil {
			s.t.Fatal(err)
		}
		files, tables = append(files, f), append(tables, tb)
		if len(obs) > 1 {
			args = append(args, "--table", o.name+"="+f)
		}
	}
	var stdin []byte
	if len(obs) == 1 {
		args = append(args, "--observable", siteObservables[obs[0]].name)
		if s.rng.IntN(2) == 0 {
			stdin = tables[0]
		} else {
			args = append(args, files[0])
		}
	}
	code, stdout, _ := s.tandemIn(st, stdin, args...)
	if code != 0 {
		return
	}
	for _, i := range obs {
		s.seals[st.name+"/"+siteObservables[i].name]++
	}
	if reason != "" {
		s.reseals++
	}
	coms := regexp.MustCompile(`\b[0-9a-f]{64}\b`).FindAllString(stdout, -1)
	if len(coms) != len(obs) {
		s.fail("%s: seal of %d tables printed %d commitments:\n%s", st.name, len(obs), len(coms), stdout)
	}
	s.commitments = append(s.commitments, coms...)
	s.commit(st, st.name+": seal")
}

// sign signs off; when the comparison disagrees, it accepts the
// disagreement with a reason (the invented tables agree by construction,
// but a 1% test may still fail).
func (s *schedule) sign(st *site) {
	base := []string{"sign", campaignDir, "--as", st.name, "--key", s.keys.key(st.name), "--yes"}
	code, _, stderr := s.tandem(st, base...)
	if code == 1 && strings.Contains(stderr, "--accept-disagreement") {
		code, _, stderr = s.tandem(st, append(base, "--accept-disagreement", "a fluctuation of invented tables")...)
	}
	if code != 0 {
		return
	}
	s.signs++
	// "signed off as P: PATH": the statement must reach every clone as written.
	m := regexp.MustCompile(`signed off as \S+: (\S+)`).FindStringSubmatch(stderr)
	if m == nil {
		s.fail("%s: sign exited 0 without the line \"signed off as %s: STATEMENT\":\n%s", st.name, st.name, stderr)
	}
	s.record(st, m[1])
	s.commit(st, st.name+": sign")
}

// blind runs the custodian's blind step; each "blinded PATH" line it
// prints names a file that must reach every clone as written.
func (s *schedule) blind(st *site) {
	code, stdout, _ := s.tandem(st, "blind", campaignDir, "--identity", s.keys.identity, "--key", s.keys.key("custodian"))
	if code != 0 {
		return
	}
	for _, line := range strings.Split(stdout, "\n") {
		f := strings.Fields(line)
		if len(f) == 2 && f[0] == "blinded" {
			s.record(st, filepath.Join(campaignDir, f[1]))
		}
	}
	s.commit(st, st.name+": blind")
}

func (s *schedule) unblind(st *site) {
	code, _, _ := s.tandem(st, "unblind", campaignDir, "--identity", s.keys.identity, "--key", s.keys.key("custodian"))
	if code != 0 {
		return
	}
	s.unblinded = true
	s.commit(st, st.name+": unblind")
}

// record notes the digest of a file a step said it wrote (a path relative
// to the clone).
func (s *schedule) record(st *site, rel string) {
	if st.spare {
		return
	}
	data, err := os.ReadFile(filepath.Join(st.dir, rel))
	if err != nil {
		s.fail("%s: a step reported writing %s, which is not there: %v", st.name, rel, err)
	}
	sum := sha256.Sum256(data)
	s.written[filepath.ToSlash(rel)] = hex.EncodeToString(sum[:])
}

// snapshot maps each file of a clone (outside .git) to its digest.
func snapshot(dir string) map[string]string {
	m := map[string]string{}
	filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return nil
		}
		if d.IsDir() && d.Name() == ".git" {
			return filepath.SkipDir
		}
		if d.IsDir() {
			return nil
		}
		data, _ := os.ReadFile(p)
		sum := sha256.Sum256(data)
		m[p] = d.Type().String() + hex.EncodeToString(sum[:])
		return nil
	})
	return m
}

// snapshotDiff names the first file that differs between two snapshots.
func snapshotDiff(a, b map[string]string) string {
	for _, p := range slices.Sorted(maps.Keys(b)) {
		if a[p] != b[p] {
			return p
		}
	}
	for _, p := range slices.Sorted(maps.Keys(a)) {
		if _, ok := b[p]; !ok {
			return p + " (removed)"
		}
	}
	return ""
}

// commit commits everything the step wrote.
func (s *schedule) commit(st *site, msg string) {
	s.gitOK(st.dir, "add", "-A")
	code, out, errs := s.exec(st.dir, nil, s.git, "commit", "-q", "-m", msg)
	if code != 0 && !strings.Contains(out+errs, "nothing to commit") {
		s.fail("%s: git commit: exit %d\n%s%s", st.name, code, out, errs)
	}
	st.pending = st.pending || code == 0
}

// pull merges or rebases onto the shared repository; a conflict of any
// kind fails the schedule.
func (s *schedule) pull(st *site) {
	mode := s.pullMode
	if mode == "" {
		mode = "--no-rebase"
		if s.rng.IntN(2) == 0 {
			mode = "--rebase"
		}
	}
	head := s.sharedHead()
	if head != "" && head == st.synced {
		return // nothing new: git pull would only say "Already up to date"
	}
	code, out, errs := s.exec(st.dir, nil, s.git, "pull", "-q", mode, "origin", "main")
	s.logf("%s: git pull %s -> exit %d", st.name, mode, code)
	if code != 0 || strings.Contains(out+errs, "CONFLICT") {
		_, unmerged, _ := s.exec(st.dir, nil, s.git, "ls-files", "--unmerged")
		s.fail("%s: git pull %s: exit %d, a conflict:\n%s%s%s", st.name, mode, code, out, errs, unmerged)
	}
	st.synced = head
	if markers := s.conflictMarkers(st); markers != "" {
		s.fail("%s: git pull %s left conflict markers in %s", st.name, mode, markers)
	}
}

// sharedHead is the commit the shared repository's main names, read from
// the bare repository's ref file ("" when git keeps it elsewhere).
func (s *schedule) sharedHead() string {
	data, err := os.ReadFile(filepath.Join(s.bare, "refs", "heads", "main"))
	if err != nil {
		return ""
	}
	return strings.TrimSpace(string(data))
}

// conflictMarkers names the first file of the campaign holding a line that
// starts a git conflict block.
func (s *schedule) conflictMarkers(st *site) string {
	found := ""
	filepath.WalkDir(st.camp(), func(p string, d fs.DirEntry, err error) error {
		if err != nil || found != "" || !d.Type().IsRegular() {
			return nil
		}
		data, _ := os.ReadFile(p)
		if bytes.HasPrefix(data, []byte("<<<<<<< ")) || bytes.Contains(data, []byte("\n<<<<<<< ")) {
			found, _ = filepath.Rel(st.dir, p)
		}
		return nil
	})
	return found
}

// push publishes the site's commits; a refused push is followed by a pull
// and another push.
func (s *schedule) push(st *site) {
	for try := 0; try < 8; try++ {
		code, out, errs := s.exec(st.dir, nil, s.git, "push", "-q", "origin", "HEAD:main")
		s.logf("%s: git push -> exit %d", st.name, code)
		if code == 0 {
			st.synced, st.pending = s.sharedHead(), false
			return
		}
		if !strings.Contains(out+errs, "rejected") {
			s.fail("%s: git push failed without a refusal: %s%s", st.name, out, errs)
		}
		s.pull(st)
	}
	s.fail("%s: push refused 8 times", st.name)
}

// finishRound drives the campaign forward with every party taking the
// step that is due, still in separate clones between syncs: teams seal
// what is missing at the same time, the custodian blinds, every party
// signs at the same time, the custodian unblinds.
func (s *schedule) finishRound(round int) {
	s.logf("-- finishing round %d", round+1)
	var teams, signers []*site
	for _, st := range s.sites {
		switch st.role {
		case "team":
			teams = append(teams, st)
			signers = append(signers, st)
		case "reviewer":
			signers = append(signers, st)
		}
	}
	cust := s.site("custodian")
	for _, st := range teams {
		s.pull(st)
		var missing []int
		for i, o := range siteObservables {
			if s.seals[st.name+"/"+o.name] == 0 {
				missing = append(missing, i)
			}
		}
		if len(missing) > 0 {
			s.seal(st, missing, "")
		}
	}
	s.pushAll(teams)
	s.pull(cust)
	s.blind(cust)
	s.push(cust)
	for _, st := range signers {
		s.pull(st)
		s.sign(st)
	}
	s.pushAll(signers)
	s.pull(cust)
	s.unblind(cust)
	s.push(cust)
}

// pushAll pushes the sites in random order.
func (s *schedule) pushAll(sites []*site) {
	for _, i := range s.rng.Perm(len(sites)) {
		s.push(sites[i])
	}
}

// checkFresh clones the shared repository anew and checks that verify
// passes, the campaign is unblinded, and no step was lost.
func (s *schedule) checkFresh(name string, crlf bool) {
	dir := filepath.Join(s.root, name)
	args := []string{"clone", "-q", s.bare, dir}
	if crlf {
		args = append([]string{"-c", "core.autocrlf=true"}, args...)
	}
	s.gitOK(s.root, args...)
	fresh := &site{name: name, dir: dir}
	if code, stdout, stderr := s.tandem(fresh, "verify", campaignDir); code != 0 {
		s.fail("tandem verify on a %s clone: exit %d\n%s%s", name, code, stdout, stderr)
	}
	if crlf {
		return
	}
	status := s.status(fresh)
	if status.State != "unblinded" {
		s.fail("a fresh clone's status is %q, not unblinded", status.State)
	}
	got := map[string]int{}
	for _, o := range status.Observables {
		for _, tm := range o.Teams {
			got[tm.Team+"/"+o.Name] = tm.Version
		}
	}
	for k, n := range s.seals {
		if got[k] != n {
			s.fail("lost seal: %d seals of %s exited 0, a fresh clone's status shows version %d", n, k, got[k])
		}
	}
	// Every commitment a seal printed is logged somewhere in the campaign.
	var all []byte
	filepath.WalkDir(filepath.Join(dir, campaignDir), func(p string, d fs.DirEntry, err error) error {
		if err == nil && d.Type().IsRegular() {
			data, _ := os.ReadFile(p)
			all = append(all, data...)
		}
		return nil
	})
	for _, c := range s.commitments {
		if !bytes.Contains(all, []byte(c)) {
			s.fail("lost seal: commitment %s is in no file of a fresh clone", c)
		}
	}
	for rel, sum := range s.written {
		data, err := os.ReadFile(filepath.Join(dir, rel))
		if err != nil {
			s.fail("lost step: %s is not in a fresh clone: %v", rel, err)
		}
		if h := sha256.Sum256(data); hex.EncodeToString(h[:]) != sum {
			s.fail("lost step: %s differs in a fresh clone from what its step wrote", rel)
		}
	}
	s.logf("fresh clone: verify 0, unblinded, %d seals, %d sign-offs, %d files checked", len(s.commitments), s.signs, len(s.written))
}
