package store

import (
	"cmp"
	"slices"
	"strconv"
	"time"

	"github.com/pertinent/pertinent/agreement"
)

// activity fills the counts, judgments per day and the spread of time per judgment.
func (d *Desk) activity() {
	perDay := map[int64]int{}
	times := make([]int32, 0, len(d.rows))
	for p := 0; p+1 < len(d.pairs); p++ {
		flagged := false
		for _, r := range d.rows[d.pairs[p]:d.pairs[p+1]] {
			if r.grade == gradeDisturbing {
				flagged = true
			}
		}
		if flagged {
			d.Flagged++
		}
	}
	for _, r := range d.rows {
		d.Judgments++
		if r.grade >= gradeDisturbing {
			d.CannotJudge++
		} else {
			d.Graded++
		}
		perDay[floorDiv(r.at, 86400000)]++
		if r.ms > 0 {
			times = append(times, r.ms)
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
	d.TimeQ1Ms, d.TimeMedianMs, d.TimeQ3Ms = quantileMs(times, 0.25), quantileMs(times, 0.5), quantileMs(times, 0.75)
}

func floorDiv(a, b int64) int64 {
	q := a / b
	if a%b != 0 && a < 0 {
		q--
	}
	return q
}

// quantileMs is the q-quantile of sorted times by linear interpolation between order
// statistics (type 7 of Hyndman & Fan 1996, the default of R and numpy); 0 for no data.
func quantileMs(sorted []int32, q float64) int {
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

// leaveOneOut returns, for the judgment at position p of a pair's rows, the lower median of
// the other raters' grades (the consensus agreement.RaterStats compares with), and false
// when nobody else graded the pair.
func leaveOneOut(rows []deskRow, p int, buf []int8) (int, bool, []int8) {
	buf = buf[:0]
	for q, r := range rows {
		if q != p && r.grade < gradeDisturbing {
			buf = append(buf, r.grade)
		}
	}
	if len(buf) == 0 {
		return 0, false, buf
	}
	slices.Sort(buf)
	return int(buf[(len(buf)-1)/2]), true, buf
}

type compared struct {
	at, id int64
	agree  bool
}

// assessorFigures builds one row per assessor with a current judgment.
func (d *Desk) assessorFigures() {
	type acc struct {
		f     AssessorFigures
		times []int32
		comp  []compared
	}
	by := map[int64]*acc{}
	var buf []int8
	for p := 0; p+1 < len(d.pairs); p++ {
		rows := d.rows[d.pairs[p]:d.pairs[p+1]]
		for i, r := range rows {
			a := by[r.user]
			if a == nil {
				a = &acc{f: AssessorFigures{UserID: r.user, Username: d.users[r.user], Grades: make([]int, d.Scale)}}
				by[r.user] = a
			}
			a.f.Judgments++
			if r.ms > 0 {
				a.times = append(a.times, r.ms)
			}
			if r.grade >= gradeDisturbing {
				a.f.CannotJudge++
				continue
			}
			if int(r.grade) < d.Scale {
				a.f.Grades[r.grade]++
			}
			var c int
			var ok bool
			c, ok, buf = leaveOneOut(rows, i, buf)
			if ok {
				a.comp = append(a.comp, compared{r.at, r.id, c == int(r.grade)})
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
		f.MedianMs = quantileMs(a.times, 0.5)
		if s, ok := stats[f.Username]; ok {
			f.Stats = s
		} else {
			why := "no grades, only \"cannot judge\""
			f.Stats = agreement.RaterStats{Rater: f.Username, Grades: make([]int, d.Scale),
				MeanKappaQuadratic: agreement.Value{Why: why}, ConsensusAgreement: agreement.Value{Why: why},
				ConsensusMAE: agreement.Value{Why: why}, GoldAccuracy: agreement.Value{Why: why}, GoldMAE: agreement.Value{Why: why}}
		}
		f.DriftRecent, f.DriftEarlier, f.Drift, f.DriftEarlierN = drift(a.comp)
		d.Assessors = append(d.Assessors, *f)
	}
	slices.SortFunc(d.Assessors, func(a, b AssessorFigures) int { return cmp.Compare(a.Username, b.Username) })
}

// drift orders compared judgments by time (then id) and sets the share agreeing with
// consensus over the last DriftWindow against the share over all earlier ones.
func drift(comp []compared) (recent, earlier, diff agreement.Value, earlierN int) {
	if len(comp) <= DriftWindow {
		why := "needs more than " + strconv.Itoa(DriftWindow) + " grades compared with consensus"
		return agreement.Value{Why: why}, agreement.Value{Why: why}, agreement.Value{Why: why}, 0
	}
	slices.SortFunc(comp, func(a, b compared) int {
		if c := cmp.Compare(a.at, b.at); c != 0 {
			return c
		}
		return cmp.Compare(a.id, b.id)
	})
	share := func(cs []compared) float64 {
		n := 0
		for _, c := range cs {
			if c.agree {
				n++
			}
		}
		return float64(n) / float64(len(cs))
	}
	cut := len(comp) - DriftWindow
	r, e := share(comp[cut:]), share(comp[:cut])
	return agreement.Value{V: r, OK: true}, agreement.Value{V: e, OK: true}, agreement.Value{V: r - e, OK: true}, cut
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
			if r.user != userID || r.grade >= gradeDisturbing || int(r.grade) >= d.Scale {
				continue
			}
			var c int
			var ok bool
			if c, ok, buf = leaveOneOut(rows, i, buf); ok {
				out[r.grade][c]++
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
