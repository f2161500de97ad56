package agreement

import (
	"encoding/json"
	"math"
	"strconv"
)

// Value is a statistic that may be undefined. When OK is false, V is 0 and
// Why says in words why the figure cannot be computed. It encodes as a JSON
// number, or null when undefined.
type Value struct {
	V   float64
	OK  bool
	Why string
}

// defined wraps x, refusing NaN and infinities so they never leak out.
func defined(x float64) Value {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return Value{Why: "numerical failure (not a finite number)"}
	}
	return Value{V: x, OK: true}
}

func undefined(why string) Value { return Value{Why: why} }

// MarshalJSON encodes a defined value as a number and an undefined one as null.
func (v Value) MarshalJSON() ([]byte, error) {
	if !v.OK {
		return []byte("null"), nil
	}
	return strconv.AppendFloat(nil, v.V, 'g', -1, 64), nil
}

// UnmarshalJSON accepts a number or null (null gives an undefined Value).
func (v *Value) UnmarshalJSON(b []byte) error {
	if string(b) == "null" {
		*v = Value{Why: "null"}
		return nil
	}
	var x float64
	if err := json.Unmarshal(b, &x); err != nil {
		return err
	}
	*v = Value{V: x, OK: true}
	return nil
}

// String prints the number, or "undefined (reason)".
func (v Value) String() string {
	if !v.OK {
		return "undefined (" + v.Why + ")"
	}
	return strconv.FormatFloat(v.V, 'f', 4, 64)
}

// CI is a two-sided confidence interval; both ends are undefined
// together.
type CI struct {
	Lo Value `json:"lo"`
	Hi Value `json:"hi"`
}

func undefinedInterval(why string) CI {
	return CI{Lo: undefined(why), Hi: undefined(why)}
}

// normalInterval is est ± z*se for a two-sided level (e.g. 0.95).
func normalInterval(est, se Value, level float64) CI {
	if !est.OK {
		return undefinedInterval(est.Why)
	}
	if !se.OK {
		return undefinedInterval(se.Why)
	}
	z := zQuantile(level)
	return CI{Lo: defined(est.V - z*se.V), Hi: defined(est.V + z*se.V)}
}

// zQuantile is the standard normal quantile at (1+level)/2, i.e. 1.959964
// for level 0.95.
func zQuantile(level float64) float64 {
	return math.Sqrt2 * math.Erfinv(level)
}
