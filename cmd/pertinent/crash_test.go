package main

import (
	"context"
	"fmt"
	"math/rand/v2"
	"net"
	"net/http"
	"net/http/cookiejar"
	"net/url"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"sync"
	"sync/atomic"
	"syscall"
	"testing"
	"time"

	"github.com/pertinent/pertinent/store"
)

// buildBinary compiles the real pertinent binary once for the process tests.
func buildBinary(t *testing.T) string {
	t.Helper()
	bin := filepath.Join(t.TempDir(), "pertinent")
	cmd := exec.Command("go", "build", "-o", bin, ".")
	cmd.Env = append(os.Environ(), "CGO_ENABLED=0")
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("go build: %v\n%s", err, out)
	}
	return bin
}

func freeAddr(t *testing.T) string {
	t.Helper()
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer ln.Close()
	return ln.Addr().String()
}

func startBinary(t *testing.T, bin, db, addr string) *exec.Cmd {
	t.Helper()
	cmd := exec.Command(bin, "serve", "--db", db, "--addr", addr, "--log-level", "error")
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	for i := 0; i < 200; i++ {
		if res, err := http.Get("http://" + addr + "/healthz"); err == nil {
			res.Body.Close()
			if res.StatusCode == http.StatusOK {
				return cmd
			}
		}
		time.Sleep(25 * time.Millisecond)
	}
	cmd.Process.Kill()
	t.Fatal("server did not come up")
	return nil
}

// loadRig is what the process tests start from: the real binary, a throwaway project of
// virtual assessors in a new database file, and a free loopback address to serve it on.
type loadRig struct {
	bin, db, addr, base, judgeURL string
	project                       int64
	users                         []loadUser
}

func newLoadRig(t *testing.T, file string, pairs, assessors int) loadRig {
	t.Helper()
	if testing.Short() {
		t.Skip("process test; runs without -short")
	}
	rig := loadRig{bin: buildBinary(t), db: filepath.Join(t.TempDir(), file)}
	var err error
	rig.project, rig.users, err = setupLoadProject(context.Background(), rig.db, pairs, assessors, 3)
	if err != nil {
		t.Fatal(err)
	}
	rig.addr = freeAddr(t)
	rig.base = "http://" + rig.addr
	rig.judgeURL = fmt.Sprintf("%s/projects/%d/judge", rig.base, rig.project)
	return rig
}

type ack struct {
	pair string
	user string
}

// TestKilledServerLosesNoAcknowledgedJudgment runs the real binary under 50 virtual
// assessors, kills it with SIGKILL at random moments ten times, restarts it on the same
// file, and checks that every judgment whose submission was answered with success is in the
// database exactly once, and that the file passes SQLite's integrity check.
func TestKilledServerLosesNoAcknowledgedJudgment(t *testing.T) {
	ctx := context.Background()
	rig := newLoadRig(t, "crash.db", 6000, 50)

	var mu sync.Mutex
	var acks []ack
	var stop atomic.Bool
	var wg sync.WaitGroup
	server := startBinary(t, rig.bin, rig.db, rig.addr)
	// Sessions are kept in the database, so one sign-in outlives every restart.
	clients := make([]*http.Client, len(rig.users))
	for i, u := range rig.users {
		jar, _ := cookiejar.New(nil)
		clients[i] = &http.Client{Jar: jar, Timeout: 5 * time.Second,
			CheckRedirect: func(*http.Request, []*http.Request) error { return http.ErrUseLastResponse }}
		if err := loadSignIn(ctx, clients[i], rig.base, u); err != nil {
			t.Fatal(err)
		}
	}
	for i, u := range rig.users {
		c := clients[i]
		wg.Add(1)
		go func() {
			defer wg.Done()
			rng := rand.New(rand.NewPCG(uint64(i), 9))
			for !stop.Load() {
				pair, err := loadFetch(ctx, c, http.MethodGet, rig.judgeURL, nil)
				for err == nil && pair != "" && !stop.Load() {
					form := url.Values{"pair": {pair}, "grade": {strconv.Itoa(rng.IntN(5))}}
					var next string
					next, err = loadFetch(ctx, c, http.MethodPost, rig.judgeURL, form)
					if err == nil { // a complete 200 answer: the judgment is acknowledged
						mu.Lock()
						acks = append(acks, ack{pair, u.name})
						mu.Unlock()
					}
					pair = next
				}
				if err == nil && pair == "" {
					return // nothing left to judge
				}
				time.Sleep(10 * time.Millisecond)
			}
		}()
	}
	rng := rand.New(rand.NewPCG(1, 2))
	for kill := 0; kill < 10; kill++ {
		time.Sleep(time.Duration(400+rng.IntN(1200)) * time.Millisecond)
		if err := server.Process.Signal(syscall.SIGKILL); err != nil {
			t.Fatal(err)
		}
		server.Wait()
		server = startBinary(t, rig.bin, rig.db, rig.addr)
	}
	time.Sleep(300 * time.Millisecond)
	stop.Store(true)
	wg.Wait()
	server.Process.Signal(syscall.SIGTERM)
	server.Wait()

	if len(acks) < 200 {
		t.Fatalf("only %d judgments acknowledged: too few to prove anything", len(acks))
	}
	st := openTestStore(t, rig.db)
	if err := store.IntegrityCheck(ctx, rig.db); err != nil {
		t.Fatalf("integrity check after ten kills: %v", err)
	}
	lost := unacknowledged(t, st, rig.users, acks)
	t.Logf("%d acknowledged judgments across 10 kills; %d missing or duplicated", len(acks), lost)
}

// unacknowledged counts the acknowledged judgments that are not in the database exactly once
// (as the one current judgment of their pair and assessor), naming the first few.
func unacknowledged(t *testing.T, st *store.Store, users []loadUser, acks []ack) int {
	t.Helper()
	ctx := context.Background()
	ids := map[string]int64{}
	for _, u := range users {
		uu, err := st.UserByUsername(ctx, u.name)
		if err != nil {
			t.Fatal(err)
		}
		ids[u.name] = uu.ID
	}
	lost := 0
	for _, a := range acks {
		pid, _ := strconv.ParseInt(a.pair, 10, 64)
		h, err := st.JudgmentHistory(ctx, pid, ids[a.user])
		if err != nil {
			t.Fatal(err)
		}
		if len(h) != 1 || !h[0].Current {
			lost++
			if lost <= 5 {
				t.Errorf("acknowledged judgment of pair %s by %s: %d rows in the database, want exactly 1", a.pair, a.user, len(h))
			}
		}
	}
	return lost
}

// TestTerminateFinishesRequestsInFlight keeps assessors judging, asks the server to stop
// with SIGTERM in the middle, and checks that every judgment the server committed was also
// answered (a request cut off mid-way would leave a judgment nobody was told about), that
// the process exits cleanly, and that the database was closed with its log folded back in.
// Requests that race the closing of an idle keep-alive connection are never read by the
// server; they leave no judgment and are not counted against it.
func TestTerminateFinishesRequestsInFlight(t *testing.T) {
	ctx := context.Background()
	rig := newLoadRig(t, "term.db", 2000, 20)
	server := startBinary(t, rig.bin, rig.db, rig.addr)
	var mu sync.Mutex
	answered := map[ack]bool{}
	var wg sync.WaitGroup
	for _, u := range rig.users {
		jar, _ := cookiejar.New(nil)
		c := &http.Client{Jar: jar, CheckRedirect: func(*http.Request, []*http.Request) error { return http.ErrUseLastResponse }}
		if err := loadSignIn(ctx, c, rig.base, u); err != nil {
			t.Fatal(err)
		}
		wg.Add(1)
		go func() {
			defer wg.Done()
			pair, err := loadFetch(ctx, c, http.MethodGet, rig.judgeURL, nil)
			for i := 0; err == nil && pair != "" && i < 300; i++ {
				var next string
				next, err = loadFetch(ctx, c, http.MethodPost, rig.judgeURL, url.Values{"pair": {pair}, "grade": {"2"}})
				if err == nil {
					mu.Lock()
					answered[ack{pair, u.name}] = true
					mu.Unlock()
				}
				pair = next
			}
		}()
	}
	time.Sleep(400 * time.Millisecond)
	if err := server.Process.Signal(syscall.SIGTERM); err != nil {
		t.Fatal(err)
	}
	err := server.Wait()
	wg.Wait()
	if err != nil {
		t.Errorf("server exit after SIGTERM: %v, want a clean exit", err)
	}
	if len(answered) == 0 {
		t.Fatal("no request was answered before the shutdown; the test proves nothing")
	}
	if fi, err := os.Stat(rig.db + "-wal"); err == nil && fi.Size() > 0 {
		t.Errorf("write-ahead log left with %d bytes: the database was not closed cleanly", fi.Size())
	}
	st := openTestStore(t, rig.db)
	names, err := st.UserNames(ctx)
	if err != nil {
		t.Fatal(err)
	}
	committed := 0
	err = st.Ratings(ctx, rig.project, func(r store.Rating) error {
		committed++
		if !answered[ack{strconv.FormatInt(r.PairID, 10), names[r.UserID]}] {
			t.Errorf("pair %d by %s was stored but its request never got an answer", r.PairID, names[r.UserID])
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if committed != len(answered) {
		t.Errorf("%d judgments answered, %d stored", len(answered), committed)
	}
	t.Logf("%d judgments answered and stored before the shutdown", committed)
}
