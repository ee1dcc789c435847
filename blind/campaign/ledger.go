package campaign

import (
	"cmp"
	"container/heap"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"time"

	"golang.org/x/crypto/ssh"

	"tandem/blind/internal/format"
	"tandem/blind/internal/sshsig"
	"tandem/blind/protocol"
)

// The logs of a tandem/v3 campaign. Every party, and the custodian, has
// a log of its own under log/NAME/, and no one else ever writes there.
// Each entry is a file of its own, log/NAME/SEQ-HASH12, holding one
// canonical entry line; the entries of one log form a hash chain (seq and
// prev), and an entry names, in its data members "after.LOG", the head of
// every other log its writer saw. Two clones that take steps at the same
// time therefore create different files, which git merges without a
// conflict; a log that two clones extended at the same time has two
// entries with one seq, a fork, which the replay reports and
// [Campaign.Resolve] removes.

// LogDir is the folder of the logs.
const LogDir = "log"

// afterPrefix starts the data members naming other logs' heads.
const afterPrefix = "after."

var entryNameRE = regexp.MustCompile(`^([1-9][0-9]{0,8})-([0-9a-f]{12})$`)

// EntryPath is the file of an entry.
func EntryPath(e *format.Entry) string {
	return LogDir + "/" + e.Actor + "/" + strconv.Itoa(e.Seq) + "-" + e.Hash()[:12]
}

// EntryName is how messages name an entry: its log and sequence number.
func EntryName(e *format.Entry) string { return e.Actor + "#" + strconv.Itoa(e.Seq) }

// ref names one entry of a log.
type ref struct {
	seq  int
	hash string
}

// parseRef reads "SEQ HASH".
func parseRef(v string) (ref, bool) {
	s, h, ok := strings.Cut(v, " ")
	n, err := strconv.Atoi(s)
	if !ok || err != nil || n < 1 || strconv.Itoa(n) != s || len(h) != 64 || strings.Trim(h, "0123456789abcdef") != "" {
		return ref{}, false
	}
	return ref{n, h}, true
}

func (r ref) String() string { return strconv.Itoa(r.seq) + " " + r.hash }

// View is the set of entries an entry's writer had seen: for each log,
// the number of its entries seen (a log's entries are seen in order).
type View map[string]int

// view returns what e's writer saw before writing e: its own log up to
// the entry before, and every log e names in an after member.
func view(e *format.Entry) View {
	v := View{}
	if e.Seq > 1 {
		v[e.Actor] = e.Seq - 1
	}
	for k, val := range e.Data {
		if log, ok := strings.CutPrefix(k, afterPrefix); ok {
			if r, ok := parseRef(val); ok {
				v[log] = r.seq
			}
		}
	}
	return v
}

// sees reports whether the writer of e had seen x (or e is x).
func sees(e, x *format.Entry) bool {
	if e.Actor == x.Actor {
		return x.Seq <= e.Seq
	}
	r, ok := parseRef(e.Data[afterPrefix+x.Actor])
	return ok && r.seq >= x.Seq
}

// ViewDigest is what a statement's "ledger-head" line names: the number
// of entries seen and the SHA-256 of one line "LOG SEQ HASH" per log seen,
// in byte order of the log names.
func (c *Campaign) ViewDigest(v View) (int, string) {
	names := make([]string, 0, len(v))
	for n := range v {
		names = append(names, n)
	}
	slices.Sort(names)
	h := sha256.New()
	total := 0
	for _, n := range names {
		seq := v[n]
		hash := ""
		if log := c.logs[n]; seq >= 1 && seq <= len(log) {
			hash = c.Ledger[log[seq-1]].Hash()
		}
		fmt.Fprintf(h, "%s %d %s\n", n, seq, hash)
		total += seq
	}
	return total, hex.EncodeToString(h.Sum(nil))
}

// Heads is the view of the campaign as it stands: every log's length.
func (c *Campaign) Heads() View {
	v := View{}
	for n, log := range c.logs {
		if len(log) > 0 {
			v[n] = len(log)
		}
	}
	return v
}

// readLogs reads every entry file, checks each log's chain and the
// entries other logs name, and orders all entries (see [Campaign.Ledger]).
// Problems of structure go to c.logProbs; they refuse every step.
func (c *Campaign) readLogs() error {
	c.Ledger, c.paths, c.logs, c.logProbs, c.forks = nil, nil, map[string][]int{}, nil, nil
	c.state, c.cmp, c.signoffs = nil, nil, nil
	if c.root.Exists(v2LedgerFile) {
		return refuse("open", ProblemFormat, "%s holds a tandem/v2 campaign (one shared ledger file); this tandem reads tandem/v3 campaigns (one log per party under %s/). Finish the campaign with the tandem build that started it (any build from before the v3 campaign format)", c.Dir, LogDir)
	}
	if !c.root.Exists(LogDir) {
		return nil
	}
	dirs, err := c.root.fs.ReadDir(LogDir)
	if err != nil {
		return c.readErr(LogDir, err)
	}
	bad := func(kind ProblemKind, path, f string, a ...any) {
		c.logProbs = append(c.logProbs, Problem{Kind: kind, Path: path, Message: fmt.Sprintf(f, a...)})
	}
	type cand struct {
		e    format.Entry
		path string
	}
	var all []cand
	bySeq := map[string]map[int][]int{} // log → seq → indices into all
	for _, d := range dirs {
		name := d.Name()
		dir := LogDir + "/" + name
		if strings.HasPrefix(name, ".") {
			continue
		}
		if !d.IsDir() {
			bad(ProblemChain, dir, "not a log folder")
			continue
		}
		if c.Protocol.SignerKey(name) == nil {
			bad(ProblemParty, dir, "%q is not a party of the protocol, yet has a log", name)
			continue
		}
		files, err := c.root.fs.ReadDir(dir)
		if err != nil {
			return c.readErr(dir, err)
		}
		for _, f := range files {
			rel := dir + "/" + f.Name()
			if strings.HasPrefix(f.Name(), ".") {
				continue
			}
			m := entryNameRE.FindStringSubmatch(f.Name())
			if m == nil || !f.Type().IsRegular() {
				if entryTempRE.MatchString(f.Name()) {
					continue // an interrupted write's temporary file (a note)
				}
				bad(ProblemChain, rel, "not an entry file (names are SEQ-HASH12)")
				continue
			}
			data, err := c.root.ReadFile(rel, maxSmall)
			if err != nil {
				if errors.Is(err, ErrSymlink) {
					return refuse("open", ProblemSymlink, "%v", err)
				}
				bad(ProblemChain, rel, "%v", unwrapPath(err))
				continue
			}
			e, err := format.DecodeEntryFile(c.root.abs(rel), data)
			if err != nil {
				bad(ProblemChain, rel, "%s", strings.TrimSpace(trimPath(err.Error(), c.root.abs(rel))))
				continue
			}
			seq, _ := strconv.Atoi(m[1])
			switch {
			case e.Actor != name:
				bad(ProblemChain, rel, "an entry by %q in the log of %s", e.Actor, name)
				continue
			case e.Seq != seq || e.Hash()[:12] != m[2]:
				bad(ProblemChain, rel, "the file name does not match the entry (seq %d, hash %.12s)", e.Seq, e.Hash())
				continue
			}
			if bySeq[name] == nil {
				bySeq[name] = map[int][]int{}
			}
			bySeq[name][seq] = append(bySeq[name][seq], len(all))
			all = append(all, cand{e, rel})
		}
	}
	// each log's chain; at a fork keep the branch whose entry is earliest
	// (then smallest hash) and report the others
	kept := map[string][]int{}
	logNames := make([]string, 0, len(bySeq))
	for n := range bySeq {
		logNames = append(logNames, n)
	}
	slices.Sort(logNames)
	for _, n := range logNames {
		seqs := bySeq[n]
		prev := format.Genesis
		var chain []int
		for seq := 1; ; seq++ {
			idx := seqs[seq]
			if len(idx) == 0 {
				break
			}
			var next []int
			for _, i := range idx {
				if all[i].e.Prev == prev {
					next = append(next, i)
				}
			}
			if len(next) == 0 {
				for _, i := range idx {
					bad(ProblemChain, all[i].path, "hash chain broken: names previous %.12s…, which is no entry %d of %s's log", all[i].e.Prev, seq-1, n)
				}
				break
			}
			slices.SortFunc(next, func(a, b int) int {
				return cmp.Or(strings.Compare(all[a].e.Time, all[b].e.Time), strings.Compare(all[a].e.Hash(), all[b].e.Hash()))
			})
			chain = append(chain, next[0])
			prev = all[next[0]].e.Hash()
		}
		onChain := map[int]bool{}
		for _, i := range chain {
			onChain[i] = true
		}
		var off []string
		fork, maxSeq := false, 0
		var offEntries []forkEntry
		for seq, idx := range seqs {
			maxSeq = max(maxSeq, seq)
			fork = fork || len(idx) > 1
			for _, i := range idx {
				if !onChain[i] {
					off = append(off, all[i].path)
					offEntries = append(offEntries, forkEntry{all[i].path, all[i].e})
				}
			}
		}
		slices.Sort(off)
		switch {
		case fork:
			from := maxSeq
			for _, f := range offEntries {
				from = min(from, f.e.Seq)
			}
			var keep []string
			for _, i := range chain {
				if all[i].e.Seq >= from {
					keep = append(keep, all[i].path)
				}
			}
			c.forks = append(c.forks, offEntries...)
			bad(ProblemFork, LogDir+"/"+n, "the log of %s forked: two clones each extended it. Kept: %s; not kept: %s. Run \"tandem resolve %s\" to remove the entries not kept (and the files only they logged), then take their steps again", n, strings.Join(keep, ", "), strings.Join(off, ", "), c.Dir)
		case len(off) > 0 && len(seqs[len(chain)+1]) == 0:
			bad(ProblemChain, LogDir+"/"+n, "entry %d of %s's log is missing (entries up to %d exist)", len(chain)+1, n, maxSeq)
		}
		kept[n] = chain
	}
	// order: every entry after its predecessor and after each head it
	// names; among entries free at once, the earliest time first, then
	// the log name and seq
	type node struct {
		deps  int
		after []int
	}
	var order []int
	nodes := map[int]*node{}
	for _, chain := range kept {
		for _, i := range chain {
			nodes[i] = &node{}
		}
	}
	at := func(log string, seq int) (int, bool) {
		ch := kept[log]
		if seq < 1 || seq > len(ch) {
			return 0, false
		}
		return ch[seq-1], true
	}
	for n, chain := range kept {
		for k, i := range chain {
			e := &all[i].e
			if k > 0 {
				nodes[chain[k-1]].after = append(nodes[chain[k-1]].after, i)
				nodes[i].deps++
			}
			for key, val := range e.Data {
				log, ok := strings.CutPrefix(key, afterPrefix)
				if !ok {
					continue
				}
				r, ok := parseRef(val)
				if !ok || log == n {
					bad(ProblemEntry, all[i].path, "member %s must name another log's entry as \"SEQ HASH\"", key)
					continue
				}
				j, ok := at(log, r.seq)
				if !ok || all[j].e.Hash() != r.hash {
					bad(ProblemChain, all[i].path, "names entry %s#%d (%.12s…), which is not in %s's log (cut off, or on a fork not kept)", log, r.seq, r.hash, log)
					continue
				}
				nodes[j].after = append(nodes[j].after, i)
				nodes[i].deps++
			}
		}
	}
	less := func(a, b int) bool {
		ea, eb := &all[a].e, &all[b].e
		return cmp.Or(strings.Compare(ea.Time, eb.Time), strings.Compare(ea.Actor, eb.Actor), cmp.Compare(ea.Seq, eb.Seq)) < 0
	}
	h := &idxHeap{less: less}
	for i, nd := range nodes {
		if nd.deps == 0 {
			heap.Push(h, i)
		}
	}
	for h.Len() > 0 {
		i := heap.Pop(h).(int)
		order = append(order, i)
		for _, j := range nodes[i].after {
			nodes[j].deps--
			if nodes[j].deps == 0 {
				heap.Push(h, j)
			}
		}
	}
	if len(order) != len(nodes) {
		bad(ProblemChain, LogDir, "the entries name each other in a cycle")
	}
	pos := map[int]int{}
	for _, i := range order {
		pos[i] = len(c.Ledger)
		c.Ledger = append(c.Ledger, all[i].e)
		c.paths = append(c.paths, all[i].path)
	}
	for n, chain := range kept {
		for _, i := range chain {
			if p, ok := pos[i]; ok {
				c.logs[n] = append(c.logs[n], p)
			}
		}
	}
	// times never go backwards along what an entry saw
	for i := range c.Ledger {
		e := &c.Ledger[i]
		for log, seq := range view(e) {
			if l := c.logs[log]; seq >= 1 && seq <= len(l) {
				if x := &c.Ledger[l[seq-1]]; x.Time > e.Time {
					bad(ProblemOrder, c.paths[i], "entry %s is dated %s, before entry %s it follows (%s)", EntryName(e), e.Time, EntryName(x), x.Time)
				}
			}
		}
	}
	return nil
}

var entryTempRE = regexp.MustCompile(`^\.`)

func (c *Campaign) readErr(rel string, err error) error {
	if errors.Is(err, ErrSymlink) {
		return refuse("open", ProblemSymlink, "%v", err)
	}
	return fmt.Errorf("%s: %v", c.root.abs(rel), unwrapPath(err))
}

type idxHeap struct {
	v    []int
	less func(a, b int) bool
}

func (h *idxHeap) Len() int           { return len(h.v) }
func (h *idxHeap) Less(i, j int) bool { return h.less(h.v[i], h.v[j]) }
func (h *idxHeap) Swap(i, j int)      { h.v[i], h.v[j] = h.v[j], h.v[i] }
func (h *idxHeap) Push(x any)         { h.v = append(h.v, x.(int)) }
func (h *idxHeap) Pop() any {
	x := h.v[len(h.v)-1]
	h.v = h.v[:len(h.v)-1]
	return x
}

// appendEntry writes one entry; see [Campaign.appendEntries].
func (c *Campaign) appendEntry(e format.Entry, signer ssh.Signer) error {
	return c.appendEntries([]format.Entry{e}, signer)
}

// appendEntries fills Seq, Prev, Time and the after members of each
// entry, signs it with signer (whose key must be the one the protocol
// gives the actor) and writes each as a new file of the actor's log: the
// commit point of a step. The caller holds the lock, has reread the logs
// and has synced the files the entries cover. No file is ever rewritten.
func (c *Campaign) appendEntries(es []format.Entry, signer ssh.Signer) error {
	heads := c.Heads()
	for _, e := range es {
		e := e
		want := c.Protocol.SignerKey(e.Actor)
		if want == nil {
			return fmt.Errorf("%q is not a party of the protocol", e.Actor)
		}
		if signer == nil || string(signer.PublicKey().Marshal()) != string(want.Marshal()) {
			return refuse(Step(e.Step), ProblemSignature, "the signing key is not the one the protocol gives %s (%s)", e.Actor, ssh.FingerprintSHA256(want))
		}
		own := c.logs[e.Actor]
		e.Seq, e.Prev = len(own)+1, format.Genesis
		latest := ""
		if len(own) > 0 {
			last := &c.Ledger[own[len(own)-1]]
			e.Prev, latest = last.Hash(), last.Time
		}
		data := make(map[string]string, len(e.Data)+len(heads))
		for k, v := range e.Data {
			data[k] = v
		}
		for log, seq := range heads {
			if log == e.Actor {
				continue
			}
			x := &c.Ledger[c.logs[log][seq-1]]
			data[afterPrefix+log] = ref{seq, x.Hash()}.String()
			latest = max(latest, x.Time)
		}
		e.Data = data
		if e.Time == "" {
			// never before what the entry follows, whatever this clock says
			e.Time = max(c.now().UTC().Format(time.RFC3339), latest)
		}
		sig, err := sshsig.Sign(signer, format.LedgerNamespace, e.SignedBytes())
		if err != nil {
			return err
		}
		e.Sig = sshsig.Flatten(sig)
		e.SetHash(format.HashLine(e.Line()))
		rel := EntryPath(&e)
		if err := c.root.CreateExclusive(rel, format.EncodeEntryFile(&e), 0o644); err != nil {
			return fmt.Errorf("writing the log entry: %w", err)
		}
		c.logs[e.Actor] = append(own, len(c.Ledger))
		c.Ledger = append(c.Ledger, e)
		c.paths = append(c.paths, rel)
		heads[e.Actor] = e.Seq
		switch Step(e.Step) {
		case StepSign, StepUnblind:
			// the comparison of the blinded tables is unchanged
		default:
			c.cmp = nil
		}
	}
	c.state, c.signoffs = nil, nil
	return nil
}

// verifyEntrySignatures checks every entry's signature against the key the
// protocol gives its actor.
func (c *Campaign) verifyEntrySignatures() []Problem {
	var probs []Problem
	for i := range c.Ledger {
		e := &c.Ledger[i]
		key := c.Protocol.SignerKey(e.Actor)
		if key == nil {
			continue // replay reports unknown parties
		}
		if e.Sig == "" {
			probs = append(probs, Problem{Kind: ProblemSignature, Path: c.paths[i], Party: e.Actor, Message: fmt.Sprintf("entry %s (%s) is not signed", EntryName(e), e.Step)})
			continue
		}
		armored := sshsig.Armor(e.Sig)
		err := sshsig.Verify(armored, e.SignedBytes(), format.LedgerNamespace, key)
		if err == nil && sshsig.Flatten(armored) != e.Sig {
			err = errors.New("the sig member is not canonical base64")
		}
		if err != nil {
			probs = append(probs, Problem{Kind: ProblemSignature, Path: c.paths[i], Party: e.Actor, Message: fmt.Sprintf("entry %s (%s by %s): %v", EntryName(e), e.Step, e.Actor, err)})
		}
	}
	return probs
}

// begin takes the campaign lock for a step and rereads the logs and the
// protocol; it refuses when the logs are damaged or forked, the campaign
// is already unblinded or the protocol changed. The caller runs the
// returned unlock when done.
func (c *Campaign) begin(step Step) (func(), error) {
	unlock, err := c.root.Lock()
	if err != nil {
		return nil, err
	}
	fail := func(err error) (func(), error) {
		unlock()
		return nil, err
	}
	data, err := c.root.ReadFile(ProtocolFile, maxProtocol)
	if err != nil {
		return fail(err)
	}
	if string(data) != string(c.ProtocolBytes) {
		return fail(refuse(step, ProblemProtocol, "%s changed while the step ran", ProtocolFile))
	}
	if err := c.readLogs(); err != nil {
		return fail(err)
	}
	if len(c.logProbs) > 0 {
		return fail(&RefusedError{Step: step, Problems: c.logProbs})
	}
	// After two amendments made at once the protocol in force is
	// undecided: only an amend that follows both may run, whatever
	// campaign.toml holds.
	amendAtOnce := c.amendProblem()
	if amendAtOnce != nil && step != StepAmend {
		return fail(&RefusedError{Step: step, Problems: []Problem{*amendAtOnce}})
	}
	if p := c.protocolProblem(); p != nil && amendAtOnce == nil {
		return fail(&RefusedError{Step: step, Problems: []Problem{*p}})
	}
	if step != StepInit && !c.Started() {
		return fail(fmt.Errorf("%s: the campaign has not been started (run tandem init)", c.Dir))
	}
	if c.Unblinded() {
		return fail(refuse(step, ProblemState, "the campaign is already unblinded"))
	}
	return unlock, nil
}

// initEntry is the custodian's first entry, or nil.
func (c *Campaign) initEntry() *format.Entry {
	if l := c.logs[protocol.RoleCustodian]; len(l) > 0 {
		if e := &c.Ledger[l[0]]; e.Step == string(StepInit) {
			return e
		}
	}
	return nil
}

// forkEntry is an entry on a fork's branch not kept.
type forkEntry struct {
	path string
	e    format.Entry
}

// ResolveResult says what [Campaign.Resolve] removed.
type ResolveResult struct {
	// Entries are the entry files removed, Files the files only they
	// logged.
	Entries, Files []string
	// Retake describes the steps removed, to be taken again.
	Retake []string
}

// Resolve removes the entries of every fork's branch that is not kept
// (the kept branch starts with the earliest entry, then the smallest
// hash) and the files that only those entries logged. Every clone that
// runs it removes the same files, so the result merges in git. It refuses
// when an entry of the kept branches names a removed one, or when the
// logs have other problems.
func (c *Campaign) Resolve() (*ResolveResult, error) {
	unlock, err := c.root.Lock()
	if err != nil {
		return nil, err
	}
	defer unlock()
	if err := c.readLogs(); err != nil {
		return nil, err
	}
	if len(c.forks) == 0 {
		return nil, refuse("resolve", ProblemState, "no log has forked; there is nothing to resolve")
	}
	var other []Problem
	for _, p := range c.logProbs {
		if p.Kind != ProblemFork {
			other = append(other, p)
		}
	}
	if len(other) > 0 {
		return nil, &RefusedError{Step: "resolve", Problems: other}
	}
	st := c.State()
	res := &ResolveResult{}
	files := map[string]bool{}
	for _, f := range c.forks {
		res.Entries = append(res.Entries, f.path)
		res.Retake = append(res.Retake, describeEntry(&f.e))
		for rel := range f.e.Files {
			if _, kept := st.Files[rel]; !kept && c.root.Exists(rel) {
				files[rel] = true
			}
		}
	}
	for rel := range files {
		res.Files = append(res.Files, rel)
	}
	slices.Sort(res.Entries)
	slices.Sort(res.Files)
	for _, rel := range res.Files {
		if err := c.root.Remove(rel); err != nil {
			return nil, err
		}
	}
	for _, rel := range res.Entries {
		if err := c.root.Remove(rel); err != nil {
			return nil, err
		}
	}
	return res, c.readLogs()
}
