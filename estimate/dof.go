package estimate

import (
	"math"

	"gonum.org/v1/gonum/stat/distuv"
)

// spread is what the linearised Horvitz–Thompson variance of one figure
// says about how far its bootstrap SE can be trusted. A figure f moves with
// each sampled pair's weight w (inclusion probability pi = 1/w) at the rate
// g = df/dw; the pair's term of the variance estimate under Poisson sampling
// is v = (1 - pi)·w²·g², and v itself, an estimate from one draw, has
// variance estimated by (1 - pi)·v². V is the sum of the v, W the sum of the
// (1 - pi)·v².
//
// When a few pairs carry most of V (a rare top-grade document deep in a
// ranking, sampled at a low rate), V is an unreliable estimate and an
// interval of ±z·SE is too narrow. Satterthwaite's approximation treats V as
// a scaled chi-square with 2V²/W degrees of freedom (Satterthwaite, "An
// approximate distribution of estimates of variance components",
// Biometrics Bulletin 2(6), 1946), and the interval uses Student's t
// quantile at those degrees of freedom instead of the normal one. With many
// pairs sharing V the degrees of freedom are large and t is z; a single
// pair gives at least 2 (W <= sum of v², so 2V²/W >= 2).
type spread struct{ v, w float64 }

// add counts one sampled pair of weight w at rate g.
func (s *spread) add(w, g float64) {
	v := (w - 1) * w * g * g // (1 - 1/w)·w²·g²
	s.v += v
	s.w += (1 - 1/w) * v * v
}

func (s *spread) addAll(o spread) { s.v += o.v; s.w += o.w }

// df is the Satterthwaite degrees of freedom; +Inf when nothing varies.
func (s spread) df() float64 {
	if s.w <= 0 {
		return math.Inf(1)
	}
	return 2 * s.v * s.v / s.w
}

// largeDF is where Student's t quantile at the levels used here is the
// normal one to about 1e-7 (the first correction term is (z³+z)/(4·df)).
const largeDF = 1e8

// tQuantile is the two-sided quantile of Student's t with df degrees of
// freedom at an interval level: the point x with P(|T| <= x) = level.
// gonum's own quantile inverts the incomplete beta function (about 11 µs a
// call, and an estimate may need tens of thousands); this starts from the
// Cornish–Fisher expansion (Abramowitz & Stegun, Handbook of Mathematical
// Functions, 26.7.5) and, below 1,000 degrees of freedom, polishes it with
// Newton steps on gonum's distribution function, to 1e-12.
func tQuantile(level, df float64) float64 {
	z := zFor(level)
	if !(df < largeDF) {
		return z
	}
	p := (1 + level) / 2
	z2 := z * z
	x := z + z*(z2+1)/(4*df) +
		z*((5*z2+16)*z2+3)/(96*df*df) +
		z*(((3*z2+19)*z2+17)*z2-15)/(384*df*df*df) +
		z*((((79*z2+776)*z2+1482)*z2-1920)*z2-945)/(92160*df*df*df*df)
	if df >= 1000 {
		// The expansion's next term is below 1e-14 here, and the
		// incomplete beta function loses digits at such parameters.
		return x
	}
	t := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: df}
	for range 8 {
		step := (t.CDF(x) - p) / t.Prob(x)
		x -= step
		if math.Abs(step) < 1e-12*x {
			break
		}
	}
	return x
}

// tCDF is Student's t distribution function at df degrees of freedom
// (the normal one beyond largeDF).
func tCDF(x, df float64) float64 {
	if !(df < largeDF) {
		return phi(x)
	}
	return distuv.StudentsT{Mu: 0, Sigma: 1, Nu: df}.CDF(x)
}
