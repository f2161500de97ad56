package rankeval

import (
	"math"

	"gonum.org/v1/gonum/stat/distuv"
)

// studentTTwoSided is P(|T| >= |t|) for Student's t with df degrees of freedom, from
// gonum's distribution (the regularised incomplete beta function of Abramowitz & Stegun
// 26.7.1 with 26.5.27, a port of the Cephes routine).
func studentTTwoSided(t, df float64) float64 {
	if math.IsInf(t, 0) {
		return 0
	}
	return 2 * distuv.StudentsT{Mu: 0, Sigma: 1, Nu: df}.Survival(math.Abs(t))
}
