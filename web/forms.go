package web

import (
	"net/http"
	"strconv"
	"strings"

	"github.com/go-chi/chi/v5"

	"github.com/pertinent/pertinent"
)

// userError splits an error a form can show beside its fields (the request was wrong, the
// state refuses it, or the user may not) from one that should end in the error page.
func userError(err error) (status int, msg string, ok bool) {
	e, ok := pertinent.AsError(err)
	if !ok || e.Code == pertinent.NotFound {
		return 0, "", false
	}
	if status = codeStatus(e.Code); status == 0 {
		return 0, "", false
	}
	return status, e.Message, true
}

// formError answers a form whose change was refused: beside its fields through show when
// userError says a form can show err, with the error page otherwise.
func (s *Server) formError(w http.ResponseWriter, r *http.Request, err error, show func(status int, msg string)) {
	if status, msg, ok := userError(err); ok {
		show(status, msg)
		return
	}
	s.storeError(w, r, err)
}

// flash keeps a notice for the next page shown to this browser, in the encrypted session
// cookie, so a POST can redirect and the page after it can still say what happened.
func (s *Server) flash(w http.ResponseWriter, r *http.Request, key, msg string) {
	sess, _ := s.cookies.Get(r, sessionName)
	sess.AddFlash(msg, key)
	sess.Options.Secure = s.opts.SecureCookies || r.TLS != nil
	if err := sess.Save(r, w); err != nil {
		s.log.ErrorContext(r.Context(), "saving a notice failed", "err", err)
	}
}

// flashes takes the notices kept under key; each is shown once.
func (s *Server) flashes(w http.ResponseWriter, r *http.Request, key string) []string {
	sess, _ := s.cookies.Get(r, sessionName)
	raw := sess.Flashes(key)
	if len(raw) == 0 {
		return nil
	}
	sess.Options.Secure = s.opts.SecureCookies || r.TLS != nil
	sess.Save(r, w)
	out := make([]string, 0, len(raw))
	for _, f := range raw {
		if m, ok := f.(string); ok {
			out = append(out, m)
		}
	}
	return out
}

// idParam reads a numeric id from the route.
func idParam(r *http.Request, name string) (int64, bool) {
	id, err := strconv.ParseInt(chi.URLParam(r, name), 10, 64)
	return id, err == nil && id > 0
}

// routeID reads a numeric id from the route, answering 404 with missing when it is not one.
func (s *Server) routeID(w http.ResponseWriter, r *http.Request, name, missing string) (int64, bool) {
	id, ok := idParam(r, name)
	if !ok {
		s.fail(w, r, http.StatusNotFound, missing)
	}
	return id, ok
}

// formInt reads a whole number from a form field; def when it is empty.
func formInt(r *http.Request, name string, def int) (int, error) {
	v := strings.TrimSpace(r.PostFormValue(name))
	if v == "" {
		return def, nil
	}
	return strconv.Atoi(v)
}

// siteURL is the address of this site as the browser reached it, for links handed to others.
func (s *Server) siteURL(r *http.Request) string {
	scheme := "http"
	if r.TLS != nil || s.opts.SecureCookies {
		scheme = "https"
	}
	return scheme + "://" + r.Host
}
