package web

import (
	"fmt"
	"net/http"
	"net/url"
	"slices"
	"sync"
	"sync/atomic"
	"testing"
	"time"
)

// BenchmarkSubmitAndNext measures the judging request (store the grade, lease and render the
// next pair) through the real HTTP stack and a real SQLite file, at 1, 16 and 200 assessors
// submitting at once. It reports judgments per second and the p50/p99 latency of one request.
//
//	go test -run XXX -bench BenchmarkSubmitAndNext -benchtime 3000x ./web/
func BenchmarkSubmitAndNext(b *testing.B) {
	for _, n := range []int{1, 16, 200} {
		b.Run(fmt.Sprintf("assessors-%d", n), func(b *testing.B) {
			perPair := min(n, 3)
			queries := (b.N/perPair+2*n)/20 + 1
			a := newTestApp(b, withPairs(queries, 20), withAssessors(n), withPerPair(perPair))
			clients := make([]*http.Client, n)
			pairs := make([]int64, n)
			for i, u := range a.assessors {
				clients[i] = a.signIn(u.Username)
				_, body, err := a.send(clients[i], http.MethodGet, a.judgePath(), nil, false)
				if err != nil {
					b.Fatal(err)
				}
				pairs[i] = offeredPair(body)
			}
			var left atomic.Int64
			left.Store(int64(b.N))
			latencies := make([][]time.Duration, n)
			var wg sync.WaitGroup
			b.ResetTimer()
			start := time.Now()
			for i := range n {
				wg.Add(1)
				go func() {
					defer wg.Done()
					for left.Add(-1) >= 0 {
						if pairs[i] == 0 {
							b.Error("assessor ran out of pairs")
							return
						}
						t0 := time.Now()
						status, body, err := a.send(clients[i], http.MethodPost, a.judgePath(),
							url.Values{"pair": {fmt.Sprint(pairs[i])}, "grade": {"2"}, "elapsed_ms": {"900"}}, true)
						latencies[i] = append(latencies[i], time.Since(t0))
						if err != nil || status != http.StatusOK {
							b.Errorf("submit: %d %v", status, err)
							return
						}
						pairs[i] = offeredPair(body)
					}
				}()
			}
			wg.Wait()
			elapsed := time.Since(start)
			b.StopTimer()
			all := slices.Concat(latencies...)
			slices.Sort(all)
			if len(all) == 0 {
				return
			}
			pct := func(p float64) float64 { return float64(all[int(p*float64(len(all)-1))].Microseconds()) / 1000 }
			b.ReportMetric(float64(len(all))/elapsed.Seconds(), "judgments/s")
			b.ReportMetric(pct(0.50), "p50-ms")
			b.ReportMetric(pct(0.99), "p99-ms")
		})
	}
}
