package agreement

import (
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"testing"
)

type refSet struct {
	K       int     `json:"k"`
	Ratings [][]any `json:"ratings"`
}

type refPair struct {
	A, B           string
	N              int
	KappaNone      *float64 `json:"kappa_none"`
	KappaLinear    *float64 `json:"kappa_linear"`
	KappaQuadratic *float64 `json:"kappa_quadratic"`
	SENone         *float64 `json:"se_none"`
	SELinear       *float64 `json:"se_linear"`
	SEQuadratic    *float64 `json:"se_quadratic"`
	VarNone        *float64 `json:"var_none"`
	VarLinear      *float64 `json:"var_linear"`
	VarQuadratic   *float64 `json:"var_quadratic"`
}

type refOut struct {
	Pairs  []refPair
	Fleiss struct {
		M, Items int
		Kappa    *float64
		SE       *float64
	}
	Alpha map[string]*float64
}

// genRefSets makes varied data sets: 2..6 grades, 2..6 raters, 2..81
// items, missing cells, skewed grade use, noisy and biased raters, repeated
// judgments (the later one counts), and some degenerate sets.
func genRefSets(n int) []refSet {
	sets := make([]refSet, n)
	for s := range sets {
		rng := rand.New(rand.NewPCG(2024, uint64(s)))
		k := 2 + rng.IntN(5)
		nItems := 2 + rng.IntN(80)
		nRaters := 2 + rng.IntN(5)
		missing := rng.Float64() * 0.6
		w := make([]float64, k)
		for c := range w {
			w[c] = math.Pow(rng.ExpFloat64(), 1+2*rng.Float64())
		}
		if s%7 == 0 {
			w[rng.IntN(k)] += 20 // one grade dominates
		}
		draw := func() int {
			var tot float64
			for _, x := range w {
				tot += x
			}
			u := rng.Float64() * tot
			for c, x := range w {
				if u < x {
					return c
				}
				u -= x
			}
			return k - 1
		}
		noise := make([]float64, nRaters)
		shift := make([]int, nRaters)
		for r := range noise {
			noise[r] = rng.Float64() * 0.9
			if rng.IntN(4) == 0 {
				shift[r] = 1
			}
		}
		var rs [][]any
		for i := range nItems {
			truth := draw()
			for r := range nRaters {
				if rng.Float64() < missing {
					continue
				}
				g := truth
				if rng.Float64() < noise[r] {
					g = draw()
				}
				g = min(g+shift[r], k-1)
				switch {
				case s%13 == 0:
					g = 0 // every rating the same grade
				case s%17 == 0 && r == 0:
					g = k - 1 // one rater uses a single grade
				}
				if rng.IntN(30) == 0 {
					// An earlier judgment that the next one supersedes.
					rs = append(rs, []any{fmt.Sprint("i", i), fmt.Sprint("r", r), rng.IntN(k)})
				}
				rs = append(rs, []any{fmt.Sprint("i", i), fmt.Sprint("r", r), g})
			}
		}
		sets[s] = refSet{K: k, Ratings: rs}
	}
	return sets
}

func (s refSet) data(t testing.TB) *Data {
	d := NewData(s.K)
	for _, r := range s.Ratings {
		if err := d.Add(r[0].(string), r[1].(string), r[2].(int)); err != nil {
			t.Fatal(err)
		}
	}
	return d
}

// TestAgainstReferenceLibraries compares, on 200 random data sets, Cohen's
// kappa (all weightings) with sklearn.metrics.cohen_kappa_score, its SE with
// statsmodels.stats.inter_rater.cohens_kappa(table).std_kappa (also with
// wt='linear' and 'quadratic'), and Fleiss' kappa with statsmodels
// fleiss_kappa, all to 1e-9. Fleiss' null SE and alpha are compared with a
// brute-force Python re-implementation of their definitions (our own code,
// testdata/reference.py), also to 1e-9.
//
// sklearn is called with labels=range(K): its weights are positions in the
// label list, so without it a pair that never used, say, grade 2 would see
// grades 1 and 3 as one step apart. With every grade listed, the weights are
// the grade distances |i-j| (or squared) of Cohen (1968); the 1/(K-1)
// normalisation cancels in the kappa ratio. statsmodels gets the full K x K
// table for the same reason: its weighted SE uses 1 - |i-j|/(K-1), which does
// depend on K.
func TestAgainstReferenceLibraries(t *testing.T) {
	py := needReference(t)
	sets := genRefSets(200)
	dir := t.TempDir()
	in := filepath.Join(dir, "sets.json")
	b, err := json.Marshal(sets)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(in, b, 0o644); err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command(py, filepath.Join("testdata", "reference.py"), in)
	cmd.Stderr = os.Stderr
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("reference script: %v", err)
	}
	var refs []refOut
	if err := json.Unmarshal(out, &refs); err != nil {
		t.Fatalf("reference output: %v", err)
	}
	if len(refs) != len(sets) {
		t.Fatalf("%d reference results for %d sets", len(refs), len(sets))
	}

	const tol = 1e-9
	var nKappa, nUndef, nSE, nFleiss, nAlpha int
	check := func(where string, got Value, want *float64) {
		t.Helper()
		if want == nil {
			if got.OK {
				t.Errorf("%s: got %v, reference undefined", where, got.V)
			}
			return
		}
		if !got.OK {
			t.Errorf("%s: undefined (%s), reference %v", where, got.Why, *want)
			return
		}
		if math.Abs(got.V-*want) > tol {
			t.Errorf("%s: got %.15g, reference %.15g", where, got.V, *want)
		}
	}
	for s, set := range sets {
		d := set.data(t)
		ref := refs[s]
		pairs := CohenPairs(d, 0.95)
		if len(pairs) != len(ref.Pairs) {
			t.Errorf("set %d: %d pairs, reference %d", s, len(pairs), len(ref.Pairs))
			continue
		}
		for i, p := range pairs {
			rp := ref.Pairs[i]
			where := fmt.Sprintf("set %d pair %s-%s", s, p.A, p.B)
			if p.A != rp.A || p.B != rp.B || p.N != rp.N {
				t.Errorf("%s: n %d, reference %s-%s n %d", where, p.N, rp.A, rp.B, rp.N)
				continue
			}
			check(where+" kappa", p.Kappa, rp.KappaNone)
			check(where+" linear", p.KappaLinear, rp.KappaLinear)
			check(where+" quadratic", p.KappaQuadratic, rp.KappaQuadratic)
			nKappa += 3
			if rp.KappaNone == nil {
				nUndef++
			}
			for _, c := range []struct {
				name     string
				got      Value
				se, vari *float64
			}{
				{"se", p.SE, rp.SENone, rp.VarNone},
				{"se linear", p.SELinear, rp.SELinear, rp.VarLinear},
				{"se quadratic", p.SEQuadratic, rp.SEQuadratic, rp.VarQuadratic},
			} {
				// The variance is a difference of O(1) terms, so near
				// perfect agreement both sides hold rounding noise of
				// order 1e-16, amplified by 1/(n(1-pe)^2); numpy may even give a
				// NaN square root of a tiny negative. Compare there on the
				// variance scale (1e-11 on the variance is tighter than 1e-9
				// on the SE whenever SE > 0.005).
				if c.got.OK && c.vari != nil && math.Abs(c.got.V*c.got.V-*c.vari) < 1e-11 {
					nSE++
					continue
				}
				check(where+" "+c.name, c.got, c.se)
				nSE++
			}
		}

		f := Fleiss(d, 0.95)
		if f.RatersPerItem != ref.Fleiss.M || f.ItemsUsed != ref.Fleiss.Items {
			t.Errorf("set %d fleiss: m %d items %d, reference m %d items %d", s, f.RatersPerItem, f.ItemsUsed, ref.Fleiss.M, ref.Fleiss.Items)
		}
		check(fmt.Sprintf("set %d fleiss kappa", s), f.Kappa, ref.Fleiss.Kappa)
		check(fmt.Sprintf("set %d fleiss se", s), f.SE, ref.Fleiss.SE)
		nFleiss++

		as := Alphas(d)
		for _, m := range Metrics {
			check(fmt.Sprintf("set %d alpha %v", s, m), as.Get(m), ref.Alpha[m.String()])
			nAlpha++
		}
	}
	t.Logf("compared %d kappas (%d pairs undefined), %d SEs, %d Fleiss, %d alphas", nKappa, nUndef, nSE, nFleiss, nAlpha)
	if nKappa < 600 || nUndef == 0 || nUndef*3 >= nKappa {
		t.Errorf("cross-check too thin: %d kappas, %d undefined pairs", nKappa, nUndef)
	}
}
