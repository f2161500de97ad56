package rankeval

import (
	"math"

	"gonum.org/v1/gonum/mathext"
)

// studentTTwoSided is P(|T| >= |t|) for Student's t with df degrees of
// freedom: I_x(df/2, 1/2) with x = df / (df + t^2) (Abramowitz & Stegun
// 26.7.1 with 26.5.27).
func studentTTwoSided(t, df float64) float64 {
	if math.IsInf(t, 0) {
		return 0
	}
	return regIncBeta(df/2, 0.5, df/(df+t*t))
}

// regIncBeta is the regularised incomplete beta function I_x(a, b), from gonum
// (a port of the Cephes routine), with the ends of [0, 1] answered directly.
func regIncBeta(a, b, x float64) float64 {
	switch {
	case x <= 0:
		return 0
	case x >= 1:
		return 1
	}
	return mathext.RegIncBeta(a, b, x)
}
