package export

import (
	"math"
	"math/rand/v2"
	"slices"
	"strconv"
	"strings"

	"github.com/pertinent/pertinent"
)

// Split names used by SplitByRatio.
const (
	SplitTrain      = "train"
	SplitValidation = "validation"
	SplitTest       = "test"
)

// Ratios are the target shares of queries in each part; they must be
// non-negative and add up to 1.
type Ratios struct {
	Train      float64 `json:"train"`
	Validation float64 `json:"validation"`
	Test       float64 `json:"test"`
}

// shuffled returns the distinct query ids sorted, then shuffled by a
// generator seeded with seed alone, so the result depends on the set of
// queries and the seed but never on input order.
func shuffled(queryIDs []string, seed uint64) []string {
	qs := slices.Clone(queryIDs)
	slices.Sort(qs)
	qs = slices.Compact(qs)
	r := rand.New(rand.NewPCG(seed, 0x70657274696e656e))
	r.Shuffle(len(qs), func(i, j int) { qs[i], qs[j] = qs[j], qs[i] })
	return qs
}

// SplitByRatio assigns every query to "train", "validation" or "test".
// Whole queries are assigned, never single rows. Part sizes are exact
// counts (largest-remainder rounding of ratio x number of queries), so each
// is within one query of its target; which query goes where comes from a
// seeded shuffle of the sorted ids.
func SplitByRatio(queryIDs []string, r Ratios, seed uint64) (map[string]string, error) {
	ws := []float64{r.Train, r.Validation, r.Test}
	sum := 0.0
	for _, w := range ws {
		if w < 0 || math.IsNaN(w) || math.IsInf(w, 0) {
			return nil, pertinent.Errorf(pertinent.Invalid, "export", "split ratios %+v: each must be a finite number >= 0", r)
		}
		sum += w
	}
	if math.Abs(sum-1) > 1e-9 {
		return nil, pertinent.Errorf(pertinent.Invalid, "export", "split ratios %+v add up to %g, not 1", r, sum)
	}
	qs := shuffled(queryIDs, seed)
	counts := largestRemainder(ws, len(qs))
	names := []string{SplitTrain, SplitValidation, SplitTest}
	out := make(map[string]string, len(qs))
	i := 0
	for part, c := range counts {
		for ; c > 0; c-- {
			out[qs[i]] = names[part]
			i++
		}
	}
	return out, nil
}

// largestRemainder splits n into parts proportional to ws (which add up to
// 1): floors first, then one more to the parts with the largest fractions
// (earlier part first on equal fractions).
func largestRemainder(ws []float64, n int) []int {
	counts := make([]int, len(ws))
	frac := make([]float64, len(ws))
	left := n
	for i, w := range ws {
		x := w * float64(n)
		counts[i] = int(math.Floor(x))
		frac[i] = x - math.Floor(x)
		left -= counts[i]
	}
	for ; left > 0; left-- {
		best := -1
		for i := range ws {
			if ws[i] > 0 && (best < 0 || frac[i] > frac[best]) {
				best = i
			}
		}
		counts[best]++
		frac[best] = -1
	}
	return counts
}

// FoldName is the split name of fold i (0-based): "fold-1", "fold-2", ...
func FoldName(i int) string { return "fold-" + strconv.Itoa(i+1) }

// SplitKFold assigns every query to one of k folds (named by FoldName),
// sizes differing by at most one, from a seeded shuffle of the sorted ids.
func SplitKFold(queryIDs []string, k int, seed uint64) (map[string]string, error) {
	if k < 2 {
		return nil, pertinent.Errorf(pertinent.Invalid, "export", "%d folds; need at least 2", k)
	}
	qs := shuffled(queryIDs, seed)
	if k > len(qs) {
		return nil, pertinent.Errorf(pertinent.Invalid, "export", "%d folds for %d queries; each fold needs a query", k, len(qs))
	}
	out := make(map[string]string, len(qs))
	for i, q := range qs {
		out[q] = FoldName(i % k)
	}
	return out, nil
}

// ParseRatios reads "0.8,0.1,0.1" (train, validation, test).
func ParseRatios(s string) (*Ratios, error) {
	fields := strings.Split(s, ",")
	if len(fields) != 3 {
		return nil, pertinent.Errorf(pertinent.Invalid, "export", "a split needs three ratios, train,validation,test: e.g. 0.8,0.1,0.1")
	}
	var v [3]float64
	for i, f := range fields {
		x, err := strconv.ParseFloat(strings.TrimSpace(f), 64)
		if err != nil {
			return nil, pertinent.Errorf(pertinent.Invalid, "export", "split ratio %q is not a number", f)
		}
		v[i] = x
	}
	return &Ratios{Train: v[0], Validation: v[1], Test: v[2]}, nil
}
