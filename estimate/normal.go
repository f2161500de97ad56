package estimate

import "math"

// zFor is the two-sided normal quantile of an interval level:
// Phi^-1((1 + level) / 2) = sqrt(2) * erfinv(level).
func zFor(level float64) float64 { return math.Sqrt2 * math.Erfinv(level) }

// phi is the standard normal distribution function.
func phi(x float64) float64 { return 0.5 * math.Erfc(-x/math.Sqrt2) }
