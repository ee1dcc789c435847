// Package audit runs the standard attacks on a blinded table before it is
// published, and measures how well each one recovers the true values.
//
// The blind step knows both sides of every blinded column: the true values
// vᵢ and what it is about to publish, the blinded values v′ᵢ and the
// blinded uncertainties σ′ₖ,ᵢ of each source k. The maps are affine,
//
//	v′ᵢ = sᵢ·vᵢ + oᵢ,   σ′ₖ,ᵢ = |sᵢ|·σₖ,ᵢ,
//
// with sᵢ in the declared scale range S = [s₋, s₊] and oᵢ in the declared
// shift range O = [o₋, o₊] (one pair for the whole column under a global
// map, one per bin under shape blinding). Every attack sees only what an
// outsider sees (v′, σ′, the bin edges, S and O) and returns an estimate v̂ᵢ
// for some or all bins; the audit then scores the estimate against vᵢ.
//
// # What is measured
//
// For bin i, the interval of true values consistent with v′ᵢ under the
// declared ranges alone is Iᵢ = {(v′ᵢ − o)/s : s ∈ S, o ∈ O}; as (v′ − o)/s
// is monotone in s and in o when 0 ∉ S, its end points are among the four
// corners (v′ᵢ − o±)/s±, and its width is
//
//	Wᵢ = max over corners − min over corners.
//
// The yardstick of bin i is the smaller of that width and the size of
// the value,
//
//	Dᵢ = min(Wᵢ, max(|vᵢ|, m)),   m = median over the column of |vⱼ|,
//
// and the precision of an attack on a column is the median over the bins
// it estimates,
//
//	P = median over i of |v̂ᵢ − vᵢ| / Dᵢ,
//
// the lower median (gonum's stat.Quantile with stat.Empirical, the
// smallest value whose empirical CDF reaches 1/2), so that half or more
// of the estimated bins are at least this well recovered. The attack
// breaks the column when P < threshold ([DefaultThreshold] = 0.10).
//
// Why the minimum: when the shift range is narrow, Wᵢ < |vᵢ| and P is the
// fraction of what the declared ranges leave open that the attack still
// leaves open. When the shift range is wide, Wᵢ ≫ |vᵢ| (±2·10⁴ on counts
// of 10⁴ gives Wᵢ ≈ 8·10⁴), and a share of Wᵢ stops meaning anything: an
// estimate that is off by 60 % of vᵢ is 8 % of Wᵢ, and even a guess of
// the typical size of the values scores under 0.1. The value's own size
// then takes over, so P is a relative error, and "recovered to better than
// 10 %" means what it says. The floor m keeps a bin near zero from being
// judged against its own tiny size: it is measured against the column's
// typical magnitude instead, so recovering the shape of a falling
// spectrum, or the sign pattern of an asymmetry, still counts.
//
// Bins with a non-finite vᵢ, v̂ᵢ or Dᵢ are left out; a bin with Dᵢ = 0 (a
// degenerate range that hides nothing) scores 0 when v̂ᵢ equals vᵢ to
// 1e-12 relative, +Inf otherwise. If 0 ∈ S every Wᵢ is infinite, Dᵢ is the
// size of the value, and the attacks that need the sign of s do not
// apply; such a range is refused at init.
//
// The ratio attack between two columns a and b estimates the true ratio
// and is scored the same way, with the ratio in place of the value (see
// [SharedRatio]). It is not run between two columns with the same
// observable and column name, which are two teams' tables of one column:
// once a comparison opens they share the common map on purpose, so that
// differences keep their meaning, and a team that knows its own true
// table then reads the other team's through the ratio. That is the stated
// limit of the threat model, not something an audit can refuse.
//
// [Finding.Detail] also reports the median relative error |v̂ᵢ − vᵢ|/|vᵢ|.
//
// Where an attack has variants (each uncertainty source k on its own, and
// all sources added in quadrature, σ′ᵢ² = Σₖ σ′ₖ,ᵢ²; each assumed plateau
// value), the audit scores every variant and reports the most precise
// one, which is the conservative choice: an attacker may guess the right
// variant. Detail never holds a true value, an estimate or a recovered map
// parameter, only counts of bins and precisions, so a refusal message
// does not itself leak the map.
//
// # Attacks
//
// [VarianceLine], [SignalToError], [DeclaredBound], [ConstantRegion],
// [RelativeErrorLine] on every column, and [SharedRatio] on every pair of
// columns (of one observable or of two) whose bin edges are identical.
// Each is documented with its formula. The counting attacks assume a
// variance per unit of value c = 1 (raw counts, σ² = N); for a weighted
// count with c ≠ 1 they are weaker, which the relative-error and
// constant-region attacks, free of c, partly cover.
package audit
