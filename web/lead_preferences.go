package web

import (
	"net/http"
	"strconv"

	"github.com/pertinent/pertinent/agreement"
	"github.com/pertinent/pertinent/export"
	"github.com/pertinent/pertinent/store"
)

// The Preferences page: per query, the Bradley–Terry order of the compared documents with
// intervals, the intransitive triples, and where the schedule stands; over all queries, how
// far assessors agree. The API's /preferences gives the same report as JSON.

type preferenceScoreView struct {
	Rank               int
	Document           string
	Score, Low, High   figure
	Wins, Losses, Ties int
	SortedAt           int // position in the finished sort, 0 while it runs
}

type preferenceQueryView struct {
	store.PreferenceQuery
	Scores []preferenceScoreView
}

type runPreferenceView struct {
	store.RunPreference
	Share figure
}

type preferencesData struct {
	Report                     store.PreferenceReport
	Runs                       []runPreferenceView
	Unanimous, Pairwise, Alpha figure
	Queries                    []preferenceQueryView
	Level                      string
}

func (s *Server) preferencesPage(w http.ResponseWriter, r *http.Request) {
	rep, err := s.store.PreferenceFigures(r.Context(), currentProject(r).ID)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	d := preferencesData{Report: rep, Level: "95%",
		Unanimous: figPct("pref-unanimous", rep.Agreement.UnanimousShare),
		Pairwise:  figPct("pref-pairwise", rep.Agreement.Pairwise),
		Alpha:     figV("pref-alpha", rep.Agreement.Alpha.Alpha, 3)}
	for _, x := range rep.Runs {
		d.Runs = append(d.Runs, runPreferenceView{RunPreference: x, Share: figPct("pref-run:"+x.Run, x.Share)})
	}
	for _, q := range rep.Queries {
		v := preferenceQueryView{PreferenceQuery: q}
		sorted := map[string]int{}
		for i, doc := range q.Order {
			sorted[doc] = i + 1
		}
		if q.Fit.Level > 0 {
			d.Level = strconv.FormatFloat(100*q.Fit.Level, 'f', -1, 64) + "%"
		}
		for i, sc := range q.Fit.Scores {
			name := q.Query + ":" + sc.Document
			v.Scores = append(v.Scores, preferenceScoreView{Rank: i + 1, Document: sc.Document,
				Score: figV("bt:"+name, agreement.Value{V: sc.Score, OK: true}, 2),
				Low:   figV("bt-low:"+name, agreement.Value{V: sc.Low, OK: true}, 2),
				High:  figV("bt-high:"+name, agreement.Value{V: sc.High, OK: true}, 2),
				Wins:  sc.Wins, Losses: sc.Losses, Ties: sc.Ties, SortedAt: sorted[sc.Document]})
		}
		d.Queries = append(d.Queries, v)
	}
	s.render(w, r, http.StatusOK, "preferences", "", s.newView(r, "Preferences: "+currentProject(r).Name, d))
}

func (s *Server) apiPreferences(w http.ResponseWriter, r *http.Request) {
	rep, err := s.store.PreferenceFigures(r.Context(), currentProject(r).ID)
	if err != nil {
		s.apiStoreError(w, r, err)
		return
	}
	apiJSON(w, rep)
}

// preferencePairsCSV downloads the project's preference answers as training pairs.
func (s *Server) preferencePairsCSV(w http.ResponseWriter, r *http.Request) {
	pairs, err := s.store.PreferencePairs(r.Context(), currentProject(r).ID)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	w.Header().Set("Content-Type", "text/csv; charset=utf-8")
	w.Header().Set("Content-Disposition", `attachment; filename="preference-pairs.csv"`)
	if err := export.WritePreferencePairsCSV(w, pairs); err != nil {
		s.log.ErrorContext(r.Context(), "writing preference pairs failed", "err", err)
	}
}

// apiPreferencePairs gives the same pairs as JSON Lines.
func (s *Server) apiPreferencePairs(w http.ResponseWriter, r *http.Request) {
	pairs, err := s.store.PreferencePairs(r.Context(), currentProject(r).ID)
	if err != nil {
		s.apiStoreError(w, r, err)
		return
	}
	w.Header().Set("Content-Type", "application/jsonl; charset=utf-8")
	if err := export.WritePreferencePairsJSONL(w, pairs); err != nil {
		s.log.ErrorContext(r.Context(), "writing preference pairs failed", "err", err)
	}
}
