package compare

import (
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/mat"
)

// Default settings of a comparison; [Defaults] returns them as [Options].
const (
	// DefaultAlpha is the family-wise false-alarm rate.
	DefaultAlpha = 0.01
	// DefaultEdgeTol is the relative tolerance on bin edges.
	DefaultEdgeTol = 1e-9
	// DefaultOverlapSource is the error source an event overlap sets the
	// correlation of, when [Overlap.Source] is empty.
	DefaultOverlapSource = "stat"
)

// Options is the one definition of a comparison's settings, shared by the
// table-mode command line, the campaign protocol (decoded from a column's
// TOML table: the `toml` tags are the protocol's key names) and the
// comparison itself. Start from [Defaults], change what is declared, and
// call [Options.Validate].
//
// The verdict:
//
//   - Alpha is the family-wise false-alarm rate. The p-value criteria (χ²,
//     Kolmogorov–Smirnov, runs, trials-corrected largest pull) of every
//     comparison in a family are adjusted together by Holm's step-down
//     method ([AdjustFamily]); each passes when its adjusted p-value is
//     above Alpha. 0 turns the p-value criteria off (the zero Options
//     therefore has no criterion; use [Defaults]).
//
//   - MaxPull, when > 0, is a raw limit on the largest |pull|: a physics
//     tolerance, not corrected for the number of bins (reports say so).
//
//   - AbsTol and RelTol, when either is > 0, require in every bin
//
//     |a_i - b_i| <= max(AbsTol, RelTol · max(|a_i|, |b_i|))
//
//     Without uncertainties they are the only possible criterion.
//
// The uncertainties: every uncertainty column is an error source k with its
// own correlation ρ_k between the two chains,
//
//	σ_d,i² = Σ_k (σ_a,k,i - σ_b,k,i)² + 2 (1 - ρ_k) σ_a,k,i σ_b,k,i
//
// which is Σ_k (σ_a,k,i² + σ_b,k,i² - 2ρ_k σ_a,k,i σ_b,k,i) written without
// cancellation. ρ_k comes from Correlations (keyed by the source's column
// name, or by its suffix after "VALUE_"), else from Overlap for its source,
// else from Correlation, else 0 with a warning.
type Options struct {
	Alpha   float64 `toml:"alpha" json:"alpha"`
	MaxPull float64 `toml:"max_pull" json:"max_pull,omitempty"`
	AbsTol  float64 `toml:"abs_tol" json:"abs_tol,omitempty"`
	RelTol  float64 `toml:"rel_tol" json:"rel_tol,omitempty"`
	// EdgeTol is the relative tolerance on bin edges (see table.SameEdges).
	EdgeTol float64 `toml:"edge_tol" json:"edge_tol"`
	// Subset selects Barlow's rule for one sample being a subset of the
	// other: σ_d,i² = |σ_a,i² - σ_b,i²| on the total uncertainties,
	// evaluated as |(σ_a - σ_b)(σ_a + σ_b)|.
	Subset bool `toml:"subset" json:"subset,omitempty"`
	// Default is the correlation of the sources Correlations does not
	// name: a number, or a column holding one value per bin. Its Set field
	// records that it was written explicitly.
	Default Rho `toml:"correlation,omitempty" json:"correlation"`
	// Correlations gives per-source correlations.
	Correlations map[string]Rho `toml:"correlations,omitempty" json:"correlations,omitempty"`
	// Overlap derives a per-bin correlation from event counts. In counts
	// mode only Common is needed (the counts are the compared column), and
	// the per-bin tests become McNemar's on the discordant events.
	Overlap Overlap `toml:"overlap,omitempty" json:"overlap,omitzero"`

	// Counts declares that the value column holds event counts: the
	// comparison then uses the exact count tests of [CountTests] in place
	// of the Gaussian χ², KS and largest-pull criteria, and refuses values
	// that are not non-negative integers. Uncertainty columns are not
	// used (the counts are their own uncertainty).
	Counts bool `toml:"counts" json:"counts,omitempty"`
	// ExposureRatio is, in counts mode, the exposure of A over that of B
	// (the expected ratio of the counts); 0 means 1.
	ExposureRatio float64 `toml:"exposure_ratio" json:"exposure_ratio,omitempty"`
	// MCSamples is, in counts mode, the number of Monte Carlo samples of
	// the global statistic (0: DefaultMCSamples).
	MCSamples int `toml:"mc_samples" json:"mc_samples,omitempty"`
	// SumW2 names, in counts mode, the column of per-bin sums of squared
	// weights: the value column then holds sums of weights (weighted
	// counts), judged by [WeightedTest].
	SumW2 string `toml:"sumw2" json:"sumw2,omitempty"`
	// Seed seeds, in counts mode, the Monte Carlo and the randomized PIT,
	// so every result is reproducible.
	Seed uint64 `toml:"seed" json:"seed,omitempty"`

	// CovA and CovB are optional covariance matrices (n×n) of the two
	// chains; when both are given, χ² is dᵀ W⁻¹ d with
	// W = V_a + V_b - C - Cᵀ and C the optional cross-covariance CovCross
	// (C_ij = cov(a_i, b_j)), or, when a number Default = ρ is declared
	// instead, C = ρ L_a L_bᵀ (see [CrossFromCorrelation]).
	CovA, CovB *mat.SymDense `toml:"-" json:"-"`
	CovCross   *mat.Dense    `toml:"-" json:"-"`

	// Correlation is the deprecated form of Default (a number only; a
	// zero counts as not declared). Used only when Default is not set.
	Correlation float64 `toml:"-" json:"-"`
	// Limits is the deprecated form of Alpha (MinP), MaxPull, AbsTol and
	// RelTol. Each of its non-zero fields is used when the matching field
	// above is zero.
	Limits Limits `toml:"-" json:"-"`
}

// Rho is a declared correlation between the two chains' errors: a number
// in [-1, 1], or the name of a column holding one value per bin. In TOML it
// is written as a number or a string; on the command line [ParseRho] reads
// it.
type Rho struct {
	Value  float64
	Column string
	// Set records that the correlation was declared (a declared 0 is not
	// warned about).
	Set bool
}

// Number returns a declared constant correlation.
func Number(v float64) Rho { return Rho{Value: v, Set: true} }

// ParseRho reads a correlation as given on the command line: a number, or
// else a column name.
func ParseRho(s string) (Rho, error) {
	s = strings.TrimSpace(s)
	if s == "" {
		return Rho{}, errors.New("empty correlation")
	}
	if v, err := strconv.ParseFloat(s, 64); err == nil {
		r := Number(v)
		return r, r.check()
	}
	if c := s[0]; c == '+' || c == '-' || c == '.' || (c >= '0' && c <= '9') {
		return Rho{}, fmt.Errorf("correlation %q is neither a number nor a column name", s)
	}
	return Rho{Column: s, Set: true}, nil
}

func (r Rho) check() error {
	if r.Column == "" && (math.IsNaN(r.Value) || r.Value < -1 || r.Value > 1) {
		return fmt.Errorf("correlation %v is outside [-1, 1]", r.Value)
	}
	return nil
}

// String is the number, or the column name.
func (r Rho) String() string {
	if r.Column != "" {
		return r.Column
	}
	return strconv.FormatFloat(r.Value, 'g', -1, 64)
}

// UnmarshalTOML accepts a number or a column name.
func (r *Rho) UnmarshalTOML(v any) error {
	switch x := v.(type) {
	case float64:
		*r = Number(x)
	case int64:
		*r = Number(float64(x))
	case string:
		if x == "" {
			return errors.New("correlation: empty column name")
		}
		*r = Rho{Column: x, Set: true}
	default:
		return fmt.Errorf("correlation must be a number or a column name, got %T", v)
	}
	return r.check()
}

// MarshalTOML writes the number or the quoted column name.
func (r Rho) MarshalTOML() ([]byte, error) {
	if r.Column != "" {
		return []byte(strconv.Quote(r.Column)), nil
	}
	return []byte(strconv.FormatFloat(r.Value, 'g', -1, 64)), nil
}

// MarshalJSON writes the number or the column name, or null when nothing
// was declared.
func (r Rho) MarshalJSON() ([]byte, error) {
	if !r.Set {
		return []byte("null"), nil
	}
	return r.MarshalTOML()
}

// UnmarshalJSON accepts a number or a column name.
func (r *Rho) UnmarshalJSON(b []byte) error {
	var v any
	if err := json.Unmarshal(b, &v); err != nil {
		return err
	}
	if v == nil {
		*r = Rho{}
		return nil
	}
	return r.UnmarshalTOML(v)
}

// Overlap names the per-bin event counts from which the correlation of the
// statistical errors is derived:
//
//	ρ_i = N_common,i / √(N_A,i · N_B,i)
//
// the correlation of two Poisson counts N_A = X + Y, N_B = X + Z sharing the
// component X of the events both chains select (cov = var X = N_common;
// standard result for sums of independent Poisson variables, common
// practice for overlapping selections). N_A is column Count of table A,
// N_B column Count of table B, N_common column Common of table A (or of B
// when A lacks it). A bin with N_A or N_B = 0 gets ρ = 0.
type Overlap struct {
	Count  string `toml:"count" json:"count"`
	Common string `toml:"common" json:"common"`
	// Source is the error source the derived ρ applies to (default "stat").
	Source string `toml:"source" json:"source,omitempty"`
}

// Enabled reports whether an overlap was declared.
func (o Overlap) Enabled() bool { return o.Count != "" || o.Common != "" }

// Limits are the tolerances of the earlier interface.
//
// Deprecated: use the fields of [Options]; MinP is Options.Alpha.
type Limits struct {
	MaxPull float64
	MinP    float64
	AbsTol  float64
	RelTol  float64
}

// DefaultLimits are the default limits of the earlier interface: no raw
// |pull| limit, α = 0.01.
//
// Deprecated: use [Defaults].
var DefaultLimits = Limits{MinP: DefaultAlpha}

// Defaults returns the default settings: α = 0.01, edge tolerance 1e-9, no
// raw |pull| limit, no numerical tolerance, no declared correlation.
func Defaults() Options {
	return Options{Alpha: DefaultAlpha, EdgeTol: DefaultEdgeTol}
}

// Declared reports whether anything was said about the correlation of the
// two chains (a number, a per-source or per-bin correlation, an overlap,
// the subset rule or covariance matrices).
func (o *Options) Declared() bool {
	return o.Default.Set || len(o.Correlations) > 0 || o.Overlap.Enabled() || o.Subset ||
		o.CovA != nil || o.Correlation != 0
}

// Validate checks every setting on its own and in combination.
func (o *Options) Validate() error {
	e := o.effective()
	if math.IsNaN(e.Alpha) || e.Alpha < 0 || e.Alpha >= 1 {
		return fmt.Errorf("alpha must be in [0, 1) (0 turns the p-value criteria off), got %v", e.Alpha)
	}
	for _, v := range []struct {
		name string
		v    float64
	}{{"max_pull", e.MaxPull}, {"abs_tol", e.AbsTol}, {"rel_tol", e.RelTol}, {"edge_tol", o.EdgeTol}} {
		if math.IsNaN(v.v) || v.v < 0 || math.IsInf(v.v, 0) {
			return fmt.Errorf("%s must be a finite number >= 0, got %v", v.name, v.v)
		}
	}
	if err := e.Default.check(); err != nil {
		return err
	}
	names := make([]string, 0, len(o.Correlations))
	for k := range o.Correlations {
		names = append(names, k)
	}
	slices.Sort(names)
	for _, k := range names {
		if k == "" {
			return errors.New("correlations: empty source name")
		}
		if err := o.Correlations[k].check(); err != nil {
			return fmt.Errorf("correlation of source %q: %w", k, err)
		}
	}
	if o.Overlap.Enabled() && (o.Overlap.Count == "" || o.Overlap.Common == "") && !o.Counts {
		return errors.New("overlap needs both the per-bin count column and the common-events column")
	}
	if o.Overlap.Enabled() && !o.Counts {
		if _, ok := o.Correlations[o.overlapSource()]; ok {
			return fmt.Errorf("source %q has both a declared correlation and an overlap", o.overlapSource())
		}
	}
	if o.Subset && (o.Default.Set || len(o.Correlations) > 0 || o.Overlap.Enabled() || o.Correlation != 0) {
		return errors.New("the subset rule and declared correlations cannot be used together (the subset rule already accounts for the shared events)")
	}
	if (o.CovA == nil) != (o.CovB == nil) {
		return errors.New("covariance matrices of both chains are needed")
	}
	if o.CovCross != nil && o.CovA == nil {
		return errors.New("a cross-covariance needs the covariance matrices of both chains")
	}
	if o.CovA != nil && (o.Subset || len(o.Correlations) > 0 || o.Overlap.Enabled() || e.Default.Column != "") {
		return errors.New("covariance matrices cannot be combined with the subset rule, per-source or per-bin correlations; give the correlation as a cross-covariance or one number")
	}
	if o.CovCross != nil && e.Default.Set {
		return errors.New("give either a cross-covariance or a correlation, not both")
	}
	return o.validateCounts(&e)
}

// validateCounts checks the count-data settings.
func (o *Options) validateCounts(e *Options) error {
	if !o.Counts {
		if o.ExposureRatio != 0 || o.MCSamples != 0 || o.Seed != 0 || o.SumW2 != "" {
			return errors.New("exposure_ratio, mc_samples, seed and sumw2 apply to counts only (counts = true)")
		}
		return nil
	}
	if r := o.ExposureRatio; math.IsNaN(r) || r < 0 || math.IsInf(r, 0) {
		return fmt.Errorf("exposure_ratio must be a finite number > 0, got %v", r)
	}
	if o.MCSamples < 0 || o.MCSamples > MaxMCSamples {
		return fmt.Errorf("mc_samples must be in [0, %d] (0: %d), got %d", MaxMCSamples, DefaultMCSamples, o.MCSamples)
	}
	switch {
	case o.Subset:
		return errors.New("counts and the subset rule cannot be used together: give the common events per bin (overlap common) instead")
	case o.CovA != nil:
		return errors.New("counts cannot be compared with covariance matrices")
	case e.Default.Set || len(o.Correlations) > 0:
		return errors.New("counts take no declared correlation: independent counts are compared as they are, shared events through the per-bin common count (overlap common)")
	case o.SumW2 != "" && o.Overlap.Enabled():
		return errors.New("weighted counts (sumw2) cannot be compared through shared events")
	case o.Overlap.Enabled() && o.Overlap.Common == "":
		return errors.New("in counts mode the overlap needs the column of common events per bin")
	case o.Overlap.Enabled() && o.ExposureRatio != 0 && o.ExposureRatio != 1:
		return errors.New("shared events are compared through their discordant events with p = ½: an exposure ratio cannot be declared with them")
	}
	return nil
}

func (o *Options) overlapSource() string {
	if o.Overlap.Source != "" {
		return o.Overlap.Source
	}
	return DefaultOverlapSource
}

// effective folds the deprecated fields into the current ones.
func (o *Options) effective() Options {
	e := *o
	if e.Alpha == 0 {
		e.Alpha = o.Limits.MinP
	}
	if e.MaxPull == 0 {
		e.MaxPull = o.Limits.MaxPull
	}
	if e.AbsTol == 0 {
		e.AbsTol = o.Limits.AbsTol
	}
	if e.RelTol == 0 {
		e.RelTol = o.Limits.RelTol
	}
	if !e.Default.Set && o.Correlation != 0 {
		e.Default = Number(o.Correlation)
	}
	return e
}
