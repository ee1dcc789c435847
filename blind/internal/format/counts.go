package format

import (
	"bytes"
	"math"
	"strconv"
	"strings"

	"tandem/compare/table"
)

// CountsHeader starts every count-tests file.
const CountsHeader = "# tandem/v3 count tests"

// CountsFile holds the count tests the custodian ran on the true counts of
// one observable when it opened (SPEC.md, section 7.1). Its canonical text
// is, line by line ("key: value", one space after the colon):
//
//	# tandem/v3 count tests
//	# campaign: ID
//	# observable: O
//	# round: R
//	# seal: T N COMMITMENT                  (one per team, protocol order)
//	then, per counts column and pair of teams (columns, then pairs):
//	tests: COLUMN TEAM-A TEAM-B
//	p0: NUMBER
//	seed: DECIMAL
//	samples: DECIMAL
//	informative: DECIMAL
//	g: NUMBER | -
//	g-p: NUMBER | -
//	mc-error: NUMBER | -
//	pit-d: NUMBER | -
//	pit-p: NUMBER | -
//	runs: RUNS POSITIVE NEGATIVE
//	runs-p: NUMBER | -
//	min-bin: DECIMAL                        (1-based; 0 when no bin is informative)
//	min-p: NUMBER | -
//	min-p-sidak: NUMBER | -
//	bin: TEST NUMBER | none -               (one per bin, in table order)
//
// NUMBER is the text of section 2; "-" stands for "not defined" (NaN).
type CountsFile struct {
	Campaign, Observable string
	Round                int
	Seals                []CountsSeal
	Tests                []CountsBlock
}

// CountsSeal names the seal whose true table a count test read.
type CountsSeal struct {
	Team       string
	Version    int
	Commitment string
}

// CountsBlock is one comparison's count tests, as logged.
type CountsBlock struct {
	Column, TeamA, TeamB string
	P0                   float64
	Seed                 uint64
	Samples, Informative int
	G, GP, MCError       float64
	PITD, PITP           float64
	Runs, RunsPos        int
	RunsNeg              int
	RunsP                float64
	MinBin               int // 0-based, -1 when none
	MinP, MinPSidak      float64
	BinTests             []string
	BinP                 []float64
}

func numText(v float64) string {
	if math.IsNaN(v) {
		return "-"
	}
	return table.Format(v)
}

// Encode returns the canonical bytes.
func (f *CountsFile) Encode() []byte {
	var b bytes.Buffer
	b.WriteString(CountsHeader + "\n")
	b.WriteString("# campaign: " + f.Campaign + "\n# observable: " + f.Observable + "\n# round: " + strconv.Itoa(f.Round) + "\n")
	for _, s := range f.Seals {
		b.WriteString("# seal: " + s.Team + " " + strconv.Itoa(s.Version) + " " + s.Commitment + "\n")
	}
	for i := range f.Tests {
		t := &f.Tests[i]
		kv := func(k, v string) { b.WriteString(k + ": " + v + "\n") }
		kv("tests", t.Column+" "+t.TeamA+" "+t.TeamB)
		kv("p0", numText(t.P0))
		kv("seed", strconv.FormatUint(t.Seed, 10))
		kv("samples", strconv.Itoa(t.Samples))
		kv("informative", strconv.Itoa(t.Informative))
		kv("g", numText(t.G))
		kv("g-p", numText(t.GP))
		kv("mc-error", numText(t.MCError))
		kv("pit-d", numText(t.PITD))
		kv("pit-p", numText(t.PITP))
		kv("runs", strconv.Itoa(t.Runs)+" "+strconv.Itoa(t.RunsPos)+" "+strconv.Itoa(t.RunsNeg))
		kv("runs-p", numText(t.RunsP))
		kv("min-bin", strconv.Itoa(t.MinBin+1))
		kv("min-p", numText(t.MinP))
		kv("min-p-sidak", numText(t.MinPSidak))
		for j := range t.BinTests {
			kv("bin", t.BinTests[j]+" "+numText(t.BinP[j]))
		}
	}
	return b.Bytes()
}

// maxCountsBins bounds the bins of one comparison in a counts file.
const maxCountsBins = 1 << 20

// DecodeCountsFile parses a count-tests file and refuses any byte
// sequence that is not the canonical encoding of what it holds.
func DecodeCountsFile(path string, data []byte) (*CountsFile, error) {
	lines := strings.Split(string(data), "\n")
	if len(lines) < 2 || lines[len(lines)-1] != "" {
		return nil, table.Errorf(path, len(lines), 1, "a count-tests file ends with a line feed")
	}
	lines = lines[:len(lines)-1]
	p := &countsParser{path: path, lines: lines}
	f := &CountsFile{}
	if lines[0] != CountsHeader {
		return nil, table.Errorf(path, 1, 1, "not a count-tests file: the first line is not %q", CountsHeader)
	}
	p.n = 1
	var err error
	if f.Campaign, err = p.take("# campaign", isName("campaign")); err != nil {
		return nil, err
	}
	if f.Observable, err = p.take("# observable", isName("observable")); err != nil {
		return nil, err
	}
	if f.Round, err = p.count("# round"); err != nil {
		return nil, err
	}
	for p.n < len(lines) && strings.HasPrefix(lines[p.n], "# seal: ") {
		v, _ := p.take("# seal", nil)
		fs := strings.Split(v, " ")
		n, ok := parseCount(safeIndex(fs, 1))
		if len(fs) != 3 || !ValidName(fs[0]) || !ok || !validHex64(fs[2]) {
			return nil, table.Errorf(path, p.n, 1, "a seal line is TEAM VERSION COMMITMENT")
		}
		f.Seals = append(f.Seals, CountsSeal{Team: fs[0], Version: n, Commitment: fs[2]})
	}
	for p.n < len(lines) {
		var t CountsBlock
		v, err := p.take("tests", nil)
		if err != nil {
			return nil, err
		}
		fs := strings.Split(v, " ")
		if len(fs) != 3 || !ValidName(fs[0]) || !ValidName(fs[1]) || !ValidName(fs[2]) {
			return nil, table.Errorf(path, p.n, 8, "a tests line is COLUMN TEAM-A TEAM-B")
		}
		t.Column, t.TeamA, t.TeamB = fs[0], fs[1], fs[2]
		if t.P0, err = p.num("p0"); err != nil {
			return nil, err
		}
		s, err := p.take("seed", nil)
		if err != nil {
			return nil, err
		}
		if t.Seed, err = strconv.ParseUint(s, 10, 64); err != nil || strconv.FormatUint(t.Seed, 10) != s {
			return nil, table.Errorf(path, p.n, 7, "seed: not a decimal integer below 2^64 without leading zero")
		}
		if t.Samples, err = p.int("samples"); err != nil {
			return nil, err
		}
		if t.Informative, err = p.int("informative"); err != nil {
			return nil, err
		}
		for _, x := range []struct {
			k string
			v *float64
		}{{"g", &t.G}, {"g-p", &t.GP}, {"mc-error", &t.MCError}, {"pit-d", &t.PITD}, {"pit-p", &t.PITP}} {
			if *x.v, err = p.num(x.k); err != nil {
				return nil, err
			}
		}
		r, err := p.take("runs", nil)
		if err != nil {
			return nil, err
		}
		rs := strings.Split(r, " ")
		ok := len(rs) == 3
		ints := make([]int, 3)
		for i := 0; ok && i < 3; i++ {
			ints[i], err = strconv.Atoi(rs[i])
			ok = err == nil && ints[i] >= 0 && strconv.Itoa(ints[i]) == rs[i]
		}
		if !ok {
			return nil, table.Errorf(path, p.n, 7, "runs: three decimal integers RUNS POSITIVE NEGATIVE")
		}
		t.Runs, t.RunsPos, t.RunsNeg = ints[0], ints[1], ints[2]
		if t.RunsP, err = p.num("runs-p"); err != nil {
			return nil, err
		}
		mb, err := p.int("min-bin")
		if err != nil {
			return nil, err
		}
		t.MinBin = mb - 1
		if t.MinP, err = p.num("min-p"); err != nil {
			return nil, err
		}
		if t.MinPSidak, err = p.num("min-p-sidak"); err != nil {
			return nil, err
		}
		for p.n < len(lines) && strings.HasPrefix(lines[p.n], "bin: ") {
			if len(t.BinTests) >= maxCountsBins {
				return nil, table.Errorf(path, p.n+1, 1, "more than %d bins in one comparison", maxCountsBins)
			}
			v, _ := p.take("bin", nil)
			name, num, _ := strings.Cut(v, " ")
			if !ValidName(name) {
				return nil, table.Errorf(path, p.n, 6, "bin: a test name, then its p-value")
			}
			x, err := p.numText(num, 7+len(name))
			if err != nil {
				return nil, err
			}
			t.BinTests, t.BinP = append(t.BinTests, name), append(t.BinP, x)
		}
		if t.MinBin >= len(t.BinTests) {
			return nil, table.Errorf(path, p.n, 1, "min-bin %d: the comparison has %d bins", t.MinBin+1, len(t.BinTests))
		}
		f.Tests = append(f.Tests, t)
	}
	if !bytes.Equal(f.Encode(), data) {
		return nil, table.Errorf(path, 0, 0, "not in canonical form (SPEC.md, section 7.1)")
	}
	return f, nil
}

func safeIndex(s []string, i int) string {
	if i < len(s) {
		return s[i]
	}
	return ""
}

type countsParser struct {
	path  string
	lines []string
	n     int // lines read
}

// take reads the next line, which must be "key: value".
func (p *countsParser) take(key string, check func(string) error) (string, error) {
	if p.n >= len(p.lines) {
		return "", table.Errorf(p.path, p.n+1, 1, "missing line %q", key+": ")
	}
	l := p.lines[p.n]
	p.n++
	v, ok := strings.CutPrefix(l, key+": ")
	if !ok {
		return "", table.Errorf(p.path, p.n, 1, "expected %q", key+": ")
	}
	if check != nil {
		if err := check(v); err != nil {
			return "", table.Errorf(p.path, p.n, len(key)+3, "%v", err)
		}
	}
	return v, nil
}

func (p *countsParser) count(key string) (int, error) {
	v, err := p.take(key, nil)
	if err != nil {
		return 0, err
	}
	n, ok := parseCount(v)
	if !ok {
		return 0, table.Errorf(p.path, p.n, len(key)+3, "%s: a count from 1, without leading zero", key)
	}
	return n, nil
}

func (p *countsParser) int(key string) (int, error) {
	v, err := p.take(key, nil)
	if err != nil {
		return 0, err
	}
	n, err := strconv.Atoi(v)
	if err != nil || n < 0 || strconv.Itoa(n) != v {
		return 0, table.Errorf(p.path, p.n, len(key)+3, "%s: a non-negative decimal integer without leading zero", key)
	}
	return n, nil
}

func (p *countsParser) num(key string) (float64, error) {
	v, err := p.take(key, nil)
	if err != nil {
		return 0, err
	}
	return p.numText(v, len(key)+3)
}

func (p *countsParser) numText(v string, col int) (float64, error) {
	if v == "-" {
		return math.NaN(), nil
	}
	x, err := strconv.ParseFloat(v, 64)
	if err != nil || math.IsInf(x, 0) || math.IsNaN(x) || table.Format(x) != v {
		return 0, table.Errorf(p.path, p.n, col, "%q is not a number in the form of SPEC.md section 2 (or - for none)", v)
	}
	return x, nil
}
