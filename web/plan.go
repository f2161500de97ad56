package web

import (
	"fmt"
	"net/http"
	"net/url"
	"strconv"
	"strings"
	"time"

	"github.com/pertinent/pertinent"
	"github.com/pertinent/pertinent/estimate"
	"github.com/pertinent/pertinent/rankeval"
	"github.com/pertinent/pertinent/store"
)

// planForm is the design form as typed, so a refused form comes back as it was.
type planForm struct {
	Kind, Depth, MaxDepth, Budget, PerQuery, K, Confidence, Method, Wave, Gain, Threshold string
	BreakTies                                                                             bool
	Runs                                                                                  map[int64]bool
}

func defaultPlanForm() planForm {
	return planForm{Kind: "stratified", Depth: "10", MaxDepth: "100", Budget: "", PerQuery: "", K: "10",
		Confidence: "0.95", Method: estimate.FindBandit, Wave: "20", Gain: "exponential", Threshold: "2", Runs: map[int64]bool{}}
}

func readPlanForm(v url.Values) planForm {
	f := defaultPlanForm()
	set := func(dst *string, name string) {
		if x := strings.TrimSpace(v.Get(name)); x != "" || v.Has(name) {
			*dst = x
		}
	}
	set(&f.Kind, "kind")
	set(&f.Depth, "depth")
	set(&f.MaxDepth, "max_depth")
	set(&f.Budget, "budget")
	set(&f.PerQuery, "per_query")
	set(&f.K, "k")
	set(&f.Confidence, "confidence")
	set(&f.Method, "method")
	set(&f.Wave, "wave")
	set(&f.Gain, "gain")
	set(&f.Threshold, "threshold")
	f.BreakTies = v.Get("break_ties") != ""
	for _, id := range v["run"] {
		if n, err := strconv.ParseInt(id, 10, 64); err == nil {
			f.Runs[n] = true
		}
	}
	return f
}

// request turns the form into a plan request; run order follows the kept runs' order.
func (f planForm) request(kept []store.KeptRun) (store.PlanRequest, error) {
	var req store.PlanRequest
	num := func(name, s string, def int) (int, error) {
		if s == "" {
			return def, nil
		}
		n, err := strconv.Atoi(s)
		if err != nil || n < 0 {
			return 0, storeInvalid(fmt.Sprintf("%s: %q is not a whole number of 0 or more", name, s))
		}
		return n, nil
	}
	d := estimate.Design{Kind: estimate.Kind(f.Kind), Method: f.Method}
	for _, field := range []struct {
		dst        *int
		name, text string
		def        int
	}{
		{&d.Depth, "Depth", f.Depth, 10},
		{&d.MaxDepth, "Deepest rank", f.MaxDepth, 100},
		{&d.Budget, "Budget", f.Budget, 0},
		{&d.PerQuery, "Budget per query", f.PerQuery, 0},
		{&d.K, "Cut-off k", f.K, 10},
		{&d.Wave, "Wave", f.Wave, 20},
	} {
		n, err := num(field.name, field.text, field.def)
		if err != nil {
			return req, err
		}
		*field.dst = n
	}
	if f.Confidence != "" {
		c, err := strconv.ParseFloat(f.Confidence, 64)
		if err != nil || c <= 0.5 || c >= 1 {
			return req, storeInvalid(fmt.Sprintf("Confidence: %q should be a number between 0.5 and 1, such as 0.95", f.Confidence))
		}
		d.Confidence = c
	}
	req.Settings.Design = d
	switch f.Gain {
	case "exponential", "":
		req.Settings.Gain = rankeval.GainExponential
	case "linear":
		req.Settings.Gain = rankeval.GainLinear
	default:
		return req, storeInvalid(fmt.Sprintf("NDCG gain %q: choose exponential or linear", f.Gain))
	}
	var err error
	if req.Settings.Threshold, err = num("Relevant from grade", f.Threshold, 2); err != nil {
		return req, err
	}
	req.Settings.BreakTies = f.BreakTies
	for _, kr := range kept {
		if f.Runs[kr.ID] {
			req.Runs = append(req.Runs, kr.ID)
		}
	}
	return req, nil
}

type planData struct {
	Form    planForm
	Kept    []store.KeptRun
	Designs []store.Design
	Preview *store.PlanOutcome
	Error   string
	Notices []string
	Runs    table
}

func (s *Server) planPage(w http.ResponseWriter, r *http.Request) {
	f := defaultPlanForm()
	s.renderPlan(w, r, http.StatusOK, f, nil, "")
}

func (s *Server) renderPlan(w http.ResponseWriter, r *http.Request, status int, f planForm, preview *store.PlanOutcome, msg string) {
	p := currentProject(r)
	kept, err := s.store.KeptRuns(r.Context(), p.ID)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	designs, err := s.store.Designs(r.Context(), p.ID)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	if len(f.Runs) == 0 && status == http.StatusOK && preview == nil {
		for _, kr := range kept {
			f.Runs[kr.ID] = true
		}
	}
	runs := table{Name: "runs", File: "kept-runs", Class: "plan-runs", RowHead: true,
		Columns: []column{{Key: "run", Label: "Run"}, {Key: "entries", Label: "Entries"}, {Key: "queries", Label: "Queries"}, {Key: "kept_at", Label: "Kept", Class: "muted"}, {Key: "by"}}}
	for _, k := range kept {
		row := plain(k.Name, strconv.Itoa(k.Entries), strconv.Itoa(k.Queries), k.CreatedAt.UTC().Format(time.RFC3339), k.By)
		row.Cells[3].Text = k.CreatedAt.UTC().Format("2006-01-02 15:04") + " UTC"
		if k.By != "" {
			row.Cells[3].Text += " by " + k.By
		}
		runs.Rows = append(runs.Rows, row)
	}
	if r.Method == http.MethodGet && s.offerTables(w, r, &runs) {
		return
	}
	data := planData{Form: f, Kept: kept, Designs: designs, Preview: preview, Error: msg, Notices: s.flashes(w, r, "plan"), Runs: runs}
	s.render(w, r, status, "plan", "", s.newView(r, "Plan judging: "+p.Name, data))
}

// planKeepRuns keeps the uploaded run files for planning.
func (s *Server) planKeepRuns(w http.ResponseWriter, r *http.Request) {
	p := currentProject(r)
	u, _ := currentUser(r)
	r.Body = http.MaxBytesReader(w, r.Body, maxRunUpload)
	if err := r.ParseMultipartForm(4 << 20); err != nil {
		s.renderPlan(w, r, http.StatusBadRequest, defaultPlanForm(), nil, "Choose one or more run files (at most 256 MB together).")
		return
	}
	defer r.MultipartForm.RemoveAll()
	var kept []string
	for _, fh := range r.MultipartForm.File["runs"] {
		if fh.Size == 0 && fh.Filename == "" {
			continue
		}
		file, err := fh.Open()
		if err != nil {
			s.storeError(w, r, err)
			return
		}
		kr, err := s.store.KeepRun(r.Context(), p.ID, u.ID, runName(fh), file)
		file.Close()
		if err != nil {
			if status, msg, ok := userError(err); ok {
				s.renderPlan(w, r, status, defaultPlanForm(), nil, msg)
				return
			}
			s.storeError(w, r, err)
			return
		}
		kept = append(kept, kr.Name)
	}
	if len(kept) == 0 {
		s.renderPlan(w, r, http.StatusBadRequest, defaultPlanForm(), nil, "Choose one or more run files.")
		return
	}
	s.flash(w, r, "plan", "Kept "+strings.Join(kept, ", ")+".")
	http.Redirect(w, r, fmt.Sprintf("/projects/%d/plan", p.ID), http.StatusSeeOther)
}

// planSubmit previews a design (counts only) or sends its pairs to judging.
func (s *Server) planSubmit(w http.ResponseWriter, r *http.Request) {
	p := currentProject(r)
	u, _ := currentUser(r)
	if err := r.ParseForm(); err != nil {
		s.fail(w, r, http.StatusBadRequest, "The form could not be read.")
		return
	}
	f := readPlanForm(r.PostForm)
	kept, err := s.store.KeptRuns(r.Context(), p.ID)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	req, err := f.request(kept)
	if err == nil {
		req.DryRun = r.PostForm.Get("action") != "send"
		var out store.PlanOutcome
		if out, err = s.store.PlanJudging(r.Context(), p.ID, u.ID, req); err == nil {
			if out.DryRun {
				s.renderPlan(w, r, http.StatusOK, f, &out, "")
				return
			}
			s.flash(w, r, "design", fmt.Sprintf("Sent %d new pairs to judging (%d already in the project).", out.Added, out.Raised))
			http.Redirect(w, r, fmt.Sprintf("/projects/%d/plan/%d", p.ID, out.DesignID), http.StatusSeeOther)
			return
		}
	}
	if status, msg, ok := userError(err); ok {
		s.renderPlan(w, r, status, f, nil, msg)
		return
	}
	s.storeError(w, r, err)
}

// queriesForm is the query-count planner's form, read from the page's URL.
type queriesForm struct {
	Metric, MinDiff, Alpha, Power, HalfWidth string
}

func readQueriesForm(v url.Values) queriesForm {
	f := queriesForm{Metric: "ndcg", MinDiff: "0.05", Alpha: "0.05", Power: "0.8", HalfWidth: ""}
	for name, dst := range map[string]*string{"metric": &f.Metric, "min_diff": &f.MinDiff, "alpha": &f.Alpha, "power": &f.Power, "half_width": &f.HalfWidth} {
		if v.Has(name) {
			*dst = strings.TrimSpace(v.Get(name))
		}
	}
	return f
}

func (f queriesForm) request() (estimate.QueryPlanRequest, error) {
	var req estimate.QueryPlanRequest
	parse := func(name, s string, lo, hi float64) (float64, error) {
		if s == "" {
			return 0, nil
		}
		x, err := strconv.ParseFloat(s, 64)
		if err != nil || x <= lo || x >= hi {
			return 0, storeInvalid(fmt.Sprintf("%s: %q should be a number between %g and %g", name, s, lo, hi))
		}
		return x, nil
	}
	var err error
	if req.MinDiff, err = parse("Smallest difference", f.MinDiff, 0, 1); err != nil {
		return req, err
	}
	if req.Alpha, err = parse("Significance level α", f.Alpha, 0, 0.5); err != nil {
		return req, err
	}
	power, err := parse("Power", f.Power, 0, 1)
	if err != nil {
		return req, err
	}
	if power > 0 {
		req.Beta = 1 - power
	}
	if req.HalfWidth, err = parse("Interval half-width", f.HalfWidth, 0, 1); err != nil {
		return req, err
	}
	return req, nil
}

type designData struct {
	Report       store.DesignReport
	Runs         []designRunView
	Differences  []estimate.Difference
	Queries      queriesForm
	QueryPlan    *store.QueriesReport
	QueriesError string
	Notices      []string
	Kind         string
	Tables       designTables
}

// designTables are the downloads of "How sure are we?".
type designTables struct {
	Estimates, Differences, Power table
}

// intervalCells are an interval's columns: estimate, SE, low and high in the download, the
// estimate with its interval in one cell on the page.
func intervalCells(iv estimate.Interval) []cell {
	return []cell{{V: csvFloat(iv.Est), Text: interval(iv)}, {V: csvFloat(iv.SE)}, {V: csvFloat(iv.Low)}, {V: csvFloat(iv.High)}}
}

// intervalColumns are an interval's columns, named after its measure, headed on the page by label.
func intervalColumns(key, label string) []column {
	return []column{{Key: key, Label: label}, {Key: key + "_se"}, {Key: key + "_low"}, {Key: key + "_high"}}
}

func (d *designData) tables() []*table {
	t := &d.Tables
	o, id := d.Report.Estimates.Options, d.Report.Design.ID
	t.Estimates = table{Name: "estimates", File: fmt.Sprintf("design-%d-estimates", id), Class: "design-estimates", RowHead: true}
	t.Estimates.Columns = append(append(append([]column{{Key: "run", Label: "Run"}}, intervalColumns("ndcg", fmt.Sprintf("NDCG@%d [95%% interval]", o.K))...),
		intervalColumns("ap", "AP [95% interval]")...),
		column{Key: "judged_at_k", Label: fmt.Sprintf("judged@%d", o.K)}, column{Key: "rbp", Label: fmt.Sprintf("RBP (p = %v)", o.Persistence)},
		column{Key: "rbp_residual", Label: "RBP residual"})
	for _, v := range d.Runs {
		re := v.Run
		cells := append(append([]cell{{V: re.Run}}, intervalCells(re.NDCG)...), intervalCells(re.AP)...)
		cells = append(cells, cell{V: csvFloat(re.JudgedAtK), Text: f4(re.JudgedAtK)}, cell{V: csvFloat(re.RBP), Text: f4(re.RBP)},
			cell{V: csvFloat(re.RBPResidual), Text: f4(re.RBPResidual)})
		t.Estimates.Rows = append(t.Estimates.Rows, row{Cells: cells})
	}
	t.Differences = table{Name: "differences", File: fmt.Sprintf("design-%d-differences", id), Class: "design-differences", RowHead: true,
		Columns: append(append([]column{{Key: "a", Label: "Runs"}, {Key: "b"}, {Key: "metric", Label: "Measure"}}, intervalColumns("diff", "Difference [95% interval]")...),
			column{Key: "prob_b_beats_a", Label: "P(second beats first)"}, column{Key: "queries"})}
	for _, x := range d.Differences {
		cells := append([]cell{{V: x.A, Text: x.B + " − " + x.A}, {V: x.B}, {V: x.Metric}}, intervalCells(x.Diff)...)
		cells = append(cells, cell{V: csvFloat(x.ProbBBeatsA), Text: strconv.FormatFloat(x.ProbBBeatsA, 'f', 3, 64)}, cell{V: strconv.Itoa(x.Queries)})
		t.Differences.Rows = append(t.Differences.Rows, row{Cells: cells})
	}
	t.Power = table{Name: "power", File: fmt.Sprintf("design-%d-power", id), Class: "design-power", RowHead: true,
		Columns: []column{{Key: "metric", Label: "Measure"}, {Key: "run_pairs", Label: "Run pairs"}, {Key: "significant", Label: "Significant"},
			{Key: "share", Label: "Discriminative power"}, {Key: "alpha"}}}
	if d.QueryPlan != nil {
		for _, p := range d.QueryPlan.Power {
			t.Power.Rows = append(t.Power.Rows, row{Cells: []cell{{V: p.Metric}, {V: strconv.Itoa(p.Pairs)}, {V: strconv.Itoa(p.Significant)},
				{V: csvFloat(p.Share), Text: percent(p.Share)}, {V: csvFloat(p.Alpha)}}})
		}
	}
	return []*table{&t.Estimates, &t.Differences, &t.Power}
}

type designRunView struct {
	Run                  estimate.RunEstimate
	NDCG, AP             string
	Judged, RBP, Residue string
}

// percent is a share as a percentage to one decimal.
func percent(v float64) string { return strconv.FormatFloat(100*v, 'f', 1, 64) + "%" }

// interval formats an estimate with its interval.
func interval(iv estimate.Interval) string {
	return fmt.Sprintf("%.4f [%.4f, %.4f]", iv.Est, iv.Low, iv.High)
}

// designPage is "How sure are we?": the estimates of one design's runs.
func (s *Server) designPage(w http.ResponseWriter, r *http.Request) {
	p := currentProject(r)
	// An adaptive design tops up its next wave whenever the lead looks.
	id, _, ok := s.advanceDesign(w, r)
	if !ok {
		return
	}
	rep, err := s.store.DesignEstimate(r.Context(), p.ID, id)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	data := designData{Report: rep, Differences: rep.Estimates.Differences, Queries: readQueriesForm(r.URL.Query()),
		Kind: kindName(rep.Design.Settings.Design.Kind)}
	for _, re := range rep.Estimates.Runs {
		data.Runs = append(data.Runs, designRunView{Run: re, NDCG: interval(re.NDCG), AP: interval(re.AP),
			Judged: f4(re.JudgedAtK), RBP: f4(re.RBP), Residue: f4(re.RBPResidual)})
	}
	if req, err := data.Queries.request(); err != nil {
		_, data.QueriesError, _ = userError(err)
	} else if qp, err := store.QueriesFor(rep, data.Queries.Metric, req); err != nil {
		if _, msg, ok := userError(err); ok {
			data.QueriesError = msg
		} else {
			s.storeError(w, r, err)
			return
		}
	} else {
		data.QueryPlan = &qp
	}
	if s.offerTables(w, r, data.tables()...) {
		return
	}
	data.Notices = s.flashes(w, r, "design")
	s.render(w, r, http.StatusOK, "design", "", s.newView(r, "How sure are we? "+p.Name, data))
}

// designAdvance releases an adaptive design's next wave now.
func (s *Server) designAdvance(w http.ResponseWriter, r *http.Request) {
	p := currentProject(r)
	id, n, ok := s.advanceDesign(w, r)
	if !ok {
		return
	}
	msg := fmt.Sprintf("Sent %d more pairs to judging.", n)
	if n == 0 {
		msg = "Nothing more to send now: enough pairs are waiting for grades, the question is settled, or the budget is spent."
	}
	s.flash(w, r, "design", msg)
	http.Redirect(w, r, fmt.Sprintf("/projects/%d/plan/%d", p.ID, id), http.StatusSeeOther)
}

// advanceDesign releases the next wave of the route's design if it is adaptive and one is
// due, and says how many pairs it sent; false once it has answered the request itself.
func (s *Server) advanceDesign(w http.ResponseWriter, r *http.Request) (id int64, sent int, ok bool) {
	if id, ok = s.routeID(w, r, "design", "There is no such judging design."); !ok {
		return 0, 0, false
	}
	u, _ := currentUser(r)
	sent, err := s.store.AdvanceDesign(r.Context(), currentProject(r).ID, u.ID, id)
	if err != nil {
		s.storeError(w, r, err)
		return 0, 0, false
	}
	return id, sent, true
}

// kindName is a design's kind in the page's words.
func kindName(k estimate.Kind) string {
	switch k {
	case estimate.KindDepth:
		return "Judge everything to a depth"
	case estimate.KindStratified:
		return "Judge the top, sample deeper"
	case estimate.KindDecide:
		return "Decide A versus B"
	case estimate.KindFind:
		return "Find relevant documents fast"
	}
	return string(k)
}

// apiDesign answers with a design's estimates, as the page shows them.
func (s *Server) apiDesign(w http.ResponseWriter, r *http.Request) {
	id, ok := idParam(r, "design")
	if !ok {
		apiError(w, http.StatusNotFound, "no such judging design")
		return
	}
	rep, err := s.store.DesignEstimate(r.Context(), currentProject(r).ID, id)
	if err != nil {
		s.apiStoreError(w, r, err)
		return
	}
	apiJSON(w, rep)
}

// apiDesignQueries answers with the query-count planner of a design.
func (s *Server) apiDesignQueries(w http.ResponseWriter, r *http.Request) {
	id, ok := idParam(r, "design")
	if !ok {
		apiError(w, http.StatusNotFound, "no such judging design")
		return
	}
	f := readQueriesForm(r.URL.Query())
	req, err := f.request()
	if err != nil {
		s.apiStoreError(w, r, err)
		return
	}
	qp, err := s.store.DesignQueries(r.Context(), currentProject(r).ID, id, f.Metric, req)
	if err != nil {
		s.apiStoreError(w, r, err)
		return
	}
	apiJSON(w, qp)
}

// storeInvalid is a form value the lead should change, shown as the store's own refusals are.
func storeInvalid(msg string) error { return &pertinent.Error{Code: pertinent.Invalid, Message: msg} }

func init() {
	funcs["f3"] = func(v float64) string { return strconv.FormatFloat(v, 'f', 3, 64) }
	funcs["kindName"] = kindName
	funcs["checked"] = func(m map[int64]bool, id int64) bool { return m[id] }
}
