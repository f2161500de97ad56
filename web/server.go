// Package web serves pertinent's pages: chi routes, middleware, html/template pages and the
// embedded static files. Handlers parse the request, call the store, and render; they hold no
// SQL and no statistics.
package web

import (
	"cmp"
	"context"
	"embed"
	"fmt"
	"log/slog"
	"net/http"
	"time"

	"github.com/go-chi/chi/v5"
	"github.com/gorilla/sessions"

	"github.com/pertinent/pertinent/store"
)

// A directory pattern leaves out files whose names start with "_", so the partials are named.
//
//go:embed templates static
//go:embed templates/_*.html
var assets embed.FS

// Options configure a Server.
type Options struct {
	// SecureCookies marks the session cookie Secure. Set it when a proxy in front terminates
	// TLS; a request that arrives over TLS gets Secure cookies regardless.
	SecureCookies bool
	// SessionTTL is how long a sign-in lasts; zero means 12 hours.
	SessionTTL time.Duration
	Logger     *slog.Logger
	// ReadTimeout and WriteTimeout bound reading a whole request and writing its response
	// (HTTPServer); zero means 60 seconds each.
	ReadTimeout, WriteTimeout time.Duration
	// TransferTimeout replaces both on the routes that move large files: import uploads,
	// export downloads and run uploads. Zero means one hour.
	TransferTimeout time.Duration
	// UploadDir holds an import's uploaded files until its job ends; empty means the
	// system's temporary directory.
	UploadDir string
	// ImportWait is how long Shutdown lets running imports finish before it interrupts
	// them; zero means 30 seconds.
	ImportWait time.Duration
}

// Server is the HTTP side of pertinent.
type Server struct {
	store    *store.Store
	log      *slog.Logger
	opts     Options
	pages    *pages
	cookies  *sessions.CookieStore
	throttle *throttle
	router   chi.Router
	jobs     *importJobs // imports: uploads in progress and the jobs running here (import.go)

	guidelines guidelinesCache // rendered guidelines by revision (markdown.go)
	controls   controlsCache   // the judging form's buttons by scale (judge.go)
}

// New builds a Server over an open store.
func New(ctx context.Context, st *store.Store, opts Options) (*Server, error) {
	if opts.Logger == nil {
		opts.Logger = slog.Default()
	}
	if opts.SessionTTL == 0 {
		opts.SessionTTL = 12 * time.Hour
	}
	opts.ReadTimeout = cmp.Or(opts.ReadTimeout, defaultReadTimeout)
	opts.WriteTimeout = cmp.Or(opts.WriteTimeout, defaultWriteTimeout)
	opts.TransferTimeout = cmp.Or(opts.TransferTimeout, defaultTransferTimeout)
	opts.ImportWait = cmp.Or(opts.ImportWait, 30*time.Second)
	hashKey, blockKey, err := st.SessionKeys(ctx)
	if err != nil {
		return nil, fmt.Errorf("web: session keys: %w", err)
	}
	p, err := loadPages()
	if err != nil {
		return nil, err
	}
	cs := sessions.NewCookieStore(hashKey, blockKey)
	cs.Options = &sessions.Options{Path: "/", MaxAge: int(opts.SessionTTL.Seconds()), HttpOnly: true, SameSite: http.SameSiteLaxMode}
	s := &Server{store: st, log: opts.Logger, opts: opts, pages: p, cookies: cs, throttle: newThrottle(st), jobs: newImportJobs(ctx)}
	s.router = s.routes()
	return s, nil
}

// Shutdown stops the server's background imports: no new one starts, running ones get
// Options.ImportWait to finish, then are interrupted, roll back and remove their uploaded
// files. It returns when all have, or when ctx ends first. Call it after the http.Server's
// own Shutdown.
func (s *Server) Shutdown(ctx context.Context) error {
	interrupted, err := s.jobs.drain(ctx, s.opts.ImportWait)
	if interrupted {
		s.log.WarnContext(ctx, "imports still running at the stop were interrupted and rolled back")
	}
	return err
}

// ServeHTTP makes Server an http.Handler.
func (s *Server) ServeHTTP(w http.ResponseWriter, r *http.Request) { s.router.ServeHTTP(w, r) }

// Router exposes the routes, so tests can walk every registered route.
func (s *Server) Router() chi.Router { return s.router }

func (s *Server) notFound(w http.ResponseWriter, r *http.Request) {
	s.fail(w, r, http.StatusNotFound, "There is no page here.")
}

func (s *Server) healthz(w http.ResponseWriter, r *http.Request) {
	ctx, cancel := context.WithTimeout(r.Context(), 2*time.Second)
	defer cancel()
	w.Header().Set("Content-Type", "text/plain; charset=utf-8")
	if err := s.store.Ping(ctx); err != nil {
		s.log.ErrorContext(ctx, "health check failed", "err", err)
		w.WriteHeader(http.StatusServiceUnavailable)
		fmt.Fprintln(w, "database unavailable")
		return
	}
	fmt.Fprintln(w, "ok")
}

func cacheStatic(h http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		w.Header().Set("Cache-Control", "public, max-age=3600")
		h.ServeHTTP(w, r)
	})
}
