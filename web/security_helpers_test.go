package web

import (
	"bytes"
	"context"
	"io"
	"log/slog"
	"net/http"
	"net/http/cookiejar"
	"net/http/httptest"
	"net/url"
	"sync"
)

// restart serves a's store through a new Server with these options (wrapped, if wrap is
// set; over TLS, if tlsOn) and points a at it, so the usual helpers talk to it.
func (a *testApp) restart(opts Options, tlsOn bool, wrap func(http.Handler) http.Handler) *Server {
	a.t.Helper()
	srv, err := New(context.Background(), a.store, opts)
	if err != nil {
		a.t.Fatal(err)
	}
	var h http.Handler = srv
	if wrap != nil {
		h = wrap(srv)
	}
	if tlsOn {
		a.server = httptest.NewTLSServer(h)
	} else {
		a.server = httptest.NewServer(h)
	}
	a.t.Cleanup(a.server.Close)
	return srv
}

// tlsClient is a.client for a TLS server: it trusts the test certificate.
func (a *testApp) tlsClient() *http.Client {
	jar, _ := cookiejar.New(nil)
	return &http.Client{Jar: jar, Transport: a.server.Client().Transport,
		CheckRedirect: func(*http.Request, []*http.Request) error { return http.ErrUseLastResponse }}
}

// signInThrough signs the named user in through client c.
func (a *testApp) signInThrough(c *http.Client, name, password string) *http.Response {
	a.t.Helper()
	res := a.post(c, "/signin", url.Values{"username": {name}, "password": {password}})
	if res.StatusCode != http.StatusSeeOther {
		a.t.Fatalf("sign-in of %s: status %d, want 303", name, res.StatusCode)
	}
	return res
}

// lockedBuffer is a log destination that handlers on several goroutines may share.
type lockedBuffer struct {
	mu  sync.Mutex
	buf bytes.Buffer
}

func (b *lockedBuffer) Write(p []byte) (int, error) {
	b.mu.Lock()
	defer b.mu.Unlock()
	return b.buf.Write(p)
}

func (b *lockedBuffer) String() string {
	b.mu.Lock()
	defer b.mu.Unlock()
	return b.buf.String()
}

func discardLogger() *slog.Logger { return slog.New(slog.NewTextHandler(io.Discard, nil)) }
