package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"log/slog"
	"net"
	"net/http"
	"os"
	"runtime/debug"
	"time"

	"github.com/pertinent/pertinent/store"
	"github.com/pertinent/pertinent/web"
)

// serverFlags are the flags of every command that serves the site.
type serverFlags struct {
	addr     *string
	db       *string
	secure   *bool
	logLevel *string
	pprof    *string
}

func addServerFlags(fs *flag.FlagSet, defaultDB string) serverFlags {
	return serverFlags{
		addr:     fs.String("addr", env("PERTINENT_ADDR", "127.0.0.1:8080"), "address to listen on (env PERTINENT_ADDR)"),
		db:       dbFlag(fs, defaultDB),
		secure:   fs.Bool("secure-cookies", envBool("PERTINENT_SECURE_COOKIES", false), "mark session cookies Secure, for use behind a TLS-terminating proxy (env PERTINENT_SECURE_COOKIES)"),
		logLevel: fs.String("log-level", env("PERTINENT_LOG_LEVEL", "info"), "debug, info, warn or error (env PERTINENT_LOG_LEVEL)"),
		pprof:    fs.String("pprof", env("PERTINENT_PPROF", ""), "serve Go's profiler (net/http/pprof) on this loopback address, apart from the site; off when empty (env PERTINENT_PPROF)"),
	}
}

func (f serverFlags) logger(w io.Writer) (*slog.Logger, error) {
	var level slog.Level
	if err := level.UnmarshalText([]byte(*f.logLevel)); err != nil {
		return nil, fmt.Errorf("--log-level: %w", err)
	}
	return slog.New(slog.NewTextHandler(w, &slog.HandlerOptions{Level: level})), nil
}

// openToServe parses the server flags of a serving command, makes its logger and opens its
// database; the caller closes the store.
func openToServe(ctx context.Context, name, defaultDB string, args []string, stderr io.Writer) (serverFlags, *slog.Logger, *store.Store, error) {
	fs := newFlags(name, stderr)
	f := addServerFlags(fs, defaultDB)
	if err := fs.Parse(args); err != nil {
		return f, nil, nil, err
	}
	log, err := f.logger(stderr)
	if err != nil {
		return f, nil, nil, err
	}
	st, err := store.Open(ctx, *f.db)
	return f, log, st, err
}

func runServe(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	f, log, st, err := openToServe(ctx, "serve", "pertinent.db", args, stderr)
	if err != nil {
		return err
	}
	defer st.Close()
	return serve(ctx, st, f, log, func(addr string) {
		fmt.Fprintf(stdout, "pertinent is serving %s at http://%s/\n", store.DatabaseName(*f.db), addr)
	})
}

// tuneGC trades memory the server has to spare for fewer collections, unless GOGC or
// GOMEMLIMIT say otherwise. A judging request allocates a few tens of kilobytes, all of it
// garbage at once; at the default GOGC=100 over a live heap of ~10 MB the collector ran
// several times a second under load. GOGC=400 with a soft limit of 96 MiB lets the heap
// grow until the limit, where the collector works harder again, so RSS stays bounded.
func tuneGC() {
	if _, ok := os.LookupEnv("GOGC"); !ok {
		debug.SetGCPercent(400)
	}
	if _, ok := os.LookupEnv("GOMEMLIMIT"); !ok {
		debug.SetMemoryLimit(96 << 20)
	}
}

// serve runs the site until ctx ends, then lets in-flight requests finish before returning.
func serve(ctx context.Context, st *store.Store, f serverFlags, log *slog.Logger, ready func(addr string)) error {
	tuneGC()
	h, err := web.New(ctx, st, web.Options{SecureCookies: *f.secure, Logger: log})
	if err != nil {
		return err
	}
	ln, err := net.Listen("tcp", *f.addr)
	if err != nil {
		return err
	}
	if *f.pprof != "" {
		stop, err := servePprof(*f.pprof, log)
		if err != nil {
			ln.Close()
			return err
		}
		defer stop()
	}
	srv := h.HTTPServer() // general timeouts; import uploads and exports extend their own
	errc := make(chan error, 1)
	go func() { errc <- srv.Serve(ln) }()
	go warmDesks(ctx, st, log)
	ready(ln.Addr().String())
	select {
	case err := <-errc:
		return err
	case <-ctx.Done():
	}
	log.Info("shutting down: finishing requests in flight")
	shutCtx, cancel := context.WithTimeout(context.Background(), 15*time.Second)
	defer cancel()
	err = srv.Shutdown(shutCtx)
	// Then the imports running in the background: 30 s to finish, then rolled back; a
	// minute in all, so a stuck one cannot hold the stop forever.
	jobCtx, cancelJobs := context.WithTimeout(context.Background(), time.Minute)
	defer cancelJobs()
	if jerr := h.Shutdown(jobCtx); err == nil {
		err = jerr
	}
	if err != nil {
		return err
	}
	if err := <-errc; !errors.Is(err, http.ErrServerClosed) {
		return err
	}
	log.Info("stopped")
	return nil
}

// warmDesks builds every open project's lead figures once at start, in the background, so the
// first lead to look after a restart does not wait for a read of every judgment; later views
// keep them current from the changes alone.
func warmDesks(ctx context.Context, st *store.Store, log *slog.Logger) {
	projects, err := st.Projects(ctx)
	if err != nil {
		return
	}
	for _, p := range projects {
		if p.Archived || ctx.Err() != nil {
			continue
		}
		start := time.Now()
		if _, err := st.Desk(ctx, p.ID); err != nil {
			if ctx.Err() == nil {
				log.Warn("could not prepare the lead's figures", "project", p.ID, "err", err)
			}
			continue
		}
		log.Debug("lead's figures ready", "project", p.ID, "took", time.Since(start))
	}
}
