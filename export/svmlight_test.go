package export

import (
	"bytes"
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/internal/reference"
)

func writeSVM(t *testing.T, rows []Row, opt SVMlightOptions) (string, *QIDMap) {
	t.Helper()
	var buf bytes.Buffer
	w := NewSVMlightWriter(&buf, nil, opt)
	for _, r := range rows {
		if err := w.Write(r); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	if w.Rows() != len(rows) {
		t.Fatalf("Rows() = %d, want %d", w.Rows(), len(rows))
	}
	return buf.String(), w.QIDs()
}

func TestSVMlightExactOutput(t *testing.T) {
	rows := []Row{
		{QueryID: "q-b", DocID: "d1", Grade: 3, Features: []Feature{{1, 0.5}, {2, 0}, {4, -2}, {10, 1e-7}}},
		{QueryID: "q-b", DocID: "d2", Grade: 0, Features: nil},
		{QueryID: "q-a", DocID: "d 3#x", Grade: 1, Features: []Feature{{3, 1234567}, {7, 0.1}, {70000, 123456}}},
	}
	want := "3 qid:1 1:0.5 4:-2 10:1e-07 # d1\n" +
		"0 qid:1 # d2\n" +
		"1 qid:2 3:1.234567e+06 7:0.1 70000:123456 # d 3#x\n"
	for _, workers := range []int{1, 2} {
		got, qids := writeSVM(t, rows, SVMlightOptions{Workers: workers})
		if got != want {
			t.Errorf("workers=%d:\ngot  %q\nwant %q", workers, got, want)
		}
		var tsv bytes.Buffer
		if err := qids.WriteTSV(&tsv); err != nil {
			t.Fatal(err)
		}
		if tsv.String() != "1\tq-b\n2\tq-a\n" {
			t.Errorf("qid map %q", tsv.String())
		}
	}
}

func TestSVMlightRejects(t *testing.T) {
	cases := map[string][]Row{
		"index 0":           {{QueryID: "q", DocID: "d", Features: []Feature{{0, 1}}}},
		"not ascending":     {{QueryID: "q", DocID: "d", Features: []Feature{{2, 1}, {2, 1}}}},
		"descending":        {{QueryID: "q", DocID: "d", Features: []Feature{{3, 1}, {1, 1}}}},
		"NaN":               {{QueryID: "q", DocID: "d", Features: []Feature{{1, math.NaN()}}}},
		"Inf":               {{QueryID: "q", DocID: "d", Features: []Feature{{1, math.Inf(-1)}}}},
		"line break in doc": {{QueryID: "q", DocID: "d\nx"}},
		"query reappears":   {{QueryID: "a", DocID: "1"}, {QueryID: "b", DocID: "2"}, {QueryID: "a", DocID: "3"}},
	}
	for name, rows := range cases {
		for _, workers := range []int{1, 2} {
			w := NewSVMlightWriter(&bytes.Buffer{}, nil, SVMlightOptions{Workers: workers})
			var err error
			for _, r := range rows {
				if err = w.Write(r); err != nil {
					break
				}
			}
			w.Close()
			if err == nil {
				t.Errorf("%s (workers=%d): no error", name, workers)
			}
		}
	}
}

type failingWriter struct{ n int }

func (f *failingWriter) Write(p []byte) (int, error) {
	f.n++
	return 0, os.ErrClosed
}

func TestSVMlightReportsWriteError(t *testing.T) {
	for _, workers := range []int{1, 2} {
		w := NewSVMlightWriter(&failingWriter{}, nil, SVMlightOptions{Workers: workers})
		var err error
		for i := 0; i < 5000 && err == nil; i++ {
			err = w.Write(Row{QueryID: "q", DocID: "d", Features: []Feature{{1, float64(i) + 0.25}}})
		}
		if cerr := w.Close(); err == nil && cerr == nil {
			t.Errorf("workers=%d: write error was lost", workers)
		}
	}
}

// randomRows makes rows with sparse random features of many magnitudes.
func randomRows(rng *rand.Rand, queries, perQuery, width int) []Row {
	var rows []Row
	for q := 0; q < queries; q++ {
		for d := 0; d < perQuery; d++ {
			var fs []Feature
			for i := 1; i <= width; i++ {
				if rng.IntN(3) == 0 {
					continue
				}
				var v float64
				switch rng.IntN(5) {
				case 0:
					v = float64(rng.IntN(2000000) - 1000000)
				case 1:
					v = math.Floor(rng.Float64()*1e6) / 1e6
				case 2:
					v = rng.NormFloat64() * math.Pow(10, float64(rng.IntN(40)-20))
				case 3:
					v = 0
				default:
					v = rng.Float64()
				}
				fs = append(fs, Feature{i, v})
			}
			rows = append(rows, Row{QueryID: "query-" + strconv.Itoa(q*7919%1000), DocID: "doc-" + strconv.Itoa(q) + "-" + strconv.Itoa(d), Grade: rng.IntN(5), Features: fs})
		}
	}
	return rows
}

func TestSVMlightParallelMatchesInline(t *testing.T) {
	rows := randomRows(rand.New(rand.NewPCG(1, 2)), 40, 30, 50)
	rows[5].Features = append(rows[5].Features, Feature{100000, 2.5}) // beyond the prefix table
	one, _ := writeSVM(t, rows, SVMlightOptions{Workers: 1})
	four, _ := writeSVM(t, rows, SVMlightOptions{Workers: 4})
	if one != four {
		t.Fatal("parallel output differs from inline output")
	}
}

func TestAppendValueMatchesStrconv(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	vals := []float64{1, -1, 999999, -999999, 1e6, -1e6, 1e6 - 0.5, 123456, 1e21, 5e-324, math.MaxFloat64, 0.1, 1e-5, 1e-4}
	for d := range 12 {
		p := math.Pow(10, float64(d))
		vals = append(vals, 1/p, -1/p, 1e-4+1/p, 999999+1/p, 1e6-1/p, 0.5/p, 9.5/p)
	}
	for range 200000 {
		u := rng.Float64()
		vals = append(vals,
			float64(rng.Int64N(4e6)-2e6),
			rng.NormFloat64()*math.Pow(10, float64(rng.IntN(60)-30)),
			math.Floor(u*1e6)/1e6,                                        // six-decimal ratios
			-math.Round(u*1e9)/1e9*math.Pow(10, float64(rng.IntN(11)-4)), // short decimals of many sizes
			float64(rng.Int64N(1e15))/1e9,                                // nine decimals near 2^53
			math.Nextafter(math.Floor(u*1e4)/1e4, 2),                     // one ulp off a short decimal
			u*30)
	}
	for _, v := range vals {
		for _, bits := range []int{32, 64} {
			got := string(appendValue(nil, v, bits))
			if want := strconv.FormatFloat(v, 'g', -1, bits); got != want {
				t.Fatalf("appendValue(%v, %d) = %s, want %s", v, bits, got, want)
			}
		}
	}
}

func TestSVMlightFloat32RoundTrips(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	var fs []Feature
	for i := 1; i <= 500; i++ {
		fs = append(fs, Feature{i, float64(float32(rng.NormFloat64() * math.Pow(10, float64(rng.IntN(20)-10))))})
	}
	out, _ := writeSVM(t, []Row{{QueryID: "q", DocID: "d", Features: fs}}, SVMlightOptions{Float32: true})
	fields := strings.Fields(strings.SplitN(out, " #", 2)[0])[2:]
	if len(fields) != len(fs) {
		t.Fatalf("%d values written, want %d", len(fields), len(fs))
	}
	for i, f := range fields {
		_, num, _ := strings.Cut(f, ":")
		v, err := strconv.ParseFloat(num, 32)
		if err != nil || float32(v) != float32(fs[i].Value) {
			t.Fatalf("feature %d: %s parses to %v, want %v", i+1, num, float32(v), float32(fs[i].Value))
		}
	}
}

// TestSVMlightRoundTripSklearn reads the file back with
// sklearn.datasets.load_svmlight_file(query_id=True), the common reader of
// the format, and compares labels, qids and every value exactly.
func TestSVMlightRoundTripSklearn(t *testing.T) {
	rows := randomRows(rand.New(rand.NewPCG(7, 8)), 25, 12, 40)
	path := filepath.Join(t.TempDir(), "train.svmlight")
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	w := NewSVMlightWriter(f, nil, SVMlightOptions{})
	for _, r := range rows {
		if err := w.Write(r); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	f.Close()
	script := `
import json, sys
from sklearn.datasets import load_svmlight_file
X, y, q = load_svmlight_file(sys.stdin.readline().strip(), query_id=True, zero_based=False, dtype="float64")
X = X.tocsr()
rows = []
for i in range(X.shape[0]):
    s, e = X.indptr[i], X.indptr[i+1]
    rows.append({"y": float(y[i]), "qid": int(q[i]),
                 "idx": [int(j) + 1 for j in X.indices[s:e]],
                 "val": [float(v) for v in X.data[s:e]]})
print(json.dumps(rows))
`
	out := reference.RunPython(t, "sklearn", script, []byte(path+"\n"))
	var got []struct {
		Y   float64   `json:"y"`
		QID int       `json:"qid"`
		Idx []int     `json:"idx"`
		Val []float64 `json:"val"`
	}
	if err := json.Unmarshal(out, &got); err != nil {
		t.Fatal(err)
	}
	if len(got) != len(rows) {
		t.Fatalf("sklearn read %d rows, want %d", len(got), len(rows))
	}
	for i, r := range rows {
		g := got[i]
		if g.Y != float64(r.Grade) || g.QID != w.QIDs().QID(r.QueryID) {
			t.Fatalf("row %d: label %v qid %d, want %d %d", i, g.Y, g.QID, r.Grade, w.QIDs().QID(r.QueryID))
		}
		var want []Feature
		for _, f := range r.Features {
			if f.Value != 0 {
				want = append(want, f)
			}
		}
		if len(g.Idx) != len(want) {
			t.Fatalf("row %d: %d values, want %d", i, len(g.Idx), len(want))
		}
		for k, f := range want {
			if g.Idx[k] != f.Index || g.Val[k] != f.Value {
				t.Fatalf("row %d: %d:%v read back as %d:%v", i, f.Index, f.Value, g.Idx[k], g.Val[k])
			}
		}
	}
}
