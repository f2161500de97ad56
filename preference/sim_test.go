package preference

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// oracle answers comparisons as Bradley–Terry assessors would: left is preferred with
// probability σ(θleft − θright).
type oracle struct {
	theta map[string]float64
	rng   *rand.Rand
}

func newOracle(docs []string, theta []float64, seed uint64) *oracle {
	o := &oracle{theta: map[string]float64{}, rng: rand.New(rand.NewPCG(seed, 7))}
	for i, d := range docs {
		o.theta[d] = theta[i]
	}
	return o
}

func (o *oracle) answer(c Comparison, assessor string) Judgment {
	out := RightBetter
	if o.rng.Float64() < sigmoid(o.theta[c.Left]-o.theta[c.Right]) {
		out = LeftBetter
	}
	return Judgment{Query: c.Query, Left: c.Left, Right: c.Right, Outcome: out, Assessor: assessor}
}

// runSchedule asks every comparison the schedule wants of k assessors until it is done and
// returns the judgments and the final plan.
func runSchedule(t *testing.T, query string, docs []string, o *oracle, k int) ([]Judgment, Plan) {
	t.Helper()
	var js []Judgment
	for round := 0; ; round++ {
		p, err := Schedule(query, docs, js, k)
		if err != nil {
			t.Fatal(err)
		}
		if p.Done {
			return js, p
		}
		if len(p.Next) == 0 || round > 10*len(docs) {
			t.Fatalf("round %d: not done and nothing to ask", round)
		}
		for _, c := range p.Next {
			for a := k - c.Need; a < k; a++ {
				js = append(js, o.answer(c, fmt.Sprint("assessor", a)))
			}
		}
	}
}

func docNames(n int) []string {
	ds := make([]string, n)
	for i := range ds {
		ds[i] = fmt.Sprintf("d%03d", i)
	}
	return ds
}

// spread is n strengths evenly from -w to w (so they sum to zero, as the fit's do).
func spread(n int, w float64) []float64 {
	th := make([]float64, n)
	for i := range th {
		th[i] = -w + 2*w*float64(i)/float64(n-1)
	}
	return th
}

// shuffled returns the documents in a random order, so the ids say nothing of strength.
func shuffled(ds []string, seed uint64) []string {
	out := slices.Clone(ds)
	r := rand.New(rand.NewPCG(seed, 11))
	r.Shuffle(len(out), func(i, j int) { out[i], out[j] = out[j], out[i] })
	return out
}

// ranks are 1-based ranks with ties averaged.
func ranks(x []float64) []float64 {
	idx := make([]int, len(x))
	for i := range idx {
		idx[i] = i
	}
	slices.SortFunc(idx, func(a, b int) int {
		switch {
		case x[a] < x[b]:
			return -1
		case x[a] > x[b]:
			return 1
		}
		return 0
	})
	r := make([]float64, len(x))
	for i := 0; i < len(idx); {
		j := i
		for j+1 < len(idx) && x[idx[j+1]] == x[idx[i]] {
			j++
		}
		for k := i; k <= j; k++ {
			r[idx[k]] = float64(i+j)/2 + 1
		}
		i = j + 1
	}
	return r
}

// spearman is Pearson's correlation of the ranks.
func spearman(x, y []float64) float64 {
	rx, ry := ranks(x), ranks(y)
	var mx, my float64
	for i := range rx {
		mx += rx[i]
		my += ry[i]
	}
	mx /= float64(len(rx))
	my /= float64(len(ry))
	var sxy, sxx, syy float64
	for i := range rx {
		sxy += (rx[i] - mx) * (ry[i] - my)
		sxx += (rx[i] - mx) * (rx[i] - mx)
		syy += (ry[i] - my) * (ry[i] - my)
	}
	return sxy / math.Sqrt(sxx*syy)
}
