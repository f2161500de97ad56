package web

import (
	"fmt"
	"net/http"
	"strconv"
	"strings"

	"github.com/go-chi/chi/v5"

	"github.com/pertinent/pertinent/agreement"
	"github.com/pertinent/pertinent/store"
)

// The assessor table and one assessor's confusion matrices.

// assessorRow is one line of the assessor table.
type assessorRow struct {
	store.AssessorFigures
	Median, Cannot, MeanKappa, Consensus, ConsensusMAE, GoldAcc, GoldMAE figure
	RecentF, EarlierF, DriftF                                            figure
	DriftClass                                                           string
	Chart                                                                barChart
	GradeText                                                            string
}

type assessorsData struct {
	Rows   []assessorRow
	Window int
	Table  table
}

func (s *Server) assessorsPage(w http.ResponseWriter, r *http.Request) {
	d, ok := s.desk(w, r)
	if !ok {
		return
	}
	data := assessorsData{Window: store.DriftWindow}
	for _, a := range d.Assessors {
		u := a.Username
		row := assessorRow{AssessorFigures: a,
			Median:       figMs("median-ms:"+u, a.MedianMs),
			Cannot:       figPct("cannot-share:"+u, agreement.Value{V: a.CannotShare, OK: true}),
			MeanKappa:    figV("mean-kappa:"+u, a.Stats.MeanKappaQuadratic, 3),
			Consensus:    figPct("consensus-agreement:"+u, a.Stats.ConsensusAgreement),
			ConsensusMAE: figV("consensus-mae:"+u, a.Stats.ConsensusMAE, 2),
			GoldAcc:      figPct("gold-accuracy:"+u, a.Stats.GoldAccuracy),
			GoldMAE:      figV("gold-mae:"+u, a.Stats.GoldMAE, 2),
			RecentF:      figPct("drift-recent:"+u, a.DriftRecent),
			EarlierF:     figPct("drift-earlier:"+u, a.DriftEarlier),
			DriftF:       figV("drift:"+u, a.Drift, 3),
		}
		if a.Drift.OK && a.Drift.V <= -0.1 {
			row.DriftClass = "drift-down"
		}
		labels := make([]string, len(a.Grades))
		var parts []string
		for g, n := range a.Grades {
			labels[g] = "grade " + strconv.Itoa(g)
			parts = append(parts, fmt.Sprintf("%d: %d", g, n))
		}
		row.GradeText = strings.Join(parts, " · ")
		row.Chart = newBarChart("grades-"+strconv.FormatInt(a.UserID, 10), "Grades given by "+u, row.GradeText, labels, a.Grades, 90, 28, true)
		data.Rows = append(data.Rows, row)
	}
	// The page draws its own rows: each holds a chart of the grades and the drift beside its
	// two shares, which no plain cell carries.
	data.Table = table{Name: "assessors", File: "assessors", Columns: cols("assessor", "", "judgments", "", "median_ms", "", "cannot_judge_share", "",
		"grade_counts", "", "mean_quadratic_kappa", "", "consensus_agreement", "", "consensus_mae", "", "gold_accuracy", "", "gold_mae", "",
		"recent_consensus_agreement", "", "earlier_consensus_agreement", "", "drift", "")}
	for _, x := range data.Rows {
		data.Table.Rows = append(data.Table.Rows, plain(x.Username, strconv.Itoa(x.Judgments), strconv.Itoa(x.MedianMs), csvFloat(x.CannotShare),
			gradeList(x.Grades), csvValue(x.Stats.MeanKappaQuadratic), csvValue(x.Stats.ConsensusAgreement), csvValue(x.Stats.ConsensusMAE),
			csvValue(x.Stats.GoldAccuracy), csvValue(x.Stats.GoldMAE), csvValue(x.DriftRecent), csvValue(x.DriftEarlier), csvValue(x.Drift)))
	}
	if s.offerTables(w, r, &data.Table) {
		return
	}
	s.render(w, r, http.StatusOK, "assessors", "", s.newView(r, "Assessors: "+currentProject(r).Name, data))
}

// matrix is a confusion matrix with its cells shaded by their share of the row.
type matrix struct {
	Title  string
	Name   string
	Grades []int
	Rows   []matrixRow
	N      int
}

type matrixRow struct {
	Grade int
	Cells []matrixCell
}

type matrixCell struct {
	N     int64
	Class string
}

func newMatrix(title, name string, t [][]int64) matrix {
	m := matrix{Title: title, Name: name}
	for g := range t {
		m.Grades = append(m.Grades, g)
		row := matrixRow{Grade: g}
		var sum int64
		for _, n := range t[g] {
			sum += n
		}
		for h, n := range t[g] {
			c := matrixCell{N: n}
			m.N += int(n)
			if sum > 0 {
				// Five shades, so the CSS can colour them without a style attribute.
				c.Class = "shade" + strconv.Itoa(int(4*float64(n)/float64(sum)+0.5))
			}
			if g == h {
				c.Class += " diag"
			}
			row.Cells = append(row.Cells, c)
		}
		m.Rows = append(m.Rows, row)
	}
	return m
}

type colleague struct {
	Pair   agreement.PairKappa
	Kappa  figure
	Matrix matrix
}

type assessorData struct {
	Figures    store.AssessorFigures
	Consensus  matrix
	Colleagues []colleague
	Table      table
}

func (s *Server) assessorPage(w http.ResponseWriter, r *http.Request) {
	d, ok := s.desk(w, r)
	if !ok {
		return
	}
	id, err := strconv.ParseInt(chi.URLParam(r, "user"), 10, 64)
	a, found := d.Assessor(id)
	if err != nil || !found {
		s.fail(w, r, http.StatusNotFound, "That person has no judgments in this project.")
		return
	}
	cons := d.ConsensusConfusion(id)
	t := make([][]int64, len(cons))
	for i, row := range cons {
		t[i] = make([]int64, len(row))
		for j, n := range row {
			t[i][j] = int64(n)
		}
	}
	data := assessorData{Figures: a, Consensus: newMatrix(a.Username+"'s grade (rows) against consensus (columns)", "consensus", t)}
	for _, p := range d.ColleagueKappas(a.Username) {
		data.Colleagues = append(data.Colleagues, colleague{Pair: p, Kappa: figV("kappa:"+p.B, p.KappaQuadratic, 3),
			Matrix: newMatrix(a.Username+" (rows) against "+p.B+" (columns)", p.B, p.Table)})
	}
	// One row per cell of the matrices, which the page draws as grids.
	data.Table = table{Name: "confusion", File: "confusion-" + a.Username, Columns: cols("against", "", "grade", "", "other_grade", "", "pairs", "")}
	add := func(against string, t [][]int64) {
		for g, row := range t {
			for h, n := range row {
				data.Table.Rows = append(data.Table.Rows, plain(against, strconv.Itoa(g), strconv.Itoa(h), strconv.FormatInt(n, 10)))
			}
		}
	}
	add("consensus", t)
	for _, c := range data.Colleagues {
		add(c.Pair.B, c.Pair.Table)
	}
	if s.offerTables(w, r, &data.Table) {
		return
	}
	s.render(w, r, http.StatusOK, "assessor", "", s.newView(r, a.Username+": "+currentProject(r).Name, data))
}
