package web

import (
	"fmt"
	"net/http"
	"strconv"

	"github.com/pertinent/pertinent/agreement"
)

// Agreement in detail: the heat map, pairwise kappas, per-grade and per-query figures.

type agreementData struct {
	Heat   heatMap
	Sort   string
	Sorts  []sortLink
	Tables agreementTables
	Report agreement.Report
}

// agreementTables are the agreement page's downloads.
type agreementTables struct {
	Pairs, Alphas, Grades, Queries table
}

type sortLink struct {
	Key, Label, Href string
	Current          bool
}

func (s *Server) agreementPage(w http.ResponseWriter, r *http.Request) {
	d, ok := s.desk(w, r)
	if !ok {
		return
	}
	rep := d.Report
	sortKey := r.URL.Query().Get("sort")
	switch sortKey {
	case "alpha", "agreement", "spread", "pairs", "query":
	default:
		sortKey = "alpha"
	}
	queries, err := s.store.QueryAgreements(r.Context(), d, sortKey)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	data := agreementData{Report: rep, Sort: sortKey}
	names := d.Data.RaterNames()
	at := map[string]int{}
	for i, n := range names {
		at[n] = i
	}
	grid := make([][]agreement.Value, len(names))
	for i := range grid {
		grid[i] = make([]agreement.Value, len(names))
		for j := range grid[i] {
			grid[i][j] = agreement.Value{Why: "no pairs graded by both"}
		}
	}
	for _, p := range rep.Cohen {
		grid[at[p.A]][at[p.B]], grid[at[p.B]][at[p.A]] = p.KappaQuadratic, p.KappaQuadratic
		if !p.KappaQuadratic.OK && p.Why != "" {
			grid[at[p.A]][at[p.B]].Why, grid[at[p.B]][at[p.A]].Why = p.Why, p.Why
		}
	}
	data.Heat = newHeatMap("Quadratic-weighted Cohen's kappa for every pair of assessors",
		"Each cell gives the kappa of two assessors to two decimals, coloured by its Landis & Koch (1977) band: darker cells agree more, red cells are below chance, cells marked – are undefined. The table below has every figure to three decimals.",
		names, func(i, j int) agreement.Value { return grid[i][j] })
	for _, k := range [][2]string{{"alpha", "alpha"}, {"agreement", "exact agreement"}, {"spread", "mean spread"}, {"pairs", "pairs"}, {"query", "query id"}} {
		data.Sorts = append(data.Sorts, sortLink{Key: k[0], Label: k[1], Href: "?sort=" + k[0], Current: k[0] == sortKey})
	}
	t := &data.Tables
	t.Pairs = table{Name: "pairs", File: "cohen-pairs", Class: "compact", Caption: "Pairwise Cohen's kappa; SE after Fleiss, Cohen & Everitt (1969)",
		Columns: []column{{Key: "a", Label: "Assessor"}, {Key: "b", Label: "Assessor"}, {Key: "n", Label: "Shared pairs", Class: "num"},
			{Key: "kappa", Label: "Unweighted", Class: "num"}, {Key: "kappa_linear", Label: "Linear", Class: "num"},
			{Key: "kappa_quadratic", Label: "Quadratic", Class: "num"}, {Key: "agreement", Label: "Exact agreement", Class: "num"}},
		Page: []string{"a", "b", "n", "kappa_quadratic", "kappa_linear", "kappa", "agreement"}}
	for _, p := range rep.Cohen {
		key := p.A + "|" + p.B
		t.Pairs.Rows = append(t.Pairs.Rows, row{Cells: []cell{{V: p.A}, {V: p.B}, {V: strconv.Itoa(p.N)}, figCell(figV("cohen:"+key, p.Kappa, 3)),
			figCell(figV("cohen-linear:"+key, p.KappaLinear, 3)), figCell(figV("cohen-quadratic:"+key, p.KappaQuadratic, 3)),
			figCell(figPct("cohen-agreement:"+key, p.Agreement))}})
	}
	t.Alphas = table{Name: "alphas", File: "krippendorff-alpha", Class: "figures", RowHead: true,
		Columns: []column{{Key: "metric", Label: "Metric"}, {Key: "alpha", Label: "Alpha", Class: "num"}}}
	for _, m := range agreement.Metrics {
		t.Alphas.Rows = append(t.Alphas.Rows, row{Cells: []cell{{V: m.String()}, figCell(figV("alpha-"+m.String(), rep.KrippendorffAlpha.Get(m), 3))}})
	}
	t.Grades = table{Name: "grades", File: "fleiss-per-grade", Class: "figures", RowHead: true,
		Caption: fmt.Sprintf("Each grade against all others; over %d pairs with %d grades each", rep.Fleiss.ItemsUsed, rep.Fleiss.RatersPerItem),
		Columns: []column{{Key: "grade", Label: "Grade"}, {Key: "share", Label: "Share of grades", Class: "num"}, {Key: "kappa", Label: "Kappa", Class: "num"}, {Key: "null_se"}},
		Empty:   "Undefined: " + rep.Fleiss.Kappa.Why}
	for _, g := range rep.Fleiss.PerGrade {
		t.Grades.Rows = append(t.Grades.Rows, row{Cells: []cell{{V: strconv.Itoa(g.Grade)},
			{V: csvFloat(g.Proportion), Text: strconv.FormatFloat(100*g.Proportion, 'f', 1, 64) + "%"},
			figCell(figV("fleiss-grade:"+strconv.Itoa(g.Grade), g.Kappa, 3)), {V: csvValue(g.SE)}}})
	}
	t.Queries = table{Name: "queries", File: "query-agreement", Class: "compact", ID: "queries", RowHead: true,
		Caption: "Per query: ordinal alpha, share of exactly agreeing pairs of grades, mean spread (max − min)",
		Columns: []column{{Key: "query"}, {Key: "text", Label: "Query"}, {Key: "pairs", Label: "Pairs", Class: "num"}, {Key: "pairable"},
			{Key: "grades", Label: "Grades", Class: "num"}, {Key: "alpha_ordinal", Label: "Alpha (ordinal)", Class: "num"},
			{Key: "exact_agreement", Label: "Exact agreement", Class: "num"}, {Key: "mean_spread", Label: "Mean spread", Class: "num"}, {}}}
	for _, q := range queries {
		id := q.Query.ExternalID
		t.Queries.Rows = append(t.Queries.Rows, row{Cells: []cell{{V: id}, {V: q.Query.Text, Code: id}, {V: strconv.Itoa(q.Pairs)}, {V: strconv.Itoa(q.Pairable)},
			{V: strconv.Itoa(q.Judgments)}, figCell(figV("query-alpha:"+id, q.Alpha, 3)), figCell(figPct("query-agreement:"+id, q.PercentAgreement)),
			figCell(figV("query-spread:"+id, q.MeanSpread, 2)), {Text: "queue", Href: fmt.Sprintf("/projects/%d/queue?query=%d", currentProject(r).ID, q.Query.ID)}}})
	}
	if s.offerTables(w, r, &t.Pairs, &t.Alphas, &t.Grades, &t.Queries) {
		return
	}
	s.render(w, r, http.StatusOK, "agreement", "", s.newView(r, "Agreement: "+currentProject(r).Name, data))
}
