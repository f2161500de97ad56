package web

import (
	"net/http"
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

func (s *Server) overview(w http.ResponseWriter, r *http.Request) {
	p, err := s.store.ProjectProgress(r.Context(), currentProject(r).ID)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	s.render(w, r, http.StatusOK, "overview", "", s.newView(r, "Overview: "+currentProject(r).Name, p))
}
