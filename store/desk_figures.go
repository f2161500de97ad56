package store

import (
	"cmp"
	"maps"
	"math"
	"math/bits"
	"slices"
	"time"

	"github.com/pertinent/pertinent/agreement"
)

// activity fills the counts, judgments per day and the spread of time per judgment, in
// passes over the rows without a map or a comparison sort (a million rows take a few ms).
func (d *Desk) activity() {
	for p := 0; p+1 < len(d.pairs); p++ {
		for _, r := range d.rows[d.pairs[p]:d.pairs[p+1]] {
			if r.grade() == gradeDisturbing {
				d.Flagged++
				break
			}
		}
	}
	if len(d.rows) == 0 {
		return
	}
	times := make([]uint64, 0, len(d.rows))
	first, last := int64(math.MaxInt64), int64(math.MinInt64)
	for _, r := range d.rows {
		if r.grade() >= gradeDisturbing {
			d.CannotJudge++
		} else {
			d.Graded++
		}
		day := floorDiv(r.at, 86400000)
		first, last = min(first, day), max(last, day)
		if r.ms() > 0 {
			times = append(times, uint64(r.ms()))
		}
	}
	d.Judgments = len(d.rows)
	if last-first < 1<<20 {
		perDay := make([]int, last-first+1)
		for _, r := range d.rows {
			perDay[floorDiv(r.at, 86400000)-first]++
		}
		for i, n := range perDay {
			if n > 0 {
				d.PerDay = append(d.PerDay, dayCount(first+int64(i), n))
			}
		}
	} else { // timestamps spread over millennia: count sparsely
		perDay := map[int64]int{}
		for _, r := range d.rows {
			perDay[floorDiv(r.at, 86400000)]++
		}
		days := slices.Sorted(maps.Keys(perDay))
		for _, day := range days {
			d.PerDay = append(d.PerDay, dayCount(day, perDay[day]))
		}
	}
	radixSort(times, 24, nil)
	d.TimeQ1Ms, d.TimeMedianMs, d.TimeQ3Ms = quantileMs(times, 0.25), quantileMs(times, 0.5), quantileMs(times, 0.75)
}

func dayCount(day int64, n int) DayCount {
	return DayCount{Day: time.UnixMilli(day * 86400000).UTC().Format("2006-01-02"), Judgments: n}
}

// radixSort sorts keys by their low bits (a multiple of 8; time spent fits 24) with stable
// byte-wise counting passes (a byte all keys share costs one counting pass), using buf as
// scratch space when it is long enough.
func radixSort(keys []uint64, bits int, buf []uint64) {
	if len(keys) < 2 {
		return
	}
	if len(buf) < len(keys) {
		buf = make([]uint64, len(keys))
	}
	src, dst := keys, buf[:len(keys)]
	for shift := 0; shift < bits; shift += 8 {
		var count [257]int
		for _, k := range src {
			count[(k>>shift)&255+1]++
		}
		if count[(src[0]>>shift)&255+1] == len(src) {
			continue // every key has this byte: the pass would not move anything
		}
		for i := 1; i < 257; i++ {
			count[i] += count[i-1]
		}
		for _, k := range src {
			b := (k >> shift) & 255
			dst[count[b]] = k
			count[b]++
		}
		src, dst = dst, src
	}
	if &src[0] != &keys[0] {
		copy(keys, src)
	}
}

func floorDiv(a, b int64) int64 {
	q := a / b
	if a%b != 0 && a < 0 {
		q--
	}
	return q
}

// quantileMs is the q-quantile of sorted times (in the low 32 bits) by linear interpolation
// between order statistics (type 7 of Hyndman & Fan 1996, the default of R and numpy); 0 for
// no data.
func quantileMs(sorted []uint64, q float64) int {
	if len(sorted) == 0 {
		return 0
	}
	at := func(i int) int32 { return int32(uint32(sorted[i])) }
	h := q * float64(len(sorted)-1)
	i := int(h)
	if i+1 >= len(sorted) {
		return int(at(len(sorted) - 1))
	}
	return int(float64(at(i)) + (h-float64(i))*float64(at(i+1)-at(i)) + 0.5)
}

// leaveOneOut returns, for the judgment at position p of a pair's rows, the lower median of
// the other raters' grades (the consensus agreement.RaterStats compares with), and false
// when nobody else graded the pair.
func leaveOneOut(rows []deskRow, p int, buf []int8) (int, bool, []int8) {
	buf = buf[:0]
	for _, r := range rows {
		if r.grade() < gradeDisturbing {
			buf = append(buf, r.grade())
		}
	}
	if len(buf) < 2 {
		return 0, false, buf
	}
	slices.Sort(buf)
	return int(agreement.LeaveOneOutMedian(buf, rows[p].grade())), true, buf
}

// assessorFigures builds one row per assessor with a current judgment in one pass over the
// rows: each pair's grades are sorted once for the leave-one-out consensus, medians come from
// one radix sort of (assessor, time) keys, and drift keeps only each assessor's latest
// agreement.DriftWindow compared judgments.
func (d *Desk) assessorFigures() {
	type acc struct {
		f      AssessorFigures
		drift  agreement.Drift
		nTimes int
	}
	var accs []*acc
	slot := map[int64]int32{}
	times := make([]uint64, 0, len(d.rows))
	var sorted []int8
	for p := 0; p+1 < len(d.pairs); p++ {
		rows := d.rows[d.pairs[p]:d.pairs[p+1]]
		sorted = sorted[:0]
		for _, r := range rows {
			if r.grade() < gradeDisturbing {
				sorted = append(sorted, r.grade())
			}
		}
		slices.Sort(sorted)
		m := len(sorted)
		for _, r := range rows {
			i, ok := slot[r.user()]
			if !ok {
				i = int32(len(accs))
				slot[r.user()] = i
				accs = append(accs, &acc{f: AssessorFigures{UserID: r.user(), Username: d.users[r.user()], Grades: make([]int, d.Scale)}})
			}
			a := accs[i]
			a.f.Judgments++
			if r.ms() > 0 {
				times = append(times, uint64(i)<<32|uint64(uint32(r.ms())))
				a.nTimes++
			}
			if r.grade() >= gradeDisturbing {
				a.f.CannotJudge++
				continue
			}
			if int(r.grade()) < d.Scale {
				a.f.Grades[r.grade()]++
			}
			if m < 2 {
				continue
			}
			a.drift.Add(agreement.Compared{At: r.at, ID: r.id(), Agree: agreement.LeaveOneOutMedian(sorted, r.grade()) == r.grade()})
		}
	}
	// By assessor, then time: LSD passes over the time's bytes, then the assessor's.
	radixSort(times, 32+8*((bits.Len(uint(len(accs)))+7)/8), nil)

	stats := map[string]agreement.RaterStats{}
	for _, s := range d.Report.RaterStats {
		stats[s.Rater] = s
	}
	d.Assessors = make([]AssessorFigures, 0, len(accs))
	for _, a := range accs {
		f := &a.f
		f.CannotShare = float64(f.CannotJudge) / float64(f.Judgments)
		n := a.nTimes
		f.MedianMs = quantileMs(times[:n], 0.5)
		times = times[n:]
		f.Stats = raterStatsOf(stats, f.Username, d.Scale)
		f.DriftRecent, f.DriftEarlier, f.Drift, f.DriftEarlierN = a.drift.Shares()
		d.Assessors = append(d.Assessors, *f)
	}
	slices.SortFunc(d.Assessors, func(a, b AssessorFigures) int { return cmp.Compare(a.Username, b.Username) })
}

// raterStatsOf is an assessor's agreement figures from stats, or, for one who gave no grades
// (agreement has no row for them), figures that each say why they are missing.
func raterStatsOf(stats map[string]agreement.RaterStats, username string, scale int) agreement.RaterStats {
	if s, ok := stats[username]; ok {
		return s
	}
	why := "no grades, only \"cannot judge\""
	return agreement.RaterStats{Rater: username, Grades: make([]int, scale),
		MeanKappaQuadratic: agreement.Value{Why: why}, ConsensusAgreement: agreement.Value{Why: why},
		ConsensusMAE: agreement.Value{Why: why}, GoldAccuracy: agreement.Value{Why: why}, GoldMAE: agreement.Value{Why: why}}
}

// Assessor returns one assessor's figures; ok is false when they have no current judgment.
func (d *Desk) Assessor(userID int64) (AssessorFigures, bool) {
	for _, a := range d.Assessors {
		if a.UserID == userID {
			return a, true
		}
	}
	return AssessorFigures{}, false
}

// ConsensusConfusion counts an assessor's grades (rows) against the lower median of the
// other raters' grades on the same pair (columns): the consensus of their RaterStats.
func (d *Desk) ConsensusConfusion(userID int64) [][]int {
	out := make([][]int, d.Scale)
	for i := range out {
		out[i] = make([]int, d.Scale)
	}
	var buf []int8
	for p := 0; p+1 < len(d.pairs); p++ {
		rows := d.rows[d.pairs[p]:d.pairs[p+1]]
		for i, r := range rows {
			if r.user() != userID || r.grade() >= gradeDisturbing || int(r.grade()) >= d.Scale {
				continue
			}
			var c int
			var ok bool
			if c, ok, buf = leaveOneOut(rows, i, buf); ok {
				out[r.grade()][c]++
			}
		}
	}
	return out
}

// ColleagueKappas returns the Cohen's kappa of the assessor with each colleague they share
// pairs with, oriented so the assessor is A (Table rows are the assessor's grades).
func (d *Desk) ColleagueKappas(username string) []agreement.PairKappa {
	var out []agreement.PairKappa
	for _, p := range d.Report.Cohen {
		switch username {
		case p.A:
			out = append(out, p)
		case p.B:
			t := make([][]int64, len(p.Table))
			for i := range t {
				t[i] = make([]int64, len(p.Table))
				for j := range t[i] {
					t[i][j] = p.Table[j][i]
				}
			}
			p.A, p.B, p.Table = p.B, p.A, t
			out = append(out, p)
		}
	}
	return out
}
