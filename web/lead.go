package web

import (
	"encoding/csv"
	"errors"
	"fmt"
	"html/template"
	"net/http"
	"net/url"
	"strconv"
	"strings"
	"time"

	"github.com/go-chi/chi/v5"

	"github.com/pertinent/pertinent/agreement"
	"github.com/pertinent/pertinent/store"
)

// The lead's desk: overview, assessors, agreement detail, disagreement queue and
// adjudication. Every figure comes from store.Desk (which uses the agreement package); the
// handlers only choose, format and render.

// figure is one number on a page: its text, and its exact value (data-value) or the reason
// it is undefined (data-undefined), so tests read the same numbers people see.
type figure struct {
	Name  string
	OK    bool
	Text  string
	Value string
	Why   string
}

func figV(name string, v agreement.Value, digits int) figure {
	if !v.OK {
		return figure{Name: name, Why: v.Why}
	}
	return figure{Name: name, OK: true, Text: strconv.FormatFloat(v.V, 'f', digits, 64), Value: strconv.FormatFloat(v.V, 'g', -1, 64)}
}

func figPct(name string, v agreement.Value) figure {
	f := figV(name, v, 3)
	if f.OK {
		f.Text = strconv.FormatFloat(100*v.V, 'f', 1, 64) + "%"
	}
	return f
}

func figN(name string, n int) figure {
	s := strconv.Itoa(n)
	return figure{Name: name, OK: true, Text: s, Value: s}
}

func seconds(ms int) string {
	return strconv.FormatFloat(float64(ms)/1000, 'f', 1, 64) + " s"
}

func figMs(name string, ms int) figure {
	return figure{Name: name, OK: true, Text: seconds(ms), Value: strconv.Itoa(ms)}
}

// wantsCSV tells whether the request asks for the page's table as CSV.
func wantsCSV(r *http.Request) bool { return r.URL.Query().Get("format") == "csv" }

// writeCSV sends one table as a CSV download.
func writeCSV(w http.ResponseWriter, name string, header []string, rows [][]string) {
	w.Header().Set("Content-Type", "text/csv; charset=utf-8")
	w.Header().Set("Content-Disposition", `attachment; filename="`+name+`.csv"`)
	w.Header().Set("Cache-Control", "no-store")
	cw := csv.NewWriter(w)
	cw.Write(header)
	cw.WriteAll(rows)
}

func csvValue(v agreement.Value) string {
	if !v.OK {
		return ""
	}
	return strconv.FormatFloat(v.V, 'g', -1, 64)
}

// csvURL is the current page's address asking for one of its tables as CSV.
func csvURL(r *http.Request, table string) string {
	q := r.URL.Query()
	q.Set("format", "csv")
	if table != "" {
		q.Set("table", table)
	}
	return r.URL.Path + "?" + q.Encode()
}

func (s *Server) desk(w http.ResponseWriter, r *http.Request) (*store.Desk, bool) {
	d, err := s.store.Desk(r.Context(), currentProject(r).ID)
	if err != nil {
		s.storeError(w, r, err)
		return nil, false
	}
	return d, true
}

// headline is one of the three headline agreement figures with its interval and band.
type headline struct {
	Label    string
	Value    figure
	Lo, Hi   figure
	Interval string // how the interval is made
	Band     string
	Bands    string // which reading of the bands
	Pending  bool   // interval still being computed
}

type overviewData struct {
	Progress    store.Progress
	Bar         stackedBar
	Figures     []figure
	Headline    []headline
	Desk        *store.Desk
	PerDay      barChart
	Days        []store.DayCount
	TimeMedian  figure
	TimeQ1      figure
	TimeQ3      figure
	Flagged     figure
	Replicates  int
	Background  bool
	CSVFigures  string
	CSVDays     string
	PairsWithJ  int
	GeneratedIn string
	// FlaggedPairs lists pairs answered "cannot judge", disturbing ones first; never who flagged.
	FlaggedPairs []flaggedRow
}

type flaggedRow struct {
	store.FlaggedPair
	ReasonLabel string
}

func (s *Server) overview(w http.ResponseWriter, r *http.Request) {
	d, ok := s.desk(w, r)
	if !ok {
		return
	}
	p := d.Progress
	rep := d.Report
	boot, ready := d.Bootstrap()
	pct := int(rep.Level*100 + 0.5)
	bootNote := fmt.Sprintf("%d%% percentile bootstrap, %d item resamples, seed %d", pct, d.BootstrapCount, store.BootstrapSeed)
	alpha := headline{Label: "Krippendorff's alpha (ordinal)", Value: figV("alpha-ordinal", rep.KrippendorffAlpha.Ordinal, 3),
		Interval: bootNote, Band: rep.KrippendorffAlphaBand["ordinal"], Bands: agreement.KrippendorffThresholds.Source, Pending: !ready}
	mean := headline{Label: "Mean pairwise Cohen's kappa (quadratic weights)", Value: figV("mean-kappa", rep.MeanQuadraticKappa, 3),
		Interval: bootNote + fmt.Sprintf("; over %d assessor pairs", rep.MeanQuadraticKappaPairs), Band: rep.MeanQuadraticKappaBand,
		Bands: agreement.LandisKoch.Source, Pending: !ready}
	if ready {
		alpha.Lo, alpha.Hi = figV("alpha-ordinal-lo", boot.Alpha.Ordinal.Lo, 3), figV("alpha-ordinal-hi", boot.Alpha.Ordinal.Hi, 3)
		mean.Lo, mean.Hi = figV("mean-kappa-lo", boot.MeanQuadraticKappa.Lo, 3), figV("mean-kappa-hi", boot.MeanQuadraticKappa.Hi, 3)
	}
	fleiss := headline{Label: "Fleiss' kappa", Value: figV("fleiss-kappa", rep.FleissKappa, 3),
		Lo: figV("fleiss-kappa-lo", rep.Fleiss.CI.Lo, 3), Hi: figV("fleiss-kappa-hi", rep.Fleiss.CI.Hi, 3),
		Interval: fmt.Sprintf("%d%% normal interval with the Fleiss, Nee & Landis (1979) null SE; over %d pairs with %d grades each (%d others left out)",
			pct, rep.Fleiss.ItemsUsed, rep.Fleiss.RatersPerItem, rep.Fleiss.ItemsSkipped),
		Band: rep.FleissKappaBand, Bands: agreement.LandisKoch.Source}

	data := overviewData{
		Progress: p, Desk: d, Headline: []headline{fleiss, alpha, mean},
		Bar: newStackedBar(fmt.Sprintf("%d pairs: %d done, %d in progress, %d untouched", p.Pairs, p.Done, p.InProgress, p.Untouched),
			[]int{p.Done, p.InProgress, p.Untouched}, []string{"seg-done", "seg-progress", "seg-untouched"}, []string{"done", "in progress", "untouched"}),
		Figures: []figure{figN("pairs", p.Pairs), figN("done", p.Done), figN("in-progress", p.InProgress), figN("untouched", p.Untouched),
			figN("judgments", d.Judgments), figN("graded", d.Graded), figN("cannot-judge", d.CannotJudge)},
		Days:       d.PerDay,
		TimeMedian: figMs("time-median", d.TimeMedianMs), TimeQ1: figMs("time-q1", d.TimeQ1Ms), TimeQ3: figMs("time-q3", d.TimeQ3Ms),
		Flagged:    figN("flagged", d.Flagged),
		Replicates: d.BootstrapCount, Background: d.Background(),
		CSVFigures: csvURL(r, "figures"), CSVDays: csvURL(r, "days"),
		GeneratedIn: d.BuildTook.Round(time.Millisecond).String(),
	}
	flagged, err := s.store.FlaggedPairs(r.Context(), currentProject(r).ID, 100)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	for _, f := range flagged {
		data.FlaggedPairs = append(data.FlaggedPairs, flaggedRow{FlaggedPair: f, ReasonLabel: reasonLabel(f.Reason)})
	}
	labels := make([]string, len(d.PerDay))
	counts := make([]int, len(d.PerDay))
	for i, c := range d.PerDay {
		labels[i], counts[i] = c.Day, c.Judgments
	}
	data.PerDay = newBarChart("perday", "Judgments per day", fmt.Sprintf("%d days from %s; the numbers are in the table beside.", len(labels), first(labels)), labels, counts, 560, 160, false)

	if wantsCSV(r) {
		if r.URL.Query().Get("table") == "days" {
			rows := make([][]string, len(d.PerDay))
			for i, c := range d.PerDay {
				rows[i] = []string{c.Day, strconv.Itoa(c.Judgments)}
			}
			writeCSV(w, "judgments-per-day", []string{"day", "judgments"}, rows)
			return
		}
		var rows [][]string
		for _, f := range data.Figures {
			rows = append(rows, []string{f.Name, f.Value, "", "", "", ""})
		}
		rows = append(rows, []string{"time-per-judgment-ms", strconv.Itoa(d.TimeMedianMs), strconv.Itoa(d.TimeQ1Ms), strconv.Itoa(d.TimeQ3Ms), "", "median; interquartile range"},
			[]string{"flagged", strconv.Itoa(d.Flagged), "", "", "", ""})
		for _, h := range data.Headline {
			rows = append(rows, []string{h.Value.Name, h.Value.Value, h.Lo.Value, h.Hi.Value, h.Band, h.Interval})
		}
		writeCSV(w, "overview", []string{"figure", "value", "lo", "hi", "band", "note"}, rows)
		return
	}
	s.render(w, r, http.StatusOK, "overview", "", s.newView(r, "Overview: "+currentProject(r).Name, data))
}

func first(xs []string) string {
	if len(xs) == 0 {
		return "no day yet"
	}
	return xs[0]
}

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
	CSV    string
}

func (s *Server) assessorsPage(w http.ResponseWriter, r *http.Request) {
	d, ok := s.desk(w, r)
	if !ok {
		return
	}
	data := assessorsData{Window: store.DriftWindow, CSV: csvURL(r, "")}
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
	if wantsCSV(r) {
		var rows [][]string
		for _, x := range data.Rows {
			grades := make([]string, len(x.Grades))
			for i, n := range x.Grades {
				grades[i] = strconv.Itoa(n)
			}
			rows = append(rows, []string{x.Username, strconv.Itoa(x.Judgments), strconv.Itoa(x.MedianMs), strconv.FormatFloat(x.CannotShare, 'g', -1, 64),
				strings.Join(grades, " "), csvValue(x.Stats.MeanKappaQuadratic), csvValue(x.Stats.ConsensusAgreement), csvValue(x.Stats.ConsensusMAE),
				csvValue(x.Stats.GoldAccuracy), csvValue(x.Stats.GoldMAE), csvValue(x.DriftRecent), csvValue(x.DriftEarlier), csvValue(x.Drift)})
		}
		writeCSV(w, "assessors", []string{"assessor", "judgments", "median_ms", "cannot_judge_share", "grade_counts", "mean_quadratic_kappa",
			"consensus_agreement", "consensus_mae", "gold_accuracy", "gold_mae", "recent_consensus_agreement", "earlier_consensus_agreement", "drift"}, rows)
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
	CSV        string
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
	data := assessorData{Figures: a, Consensus: newMatrix(a.Username+"'s grade (rows) against consensus (columns)", "consensus", t), CSV: csvURL(r, "")}
	for _, p := range d.ColleagueKappas(a.Username) {
		data.Colleagues = append(data.Colleagues, colleague{Pair: p, Kappa: figV("kappa:"+p.B, p.KappaQuadratic, 3),
			Matrix: newMatrix(a.Username+" (rows) against "+p.B+" (columns)", p.B, p.Table)})
	}
	if wantsCSV(r) {
		var rows [][]string
		add := func(against string, t [][]int64) {
			for g, row := range t {
				for h, n := range row {
					rows = append(rows, []string{against, strconv.Itoa(g), strconv.Itoa(h), strconv.FormatInt(n, 10)})
				}
			}
		}
		add("consensus", t)
		for _, c := range data.Colleagues {
			add(c.Pair.B, c.Pair.Table)
		}
		writeCSV(w, "confusion-"+a.Username, []string{"against", "grade", "other_grade", "pairs"}, rows)
		return
	}
	s.render(w, r, http.StatusOK, "assessor", "", s.newView(r, a.Username+": "+currentProject(r).Name, data))
}

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
	Heat      heatMap
	Pairs     []pairRow
	Alphas    []figure
	Grades    []gradeRow
	Queries   []queryRow
	Sort      string
	Sorts     []sortLink
	CSVPairs  string
	CSVGrades string
	CSVQuery  string
	Report    agreement.Report
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
	data := agreementData{Report: rep, Sort: sortKey, CSVPairs: csvURL(r, "pairs"), CSVGrades: csvURL(r, "grades"), CSVQuery: csvURL(r, "queries")}
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
	if wantsCSV(r) {
		var rows [][]string
		switch r.URL.Query().Get("table") {
		case "grades":
			for _, g := range rep.Fleiss.PerGrade {
				rows = append(rows, []string{strconv.Itoa(g.Grade), strconv.FormatFloat(g.Proportion, 'g', -1, 64), csvValue(g.Kappa), csvValue(g.SE)})
			}
			writeCSV(w, "fleiss-per-grade", []string{"grade", "share", "kappa", "null_se"}, rows)
		case "queries":
			for _, q := range queries {
				rows = append(rows, []string{q.Query.ExternalID, q.Query.Text, strconv.Itoa(q.Pairs), strconv.Itoa(q.Pairable), strconv.Itoa(q.Judgments),
					csvValue(q.Alpha), csvValue(q.PercentAgreement), csvValue(q.MeanSpread)})
			}
			writeCSV(w, "query-agreement", []string{"query", "text", "pairs", "pairable", "grades", "alpha_ordinal", "exact_agreement", "mean_spread"}, rows)
		default:
			for _, p := range rep.Cohen {
				rows = append(rows, []string{p.A, p.B, strconv.Itoa(p.N), csvValue(p.Kappa), csvValue(p.KappaLinear), csvValue(p.KappaQuadratic), csvValue(p.Agreement)})
			}
			writeCSV(w, "cohen-pairs", []string{"a", "b", "n", "kappa", "kappa_linear", "kappa_quadratic", "agreement"}, rows)
		}
		return
	}
	s.render(w, r, http.StatusOK, "agreement", "", s.newView(r, "Agreement: "+currentProject(r).Name, data))
}

type queueRow struct {
	store.QueueItem
	Title  string
	Href   string
	Grades string
}

type queueData struct {
	Rows       []queueRow
	Total      int
	Shown      int
	Queries    []store.Query
	Assessors  []store.AssessorFigures
	Filter     store.QueueFilter
	Scale      int
	FlagWeight int
	CSV        string
	Self       string
}

const queuePage = 200

func queueFilter(v url.Values) store.QueueFilter {
	var f store.QueueFilter
	f.QueryID, _ = strconv.ParseInt(v.Get("query"), 10, 64)
	f.UserID, _ = strconv.ParseInt(v.Get("assessor"), 10, 64)
	f.MinSeverity, _ = strconv.Atoi(v.Get("min"))
	return f
}

func (s *Server) queuePage(w http.ResponseWriter, r *http.Request) {
	d, ok := s.desk(w, r)
	if !ok {
		return
	}
	f := queueFilter(r.URL.Query())
	items, err := s.store.Queue(r.Context(), d, f)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	if wantsCSV(r) {
		var rows [][]string
		for _, it := range items {
			rows = append(rows, []string{strconv.FormatInt(it.PairID, 10), it.Query.ExternalID, it.Query.Text, strconv.Itoa(it.Severity),
				strconv.FormatBool(it.Flagged), strconv.FormatBool(it.GoldMiss), strconv.Itoa(it.Spread), strconv.FormatFloat(it.Variance, 'g', -1, 64),
				gradeList(it.Grades), strconv.Itoa(it.Cannot), strconv.FormatBool(it.Reopened)})
		}
		writeCSV(w, "disagreement-queue", []string{"pair", "query", "query_text", "severity", "flagged", "gold_miss", "spread", "variance", "grades", "cannot_judge", "reopened"}, rows)
		return
	}
	data := queueData{Total: len(items), Filter: f, Scale: d.Scale, FlagWeight: 2 * d.Scale, CSV: csvURL(r, ""), Self: r.URL.RequestURI()}
	if data.Queries, err = s.store.DeskQueries(r.Context(), d); err != nil {
		s.storeError(w, r, err)
		return
	}
	data.Assessors = d.Assessors
	if len(items) > queuePage {
		items = items[:queuePage]
	}
	data.Shown = len(items)
	ids := make([]int64, len(items))
	for i, it := range items {
		ids[i] = it.PairID
	}
	titles, err := s.store.DocumentTitles(r.Context(), ids)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	pid := currentProject(r).ID
	for _, it := range items {
		data.Rows = append(data.Rows, queueRow{QueueItem: it, Title: titles[it.PairID], Grades: gradeList(it.Grades),
			Href: fmt.Sprintf("/projects/%d/pairs/%d/adjudicate?next=%s", pid, it.PairID, url.QueryEscape(r.URL.RequestURI()))})
	}
	if r.Header.Get("HX-Request") == "true" {
		s.render(w, r, http.StatusOK, "queue", "queue-table", s.newView(r, "", data))
		return
	}
	s.render(w, r, http.StatusOK, "queue", "", s.newView(r, "Disagreement queue: "+currentProject(r).Name, data))
}

func gradeList(gs []int) string {
	parts := make([]string, len(gs))
	for i, g := range gs {
		parts[i] = strconv.Itoa(g)
	}
	return strings.Join(parts, " ")
}

type judgmentRow struct {
	store.PairJudgment
	Time string
}

type adjudicateData struct {
	Review     store.PairReview
	Judgments  []judgmentRow
	Checked    int
	Body       template.HTML
	Scale      []store.ScaleLevel
	Next       string
	Mean       string
	DSGrade    int
	DSShare    string
	DSOK       bool
	DSReady    bool
	Current    *store.Adjudication
	Error      string
	Background bool
}

func (s *Server) pairInProject(w http.ResponseWriter, r *http.Request) (int64, bool) {
	id, err := strconv.ParseInt(chi.URLParam(r, "pair"), 10, 64)
	if err == nil {
		var p int64
		if p, err = s.store.ProjectIDByPair(r.Context(), id); err == nil && p != currentProject(r).ID {
			err = store.ErrNotFound
		}
	}
	var num *strconv.NumError
	if errors.As(err, &num) || errors.Is(err, store.ErrNotFound) {
		s.fail(w, r, http.StatusNotFound, "That pair is not part of this project.")
		return 0, false
	}
	if err != nil { // the database failed: not a missing pair
		s.storeError(w, r, err)
		return 0, false
	}
	return id, true
}

func (s *Server) adjudicatePage(w http.ResponseWriter, r *http.Request) {
	id, ok := s.pairInProject(w, r)
	if !ok {
		return
	}
	s.renderAdjudicate(w, r, id, http.StatusOK, "", localPath(r.URL.Query().Get("next")))
}

func (s *Server) renderAdjudicate(w http.ResponseWriter, r *http.Request, id int64, status int, msg, next string) {
	rev, err := s.store.PairReview(r.Context(), id)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	scale, err := s.store.Scale(r.Context(), currentProject(r).ID)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	d, ok := s.desk(w, r)
	if !ok {
		return
	}
	if next == "/" {
		next = fmt.Sprintf("/projects/%d/queue", currentProject(r).ID)
	}
	data := adjudicateData{Review: rev, Body: documentBody(rev.Document), Scale: scale, Next: next, Error: msg, Background: d.Background()}
	data.Checked = -1
	for _, j := range rev.Judgments {
		data.Judgments = append(data.Judgments, judgmentRow{PairJudgment: j, Time: seconds(j.TimeSpentMs)})
	}
	if rev.Consensus != nil {
		data.Mean = strconv.FormatFloat(rev.Consensus.Mean, 'f', 2, 64)
	}
	g, post, dsOK, ready := d.DawidSkene(id)
	data.DSReady, data.DSOK, data.DSGrade = ready, dsOK, g
	if dsOK && g < len(post) {
		data.DSShare = strconv.FormatFloat(100*post[g], 'f', 0, 64) + "%"
	}
	for i := range rev.History {
		if rev.History[i].Current {
			data.Current = &rev.History[i]
			data.Checked = rev.History[i].Grade
		}
	}
	s.render(w, r, status, "adjudicate", "", s.newView(r, fmt.Sprintf("Adjudicate pair %d", id), data))
}

func (s *Server) adjudicateSubmit(w http.ResponseWriter, r *http.Request) {
	id, ok := s.pairInProject(w, r)
	if !ok {
		return
	}
	u, _ := currentUser(r)
	next := localPath(r.PostFormValue("next"))
	g, err := strconv.Atoi(r.PostFormValue("grade"))
	if err != nil {
		s.renderAdjudicate(w, r, id, http.StatusBadRequest, "Choose the final grade first.", next)
		return
	}
	if _, err := s.store.Adjudicate(r.Context(), id, u.ID, g, r.PostFormValue("rationale")); err != nil {
		if store.ErrorCode(err) == store.CodeInvalid {
			var e *store.Error
			errors.As(err, &e)
			s.renderAdjudicate(w, r, id, http.StatusBadRequest, e.Message, next)
			return
		}
		s.storeError(w, r, err)
		return
	}
	if next == "/" {
		next = fmt.Sprintf("/projects/%d/queue", currentProject(r).ID)
	}
	http.Redirect(w, r, next, http.StatusSeeOther)
}

type feedbackData struct {
	Items []store.FeedbackItem
	CSV   string
}

// feedbackPage shows an assessor where their grade differed from the final grade, with the
// lead's rationale; nothing about the other assessors.
func (s *Server) feedbackPage(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	items, err := s.store.Feedback(r.Context(), currentProject(r).ID, u.ID)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	if wantsCSV(r) {
		var rows [][]string
		for _, f := range items {
			rows = append(rows, []string{f.Query.ExternalID, f.Query.Text, f.Document.ExternalID, f.Document.Title,
				strconv.Itoa(f.Grade), strconv.Itoa(f.FinalGrade), f.Rationale, f.At.Format(time.RFC3339)})
		}
		writeCSV(w, "feedback", []string{"query", "query_text", "document", "title", "your_grade", "final_grade", "rationale", "adjudicated_at"}, rows)
		return
	}
	s.render(w, r, http.StatusOK, "feedback", "", s.newView(r, "Feedback: "+currentProject(r).Name, feedbackData{Items: items, CSV: csvURL(r, "")}))
}
