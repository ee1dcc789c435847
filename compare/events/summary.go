package events

import (
	"cmp"
	"math"
	"slices"
)

// FormatSummary starts every summary file.
const FormatSummary = "tandem/v1 event-sync summary"

// Tolerance is the allowed difference of one variable:
// |a − b| <= max(Abs, Rel·max(|a|, |b|)).
type Tolerance struct {
	Abs float64 `json:"abs"`
	Rel float64 `json:"rel"`
}

// DefaultTolerance serves variables without a tolerance of their own. It
// is set by the precision chains store, not by float64 arithmetic:
//
//   - a float32 branch keeps 24 bits, a unit roundoff of 2⁻²⁴ ≈ 6.0e-8
//     (IEEE 754), so one chain storing float32 and the other float64, or
//     both float32 one unit in the last place apart, differ by up to
//     2⁻²³ ≈ 1.2e-7 relative;
//   - a value printed to 6 significant digits (C's %g, numpy's %.6g) is
//     rounded by up to 5e-6 of itself, and two chains that print nearly
//     equal values round them apart by up to one unit in the sixth digit,
//     at most 1e-5 of the value.
//
// Rel = 1e-5 therefore passes what storage and printing alone make differ,
// and still fails any change a physicist would call real (a calibration or
// a correction moves values by 1e-4 or more). Abs = 0: near zero a relative
// rule is the strict one; values printed with a fixed number of decimals
// need --tol NAME=ABS for their last decimal.
var DefaultTolerance = Tolerance{Abs: 0, Rel: 1e-5}

// VarSpec describes one compared variable.
type VarSpec struct {
	Name string    `json:"name"`
	Tol  Tolerance `json:"tolerance"`
	// Blinded is set when both sides went through the same affine map;
	// the values and differences in the summary are then blinded ones.
	Blinded bool `json:"blinded,omitempty"`
}

// Binning names the variable and the bin edges for the per-bin overlap.
type Binning struct {
	Var   string    `json:"var"`
	Edges []float64 `json:"edges"`
	// Hidden is set when the binning variable is blinded: the summary
	// then keeps the counts, which only the per-bin correlation leaves.
	Hidden bool `json:"hidden,omitempty"`
}

// Histogram layout of relative differences r: bin 0 holds r = 0, bin 1
// holds 0 < r < 10^HistLow, and bin 1+i (i = 0 … HistBins−1) holds
// 10^(HistLow + i/HistPerDecade) <= r < 10^(HistLow + (i+1)/HistPerDecade).
const (
	HistLow       = -16
	HistPerDecade = 10
	HistBins      = 17 * HistPerDecade // up to r = 10, above the largest possible r = 2
)

// HistEdge returns the lower edge of histogram bin i >= 1 (0 for bin 0,
// and 0 for the underflow bin 1, whose upper edge is HistEdge(2)).
func HistEdge(i int) float64 {
	if i <= 1 {
		return 0
	}
	return math.Pow(10, HistLow+float64(i-2)/HistPerDecade)
}

// histBin returns the histogram bin of r >= 0.
func histBin(r float64) int {
	if r == 0 {
		return 0
	}
	i := int(math.Floor((math.Log10(r) - HistLow) * HistPerDecade))
	switch {
	case i < 0:
		return 1
	case i >= HistBins:
		return HistBins + 1
	}
	return 2 + i
}

// Extreme is the largest value of a difference and the key of its event;
// of equal values the smaller key is kept, so the result does not depend
// on the order events are met.
type Extreme struct {
	Value float64 `json:"value"`
	Key   []int64 `json:"key,omitempty"`
}

func (e *Extreme) offer(v float64, key []int64) {
	if e.Key == nil || v > e.Value || (v == e.Value && compareKeys(key, e.Key) < 0) {
		e.Value = v
		e.Key = append(e.Key[:0], key...)
	}
}

func (e *Extreme) merge(o Extreme) {
	if o.Key != nil {
		e.offer(o.Value, o.Key)
	}
}

// VarStats is what the summary knows of one variable over the common events.
type VarStats struct {
	Compared int64 `json:"compared"`
	Outside  int64 `json:"outside_tolerance"`
	// NonFinite counts events where one side is NaN or infinite and the
	// other differs (always outside tolerance, not in the histogram).
	NonFinite int64 `json:"non_finite"`
	// Above and Below count the events with a > b and a < b.
	Above  int64   `json:"a_above_b"`
	Below  int64   `json:"a_below_b"`
	MaxAbs Extreme `json:"max_abs_diff"`
	MaxRel Extreme `json:"max_rel_diff"`
	// Hist counts the relative differences (see HistBins); its last bin
	// (r >= 10) stays empty for finite values.
	Hist []int64 `json:"hist"`
}

// Event is one of the events that fail most: the key, the number of
// variables outside tolerance and the largest relative difference among
// them (3 when a side is not finite), and both sides' values in variable
// order (blinded for blinded variables).
type Event struct {
	Key     []int64 `json:"key"`
	Outside int     `json:"outside"`
	Worst   float64 `json:"worst_rel_diff"`
	A       []Value `json:"a"`
	B       []Value `json:"b"`
	PosA    int64   `json:"pos_a"`
	PosB    int64   `json:"pos_b"`
}

// worse orders events from the most failing: more variables outside,
// then a larger relative difference, then the smaller key.
func worse(x, y *Event) int {
	if c := cmp.Compare(y.Outside, x.Outside); c != 0 {
		return c
	}
	if c := cmp.Compare(y.Worst, x.Worst); c != 0 {
		return c
	}
	return compareKeys(x.Key, y.Key)
}

// BinCounts are the per-bin event counts of the binning variable: events
// each chain selects (passing all its cuts) with its value in the bin, and
// the common events both select in that same bin.
type BinCounts struct {
	NA      int64 `json:"n_a"`
	NB      int64 `json:"n_b"`
	NCommon int64 `json:"n_common"`
}

// Summary is everything one run learns. All parts add exactly; see Merge.
type Summary struct {
	Format  string    `json:"format"`
	LabelA  string    `json:"label_a"`
	LabelB  string    `json:"label_b"`
	Keys    []string  `json:"keys"`
	Vars    []VarSpec `json:"vars"`
	Cuts    []string  `json:"cuts"`
	Alpha   float64   `json:"alpha"`
	CL      float64   `json:"cl"`
	Binning *Binning  `json:"binning,omitempty"`
	// Parts is the number of partition summaries merged into this one.
	Parts int `json:"parts"`

	RowsA  int64 `json:"rows_a"`
	RowsB  int64 `json:"rows_b"`
	Common int64 `json:"common"`
	OnlyA  int64 `json:"only_a"`
	OnlyB  int64 `json:"only_b"`
	// KeyMin and KeyMax bound the keys of both tables (nil when empty).
	KeyMin []int64 `json:"key_min"`
	KeyMax []int64 `json:"key_max"`
	// Spilled tells that the inputs were not both sorted by key, so they
	// were hash-partitioned; SpilledBytes counts the bytes of rows that
	// did not fit the memory budget and went to the temporary folder.
	Spilled      bool  `json:"spilled"`
	SpilledBytes int64 `json:"spilled_bytes,omitempty"`

	Stats []VarStats `json:"var_stats"`
	// PassA[s] and PassB[s] count the rows that pass exactly the first s
	// cuts; Pairs[sa·(C+1)+sb] counts the common events passing the first
	// sa cuts in A and sb in B.
	PassA []int64 `json:"pass_a"`
	PassB []int64 `json:"pass_b"`
	Pairs []int64 `json:"pairs"`
	// Bins are the per-bin counts; Outside counts selected events whose
	// binning value lies outside the edges, per side.
	Bins        []BinCounts `json:"bins,omitempty"`
	OutsideBins [2]int64    `json:"outside_bins"`

	Worst []Event `json:"worst"`
	// SampleA and SampleB are the smallest keys found only in A or B.
	SampleA [][]int64 `json:"sample_only_a"`
	SampleB [][]int64 `json:"sample_only_b"`

	// sizes of the bounded lists
	maxWorst, maxSample int
}

// Limits of the bounded lists in a summary.
const (
	DefaultWorst  = 20
	DefaultSample = 20
)

func newSummary(o *Options) *Summary {
	s := &Summary{
		Format: FormatSummary, LabelA: o.LabelA, LabelB: o.LabelB,
		Keys: o.Layout.Keys, Cuts: o.Layout.Cuts, Alpha: o.Alpha, CL: o.CL, Parts: 1,
		maxWorst: o.Worst, maxSample: o.Sample,
	}
	for j := 0; j < o.Compared; j++ {
		name := o.Layout.Vars[j]
		_, blinded := o.Blind[name]
		s.Vars = append(s.Vars, VarSpec{Name: name, Tol: o.Tol[j], Blinded: blinded})
		s.Stats = append(s.Stats, VarStats{Hist: make([]int64, HistBins+2)})
	}
	nc := len(o.Layout.Cuts) + 1
	s.PassA, s.PassB, s.Pairs = make([]int64, nc), make([]int64, nc), make([]int64, nc*nc)
	if o.Binning != nil {
		_, hidden := o.Blind[o.Binning.Var]
		s.Binning = &Binning{Var: o.Binning.Var, Edges: o.Binning.Edges, Hidden: hidden}
		s.Bins = make([]BinCounts, len(o.Binning.Edges)-1)
	}
	return s
}

func compareKeys(a, b []int64) int {
	for i := range a {
		if c := cmp.Compare(a[i], b[i]); c != 0 {
			return c
		}
	}
	return 0
}

// offerKey keeps the bounded list of the smallest unmatched keys.
func offerKey(list [][]int64, key []int64, max int) [][]int64 {
	if max <= 0 {
		return list
	}
	if len(list) == max && compareKeys(key, list[max-1]) >= 0 {
		return list
	}
	i, _ := slices.BinarySearchFunc(list, key, compareKeys)
	list = slices.Insert(list, i, slices.Clone(key))
	if len(list) > max {
		list = list[:max]
	}
	return list
}

// offerEvent keeps the bounded list of the events that fail most.
func offerEvent(list []Event, e *Event, max int) []Event {
	if max <= 0 || (len(list) == max && worse(e, &list[max-1]) >= 0) {
		return list
	}
	i, _ := slices.BinarySearchFunc(list, e, func(x Event, y *Event) int { return worse(&x, y) })
	c := *e
	c.Key, c.A, c.B = slices.Clone(e.Key), slices.Clone(e.A), slices.Clone(e.B)
	list = slices.Insert(list, i, c)
	if len(list) > max {
		list = list[:max]
	}
	return list
}

func (s *Summary) seeKey(key []int64) {
	if s.KeyMin == nil {
		s.KeyMin, s.KeyMax = slices.Clone(key), slices.Clone(key)
		return
	}
	if compareKeys(key, s.KeyMin) < 0 {
		copy(s.KeyMin, key)
	}
	if compareKeys(key, s.KeyMax) > 0 {
		copy(s.KeyMax, key)
	}
}
