package store

import (
	"math/rand/v2"
	"reflect"
	"slices"
	"strconv"
	"testing"
)

// The desk's fast figures (radix-sorted times, one sort per pair, a heap of the latest
// compared judgments) equal the plain computation on random rows with the awkward cases:
// "cannot judge" and disturbing answers, no time recorded, equal timestamps (ties go to the
// id), days before 1970, grades off a shrunken scale, lone judgments, and assessors with
// more and fewer than DriftWindow compared grades.
func TestDeskFiguresEqualPlainComputation(t *testing.T) {
	withDrift := 0
	for seed := range uint64(40) {
		rng := rand.New(rand.NewPCG(seed, 3))
		scale := 2 + rng.IntN(4)
		nUsers := 1 + rng.IntN(12)
		users := map[int64]string{}
		for u := range nUsers {
			users[int64(10+u*7)] = "u" + strconv.Itoa(rng.IntN(1000)) + "-" + strconv.Itoa(u)
		}
		ids := rng.Perm(100000)
		var rows []deskRow
		nPairs := 1 + rng.IntN(400)
		span := int64(1 + rng.IntN(40*86400000))
		for p := range nPairs {
			for u := range nUsers {
				if rng.IntN(nUsers) > 2 {
					continue
				}
				g := int8(rng.IntN(scale + 1)) // scale itself stands for a grade off the scale
				switch rng.IntN(12) {
				case 0:
					g = gradeCannot
				case 1:
					g = gradeDisturbing
				}
				at := -span/3 + rng.Int64N(span)
				if rng.IntN(4) == 0 {
					at = 1000 * int64(rng.IntN(5)) // many equal timestamps
				}
				ms := int32(rng.IntN(3) * rng.IntN(1<<23)) // below 2^24, as read
				rows = append(rows, newDeskRow(int64(p+1), int64(10+u*7), g, int64(ids[len(rows)]), ms, at))
			}
		}
		fast := &Desk{Scale: scale, users: users, rows: rows, Gold: map[string]int{}, goldPair: map[int64]int{}}
		if err := fast.derive(); err != nil {
			t.Fatal(err)
		}
		ref := &Desk{Scale: scale, users: users, rows: rows, pairs: fast.pairs, Report: fast.Report}
		refActivity(ref)
		refAssessorFigures(ref)
		check := func(name string, a, b any) {
			if !reflect.DeepEqual(a, b) {
				t.Fatalf("seed %d: %s\nfast  %+v\nplain %+v", seed, name, a, b)
			}
		}
		check("counts", []int{fast.Judgments, fast.Graded, fast.CannotJudge, fast.Flagged}, []int{ref.Judgments, ref.Graded, ref.CannotJudge, ref.Flagged})
		check("per day", fast.PerDay, ref.PerDay)
		check("times", []int{fast.TimeQ1Ms, fast.TimeMedianMs, fast.TimeQ3Ms}, []int{ref.TimeQ1Ms, ref.TimeMedianMs, ref.TimeQ3Ms})
		check("assessors", fast.Assessors, ref.Assessors)
		if slices.ContainsFunc(fast.Assessors, func(a AssessorFigures) bool { return a.Drift.OK }) {
			withDrift++
		}
	}
	if withDrift < 10 {
		t.Fatalf("only %d of 40 data sets had an assessor with drift", withDrift)
	}
}
