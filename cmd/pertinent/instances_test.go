package main

import (
	"context"
	"fmt"
	"math/rand/v2"
	"net/http"
	"net/http/cookiejar"
	"net/url"
	"os/exec"
	"strconv"
	"sync"
	"sync/atomic"
	"syscall"
	"testing"
	"time"

	"github.com/pertinent/pertinent/internal/pgtest"
)

// instancesRig is two `pertinent serve` processes of the real binary on one PostgreSQL
// database, with a throwaway project of virtual assessors in it.
type instancesRig struct {
	bin, db string
	addrs   [2]string
	servers [2]*exec.Cmd
	project int64
	users   []loadUser
}

func newInstancesRig(t *testing.T, pairs, assessors int) *instancesRig {
	t.Helper()
	if testing.Short() {
		t.Skip("process test; runs without -short")
	}
	rig := &instancesRig{bin: buildBinary(t), db: pgtest.New(t)}
	var err error
	if rig.project, rig.users, err = setupLoadProject(context.Background(), rig.db, pairs, assessors, 3); err != nil {
		t.Fatal(err)
	}
	for i := range rig.servers {
		rig.addrs[i] = freeAddr(t)
		rig.servers[i] = startBinary(t, rig.bin, rig.db, rig.addrs[i])
	}
	t.Cleanup(func() {
		for _, s := range rig.servers {
			s.Process.Signal(syscall.SIGTERM)
			s.Wait()
		}
	})
	return rig
}

func (rig *instancesRig) judgeURL(i int) string {
	return fmt.Sprintf("http://%s/projects/%d/judge", rig.addrs[i], rig.project)
}

// loadClient is one assessor's browser. Its timeout only catches a request that hangs: these
// tests check what is stored, not how fast, and with 200 assessors on one project's lock a
// turn can wait many seconds on a machine busy with other test binaries.
func loadClient() *http.Client {
	jar, _ := cookiejar.New(nil)
	return &http.Client{Jar: jar, Timeout: 60 * time.Second,
		CheckRedirect: func(*http.Request, []*http.Request) error { return http.ErrUseLastResponse }}
}

// Two instances on one database, 200 assessors, 2,000 pairs needing 3 judgments each: every
// request goes to either instance at random (no sticky sessions), and at the end every pair
// holds exactly 3 current judgments by 3 different assessors, with no error answer on the way.
func TestTwoInstancesShareTheWork(t *testing.T) {
	ctx := context.Background()
	rig := newInstancesRig(t, 2000, 200)
	var errors atomic.Int64
	var firstErr atomic.Value
	var wg sync.WaitGroup
	for i, u := range rig.users {
		wg.Add(1)
		go func() {
			defer wg.Done()
			rng := rand.New(rand.NewPCG(uint64(i), 3))
			c := loadClient()
			fail := func(err error) {
				errors.Add(1)
				firstErr.CompareAndSwap(nil, err.Error())
			}
			if err := loadSignIn(ctx, c, "http://"+rig.addrs[i%2], u); err != nil {
				fail(err)
				return
			}
			pair, err := loadFetch(ctx, c, http.MethodGet, rig.judgeURL(rng.IntN(2)), nil)
			for err == nil && pair != "" {
				form := url.Values{"pair": {pair}, "grade": {strconv.Itoa(rng.IntN(5))}}
				pair, err = loadFetch(ctx, c, http.MethodPost, rig.judgeURL(rng.IntN(2)), form)
			}
			if err != nil {
				fail(err)
			}
		}()
	}
	wg.Wait()
	if n := errors.Load(); n > 0 {
		t.Fatalf("%d error answers; the first: %v", n, firstErr.Load())
	}
	st := openTestStore(t, rig.db)
	prog, err := st.ProjectProgress(ctx, rig.project)
	if err != nil {
		t.Fatal(err)
	}
	if prog.Pairs != 2000 || prog.Done != 2000 || prog.Judgments != 6000 {
		t.Fatalf("progress %+v, want 2000 pairs done with 6000 judgments", prog)
	}
	for pid := int64(1); pid <= 2000; pid++ {
		js, err := st.PairJudgments(ctx, pid)
		if err != nil {
			t.Fatal(err)
		}
		who := map[int64]bool{}
		for _, j := range js {
			if j.Current {
				who[j.UserID] = true
			}
		}
		if len(who) != 3 || len(js) != 3 {
			t.Fatalf("pair %d: %d judgment rows, %d current assessors; want 3 and 3", pid, len(js), len(who))
		}
	}
}

// One of two instances is killed with SIGKILL ten times under load and restarted: every
// judgment acknowledged by either is in the database exactly once, and the assessors of the
// other instance never get an error meanwhile.
func TestKillingOneInstanceLosesNothingAndTheOtherServes(t *testing.T) {
	ctx := context.Background()
	rig := newInstancesRig(t, 6000, 60)
	var mu sync.Mutex
	var acks []ack
	var stop atomic.Bool
	var survivorErrors atomic.Int64
	var firstErr atomic.Value
	var wg sync.WaitGroup
	clients := make([]*http.Client, len(rig.users))
	for i, u := range rig.users {
		clients[i] = loadClient()
		if err := loadSignIn(ctx, clients[i], "http://"+rig.addrs[i%2], u); err != nil {
			t.Fatal(err)
		}
	}
	for i, u := range rig.users {
		c, inst := clients[i], i%2 // instance 1 is the one killed
		wg.Add(1)
		go func() {
			defer wg.Done()
			rng := rand.New(rand.NewPCG(uint64(i), 9))
			for !stop.Load() {
				pair, err := loadFetch(ctx, c, http.MethodGet, rig.judgeURL(inst), nil)
				for err == nil && pair != "" && !stop.Load() {
					form := url.Values{"pair": {pair}, "grade": {strconv.Itoa(rng.IntN(5))}}
					var next string
					next, err = loadFetch(ctx, c, http.MethodPost, rig.judgeURL(inst), form)
					if err == nil {
						mu.Lock()
						acks = append(acks, ack{pair, u.name})
						mu.Unlock()
					}
					pair = next
				}
				if err != nil && inst == 0 {
					survivorErrors.Add(1)
					firstErr.CompareAndSwap(nil, err.Error())
				}
				if err == nil && pair == "" {
					return
				}
				time.Sleep(10 * time.Millisecond)
			}
		}()
	}
	rng := rand.New(rand.NewPCG(4, 5))
	for kill := 0; kill < 10; kill++ {
		time.Sleep(time.Duration(400+rng.IntN(1200)) * time.Millisecond)
		if err := rig.servers[1].Process.Signal(syscall.SIGKILL); err != nil {
			t.Fatal(err)
		}
		rig.servers[1].Wait()
		rig.servers[1] = startBinary(t, rig.bin, rig.db, rig.addrs[1])
	}
	time.Sleep(300 * time.Millisecond)
	stop.Store(true)
	wg.Wait()
	if n := survivorErrors.Load(); n > 0 {
		t.Errorf("the instance left running answered %d requests with errors; the first: %v", n, firstErr.Load())
	}
	if len(acks) < 200 {
		t.Fatalf("only %d judgments acknowledged: too few to prove anything", len(acks))
	}
	st := openTestStore(t, rig.db)
	lost := unacknowledged(t, st, rig.users, acks)
	t.Logf("%d acknowledged judgments across 10 kills of one instance; %d missing or duplicated", len(acks), lost)
}
