package web

import (
	"net"
	"net/http"
	"strings"

	"github.com/pertinent/pertinent/store"
)

type signinData struct {
	Username string
	Next     string
	Error    string
}

func (s *Server) signinPage(w http.ResponseWriter, r *http.Request) {
	if _, ok := currentUser(r); ok {
		http.Redirect(w, r, localPath(r.URL.Query().Get("next")), http.StatusSeeOther)
		return
	}
	s.render(w, r, http.StatusOK, "signin", "", s.newView(r, "Sign in", signinData{Next: r.URL.Query().Get("next")}))
}

func clientAddress(r *http.Request) string {
	host, _, err := net.SplitHostPort(r.RemoteAddr)
	if err != nil {
		return r.RemoteAddr
	}
	return host
}

func (s *Server) signin(w http.ResponseWriter, r *http.Request) {
	username := strings.TrimSpace(r.PostFormValue("username"))
	password := r.PostFormValue("password")
	data := signinData{Username: username, Next: r.PostFormValue("next")}
	addr := clientAddress(r)
	account := strings.ToLower(username)
	ok, err := s.throttle.allowed(r.Context(), account, addr)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	if !ok {
		data.Error = "Too many failed attempts. Wait a quarter of an hour, or ask an admin to set a new password."
		s.render(w, r, http.StatusTooManyRequests, "signin", "", s.newView(r, "Sign in", data))
		return
	}
	u, err := s.store.Authenticate(r.Context(), username, password)
	if err != nil {
		if err != store.ErrBadCredentials {
			s.storeError(w, r, err)
			return
		}
		if err := s.throttle.failed(r.Context(), account, addr); err != nil {
			s.storeError(w, r, err)
			return
		}
		// What was typed as a username is logged only when it names an account: people
		// type their password into the username field, and the log must never hold one.
		logged := "(no such account)"
		if known, err := s.store.UserByUsername(r.Context(), username); err == nil {
			logged = known.Username
		}
		s.log.InfoContext(r.Context(), "sign-in refused", "username", logged, "address", addr)
		data.Error = "Wrong username or password."
		s.render(w, r, http.StatusUnauthorized, "signin", "", s.newView(r, "Sign in", data))
		return
	}
	if err := s.throttle.succeeded(r.Context(), account); err != nil {
		s.storeError(w, r, err)
		return
	}
	// A fresh token on every sign-in: a session id planted before sign-in is worth nothing after.
	sess, _ := s.cookies.Get(r, sessionName)
	if old, ok := sess.Values["token"].(string); ok {
		s.store.DeleteSession(r.Context(), old)
	}
	token, err := s.store.CreateSession(r.Context(), u.ID, s.opts.SessionTTL)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	sess.Values = map[any]any{"token": token}
	sess.Options.Secure = s.opts.SecureCookies || r.TLS != nil
	if err := sess.Save(r, w); err != nil {
		s.storeError(w, r, err)
		return
	}
	http.Redirect(w, r, localPath(data.Next), http.StatusSeeOther)
}

func (s *Server) signout(w http.ResponseWriter, r *http.Request) {
	sess, _ := s.cookies.Get(r, sessionName)
	if token, ok := sess.Values["token"].(string); ok {
		if err := s.store.DeleteSession(r.Context(), token); err != nil {
			s.storeError(w, r, err)
			return
		}
	}
	sess.Values = map[any]any{}
	sess.Options.MaxAge = -1
	sess.Options.Secure = s.opts.SecureCookies || r.TLS != nil
	sess.Save(r, w)
	http.Redirect(w, r, "/signin", http.StatusSeeOther)
}
