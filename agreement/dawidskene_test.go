package agreement

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
)

// simulate draws nItems true grades from prior and lets every rater grade
// every item through its confusion matrix conf[r][true][given]. It returns
// the data, the true grades (ItemNames order) and the realised confusion
// counts per rater.
func simulate(seed uint64, nItems int, prior []float64, conf [][][]float64) (*Data, []int, [][][]float64) {
	rng := rand.New(rand.NewPCG(seed, 1))
	k := len(prior)
	pick := func(p []float64) int {
		u := rng.Float64()
		for g, x := range p {
			if u < x {
				return g
			}
			u -= x
		}
		return len(p) - 1
	}
	d := NewData(k)
	truth := make([]int, nItems)
	real := make([][][]float64, len(conf))
	for r := range real {
		real[r] = make([][]float64, k)
		for t := range real[r] {
			real[r][t] = make([]float64, k)
		}
	}
	for i := range nItems {
		truth[i] = pick(prior)
		for r := range conf {
			g := pick(conf[r][truth[i]])
			real[r][truth[i]][g]++
			if err := d.Add(fmt.Sprintf("i%05d", i), fmt.Sprint("r", r), g); err != nil {
				panic(err)
			}
		}
	}
	for r := range real {
		for t := range real[r] {
			normalise(real[r][t])
		}
	}
	return d, truth, real
}

func maxAbsDiff(a, b [][][]float64) float64 {
	var m float64
	for r := range a {
		for t := range a[r] {
			for g := range a[r][t] {
				m = math.Max(m, math.Abs(a[r][t][g]-b[r][t][g]))
			}
		}
	}
	return m
}

// Dawid & Skene (1979): with 2000 items, 4 grades and 5 raters of varied
// quality, EM recovers each rater's confusion matrix. Tolerances: 0.05 max
// abs error against the confusion realised in the simulation (what the
// data can reveal), and against the generating matrices 4 binomial SEs of
// the rarest true grade's rows, 4*sqrt(0.25/n_min), for sampling error.
func TestDawidSkeneRecoversConfusion(t *testing.T) {
	prior := []float64{0.3, 0.3, 0.2, 0.2}
	mk := func(acc float64, near float64) [][]float64 {
		m := make([][]float64, 4)
		for tr := range m {
			m[tr] = make([]float64, 4)
			m[tr][tr] = acc
			rest := 1 - acc
			var nb []int
			if tr > 0 {
				nb = append(nb, tr-1)
			}
			if tr < 3 {
				nb = append(nb, tr+1)
			}
			for _, g := range nb {
				m[tr][g] += rest * near / float64(len(nb))
			}
			for g := range 4 {
				if g != tr {
					m[tr][g] += rest * (1 - near) / 3
				}
			}
		}
		return m
	}
	conf := [][][]float64{mk(0.9, 0.8), mk(0.8, 0.9), mk(0.7, 0.7), mk(0.6, 0.9), mk(0.5, 0.5)}
	d, truth, real := simulate(7, 2000, prior, conf)
	res := DawidSkene(d, DSOptions{})
	if !res.Converged {
		t.Fatalf("not converged after %d iterations", res.Iterations)
	}
	if e := maxAbsDiff(res.Confusion, real); e > 0.05 {
		t.Errorf("max abs error vs realised confusion %.4f > 0.05", e)
	}
	nMin := len(truth)
	for g := range prior {
		n := 0
		for _, tg := range truth {
			if tg == g {
				n++
			}
		}
		nMin = min(nMin, n)
	}
	tol := 4 * math.Sqrt(0.25/float64(nMin))
	t.Logf("iterations %d; max abs error: %.4f realised, %.4f generating (tol %.4f)",
		res.Iterations, maxAbsDiff(res.Confusion, real), maxAbsDiff(res.Confusion, conf), tol)
	if e := maxAbsDiff(res.Confusion, conf); e > tol {
		t.Errorf("max abs error vs generating confusion %.4f > %.4f", e, tol)
	}
	for g, p := range prior {
		if math.Abs(res.Priors[g]-p) > 0.04 {
			t.Errorf("prior[%d] = %.3f, want %.2f", g, res.Priors[g], p)
		}
	}
	for i, p := range res.Posterior {
		var s float64
		for _, x := range p {
			s += x
		}
		if math.Abs(s-1) > 1e-9 {
			t.Fatalf("posterior %d sums to %v", i, s)
		}
	}
	hits := 0
	for i, g := range res.Grade {
		if g == truth[i] {
			hits++
		}
	}
	if acc := float64(hits) / float64(len(truth)); acc < 0.9 {
		t.Errorf("Dawid-Skene accuracy %.3f < 0.9", acc)
	}
}

// Three raters, two honest but noisy, one adversarial that reports K-1-g:
// majority vote is dragged by the adversary; Dawid-Skene learns the flip
// and uses it, so it must beat majority accuracy clearly.
func TestDawidSkeneBeatsMajorityWithAdversary(t *testing.T) {
	k := 5
	prior := []float64{0.3, 0.25, 0.2, 0.15, 0.1}
	honest := func(acc float64) [][]float64 {
		m := make([][]float64, k)
		for tr := range m {
			m[tr] = make([]float64, k)
			for g := range m[tr] {
				if g == tr {
					m[tr][g] = acc
				} else {
					m[tr][g] = (1 - acc) / float64(k-1)
				}
			}
		}
		return m
	}
	flip := make([][]float64, k)
	for tr := range flip {
		flip[tr] = make([]float64, k)
		flip[tr][k-1-tr] = 0.95
		flip[tr][tr] += 0.05
	}
	d, truth, _ := simulate(11, 2000, prior, [][][]float64{honest(0.7), honest(0.65), flip})
	res := DawidSkene(d, DSOptions{})
	cons := Consensus(d)
	dsHits, majHits := 0, 0
	for i := range truth {
		if res.Grade[i] == truth[i] {
			dsHits++
		}
		if cons[i].Majority == truth[i] {
			majHits++
		}
	}
	ds, maj := float64(dsHits)/2000, float64(majHits)/2000
	t.Logf("accuracy: Dawid-Skene %.3f, majority %.3f", ds, maj)
	if ds < maj+0.1 {
		t.Errorf("Dawid-Skene %.3f does not beat majority %.3f by 0.1", ds, maj)
	}
	// The adversary's learned matrix must show the flip.
	for tr := range k {
		if res.Confusion[2][tr][k-1-tr] < 0.8 {
			t.Errorf("adversary row %d: %v", tr, res.Confusion[2][tr])
		}
	}
}

// The reported log-likelihood (computed without per-item logs, with
// rescaling for items with many raters) equals the direct log-space sum
// log sum_t prior_t prod conf[r][t][g] under the returned parameters.
func TestDawidSkeneLogLikelihood(t *testing.T) {
	d := NewData(3)
	rng := rand.New(rand.NewPCG(3, 3))
	for i := range 40 {
		// 800 raters of random grades: each item's product of 800
		// probabilities near 1/3 (about 1e-380) underflows float64.
		for r := range 800 {
			mustAdd(t, d, fmt.Sprint("i", i), fmt.Sprint("r", r), rng.IntN(3))
		}
	}
	res := DawidSkene(d, DSOptions{MaxIter: 3})
	ix := d.built()
	var ll float64
	for i := 0; i < ix.nItems(); i++ {
		logs := make([]float64, 3)
		for tr := range logs {
			logs[tr] = math.Log(res.Priors[tr])
			for p := ix.start[i]; p < ix.start[i+1]; p++ {
				logs[tr] += math.Log(res.Confusion[ix.rater[p]][tr][ix.grade[p]])
			}
		}
		mx := math.Max(logs[0], math.Max(logs[1], logs[2]))
		var s float64
		for _, x := range logs {
			s += math.Exp(x - mx)
		}
		ll += mx + math.Log(s)
	}
	if res.Iterations != 3 || res.Converged {
		t.Errorf("iterations %d converged %v", res.Iterations, res.Converged)
	}
	if math.IsInf(res.LogLikelihood, 0) || math.Abs(res.LogLikelihood-ll) > 1e-9*math.Abs(ll) {
		t.Errorf("log-likelihood %v, direct %v", res.LogLikelihood, ll)
	}
	for i, p := range res.Posterior {
		for _, x := range p {
			if math.IsNaN(x) {
				t.Fatalf("posterior %d has NaN", i)
			}
		}
	}
}
