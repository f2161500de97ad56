package web

import (
	"errors"
	"fmt"
	"mime/multipart"
	"net/http"
	"strconv"
	"strings"

	"github.com/pertinent/pertinent"
	"github.com/pertinent/pertinent/rankeval"
	"github.com/pertinent/pertinent/store"
)

// maxRunUpload bounds an uploaded pair of run files; the parser streams them, and the form
// parser spills anything past a few megabytes to temporary files.
const maxRunUpload = 256 << 20

type evaluateData struct {
	Form    evalForm
	Recent  []store.EvaluationListing
	Error   string
	Notices []string
}

func (s *Server) evaluatePage(w http.ResponseWriter, r *http.Request) {
	s.renderEvaluate(w, r, http.StatusOK, readEvalForm(r.URL.Query()), "")
}

func (s *Server) renderEvaluate(w http.ResponseWriter, r *http.Request, status int, f evalForm, msg string) {
	p := currentProject(r)
	recent, err := s.store.Evaluations(r.Context(), p.ID, 20)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	s.render(w, r, status, "evaluate", "", s.newView(r, "Evaluate runs: "+p.Name, evaluateData{Form: f, Recent: recent, Error: msg}))
}

// evaluateRuns scores the uploaded run (or compares two), keeps the result and shows it.
func (s *Server) evaluateRuns(w http.ResponseWriter, r *http.Request) {
	p := currentProject(r)
	u, _ := currentUser(r)
	r.Body = http.MaxBytesReader(w, r.Body, maxRunUpload)
	if err := r.ParseMultipartForm(4 << 20); err != nil {
		s.renderEvaluate(w, r, http.StatusBadRequest, readEvalForm(r.PostForm), "Choose one run file, or two to compare (at most 256 MB together).")
		return
	}
	defer r.MultipartForm.RemoveAll()
	f := readEvalForm(r.PostForm)
	fail := func(err error) {
		s.formError(w, r, err, func(status int, msg string) { s.renderEvaluate(w, r, status, f, msg) })
	}
	req, err := f.request()
	if err != nil {
		fail(err)
		return
	}
	var runs []store.NamedRun
	for _, field := range []string{"run", "run2"} {
		for _, fh := range r.MultipartForm.File[field] {
			if fh.Size == 0 && fh.Filename == "" {
				continue
			}
			file, err := fh.Open()
			if err != nil {
				fail(err)
				return
			}
			defer file.Close()
			runs = append(runs, store.NamedRun{Name: runName(fh), Body: file})
		}
	}
	if len(runs) == 0 || len(runs) > 2 {
		s.renderEvaluate(w, r, http.StatusBadRequest, f, "Choose one run file, or two to compare.")
		return
	}
	ev, err := s.store.Evaluate(r.Context(), p.ID, req, runs)
	if err != nil {
		fail(err)
		return
	}
	if err := s.store.SaveEvaluation(r.Context(), p.ID, u.ID, &ev); err != nil {
		s.storeError(w, r, err)
		return
	}
	http.Redirect(w, r, fmt.Sprintf("/projects/%d/evaluations/%d", p.ID, ev.ID), http.StatusSeeOther)
}

func runName(fh *multipart.FileHeader) string {
	name := strings.TrimSpace(fh.Filename)
	if i := strings.LastIndexAny(name, `/\`); i >= 0 {
		name = name[i+1:]
	}
	if name == "" {
		return "run"
	}
	return name
}

// evalRow is one query's figures, formatted.
type evalRow struct {
	Query                         string
	NDCG, ERR, Precision, AP, Jdg string
	InRun                         bool
}

type evalRunView struct {
	Name    string
	Summary rankeval.Summary
	Rows    []evalRow
}

type diffRow struct {
	Query string
	Cells []string
}

type evaluationData struct {
	Eval       store.Evaluation
	At         string // "@10", or empty for the whole ranking
	Runs       []evalRunView
	Metrics    []rankeval.Metric
	Diffs      []diffRow
	MissingAll int
	Notices    []string
	PerQuery   table
}

func f4(v float64) string { return strconv.FormatFloat(v, 'f', 4, 64) }

func f4ok(v float64, ok bool) string {
	if !ok {
		return "–"
	}
	return f4(v)
}

func (s *Server) loadEvaluation(w http.ResponseWriter, r *http.Request) (store.Evaluation, bool) {
	id, ok := s.routeID(w, r, "evaluation", "There is no such evaluation.")
	if !ok {
		return store.Evaluation{}, false
	}
	ev, err := s.store.Evaluation(r.Context(), currentProject(r).ID, id)
	if err != nil {
		s.storeError(w, r, err)
		return ev, false
	}
	return ev, true
}

func (s *Server) evaluationPage(w http.ResponseWriter, r *http.Request) {
	ev, ok := s.loadEvaluation(w, r)
	if !ok {
		return
	}
	perQuery := perQueryTable(ev)
	if s.offerTables(w, r, &perQuery) {
		return
	}
	d := evaluationData{Eval: ev, Metrics: store.ComparedMetrics, Notices: s.flashes(w, r, "notice"), PerQuery: perQuery}
	if k := ev.Summaries[0].Options.K; k > 0 {
		d.At = "@" + strconv.Itoa(k)
	}
	for i, sum := range ev.Summaries {
		v := evalRunView{Name: ev.Runs[i], Summary: sum}
		for _, q := range sum.PerQuery {
			v.Rows = append(v.Rows, evalRow{Query: q.Query, NDCG: f4ok(q.NDCG, q.NDCGDefined), ERR: f4(q.ERR), Precision: f4(q.Precision),
				AP: f4ok(q.AP, q.APDefined), Jdg: f4(q.Judged), InRun: q.InRun})
		}
		d.Runs = append(d.Runs, v)
	}
	if len(ev.Comparisons) > 0 {
		diffs := map[rankeval.Metric]map[string]float64{}
		for _, c := range ev.Comparisons {
			diffs[c.Metric] = map[string]float64{}
			for i, q := range c.Queries {
				diffs[c.Metric][q] = c.Diff[i]
			}
		}
		for _, q := range ev.Summaries[0].PerQuery {
			row := diffRow{Query: q.Query}
			for _, m := range d.Metrics {
				v, ok := diffs[m][q.Query]
				cell := "–"
				if ok {
					cell = strconv.FormatFloat(v, 'f', 4, 64)
					if v > 0 {
						cell = "+" + cell
					}
				}
				row.Cells = append(row.Cells, cell)
			}
			d.Diffs = append(d.Diffs, row)
		}
	}
	title := "Evaluation of " + strings.Join(ev.Runs, " and ")
	s.render(w, r, http.StatusOK, "evaluation", "", s.newView(r, title, d))
}

// perQueryTable is an evaluation's per-query figures: one row per run and query. The page
// draws them as one table per run, beside each run's summary.
func perQueryTable(ev store.Evaluation) table {
	t := table{Name: "per-query", File: fmt.Sprintf("evaluation-%d", ev.ID), Columns: cols("run", "", "query", "", "ndcg", "", "err", "", "precision", "",
		"ap", "", "judged", "", "retrieved", "", "k", "", "gain", "", "threshold", "")}
	empty := func(v float64, ok bool) string {
		if !ok {
			return ""
		}
		return csvFloat(v)
	}
	for i, sum := range ev.Summaries {
		o := sum.Options
		for _, q := range sum.PerQuery {
			t.Rows = append(t.Rows, plain(ev.Runs[i], q.Query, empty(q.NDCG, q.NDCGDefined), empty(q.ERR, true), empty(q.Precision, true),
				empty(q.AP, q.APDefined), empty(q.Judged, true), strconv.Itoa(q.Retrieved), strconv.Itoa(o.K), sum.Gain, strconv.Itoa(o.Threshold)))
		}
	}
	return t
}

// evaluationCSV keeps the per-query table's former address working.
func (s *Server) evaluationCSV(w http.ResponseWriter, r *http.Request) {
	s.evaluationPage(w, tableAlias(r, "per-query"))
}

// sendUnjudged adds the evaluation's unjudged top-k pairs to the project, highest ranked
// first, and says what could not be added.
func (s *Server) sendUnjudged(w http.ResponseWriter, r *http.Request) {
	ev, ok := s.loadEvaluation(w, r)
	if !ok {
		return
	}
	p := currentProject(r)
	u, _ := currentUser(r)
	added, missing, err := s.store.AddPooledPairs(r.Context(), p.ID, ev.Unjudged, u.ID)
	if err != nil {
		var se *pertinent.Error
		if errors.As(err, &se) && se.Code == pertinent.Conflict {
			s.flash(w, r, "notice", se.Message)
			http.Redirect(w, r, fmt.Sprintf("/projects/%d/evaluations/%d", p.ID, ev.ID), http.StatusSeeOther)
			return
		}
		s.storeError(w, r, err)
		return
	}
	msg := fmt.Sprintf("%d new pairs to judge, highest ranked first; %d were in the project already.", added, len(ev.Unjudged)-added-len(missing))
	if len(missing) > 0 {
		shown := missing[:min(len(missing), 10)]
		msg += fmt.Sprintf(" %d are not in the project (its queries or documents are missing): %s", len(missing), strings.Join(shown, "; "))
		if len(missing) > len(shown) {
			msg += fmt.Sprintf("; and %d more", len(missing)-len(shown))
		}
		msg += "."
	}
	s.flash(w, r, "notice", msg)
	http.Redirect(w, r, fmt.Sprintf("/projects/%d/evaluations/%d", p.ID, ev.ID), http.StatusSeeOther)
}

func init() { funcs["f4"] = f4 }
