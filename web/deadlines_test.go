package web

import (
	"archive/zip"
	"bytes"
	"context"
	"crypto/rand"
	"encoding/hex"
	"fmt"
	"io"
	"log/slog"
	"mime/multipart"
	"net"
	"net/http"
	"net/http/httptest"
	"net/url"
	"strings"
	"testing"
	"time"

	"github.com/pertinent/pertinent/store"
)

// trickle hands out its bytes in equal parts spread over about the given time, as a slow
// uplink does.
type trickle struct {
	data  []byte
	part  int
	pause time.Duration
}

func newTrickle(data []byte, over time.Duration, parts int) *trickle {
	return &trickle{data: data, part: max(1, len(data)/parts), pause: over / time.Duration(parts)}
}

func (t *trickle) Read(p []byte) (int, error) {
	if len(t.data) == 0 {
		return 0, io.EOF
	}
	time.Sleep(t.pause)
	n := copy(p[:min(len(p), t.part)], t.data)
	t.data = t.data[n:]
	return n, nil
}

// smallBuffers gives accepted connections a small send buffer, so a response much larger
// than the buffers waits on the client as it would over a slow network.
type smallBuffers struct{ net.Listener }

func (l smallBuffers) Accept() (net.Conn, error) {
	c, err := l.Listener.Accept()
	if tc, ok := c.(*net.TCPConn); ok {
		tc.SetWriteBuffer(4096)
	}
	return c, err
}

// A server whose general timeouts are one second still takes an import upload that
// trickles in over three seconds and an export that a client reads over three seconds,
// while an ordinary form sent as slowly is cut off.
func TestLongTransfersOutliveTheGeneralTimeouts(t *testing.T) {
	a := newTestApp(t)
	srv, err := New(context.Background(), a.store, Options{Logger: slog.New(slog.NewTextHandler(io.Discard, nil)),
		ReadTimeout: time.Second, WriteTimeout: time.Second})
	if err != nil {
		t.Fatal(err)
	}
	ts := httptest.NewUnstartedServer(nil)
	ts.Config = srv.HTTPServer()
	ts.Listener = smallBuffers{ts.Listener}
	ts.Start()
	t.Cleanup(ts.Close)
	a.server = ts
	lead := a.signIn("lena")
	// The client's receive buffer is small too.
	lead.Transport = &http.Transport{DialContext: func(ctx context.Context, network, addr string) (net.Conn, error) {
		c, err := (&net.Dialer{}).DialContext(ctx, network, addr)
		if tc, ok := c.(*net.TCPConn); ok {
			tc.SetReadBuffer(4096)
		}
		return c, err
	}}

	// An upload of 4,000 rows whose document ids do not compress, over three seconds.
	var rows strings.Builder
	rows.WriteString("query_id,query_text,doc_id,title,body,priority\n")
	for i := range 4000 {
		id := make([]byte, 16)
		rand.Read(id)
		fmt.Fprintf(&rows, "s%d,slow upload %d,%s,Title %d,Body,1\n", i%40, i%40, hex.EncodeToString(id), i)
	}
	var body bytes.Buffer
	mw := multipart.NewWriter(&body)
	mw.WriteField("kind", "rows")
	fw, _ := mw.CreateFormFile("files", "rows.csv")
	io.WriteString(fw, rows.String())
	mw.Close()
	req, _ := http.NewRequest(http.MethodPost, fmt.Sprintf("%s/projects/%d/import", ts.URL, a.project.ID), newTrickle(body.Bytes(), 3*time.Second, 30))
	req.Header.Set("Content-Type", mw.FormDataContentType())
	req.ContentLength = int64(body.Len())
	res, err := lead.Do(req)
	if err != nil {
		t.Fatalf("slow upload: %v", err)
	}
	res.Body.Close()
	page := a.importDone(lead, res)
	if got := reportCounts(page)["pairs"]; got != "4000/0/0" {
		t.Fatalf("slow upload imported pairs %q, want 4000 new\n%s", got, page)
	}

	// Every pair gets a grade so the export has a row per pair.
	ctx := context.Background()
	var pairs []int64
	err = a.store.ExportPairs(ctx, a.project.ID, store.ExportScan{}, func(p *store.ExportPair) error {
		pairs = append(pairs, p.PairID)
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	err = a.store.Load(ctx, a.project.ID, func(l *store.Loader) error {
		for i, p := range pairs {
			g := i % 5
			if err := l.Judgment(store.RecordedJudgment{PairID: p, UserID: a.users["amir"].ID, Grade: &g}); err != nil {
				return err
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}

	// The export is read after a pause longer than the write timeout, then slowly.
	q := url.Values{"format": {"csv"}, "consensus": {"median"}}
	res, err = lead.Get(fmt.Sprintf("%s/projects/%d/export.zip?%s", ts.URL, a.project.ID, q.Encode()))
	if err != nil {
		t.Fatal(err)
	}
	defer res.Body.Close()
	if res.StatusCode != http.StatusOK {
		t.Fatalf("export: status %d", res.StatusCode)
	}
	var zipped bytes.Buffer
	buf := make([]byte, 4096)
	for i := 0; ; i++ {
		if i%16 == 0 {
			time.Sleep(time.Second / 2)
		}
		n, err := res.Body.Read(buf)
		zipped.Write(buf[:n])
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatalf("slow download broke off after %d bytes: %v", zipped.Len(), err)
		}
	}
	if zipped.Len() < 64<<10 { // several times the two small buffers
		t.Fatalf("the export is %d bytes: too small to outlast the buffers, so the test proves nothing", zipped.Len())
	}
	zr, err := zip.NewReader(bytes.NewReader(zipped.Bytes()), int64(zipped.Len()))
	if err != nil {
		t.Fatalf("slow download is not a whole zip: %v", err)
	}
	t.Logf("export of %d bytes read slowly; files %d", zipped.Len(), len(zr.File))

	// An ordinary form sent as slowly is cut off by the read timeout: no sign-in.
	form := url.Values{"username": {"lena"}, "password": {testPassword}}.Encode()
	req, _ = http.NewRequest(http.MethodPost, ts.URL+"/signin", newTrickle([]byte(form+strings.Repeat("&pad=x", 200)), 3*time.Second, 30))
	req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
	res, err = a.client().Do(req)
	if err == nil {
		res.Body.Close()
		if res.StatusCode == http.StatusSeeOther {
			t.Error("a sign-in trickled over three seconds went through a one-second read timeout")
		}
	}
}
