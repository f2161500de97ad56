package web

import (
	"net/http"
)

func (s *Server) home(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	list, err := s.store.ProjectsByUser(r.Context(), u)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	s.render(w, r, http.StatusOK, "home", "", s.newView(r, "Your projects", list))
}
