package web

import (
	"net/http"
	"strings"

	"github.com/pertinent/pertinent"
	"github.com/pertinent/pertinent/store"
)

type accountData struct {
	Notices []string
	Error   string
}

func (s *Server) accountPage(w http.ResponseWriter, r *http.Request) {
	s.render(w, r, http.StatusOK, "account", "", s.newView(r, "Your account", accountData{Notices: s.flashes(w, r, "notice")}))
}

// changePassword replaces the user's own password. The store ends every session of the
// account, so anyone else signed in as them is out; this browser gets a fresh session.
func (s *Server) changePassword(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	next := r.PostFormValue("new")
	fail := func(status int, msg string) {
		s.render(w, r, status, "account", "", s.newView(r, "Your account", accountData{Error: msg}))
	}
	if next != r.PostFormValue("repeat") {
		fail(http.StatusBadRequest, "The two new passwords differ.")
		return
	}
	if err := s.store.ChangePassword(r.Context(), u.ID, r.PostFormValue("current"), next); err != nil {
		s.formError(w, r, err, fail)
		return
	}
	token, err := s.store.CreateSession(r.Context(), u.ID, s.opts.SessionTTL)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	sess, _ := s.cookies.Get(r, sessionName)
	sess.Values = map[any]any{"token": token}
	sess.AddFlash("Password changed. Other sessions of your account have ended.", "notice")
	sess.Options.Secure = s.opts.SecureCookies || r.TLS != nil
	if err := sess.Save(r, w); err != nil {
		s.storeError(w, r, err)
		return
	}
	http.Redirect(w, r, "/account", http.StatusSeeOther)
}

type setPasswordData struct {
	Token string
	User  store.User
	Error string
}

func (s *Server) setPasswordPage(w http.ResponseWriter, r *http.Request) {
	// The page's address holds the token: keep it out of any Referer header.
	w.Header().Set("Referrer-Policy", "no-referrer")
	token := r.URL.Query().Get("token")
	u, err := s.store.UserByPasswordLink(r.Context(), token)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	s.render(w, r, http.StatusOK, "setpassword", "", s.newView(r, "Choose a password", setPasswordData{Token: token, User: u}))
}

func (s *Server) setPassword(w http.ResponseWriter, r *http.Request) {
	w.Header().Set("Referrer-Policy", "no-referrer")
	token, pw := r.PostFormValue("token"), r.PostFormValue("new")
	if pw != r.PostFormValue("repeat") {
		u, err := s.store.UserByPasswordLink(r.Context(), token)
		if err != nil {
			s.storeError(w, r, err)
			return
		}
		s.render(w, r, http.StatusBadRequest, "setpassword", "", s.newView(r, "Choose a password",
			setPasswordData{Token: token, User: u, Error: "The two passwords differ."}))
		return
	}
	if _, err := s.store.UsePasswordLink(r.Context(), token, pw); err != nil {
		if pertinent.CodeOf(err) == pertinent.Invalid {
			u, uerr := s.store.UserByPasswordLink(r.Context(), token)
			if uerr == nil {
				s.render(w, r, http.StatusBadRequest, "setpassword", "", s.newView(r, "Choose a password",
					setPasswordData{Token: token, User: u, Error: strings.ToUpper(err.Error()[:1]) + err.Error()[1:] + "."}))
				return
			}
		}
		s.storeError(w, r, err)
		return
	}
	http.Redirect(w, r, "/set-password/done", http.StatusSeeOther)
}

func (s *Server) setPasswordDone(w http.ResponseWriter, r *http.Request) {
	s.render(w, r, http.StatusOK, "setpassword", "", s.newView(r, "Password set", setPasswordData{}))
}
