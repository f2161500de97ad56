package agreement

import (
	"encoding/csv"
	"io"
	"math/rand/v2"
	"os"
	"strconv"
	"testing"
)

// benchRatings makes about 1,000,000 judgments: 333,334 items, each graded
// by 3 distinct raters drawn from 50, grades 0..4 around a per-item truth.
func benchRatings() []Rating {
	rng := rand.New(rand.NewPCG(1, 2))
	const items, raters, per = 333334, 50, 3
	names := make([]string, raters)
	for r := range names {
		names[r] = "rater" + strconv.Itoa(r)
	}
	out := make([]Rating, 0, items*per)
	for i := range items {
		item := "q" + strconv.Itoa(i/20) + "/d" + strconv.Itoa(i)
		truth := rng.IntN(5)
		var used [per]int
		for j := range per {
		again:
			r := rng.IntN(raters)
			for _, u := range used[:j] {
				if u == r {
					goto again
				}
			}
			used[j] = r
			g := truth
			if rng.IntN(3) == 0 {
				g = min(max(truth+rng.IntN(3)-1, 0), 4)
			}
			out = append(out, Rating{Item: item, Rater: names[r], Grade: g})
		}
	}
	return out
}

var benchData *Data

// benchPrepared returns the prepared judgments, made once for all benchmarks, and starts the
// benchmark's clock and allocation count after them.
func benchPrepared(b *testing.B) *Data {
	if benchData == nil {
		d, err := FromRatings(5, benchRatings())
		if err != nil {
			b.Fatal(err)
		}
		d.built()
		benchData = d
	}
	b.ReportAllocs()
	b.ResetTimer()
	return benchData
}

// BenchmarkHeadline: Fleiss' kappa, ordinal alpha and every pairwise Cohen
// kappa (with SEs) on 1,000,000 prepared judgments, in the one pass that
// Compute uses.
func BenchmarkHeadline(b *testing.B) {
	d := benchPrepared(b)
	ix := d.built()
	for b.Loop() {
		t := tallyOf(ix, true)
		f := fleissOf(t, 0.95)
		a := alphaFrom(coincidence(t), t.k, Ordinal)
		ps := pairKappas(ix, t, 0.95)
		if !f.Kappa.OK || !a.OK || len(ps) != 1225 {
			b.Fatal("unexpected result")
		}
	}
}

// BenchmarkSeparateCalls: the same three figures through the public
// single-statistic functions (three passes).
func BenchmarkSeparateCalls(b *testing.B) {
	d := benchPrepared(b)
	for b.Loop() {
		_ = Fleiss(d, 0.95)
		_ = Alpha(d, Ordinal)
		_ = CohenPairs(d, 0.95)
	}
}

// BenchmarkFromRatings: interning 1,000,000 string ratings and building the
// per-item index, then the headline figures.
func BenchmarkFromRatings(b *testing.B) {
	rs := benchRatings()
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		d, err := FromRatings(5, rs)
		if err != nil {
			b.Fatal(err)
		}
		_ = Compute(d, Options{})
	}
}

// BenchmarkCompute: the full report without bootstrap on prepared data.
func BenchmarkCompute(b *testing.B) {
	d := benchPrepared(b)
	for b.Loop() {
		_ = Compute(d, Options{})
	}
}

// BenchmarkBootstrap100: 100 bootstrap replicates on 1,000,000 judgments.
func BenchmarkBootstrap100(b *testing.B) {
	d := benchPrepared(b)
	for b.Loop() {
		_ = Bootstrap(d, BootstrapOptions{Replicates: 100, Seed: 1})
	}
}

// BenchmarkDawidSkene: EM to convergence on 1,000,000 judgments.
func BenchmarkDawidSkene(b *testing.B) {
	d := benchPrepared(b)
	for b.Loop() {
		_ = DawidSkene(d, DSOptions{})
	}
}

// BenchmarkHeadlineCSV is BenchmarkHeadline on judgments read from the CSV
// named by AGREEMENT_BENCH_CSV (written by bench/agreement_reference.sh),
// so the figures can be compared with the reference libraries.
func BenchmarkHeadlineCSV(b *testing.B) {
	path := os.Getenv("AGREEMENT_BENCH_CSV")
	if path == "" {
		b.Skip("AGREEMENT_BENCH_CSV not set")
	}
	f, err := os.Open(path)
	if err != nil {
		b.Fatal(err)
	}
	defer f.Close()
	r := csv.NewReader(f)
	r.ReuseRecord = true
	if _, err := r.Read(); err != nil {
		b.Fatal(err)
	}
	d := NewData(5)
	for {
		rec, err := r.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			b.Fatal(err)
		}
		g, err := strconv.Atoi(rec[2])
		if err != nil {
			b.Fatal(err)
		}
		if err := d.Add(rec[0], rec[1], g); err != nil {
			b.Fatal(err)
		}
	}
	ix := d.built()
	b.ReportAllocs()
	b.ResetTimer()
	var f0 FleissResult
	var mq Value
	var np int
	for b.Loop() {
		t := tallyOf(ix, true)
		f0 = fleissOf(t, 0.95)
		_ = alphaFrom(coincidence(t), t.k, Ordinal)
		ps := pairKappas(ix, t, 0.95)
		mq, np = meanQuadraticKappa(ps)
	}
	b.StopTimer()
	b.Logf("agreement: fleiss_kappa %.10f, %d pairs, mean quadratic kappa %.10f (%d judgments)", f0.Kappa.V, np, mq.V, d.Judgments())
}
