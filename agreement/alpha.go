package agreement

import "fmt"

// Metric is Krippendorff's difference function between two values.
type Metric int

const (
	Nominal  Metric = iota // 0 if equal, else 1
	Ordinal                // rank-based, from the marginal counts of the grades in between
	Interval               // (c-k)^2 on the grade values
	Ratio                  // ((c-k)/(c+k))^2 on the grade values; 0 when c = k = 0
)

// Metrics lists the four metrics in a fixed order.
var Metrics = []Metric{Nominal, Ordinal, Interval, Ratio}

// String names the metric.
func (m Metric) String() string {
	switch m {
	case Ordinal:
		return "ordinal"
	case Interval:
		return "interval"
	case Ratio:
		return "ratio"
	}
	return "nominal"
}

// AlphaResult is Krippendorff's alpha with the amount of data it rests on:
// units (items) with two or more ratings are pairable; PairableValues (n in
// Krippendorff 2011) counts the ratings in them.
type AlphaResult struct {
	Alpha          Value `json:"alpha"`
	PairableUnits  int   `json:"pairable_units"`
	PairableValues int   `json:"pairable_values"`
}

// AlphaSet holds alpha under the four metrics.
type AlphaSet struct {
	Nominal  Value `json:"nominal"`
	Ordinal  Value `json:"ordinal"`
	Interval Value `json:"interval"`
	Ratio    Value `json:"ratio"`
}

// Get returns the value for metric m.
func (s AlphaSet) Get(m Metric) Value {
	switch m {
	case Ordinal:
		return s.Ordinal
	case Interval:
		return s.Interval
	case Ratio:
		return s.Ratio
	}
	return s.Nominal
}

func (s *AlphaSet) set(m Metric, v Value) {
	switch m {
	case Ordinal:
		s.Ordinal = v
	case Interval:
		s.Interval = v
	case Ratio:
		s.Ratio = v
	default:
		s.Nominal = v
	}
}

// Alpha computes Krippendorff's alpha (Krippendorff 2011) for metric m via
// the coincidence matrix. Every rating is one value; the grade itself is
// the value for the interval and ratio metrics. Items with a single rating
// cannot be paired and are dropped.
func Alpha(d *Data, m Metric) AlphaResult {
	ix := d.built()
	t := tallyOf(ix, false)
	o := coincidence(t)
	return AlphaResult{Alpha: alphaFrom(o, t.k, m), PairableUnits: pairableUnits(t), PairableValues: pairableValues(t)}
}

// Alphas computes alpha for all four metrics in one pass.
func Alphas(d *Data) AlphaSet {
	t := tallyOf(d.built(), false)
	return alphaSet(coincidence(t), t.k)
}

func alphaSet(o []float64, k int) AlphaSet {
	var s AlphaSet
	for _, m := range Metrics {
		s.set(m, alphaFrom(o, k, m))
	}
	return s
}

func pairableUnits(t *tally) int {
	var n int64
	for m := 2; m < len(t.units); m++ {
		n += t.units[m]
	}
	return int(n)
}

func pairableValues(t *tally) int {
	var n int64
	for m := 2; m < len(t.units); m++ {
		n += t.units[m] * int64(m)
	}
	return int(n)
}

// coincidence is o_ck = sum over units of (c-k pairs in the unit)/(m_u - 1).
func coincidence(t *tally) []float64 {
	kk := t.k * t.k
	o := make([]float64, kk)
	for m := 2; m < len(t.coinc); m++ {
		co := t.coinc[m]
		if co == nil {
			continue
		}
		f := 1 / float64(m-1)
		for i, c := range co {
			if c != 0 {
				o[i] += float64(c) * f
			}
		}
	}
	return o
}

// alphaFrom is alpha = 1 - (n-1) sum o_ck d_ck / sum n_c n_k d_ck.
func alphaFrom(o []float64, k int, m Metric) Value {
	nc := make([]float64, k)
	var n float64
	for c := 0; c < k; c++ {
		for j := 0; j < k; j++ {
			nc[c] += o[c*k+j]
		}
		n += nc[c]
	}
	if n == 0 {
		return undefined("no item has two or more ratings")
	}
	used, last := 0, 0
	for c := range nc {
		if nc[c] > 0 {
			used++
			last = c
		}
	}
	if used < 2 {
		return undefined(fmt.Sprintf("every pairable rating is grade %d; expected disagreement is 0", last))
	}
	var do, de float64
	for c := 0; c < k; c++ {
		for j := 0; j < k; j++ {
			if c == j {
				continue
			}
			d := diff(m, c, j, nc)
			do += o[c*k+j] * d
			de += nc[c] * nc[j] * d
		}
	}
	if de == 0 {
		// Unreachable once two grades are used; guards the division.
		return undefined("expected disagreement is 0")
	}
	return defined(1 - (n-1)*do/de)
}

// diff is the squared difference delta^2 between values c and k.
func diff(m Metric, c, k int, nc []float64) float64 {
	switch m {
	case Ordinal:
		lo, hi := c, k
		if lo > hi {
			lo, hi = hi, lo
		}
		var s float64
		for g := lo; g <= hi; g++ {
			s += nc[g]
		}
		s -= (nc[c] + nc[k]) / 2
		return s * s
	case Interval:
		d := float64(c - k)
		return d * d
	case Ratio:
		if c+k == 0 {
			return 0
		}
		d := float64(c-k) / float64(c+k)
		return d * d
	}
	if c == k {
		return 0
	}
	return 1
}
