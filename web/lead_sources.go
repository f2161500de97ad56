package web

import (
	"fmt"
	"net/http"
	"strconv"
	"strings"

	"github.com/pertinent/pertinent/agreement"
	"github.com/pertinent/pertinent/store"
)

// The Sources page: every external source of grades (a model, an earlier campaign, a
// heuristic) against the people's final grades.

type sourceView struct {
	store.SourceFigures
	Kappa, KappaLow, KappaHigh, Above, Below, Tau figure
	Confusion                                     matrix
	Grades                                        table
}

type sourcesData struct {
	Runs      []string
	Measure   string
	Sources   []sourceView
	Prelabels *store.Prelabels // the project's setting, nil when none
	Saved     string           // what the last change of the setting did
	Problem   string
}

func (s *Server) sourcesPage(w http.ResponseWriter, r *http.Request) {
	c, err := s.store.CompareSources(r.Context(), currentProject(r).ID)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	data := sourcesData{Runs: c.Runs, Measure: c.Measure}
	if pl, ok, err := s.store.ProjectPrelabels(r.Context(), currentProject(r).ID); err != nil {
		s.storeError(w, r, err)
		return
	} else if ok {
		data.Prelabels = &pl
	}
	if n, err := strconv.Atoi(r.URL.Query().Get("first")); err == nil && n >= 0 {
		data.Saved = strconv.Itoa(n) + " pairs put first."
	} else if r.URL.Query().Get("first") == "off" {
		data.Saved = "Pre-labels off: every pair has its own priority again."
	}
	var tables []*table
	for _, f := range c.Sources {
		n := f.Name
		k := f.Report.KappaLinear
		v := sourceView{SourceFigures: f,
			Kappa: figV("source-kappa:"+n, k.Kappa, 3), KappaLow: figV("source-kappa-low:"+n, k.CI.Lo, 3), KappaHigh: figV("source-kappa-high:"+n, k.CI.Hi, 3),
			Above: figPct("source-above:"+n, f.Report.Above), Below: figPct("source-below:"+n, f.Report.Below),
			Confusion: newMatrix("People's final grade (rows) against "+n+"'s grade (columns)", "confusion-"+n, f.Report.Confusion),
			Grades: table{Name: "grades-" + n, File: "source-" + n + "-grades", RowHead: true, Empty: "No pair graded by both.",
				Caption: "Per grade: how often each gave it, and how often they agree on it",
				Columns: cols("grade", "Grade", "people_share", "People", "source_share", n, "recall", "People's grade also the source's", "precision", "Source's grade also the people's",
					"mean_diff", "Source minus people, on this people's grade", "pairs", "Pairs")},
		}
		if f.Order != nil {
			v.Tau = figV("source-tau:"+n, agreement.Value{V: f.Order.Tau, OK: f.Order.TauDefined, Why: f.Order.Why}, 3)
		}
		for i, g := range f.Report.Grades {
			lean := f.Report.ByHuman[i]
			gs := strconv.Itoa(g.Grade)
			v.Grades.Rows = append(v.Grades.Rows, row{Cells: []cell{{V: gs}, figCell(figPct("people-share:"+n+":"+gs, g.HumanShare)), figCell(figPct("source-share:"+n+":"+gs, g.SourceShare)),
				figCell(figPct("recall:"+n+":"+gs, g.Recall)), figCell(figPct("precision:"+n+":"+gs, g.Precision)),
				figCell(figSigned("lean:"+n+":"+gs, lean.MeanDiff)), {V: strconv.Itoa(lean.N)}}})
		}
		data.Sources = append(data.Sources, v)
	}
	for i := range data.Sources {
		tables = append(tables, &data.Sources[i].Grades)
	}
	if s.offerTables(w, r, tables...) {
		return
	}
	s.render(w, r, http.StatusOK, "sources", "", s.newView(r, "Sources of grades: "+currentProject(r).Name, data))
}

// apiSources answers with the figures of the Sources page.
func (s *Server) apiSources(w http.ResponseWriter, r *http.Request) {
	c, err := s.store.CompareSources(r.Context(), currentProject(r).ID)
	if err != nil {
		s.apiStoreError(w, r, err)
		return
	}
	apiJSON(w, c)
}

// sourcesPrelabels saves the project's pre-label setting: which source's grades choose what
// people judge first, and how. The grades themselves never reach an assessor.
func (s *Server) sourcesPrelabels(w http.ResponseWriter, r *http.Request) {
	p := currentProject(r)
	u, _ := currentUser(r)
	var set *store.Prelabels
	if mode := r.PostFormValue("mode"); mode != "off" {
		share := 1.0
		if v := strings.TrimSpace(r.PostFormValue("share")); v != "" {
			f, err := strconv.ParseFloat(v, 64)
			if err != nil {
				s.fail(w, r, http.StatusBadRequest, "The share must be a number between 0 and 1.")
				return
			}
			share = f
		}
		set = &store.Prelabels{Source: strings.TrimSpace(r.PostFormValue("source")), Mode: store.PrelabelMode(mode), Share: share}
	}
	n, err := s.store.SetPrelabels(r.Context(), p.ID, u.ID, set)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	first := strconv.Itoa(n)
	if set == nil {
		first = "off"
	}
	http.Redirect(w, r, fmt.Sprintf("/projects/%d/sources?first=%s", p.ID, first), http.StatusSeeOther)
}
