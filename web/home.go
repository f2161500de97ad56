package web

import (
	"net/http"

	"github.com/pertinent/pertinent/store"
)

func (s *Server) home(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	list, err := s.store.ProjectsFor(r.Context(), u)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	s.render(w, r, http.StatusOK, "home", "", s.newView(r, "Your projects", list))
}

// overviewData is the lead's view of a project: progress, and pairs flagged as impossible
// to judge (never who flagged them).
type overviewData struct {
	store.Progress
	Flagged []flaggedRow
}

type flaggedRow struct {
	store.FlaggedPair
	ReasonLabel string
}

func (s *Server) overview(w http.ResponseWriter, r *http.Request) {
	p, err := s.store.ProjectProgress(r.Context(), currentProject(r).ID)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	d := overviewData{Progress: p}
	flagged, err := s.store.FlaggedPairs(r.Context(), currentProject(r).ID, 100)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	for _, f := range flagged {
		d.Flagged = append(d.Flagged, flaggedRow{FlaggedPair: f, ReasonLabel: reasonLabel(f.Reason)})
	}
	s.render(w, r, http.StatusOK, "overview", "", s.newView(r, "Overview: "+currentProject(r).Name, d))
}

func (s *Server) usersPage(w http.ResponseWriter, r *http.Request) {
	users, err := s.store.Users(r.Context())
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	s.render(w, r, http.StatusOK, "users", "", s.newView(r, "People", users))
}
