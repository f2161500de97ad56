package web

import (
	"errors"
	"log/slog"
	"net/http"
	"time"
)

// Defaults of the connection timeouts (Options).
const (
	defaultReadTimeout     = 60 * time.Second
	defaultWriteTimeout    = 60 * time.Second
	defaultTransferTimeout = time.Hour
)

// HTTPServer returns the http.Server that serves s, with the general timeouts of its
// Options: reading the headers, the whole request, writing the response and an idle
// keep-alive connection are each bounded, so a stalled client cannot hold a connection.
// The long transfers (longTransfer) extend their own deadlines.
func (s *Server) HTTPServer() *http.Server {
	return &http.Server{
		Handler:           s,
		ReadHeaderTimeout: min(10*time.Second, s.opts.ReadTimeout),
		ReadTimeout:       s.opts.ReadTimeout,
		WriteTimeout:      s.opts.WriteTimeout,
		IdleTimeout:       120 * time.Second,
		ErrorLog:          slog.NewLogLogger(s.log.Handler(), slog.LevelWarn),
	}
}

// longTransfer lets a request that moves a large file (an import's upload of up to
// maxUpload, a streamed export, uploaded run files) take Options.TransferTimeout to read
// and write instead of the general timeouts, which would cut it off mid-way. It sits after
// the role checks, so only a signed-in lead or token holder of the project gets the longer
// deadline.
func (s *Server) longTransfer(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		rc := http.NewResponseController(w)
		until := time.Now().Add(s.opts.TransferTimeout)
		for _, set := range []func(time.Time) error{rc.SetReadDeadline, rc.SetWriteDeadline} {
			// A writer without a connection (a recorder in tests) has no deadline to move.
			if err := set(until); err != nil && !errors.Is(err, http.ErrNotSupported) {
				s.log.WarnContext(r.Context(), "could not extend a transfer's deadline", "path", r.URL.Path, "err", err)
			}
		}
		next.ServeHTTP(w, r)
	})
}
