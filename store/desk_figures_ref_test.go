package store

import (
	"cmp"
	"slices"
	"time"

	"github.com/pertinent/pertinent/agreement"
)

// The desk's figures as first written: a map per day, a sort per assessor and one
// leave-one-out median per judgment. The fast code must give exactly these.

// refActivity is the plain computation the desk's activity figures must equal: it fills the counts, judgments per day and the spread of time per judgment.
func refActivity(d *Desk) {
	perDay := map[int64]int{}
	times := make([]int32, 0, len(d.rows))
	for p := 0; p+1 < len(d.pairs); p++ {
		flagged := false
		for _, r := range d.rows[d.pairs[p]:d.pairs[p+1]] {
			if r.grade() == gradeDisturbing {
				flagged = true
			}
		}
		if flagged {
			d.Flagged++
		}
	}
	for _, r := range d.rows {
		d.Judgments++
		if r.grade() >= gradeDisturbing {
			d.CannotJudge++
		} else {
			d.Graded++
		}
		perDay[floorDiv(r.at, 86400000)]++
		if r.ms() > 0 {
			times = append(times, r.ms())
		}
	}
	days := make([]int64, 0, len(perDay))
	for day := range perDay {
		days = append(days, day)
	}
	slices.Sort(days)
	for _, day := range days {
		d.PerDay = append(d.PerDay, DayCount{Day: time.UnixMilli(day * 86400000).UTC().Format("2006-01-02"), Judgments: perDay[day]})
	}
	slices.Sort(times)
	d.TimeQ1Ms, d.TimeMedianMs, d.TimeQ3Ms = refQuantileMs(times, 0.25), refQuantileMs(times, 0.5), refQuantileMs(times, 0.75)
}

// refAssessorFigures is the plain computation the desk's assessor figures must equal: it builds one row per assessor with a current judgment.
func refAssessorFigures(d *Desk) {
	type acc struct {
		f     AssessorFigures
		times []int32
		comp  []agreement.Compared
	}
	by := map[int64]*acc{}
	var buf []int8
	for p := 0; p+1 < len(d.pairs); p++ {
		rows := d.rows[d.pairs[p]:d.pairs[p+1]]
		for i, r := range rows {
			a := by[r.user()]
			if a == nil {
				a = &acc{f: AssessorFigures{UserID: r.user(), Username: d.users[r.user()], Grades: make([]int, d.Scale)}}
				by[r.user()] = a
			}
			a.f.Judgments++
			if r.ms() > 0 {
				a.times = append(a.times, r.ms())
			}
			if r.grade() >= gradeDisturbing {
				a.f.CannotJudge++
				continue
			}
			if int(r.grade()) < d.Scale {
				a.f.Grades[r.grade()]++
			}
			var c int
			var ok bool
			c, ok, buf = leaveOneOut(rows, i, buf)
			if ok {
				a.comp = append(a.comp, agreement.Compared{At: r.at, ID: r.id(), Agree: c == int(r.grade())})
			}
		}
	}
	stats := map[string]agreement.RaterStats{}
	for _, s := range d.Report.RaterStats {
		stats[s.Rater] = s
	}
	for _, a := range by {
		f := &a.f
		f.CannotShare = float64(f.CannotJudge) / float64(f.Judgments)
		slices.Sort(a.times)
		f.MedianMs = refQuantileMs(a.times, 0.5)
		f.Stats = raterStatsOf(stats, f.Username, d.Scale)
		// The compared grades go in in row order; agreement's tests check Drift against the
		// plain sort by time.
		var dr agreement.Drift
		for _, c := range a.comp {
			dr.Add(c)
		}
		f.DriftRecent, f.DriftEarlier, f.Drift, f.DriftEarlierN = dr.Shares()
		d.Assessors = append(d.Assessors, *f)
	}
	slices.SortFunc(d.Assessors, func(a, b AssessorFigures) int { return cmp.Compare(a.Username, b.Username) })
}

func refQuantileMs(sorted []int32, q float64) int {
	if len(sorted) == 0 {
		return 0
	}
	h := q * float64(len(sorted)-1)
	i := int(h)
	if i+1 >= len(sorted) {
		return int(sorted[len(sorted)-1])
	}
	return int(float64(sorted[i]) + (h-float64(i))*float64(sorted[i+1]-sorted[i]) + 0.5)
}
