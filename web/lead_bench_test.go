package web

import (
	"context"
	"fmt"
	"io"
	"log/slog"
	"math/rand/v2"
	"net/http"
	"os"
	"path/filepath"
	"strconv"
	"syscall"
	"testing"
	"time"

	"golang.org/x/crypto/bcrypt"

	"github.com/pertinent/pertinent/store"
)

// seedLarge fills a new database with pairs × 3 judgments from 50 assessors through the
// store's loaders (the path imports take), grades 0-4 near a per-pair truth, one judgment
// every two seconds from 2025-01-01. It returns the store, the project and a lead's name.
func seedLarge(tb testing.TB, path string, pairs int) (*store.Store, store.Project) {
	tb.Helper()
	store.SetPasswordCost(bcrypt.MinCost)
	ctx := context.Background()
	st, err := store.Open(ctx, path)
	if err != nil {
		tb.Fatal(err)
	}
	if p, err := st.ProjectByName(ctx, "large"); err == nil {
		return st, p // made by an earlier run
	}
	lead, err := st.CreateUser(ctx, "lead", "Lead", store.RoleLead, testPassword)
	if err != nil {
		tb.Fatal(err)
	}
	p, err := st.CreateProject(ctx, store.NewProject{Name: "large"}, lead.ID)
	if err != nil {
		tb.Fatal(err)
	}
	if err := st.SetMember(ctx, p.ID, lead.ID, store.RoleLead, lead.ID); err != nil {
		tb.Fatal(err)
	}
	users := make([]int64, 50)
	for i := range users {
		u, err := st.CreateUser(ctx, fmt.Sprintf("rater%02d", i), "", store.RoleAssessor, testPassword)
		if err != nil {
			tb.Fatal(err)
		}
		if err := st.SetMember(ctx, p.ID, u.ID, store.RoleAssessor, lead.ID); err != nil {
			tb.Fatal(err)
		}
		users[i] = u.ID
	}
	rng := rand.New(rand.NewPCG(1, 2))
	base := time.Date(2025, 1, 1, 0, 0, 0, 0, time.UTC)
	const chunk = 20000
	for start := 0; start < pairs; start += chunk {
		err := st.Load(ctx, p.ID, func(l *store.Loader) error {
			var qid int64
			for i := start; i < min(pairs, start+chunk); i++ {
				if i%20 == 0 || qid == 0 {
					var err error
					if qid, err = l.Query(store.Query{ExternalID: "q" + strconv.Itoa(i/20), Text: "query " + strconv.Itoa(i/20)}); err != nil {
						return err
					}
				}
				pid, err := addPair(l, store.PairSpec{QueryID: qid}, store.Document{ExternalID: "d" + strconv.Itoa(i), Title: "Document " + strconv.Itoa(i), Body: "Text."})
				if err != nil {
					return err
				}
				truth := rng.IntN(5)
				var used [3]int
				for j := range 3 {
				again:
					r := rng.IntN(len(users))
					for _, u := range used[:j] {
						if u == r {
							goto again
						}
					}
					used[j] = r
					g := truth
					if rng.IntN(3) == 0 {
						g = min(max(truth+rng.IntN(3)-1, 0), 4)
					}
					at := base.Add(time.Duration(3*i+j) * 2 * time.Second).Format("2006-01-02T15:04:05.000Z")
					if err := l.Judgment(store.RecordedJudgment{PairID: pid, UserID: users[r], Grade: &g, TimeSpentMs: 2000 + rng.IntN(30000), At: at}); err != nil {
						return err
					}
				}
			}
			return nil
		})
		if err != nil {
			tb.Fatal(err)
		}
	}
	return st, p
}

// BenchmarkLeadPages renders the overview and the assessor table over 1,000,000 judgments
// (333,334 pairs × 3 of 50 assessors): "after1" and "after1000" are the first view after 1
// or 1,000 new judgments (the desk is brought up to date), "warm" a repeated view; the log
// gives the first view of the run, which builds the desk from scratch. PERTINENT_BENCH_DB keeps the generated file
// between runs (it takes minutes to make); PERTINENT_BENCH_PAIRS makes a smaller one.
func BenchmarkLeadPages(b *testing.B) {
	pairs := 333334
	if n, err := strconv.Atoi(os.Getenv("PERTINENT_BENCH_PAIRS")); err == nil && n > 0 {
		pairs = n
	}
	path := os.Getenv("PERTINENT_BENCH_DB")
	if path == "" {
		path = filepath.Join(b.TempDir(), "large.db")
	}
	t0 := time.Now()
	st, p := seedLarge(b, path, pairs)
	defer st.Close()
	b.Logf("database ready in %v", time.Since(t0).Round(time.Millisecond))
	srv, err := New(context.Background(), st, Options{Logger: slog.New(slog.NewTextHandler(io.Discard, nil))})
	if err != nil {
		b.Fatal(err)
	}
	lead, err := st.UserByUsername(context.Background(), "lead")
	if err != nil {
		b.Fatal(err)
	}
	a := &testApp{t: &testing.T{}, store: st}
	_ = a
	token, err := st.CreateSession(context.Background(), lead.ID, time.Hour)
	if err != nil {
		b.Fatal(err)
	}
	cookie := sessionCookie(b, srv, token)
	get := func(path string) {
		req, _ := http.NewRequest(http.MethodGet, path, nil)
		req.AddCookie(cookie)
		rec := &discardWriter{h: http.Header{}}
		srv.ServeHTTP(rec, req)
		if rec.status != http.StatusOK {
			b.Fatalf("GET %s: %d", path, rec.status)
		}
	}
	base := "/projects/" + strconv.FormatInt(p.ID, 10)
	var rater int64
	rater = lead.ID + 1
	// The first view builds the desk from scratch; later ones keep it current.
	t1 := time.Now()
	get(base + "/overview")
	b.Logf("first view (desk built from scratch) in %v", time.Since(t1).Round(time.Millisecond))
	touch := func(n int) {
		// New judgments move the project's version, so the next view brings the desk up to
		// date. Some replace a judgment the same assessor made before (a revision).
		err := st.Load(context.Background(), p.ID, func(l *store.Loader) error {
			for range n {
				g := rand.IntN(5)
				if err := l.Judgment(store.RecordedJudgment{PairID: 1 + int64(rand.IntN(pairs)), UserID: rater, Grade: &g, TimeSpentMs: 1 + rand.IntN(30000)}); err != nil {
					return err
				}
			}
			return nil
		})
		if err != nil {
			b.Fatal(err)
		}
	}
	for _, page := range []string{"/overview", "/assessors"} {
		for _, n := range []int{1, 1000} {
			b.Run(fmt.Sprintf("after%d%s", n, page), func(b *testing.B) {
				// CPU time of the process during the views too: the machine may be shared, and
				// wall time then says more about the neighbours than about the views.
				var cpu time.Duration
				for b.Loop() {
					b.StopTimer()
					touch(n)
					c0 := processCPU()
					b.StartTimer()
					get(base + page)
					b.StopTimer()
					cpu += processCPU() - c0
					b.StartTimer()
				}
				b.ReportMetric(float64(cpu.Milliseconds())/float64(b.N), "cpu-ms/op")
			})
		}
		b.Run("warm"+page, func(b *testing.B) {
			get(base + page)
			for b.Loop() {
				get(base + page)
			}
		})
	}
	d, err := st.Desk(context.Background(), p.ID)
	if err != nil {
		b.Fatal(err)
	}
	b.Logf("%d judgments; desk built in %v", d.Judgments, d.BuildTook)
}

// processCPU is the user and system time the process has used so far.
func processCPU() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

// discardWriter is a ResponseWriter that keeps only the status, so the benchmark measures
// the server, not a client.
type discardWriter struct {
	h      http.Header
	status int
}

func (w *discardWriter) Header() http.Header { return w.h }
func (w *discardWriter) Write(p []byte) (int, error) {
	if w.status == 0 {
		w.status = http.StatusOK
	}
	return len(p), nil
}
func (w *discardWriter) WriteHeader(s int) { w.status = s }

// sessionCookie signs a session token the way sign-in does, by asking the server to sign in
// a request that already carries it.
func sessionCookie(tb testing.TB, s *Server, token string) *http.Cookie {
	tb.Helper()
	req, _ := http.NewRequest(http.MethodGet, "/", nil)
	sess, _ := s.cookies.Get(req, sessionName)
	sess.Values = map[any]any{"token": token}
	rec := &headerRecorder{h: http.Header{}}
	if err := sess.Save(req, rec); err != nil {
		tb.Fatal(err)
	}
	res := http.Response{Header: rec.h}
	for _, c := range res.Cookies() {
		if c.Name == sessionName {
			return c
		}
	}
	tb.Fatal("no session cookie")
	return nil
}

type headerRecorder struct{ h http.Header }

func (w *headerRecorder) Header() http.Header         { return w.h }
func (w *headerRecorder) Write(p []byte) (int, error) { return len(p), nil }
func (w *headerRecorder) WriteHeader(int)             {}
