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
	logPrior := make([]float64, k)
	conf := make([]float64, nR*k*k) // r, t, g
	logConf := make([]float64, nR*k*k)
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
		for t := range prior {
			logPrior[t] = math.Log(prior[t])
		}
		for r := 0; r < nR*k; r++ {
			normalise(conf[r*k : r*k+k])
		}
		for i, c := range conf {
			logConf[i] = math.Log(c)
		}

		// E-step.
		var ll, moved float64
		for i := 0; i < nI; i++ {
			copy(row, logPrior)
			for p := ix.start[i]; p < ix.start[i+1]; p++ {
				base := int(ix.rater[p]) * k * k
				g := int(ix.grade[p])
				for t := range row {
					row[t] += logConf[base+t*k+g]
				}
			}
			mx := math.Inf(-1)
			for _, x := range row {
				mx = math.Max(mx, x)
			}
			var s float64
			for t, x := range row {
				row[t] = math.Exp(x - mx)
				s += row[t]
			}
			ll += mx + math.Log(s)
			for t := range row {
				v := row[t] / s
				moved = math.Max(moved, math.Abs(v-post[i*k+t]))
				post[i*k+t] = v
			}
		}
		res.Iterations, res.LogLikelihood = it, ll
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

func normalise(xs []float64) {
	var s float64
	for _, x := range xs {
		s += x
	}
	for i := range xs {
		xs[i] /= s
	}
}
