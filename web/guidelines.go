package web

import (
	"html/template"
	"net/http"

	"github.com/pertinent/pertinent/store"
)

type guidelinesData struct {
	Current  store.GuidelineRevision
	Rendered template.HTML
	History  []store.GuidelineRevision
	Draft    string // text in the editor: the current revision, or a refused draft
	Notices  []string
	Error    string
}

func (s *Server) renderGuidelines(w http.ResponseWriter, r *http.Request, status int, edit func(*guidelinesData)) {
	d := guidelinesData{Notices: s.flashes(w, r, "notice")}
	var err error
	if d.History, err = s.store.GuidelineHistory(r.Context(), currentProject(r).ID); err != nil {
		s.storeError(w, r, err)
		return
	}
	if len(d.History) > 0 {
		d.Current = d.History[0]
	}
	d.Rendered, d.Draft = renderMarkdown(d.Current.Body), d.Current.Body
	renderEdited(s, w, r, status, "guidelines", "Guidelines: "+currentProject(r).Name, d, edit)
}

func (s *Server) guidelinesPage(w http.ResponseWriter, r *http.Request) {
	s.renderGuidelines(w, r, http.StatusOK, nil)
}

func (s *Server) reviseGuidelines(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	body := r.PostFormValue("body")
	if _, err := s.store.ReviseGuidelines(r.Context(), currentProject(r).ID, body, u.ID); err != nil {
		s.formError(w, r, err, func(status int, msg string) {
			s.renderGuidelines(w, r, status, func(d *guidelinesData) { d.Draft, d.Error = body, msg })
		})
		return
	}
	s.flash(w, r, "notice", "Guidelines saved. Judgments from now on record this revision.")
	http.Redirect(w, r, projectPath(r, "guidelines"), http.StatusSeeOther)
}

type revisionData struct {
	Revision store.GuidelineRevision
	Rendered template.HTML
}

func (s *Server) revisionPage(w http.ResponseWriter, r *http.Request) {
	id, ok := s.routeID(w, r, "revision", "There is no such revision.")
	if !ok {
		return
	}
	g, err := s.store.GuidelineRevision(r.Context(), currentProject(r).ID, id)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	s.render(w, r, http.StatusOK, "revision", "", s.newView(r, "Guidelines revision: "+currentProject(r).Name,
		revisionData{Revision: g, Rendered: renderMarkdown(g.Body)}))
}
