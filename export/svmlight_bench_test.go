package export

import (
	"io"
	"math"
	"math/rand/v2"
	"strconv"
	"testing"
)

// BenchmarkSVMlightWriter formats rows (one row per op) of 136 features (counts, lengths,
// six-decimal ratios, full-precision scores) to io.Discard.
func BenchmarkSVMlightWriter(b *testing.B) {
	rng := rand.New(rand.NewPCG(1, 1))
	rows := make([]Row, 512)
	for i := range rows {
		fs := make([]Feature, 136)
		for j := range fs {
			u := rng.Float64()
			v := u * 30
			switch j % 4 {
			case 0:
				v = math.Floor(u * 200)
			case 1:
				v = math.Floor(u * 100000)
			case 2:
				v = math.Floor(u*1e6) / 1e6
			}
			fs[j] = Feature{j + 1, v}
		}
		rows[i] = Row{QueryID: "q" + strconv.Itoa(i/128), DocID: "d" + strconv.Itoa(i), Grade: i % 5, Features: fs}
	}
	for _, workers := range []int{1, 2} {
		b.Run("workers="+strconv.Itoa(workers), func(b *testing.B) {
			w := NewSVMlightWriter(io.Discard, nil, SVMlightOptions{Workers: workers})
			var q string
			for i := 0; b.Loop(); i++ {
				r := rows[i%len(rows)]
				if i%128 == 0 {
					q = "q" + strconv.Itoa(i/128)
				}
				r.QueryID = q
				if err := w.Write(r); err != nil {
					b.Fatal(err)
				}
			}
			if err := w.Close(); err != nil {
				b.Fatal(err)
			}
		})
	}
}
