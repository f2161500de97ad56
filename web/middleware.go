package web

import (
	"context"
	"log/slog"
	"net/http"
	"strconv"
	"time"

	"github.com/go-chi/chi/v5"
	"github.com/go-chi/chi/v5/middleware"

	"github.com/pertinent/pertinent/store"
)

// securityHeaders forbids inline script (htmx is configured not to need it), framing and
// content sniffing.
func securityHeaders(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		h := w.Header()
		h.Set("Content-Security-Policy", "default-src 'self'; script-src 'self'; style-src 'self'; img-src 'self' data:; "+
			"object-src 'none'; base-uri 'none'; form-action 'self'; frame-ancestors 'none'")
		h.Set("X-Content-Type-Options", "nosniff")
		h.Set("X-Frame-Options", "DENY")
		h.Set("Referrer-Policy", "same-origin")
		next.ServeHTTP(w, r)
	})
}

// logRequests writes one line per request: method, path (never the query string, which may
// carry tokens), status, duration and user. No form values are logged.
func (s *Server) logRequests(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		start := time.Now()
		ww := middleware.NewWrapResponseWriter(w, r.ProtoMajor)
		var uid int64
		r = r.WithContext(context.WithValue(r.Context(), logUserKey{}, &uid))
		next.ServeHTTP(ww, r)
		s.log.LogAttrs(r.Context(), slog.LevelInfo, "request",
			slog.String("method", r.Method), slog.String("path", r.URL.Path),
			slog.Int("status", ww.Status()), slog.Duration("took", time.Since(start)),
			slog.Int64("user", uid))
	})
}

type (
	logUserKey struct{}
	userKey    struct{}
	projectKey struct{}
)

// projectCtx is the project a request is about and the caller's role in it.
type projectCtx struct {
	store.Project
	Role store.Role // lead or assessor; admin when an admin is not a member
}

const sessionName = "pertinent"

// loadUser attaches the signed-in user, if any. A session whose row is gone (signed out,
// account disabled) counts as no session.
func (s *Server) loadUser(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		sess, _ := s.cookies.Get(r, sessionName)
		if token, ok := sess.Values["token"].(string); ok {
			u, err := s.store.UserBySession(r.Context(), token)
			if err == nil {
				if p, ok := r.Context().Value(logUserKey{}).(*int64); ok {
					*p = u.ID
				}
				r = r.WithContext(context.WithValue(r.Context(), userKey{}, u))
			}
		}
		next.ServeHTTP(w, r)
	})
}

func currentUser(r *http.Request) (store.User, bool) {
	u, ok := r.Context().Value(userKey{}).(store.User)
	return u, ok
}

func currentProject(r *http.Request) projectCtx {
	p, _ := r.Context().Value(projectKey{}).(projectCtx)
	return p
}

func (s *Server) requireUser(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		if _, ok := currentUser(r); !ok {
			if r.Method == http.MethodGet {
				http.Redirect(w, r, "/signin?next="+urlQueryEscape(r.URL.RequestURI()), http.StatusSeeOther)
				return
			}
			s.fail(w, r, http.StatusUnauthorized, "Please sign in first.")
			return
		}
		next.ServeHTTP(w, r)
	})
}

func (s *Server) requireAdmin(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		if u, _ := currentUser(r); u.Role != store.RoleAdmin {
			s.fail(w, r, http.StatusForbidden, "This page is for admins.")
			return
		}
		next.ServeHTTP(w, r)
	})
}

// loadProject resolves {project} and the caller's role in it. Non-members get 404 rather
// than 403 so project ids do not leak; admins see every project.
func (s *Server) loadProject(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		u, _ := currentUser(r)
		id, err := strconv.ParseInt(chi.URLParam(r, "project"), 10, 64)
		if err != nil {
			s.fail(w, r, http.StatusNotFound, "There is no such project.")
			return
		}
		p, role, member, err := s.store.ProjectAndRole(r.Context(), id, u.ID)
		if err != nil {
			s.storeError(w, r, err)
			return
		}
		switch {
		case u.Role == store.RoleAdmin && !member:
			role = store.RoleAdmin
		case !member:
			s.fail(w, r, http.StatusNotFound, "There is no such project.")
			return
		}
		next.ServeHTTP(w, r.WithContext(context.WithValue(r.Context(), projectKey{}, projectCtx{Project: p, Role: role})))
	})
}

// requireProjectRole admits the given project role. Leads and admins pass every lead check;
// judging is for assessors only, since a lead's grades would not be independent.
func (s *Server) requireProjectRole(want store.Role) func(http.Handler) http.Handler {
	return func(next http.Handler) http.Handler {
		return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
			role := currentProject(r).Role
			ok := role == want || (want == store.RoleLead && role == store.RoleAdmin)
			if !ok {
				s.fail(w, r, http.StatusForbidden, "Your role in this project does not open this page.")
				return
			}
			next.ServeHTTP(w, r)
		})
	}
}
