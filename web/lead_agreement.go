package web

import (
	"net/http"
	"strconv"

	"github.com/pertinent/pertinent/agreement"
	"github.com/pertinent/pertinent/store"
)

// Agreement in detail: the heat map, pairwise kappas, per-grade and per-query figures.

type pairRow struct {
	agreement.PairKappa
	Quadratic, Linear, Plain, Agreement figure
}

type gradeRow struct {
	agreement.GradeKappa
	Kappa figure
	Share string
}

type queryRow struct {
	store.QueryAgreement
	Alpha, Agreement, Spread figure
}

type agreementData struct {
	Heat    heatMap
	Pairs   []pairRow
	Alphas  []figure
	Grades  []gradeRow
	Queries []queryRow
	Sort    string
	Sorts   []sortLink
	Tables  agreementTables
	Report  agreement.Report
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
		key := p.A + "|" + p.B
		grid[at[p.A]][at[p.B]], grid[at[p.B]][at[p.A]] = p.KappaQuadratic, p.KappaQuadratic
		if !p.KappaQuadratic.OK && p.Why != "" {
			grid[at[p.A]][at[p.B]].Why, grid[at[p.B]][at[p.A]].Why = p.Why, p.Why
		}
		data.Pairs = append(data.Pairs, pairRow{PairKappa: p, Quadratic: figV("cohen-quadratic:"+key, p.KappaQuadratic, 3),
			Linear: figV("cohen-linear:"+key, p.KappaLinear, 3), Plain: figV("cohen:"+key, p.Kappa, 3), Agreement: figPct("cohen-agreement:"+key, p.Agreement)})
	}
	data.Heat = newHeatMap("Quadratic-weighted Cohen's kappa for every pair of assessors",
		"Each cell gives the kappa of two assessors to two decimals, coloured by its Landis & Koch (1977) band: darker cells agree more, red cells are below chance, cells marked – are undefined. The table below has every figure to three decimals.",
		names, func(i, j int) agreement.Value { return grid[i][j] })
	for _, m := range agreement.Metrics {
		data.Alphas = append(data.Alphas, figV("alpha-"+m.String(), rep.KrippendorffAlpha.Get(m), 3))
	}
	for _, g := range rep.Fleiss.PerGrade {
		data.Grades = append(data.Grades, gradeRow{GradeKappa: g, Kappa: figV("fleiss-grade:"+strconv.Itoa(g.Grade), g.Kappa, 3),
			Share: strconv.FormatFloat(100*g.Proportion, 'f', 1, 64) + "%"})
	}
	for _, q := range queries {
		data.Queries = append(data.Queries, queryRow{QueryAgreement: q, Alpha: figV("query-alpha:"+q.Query.ExternalID, q.Alpha, 3),
			Agreement: figPct("query-agreement:"+q.Query.ExternalID, q.PercentAgreement), Spread: figV("query-spread:"+q.Query.ExternalID, q.MeanSpread, 2)})
	}
	for _, k := range [][2]string{{"alpha", "alpha"}, {"agreement", "exact agreement"}, {"spread", "mean spread"}, {"pairs", "pairs"}, {"query", "query id"}} {
		data.Sorts = append(data.Sorts, sortLink{Key: k[0], Label: k[1], Href: "?sort=" + k[0], Current: k[0] == sortKey})
	}
	t := &data.Tables
	t.Pairs = table{Name: "pairs", File: "cohen-pairs", Columns: cols("a", "", "b", "", "n", "", "kappa", "", "kappa_linear", "", "kappa_quadratic", "", "agreement", "")}
	for _, p := range rep.Cohen {
		t.Pairs.Rows = append(t.Pairs.Rows, []string{p.A, p.B, strconv.Itoa(p.N), csvValue(p.Kappa), csvValue(p.KappaLinear), csvValue(p.KappaQuadratic), csvValue(p.Agreement)})
	}
	t.Alphas = table{Name: "alphas", File: "krippendorff-alpha", Columns: cols("metric", "", "alpha", "")}
	for _, m := range agreement.Metrics {
		t.Alphas.Rows = append(t.Alphas.Rows, []string{m.String(), csvValue(rep.KrippendorffAlpha.Get(m))})
	}
	t.Grades = table{Name: "grades", File: "fleiss-per-grade", Columns: cols("grade", "", "share", "", "kappa", "", "null_se", "")}
	for _, g := range rep.Fleiss.PerGrade {
		t.Grades.Rows = append(t.Grades.Rows, []string{strconv.Itoa(g.Grade), csvFloat(g.Proportion), csvValue(g.Kappa), csvValue(g.SE)})
	}
	t.Queries = table{Name: "queries", File: "query-agreement", Columns: cols("query", "", "text", "", "pairs", "", "pairable", "", "grades", "", "alpha_ordinal", "", "exact_agreement", "", "mean_spread", "")}
	for _, q := range queries {
		t.Queries.Rows = append(t.Queries.Rows, []string{q.Query.ExternalID, q.Query.Text, strconv.Itoa(q.Pairs), strconv.Itoa(q.Pairable), strconv.Itoa(q.Judgments),
			csvValue(q.Alpha), csvValue(q.PercentAgreement), csvValue(q.MeanSpread)})
	}
	if s.offerTables(w, r, &t.Pairs, &t.Alphas, &t.Grades, &t.Queries) {
		return
	}
	s.render(w, r, http.StatusOK, "agreement", "", s.newView(r, "Agreement: "+currentProject(r).Name, data))
}
