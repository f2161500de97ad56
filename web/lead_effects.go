package web

import (
	"fmt"
	"net/http"
	"strconv"

	"github.com/pertinent/pertinent/agreement"
	"github.com/pertinent/pertinent/rankeval"
	"github.com/pertinent/pertinent/store"
)

// What each assessor does: leniency against the others, and the leaderboard of the kept runs
// under each assessor's own grades, with their grades replaced, and without them.

type effectsData struct {
	store.AssessorEffects
	Leniency, Alone, Replaced, LeftOut table
}

func (s *Server) effectsPage(w http.ResponseWriter, r *http.Request) {
	e, err := s.store.AssessorEffects(r.Context(), currentProject(r).ID)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	data := effectsData{AssessorEffects: e}
	data.Leniency = table{Name: "leniency", File: "leniency", RowHead: true, Empty: "No assessor shares pairs with another yet.",
		Caption: "Each assessor against the lower median of the others' grades of the same pairs, and against Dawid–Skene's true grade",
		Columns: cols("assessor", "Assessor", "pairs", "Shared pairs", "mean_diff", "Mean difference", "ci_low", "95% interval from", "ci_high", "to",
			"above", "Above", "below", "Below", "over", "Dawid–Skene over", "under", "Dawid–Skene under", "summary", "In words")}
	for _, l := range e.Leniency {
		u := l.Rater
		data.Leniency.Rows = append(data.Leniency.Rows, row{Cells: []cell{{V: u}, {V: strconv.Itoa(l.Items)},
			figCell(figSigned("mean-diff:"+u, l.MeanDiff)), figCell(figV("mean-diff-low:"+u, ciEnd(l.CI, false), 2)), figCell(figV("mean-diff-high:"+u, ciEnd(l.CI, true), 2)),
			figCell(figPct("above:"+u, l.Above)), figCell(figPct("below:"+u, l.Below)),
			figCell(figPct("over:"+u, l.Over)), figCell(figPct("under:"+u, l.Under)), {V: l.Summary}}})
	}
	data.Alone = effectsTable("alone", "Order under each assessor's own grades against the others' consensus on the same pairs", e.Alone, false)
	data.Replaced = effectsTable("replaced", "Actual order against the order with the assessor's grades replaced by the others' consensus", e.Replaced, true)
	data.LeftOut = effectsTable("left-out", "Actual order against the order without the assessor's grades", e.LeftOut, true)
	if s.offerTables(w, r, &data.Leniency, &data.Alone, &data.Replaced, &data.LeftOut) {
		return
	}
	s.render(w, r, http.StatusOK, "effects", "", s.newView(r, "What each assessor does: "+currentProject(r).Name, data))
}

// effectsTable lists assessor effects: tau, the run pairs that change order, the largest move,
// and with verdicts the run pairs whose significance changes.
func effectsTable(name, caption string, es []rankeval.AssessorEffect, verdicts bool) table {
	t := table{Name: name, File: "assessor-" + name, Caption: caption, RowHead: true, Empty: "No order to compare yet.",
		Columns: cols("assessor", "Assessor", "tau", "Kendall's τ", "changed_pairs", "Run pairs in another order", "largest_move", "Largest move", "note", "")}
	if verdicts {
		t.Columns = append(t.Columns, cols("significance_changed", "Run pairs whose significance changes (p before → after)")...)
	}
	for _, e := range es {
		tau := agreement.Value{V: e.Order.Tau, OK: e.Order.TauDefined, Why: e.Order.Why + e.Note}
		changed := ""
		for i, c := range e.Order.Changed {
			if i == 6 {
				changed += fmt.Sprintf(" and %d more", len(e.Order.Changed)-6)
				break
			}
			if i > 0 {
				changed += ", "
			}
			changed += c.A + " / " + c.B
		}
		move := ""
		if e.Order.Move > 0 {
			move = fmt.Sprintf("%s by %g places", e.Order.Moved, e.Order.Move)
		}
		r := row{Cells: []cell{{V: e.Assessor}, figCell(figV(name+"-tau:"+e.Assessor, tau, 3)),
			{V: strconv.Itoa(len(e.Order.Changed)) + pick(changed != "", ": "+changed, "")}, {V: move}, {V: e.Note}}}
		if verdicts {
			sig := strconv.Itoa(len(e.SignificanceChanged))
			for i, c := range e.SignificanceChanged {
				if i == 6 {
					sig += fmt.Sprintf(" and %d more", len(e.SignificanceChanged)-6)
					break
				}
				sig += pick(i == 0, ": ", ", ") + fmt.Sprintf("%s / %s (%.3f → %.3f)", c.A, c.B, c.PBefore, c.PAfter)
			}
			r.Cells = append(r.Cells, cell{V: sig})
		}
		t.Rows = append(t.Rows, r)
	}
	return t
}

func pick(ok bool, a, b string) string {
	if ok {
		return a
	}
	return b
}

func ciEnd(ci agreement.CI, high bool) agreement.Value {
	if high {
		return ci.Hi
	}
	return ci.Lo
}

// figSigned shows a difference with its sign.
func figSigned(name string, v agreement.Value) figure {
	f := figV(name, v, 2)
	if f.OK && v.V > 0 {
		f.Text = "+" + f.Text
	}
	return f
}

// apiEffects answers with the figures of the "what each assessor does" page.
func (s *Server) apiEffects(w http.ResponseWriter, r *http.Request) {
	e, err := s.store.AssessorEffects(r.Context(), currentProject(r).ID)
	if err != nil {
		s.apiStoreError(w, r, err)
		return
	}
	apiJSON(w, e)
}
