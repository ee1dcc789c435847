package rootfile

import (
	"errors"
	"flag"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"sync"
	"testing"
	"time"

	"tandem/compare/table"
)

var mutations = flag.Int("mutations", defaultMutations, "single-byte mutations of go-hep's ROOT test files in TestMutations (default 500, or 100 under the race detector)")

// mutationTargets are go-hep's ROOT test files (paths inside the module)
// and what is read from each: histogram and graph objects by Read, a tree
// by ReadTree over all its numeric columns.
var mutationTargets = []struct {
	rel     string
	objects []string // for Read
	tree    string   // for ReadTree
}{
	{rel: gaussH1, objects: []string{"h1d", "h1f", "h1d-var", "h1f-var"}},
	{rel: gaussH2, objects: []string{"h2d", "h2f", "h2d-var", "h2f-var"}},
	{rel: graphs, objects: []string{"tge", "tgae"}},
	{rel: dirs, objects: []string{"dir1/dir11/h1"}},
	{rel: smallTree, tree: "tree"},
	{rel: flatTree, tree: "tree"},
}

// outcome of one mutated read.
type outcome struct {
	what string // "read", "refused", "memory limit", "time limit"
	rss  int64
	took time.Duration
}

// TestMutations changes one byte of a go-hep ROOT test file at a random
// place (a fixed seed, so every run tries the same files), and reads it
// through the child as tandem does, two at a time. Every outcome must be
// a table or a *table.Error naming the input: no crash of this process,
// no internal error, and no child above the 1 GiB memory limit. The
// counts, the peak memory and the longest time are logged (the hardening
// goal: at most 1 GB and 2 s per file).
func TestMutations(t *testing.T) {
	if testing.Short() {
		t.Skip("starts a child per mutation")
	}
	type job struct {
		target, n int
		offset    int
		b         byte
	}
	files := make([][]byte, len(mutationTargets))
	treeCols := make([][]string, len(mutationTargets))
	for i, m := range mutationTargets {
		p := gohep(t, m.rel)
		data, err := os.ReadFile(p)
		if err != nil {
			t.Fatal(err)
		}
		files[i] = data
		if m.tree != "" {
			cols, err := TreeColumns(p + ":" + m.tree)
			if err != nil {
				t.Fatal(err)
			}
			for _, c := range cols {
				if c.Numeric {
					treeCols[i] = append(treeCols[i], c.Name)
				}
			}
		}
	}
	rng := rand.New(rand.NewPCG(13, 500))
	jobs := make([]job, *mutations)
	for n := range jobs {
		k := n % len(mutationTargets)
		jobs[n] = job{target: k, n: n, offset: rng.IntN(len(files[k])), b: byte(rng.IntN(256))}
	}

	var mu sync.Mutex
	children := map[string]outcome{} // by spec
	observe = func(spec string, rss int64, took time.Duration) {
		mu.Lock()
		defer mu.Unlock()
		o := children[spec]
		o.rss, o.took = max(o.rss, rss), o.took+took
		children[spec] = o
	}
	defer func() { observe = nil }()

	dir := t.TempDir()
	results := make([]outcome, len(jobs))
	start := time.Now()
	var wg sync.WaitGroup
	next := make(chan int)
	for w := 0; w < 2; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for n := range next {
				j := jobs[n]
				m := mutationTargets[j.target]
				data := append([]byte(nil), files[j.target]...)
				data[j.offset] = j.b
				p := filepath.Join(dir, fmt.Sprintf("m%03d-%s", n, filepath.Base(m.rel)))
				if err := os.WriteFile(p, data, 0o644); err != nil {
					t.Error(err)
					continue
				}
				var spec string
				var err error
				if m.tree != "" {
					spec = p + ":" + m.tree
					err = ReadTree(spec, treeCols[j.target], func([]float64) error { return nil })
				} else {
					spec = p + ":" + m.objects[n/len(mutationTargets)%len(m.objects)]
					_, err = Read(spec)
				}
				mu.Lock()
				o := children[spec]
				mu.Unlock()
				o.what = "read"
				if err != nil {
					var te *table.Error
					switch {
					case !errors.As(err, &te) || te.File == "" || !strings.HasPrefix(te.File, p):
						t.Errorf("mutation %d (byte %#02x at %d of %s): not an input error naming the file: %T %v", n, j.b, j.offset, m.rel, err, err)
					case strings.Contains(te.Msg, "internal error"):
						t.Errorf("mutation %d (byte %#02x at %d of %s): %v", n, j.b, j.offset, m.rel, err)
					case strings.Contains(te.Msg, "memory limit"):
						o.what = "memory limit"
					case strings.Contains(te.Msg, "time limit"):
						o.what = "time limit"
					default:
						o.what = "refused"
					}
				}
				if o.rss > DefaultLimits.Memory {
					t.Errorf("mutation %d (byte %#02x at %d of %s): child peaked at %d MB", n, j.b, j.offset, m.rel, o.rss>>20)
				}
				results[n] = o
				os.Remove(p)
			}
		}()
	}
	for n := range jobs {
		next <- n
	}
	close(next)
	wg.Wait()

	counts := map[string]int{}
	var peak int64
	var slowest time.Duration
	var took []time.Duration
	for _, o := range results {
		counts[o.what]++
		peak = max(peak, o.rss)
		slowest = max(slowest, o.took)
		took = append(took, o.took)
	}
	sort.Slice(took, func(i, j int) bool { return took[i] < took[j] })
	t.Logf("%d mutations in %v (2 at a time): %d read as valid, %d refused, %d stopped at the memory limit, %d at the time limit; child peak RSS %.1f MB; time per file median %v, max %v",
		len(jobs), time.Since(start).Round(time.Millisecond), counts["read"], counts["refused"], counts["memory limit"], counts["time limit"],
		float64(peak)/1e6, took[len(took)/2].Round(time.Millisecond), slowest.Round(time.Millisecond))
}
