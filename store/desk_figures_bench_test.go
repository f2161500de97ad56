package store

import (
	"math/rand/v2"
	"os"
	"strconv"
	"testing"
	"time"
)

// syntheticDesk makes the rows of the lead-pages benchmark's project in memory: pairs × 3
// judgments of 50 assessors, grades near a per-pair truth, one every two seconds.
func syntheticDesk(pairs int) *Desk {
	rng := rand.New(rand.NewPCG(1, 2))
	users := map[int64]string{}
	for u := range int64(50) {
		users[u+2] = "rater" + strconv.Itoa(int(u))
	}
	base := time.Date(2025, 1, 1, 0, 0, 0, 0, time.UTC).UnixMilli()
	rows := make([]deskRow, 0, 3*pairs)
	for i := range pairs {
		truth := rng.IntN(5)
		used := map[int64]bool{}
		var rs []deskRow
		for j := range 3 {
			u := int64(2 + rng.IntN(50))
			for used[u] {
				u = int64(2 + rng.IntN(50))
			}
			used[u] = true
			g := truth
			if rng.IntN(3) == 0 {
				g = min(max(truth+rng.IntN(3)-1, 0), 4)
			}
			rs = append(rs, newDeskRow(int64(i+1), u, int8(g), int64(3*i+j+1), int32(2000+rng.IntN(30000)), base+int64(3*i+j)*2000))
		}
		for a := range rs {
			for b := a + 1; b < len(rs); b++ {
				if rs[b].user() < rs[a].user() {
					rs[a], rs[b] = rs[b], rs[a]
				}
			}
		}
		rows = append(rows, rs...)
	}
	return &Desk{ProjectID: 1, Scale: 5, users: users, rows: rows, Gold: map[string]int{}, goldPair: map[int64]int{}}
}

// BenchmarkDeskDerive times deriving every figure from rows in memory (what a desk kept
// current does after reading the changes): PERTINENT_BENCH_PAIRS pairs × 3, default 333,334.
func BenchmarkDeskDerive(b *testing.B) {
	pairs := 333334
	if n, err := strconv.Atoi(os.Getenv("PERTINENT_BENCH_PAIRS")); err == nil && n > 0 {
		pairs = n
	}
	src := syntheticDesk(pairs)
	for b.Loop() {
		d := &Desk{ProjectID: 1, Scale: src.Scale, users: src.users, rows: src.rows, Gold: src.Gold, goldPair: src.goldPair}
		if err := d.derive(); err != nil {
			b.Fatal(err)
		}
	}
}
