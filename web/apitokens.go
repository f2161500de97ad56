package web

import (
	"net/http"

	"github.com/pertinent/pertinent/store"
)

type tokensData struct {
	Tokens  []store.APIToken
	New     string // the token just created: shown this once
	Notices []string
	Error   string
	Site    string
}

func (s *Server) renderTokens(w http.ResponseWriter, r *http.Request, status int, d tokensData) {
	u, _ := currentUser(r)
	var err error
	if d.Tokens, err = s.store.APITokens(r.Context(), u.ID); err != nil {
		s.storeError(w, r, err)
		return
	}
	d.Site = s.siteURL(r)
	// The page may show a live token: keep it out of caches and Referer headers.
	w.Header().Set("Referrer-Policy", "no-referrer")
	s.render(w, r, status, "tokens", "", s.newView(r, "API tokens", d))
}

func (s *Server) tokensPage(w http.ResponseWriter, r *http.Request) {
	d := tokensData{Notices: s.flashes(w, r, "notice")}
	if t := s.flashes(w, r, "new-api-token"); len(t) > 0 {
		d.New = t[0]
	}
	s.renderTokens(w, r, http.StatusOK, d)
}

// createToken makes a token and redirects; the token rides once in the encrypted session
// cookie's flash (under its own key: "token" is the session's value), so the plain
// POST-redirect pattern holds and a reload does not show it again.
func (s *Server) createToken(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	token, _, err := s.store.CreateAPIToken(r.Context(), u.ID, r.PostFormValue("name"))
	if err != nil {
		s.formError(w, r, err, func(status int, msg string) { s.renderTokens(w, r, status, tokensData{Error: msg}) })
		return
	}
	s.flash(w, r, "new-api-token", token)
	http.Redirect(w, r, "/account/tokens", http.StatusSeeOther)
}

func (s *Server) revokeToken(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	id, ok := s.routeID(w, r, "token", "There is no such token.")
	if !ok {
		return
	}
	if err := s.store.RevokeAPIToken(r.Context(), u.ID, id); err != nil {
		s.storeError(w, r, err)
		return
	}
	s.flash(w, r, "notice", "Token revoked: requests with it are refused from now on.")
	http.Redirect(w, r, "/account/tokens", http.StatusSeeOther)
}
