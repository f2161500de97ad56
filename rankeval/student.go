package rankeval

import "math"

// studentTTwoSided is P(|T| >= |t|) for Student's t with df degrees of
// freedom: I_x(df/2, 1/2) with x = df / (df + t^2) (Abramowitz & Stegun
// 26.7.1 with 26.5.27).
func studentTTwoSided(t, df float64) float64 {
	if math.IsInf(t, 0) {
		return 0
	}
	return regIncBeta(df/2, 0.5, df/(df+t*t))
}

// regIncBeta is the regularised incomplete beta function I_x(a, b),
// evaluated by its continued fraction (DLMF 8.17.22) with the modified
// Lentz method, using the symmetry I_x(a,b) = 1 - I_{1-x}(b,a) where the
// fraction converges slowly (Numerical Recipes, 3rd ed., 6.4).
func regIncBeta(a, b, x float64) float64 {
	switch {
	case x <= 0:
		return 0
	case x >= 1:
		return 1
	}
	la, _ := math.Lgamma(a + b)
	lb, _ := math.Lgamma(a)
	lc, _ := math.Lgamma(b)
	front := math.Exp(la - lb - lc + a*math.Log(x) + b*math.Log1p(-x))
	if x < (a+1)/(a+b+2) {
		return front * betaCF(a, b, x) / a
	}
	return 1 - front*betaCF(b, a, 1-x)/b
}

func betaCF(a, b, x float64) float64 {
	const tiny = 1e-300
	const eps = 1e-16
	c, d := 1.0, 1-(a+b)*x/(a+1)
	if math.Abs(d) < tiny {
		d = tiny
	}
	d = 1 / d
	h := d
	for m := 1; m <= 10000; m++ {
		fm := float64(m)
		// even step
		num := fm * (b - fm) * x / ((a + 2*fm - 1) * (a + 2*fm))
		d = 1 + num*d
		if math.Abs(d) < tiny {
			d = tiny
		}
		c = 1 + num/c
		if math.Abs(c) < tiny {
			c = tiny
		}
		d = 1 / d
		h *= d * c
		// odd step
		num = -(a + fm) * (a + b + fm) * x / ((a + 2*fm) * (a + 2*fm + 1))
		d = 1 + num*d
		if math.Abs(d) < tiny {
			d = tiny
		}
		c = 1 + num/c
		if math.Abs(c) < tiny {
			c = tiny
		}
		d = 1 / d
		del := d * c
		h *= del
		if math.Abs(del-1) < eps {
			break
		}
	}
	return h
}
