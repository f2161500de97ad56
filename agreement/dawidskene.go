package agreement

import (
	"math"
	"slices"
)

// DSOptions tunes the Dawid & Skene (1979) EM. Zero fields take defaults.
type DSOptions struct {
	MaxIter   int     // iteration cap; default 200
	Tol       float64 // stop when no posterior moves more than Tol; default 1e-6
	Smoothing float64 // pseudo-count added to every confusion cell and prior; default 0.01
}

// DSResult is the outcome of Dawid-Skene EM.
//
// Confusion[r][t][g] estimates the probability that rater r (RaterNames
// order) gives grade g to an item whose true grade is t; each row sums to 1.
// Priors[t] is the estimated share of items with true grade t. Posterior[i]
// (ItemNames order) is the distribution of item i's true grade; Grade[i] is
// its most probable grade (ties to the lower grade).
type DSResult struct {
	Items         []string      `json:"items"`
	Raters        []string      `json:"raters"`
	Priors        []float64     `json:"priors"`
	Confusion     [][][]float64 `json:"confusion"`
	Posterior     [][]float64   `json:"posterior"`
	Grade         []int         `json:"grade"`
	Iterations    int           `json:"iterations"`
	Converged     bool          `json:"converged"`
	LogLikelihood float64       `json:"log_likelihood"`
}

// DawidSkene estimates true grades and per-rater confusion matrices by EM.
// It starts from soft votes (each item's grade shares), so class t keeps
// meaning grade t. Smoothing keeps a grade a rater never used from getting
// probability 0, which would veto a class outright.
func DawidSkene(d *Data, o DSOptions) DSResult {
	if o.MaxIter <= 0 {
		o.MaxIter = 200
	}
	if o.Tol <= 0 {
		o.Tol = 1e-6
	}
	if o.Smoothing <= 0 {
		o.Smoothing = 0.01
	}
	ix := d.built()
	k, nI, nR := ix.k, ix.nItems(), ix.nRaters()
	res := DSResult{Items: d.ItemNames(), Raters: slices.Clone(ix.raterNames)}

	post := make([]float64, nI*k)
	for i := 0; i < nI; i++ {
		lo, hi := ix.start[i], ix.start[i+1]
		f := 1 / float64(hi-lo)
		for p := lo; p < hi; p++ {
			post[i*k+int(ix.grade[p])] += f
		}
	}
	prior := make([]float64, k)
	conf := make([]float64, nR*k*k) // r, t, g
	row := make([]float64, k)

	for it := 1; it <= o.MaxIter; it++ {
		// M-step.
		for t := range prior {
			prior[t] = o.Smoothing
		}
		for i := range conf {
			conf[i] = o.Smoothing
		}
		for i := 0; i < nI; i++ {
			pi := post[i*k : i*k+k]
			for t, w := range pi {
				prior[t] += w
			}
			for p := ix.start[i]; p < ix.start[i+1]; p++ {
				base := int(ix.rater[p]) * k * k
				g := int(ix.grade[p])
				for t, w := range pi {
					conf[base+t*k+g] += w
				}
			}
		}
		normalise(prior)
		for r := 0; r < nR*k; r++ {
			normalise(conf[r*k : r*k+k])
		}

		// E-step in probability space; a product of many small
		// probabilities is rescaled every few ratings (tracked in logs)
		// so items with many raters cannot underflow.
		var moved, llScale float64
		llFrac, llExp := 1.0, 0
		for i := 0; i < nI; i++ {
			copy(row, prior)
			var logScale float64
			lo, hi := ix.start[i], ix.start[i+1]
			for p := lo; p < hi; p++ {
				cr := conf[int(ix.rater[p])*k*k+int(ix.grade[p]):]
				for t := range row {
					row[t] *= cr[t*k]
				}
				if (p-lo)%16 == 15 {
					logScale += rescale(row)
				}
			}
			var s float64
			for _, x := range row {
				s += x
			}
			// log-likelihood without a log per item: keep the running
			// product as mantissa and binary exponent.
			llScale += logScale
			frac, exp := math.Frexp(llFrac * s)
			llFrac, llExp = frac, llExp+exp
			pi := post[i*k : i*k+k]
			for t, x := range row {
				v := x / s
				dv := v - pi[t]
				if dv < 0 {
					dv = -dv
				}
				if dv > moved {
					moved = dv
				}
				pi[t] = v
			}
		}
		res.Iterations = it
		res.LogLikelihood = llScale + math.Log(llFrac) + float64(llExp)*math.Ln2
		if moved < o.Tol {
			res.Converged = true
			break
		}
	}

	res.Priors = prior
	res.Confusion = make([][][]float64, nR)
	for r := range res.Confusion {
		res.Confusion[r] = make([][]float64, k)
		for t := range k {
			res.Confusion[r][t] = conf[(r*k+t)*k : (r*k+t+1)*k : (r*k+t+1)*k]
		}
	}
	res.Posterior = make([][]float64, nI)
	res.Grade = make([]int, nI)
	for i := range res.Posterior {
		pi := post[i*k : i*k+k : i*k+k]
		res.Posterior[i] = pi
		best := 0
		for t := range pi {
			if pi[t] > pi[best] {
				best = t
			}
		}
		res.Grade[i] = best
	}
	return res
}

// rescale divides row by its largest entry when that has become small and
// returns the log of the factor taken out.
func rescale(row []float64) float64 {
	var mx float64
	for _, x := range row {
		if x > mx {
			mx = x
		}
	}
	if mx == 0 || mx > 1e-100 {
		return 0
	}
	for t := range row {
		row[t] /= mx
	}
	return math.Log(mx)
}

func normalise(xs []float64) {
	var s float64
	for _, x := range xs {
		s += x
	}
	for i := range xs {
		xs[i] /= s
	}
}
