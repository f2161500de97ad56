package main

import (
	"context"
	"fmt"
	"io"
	"math/rand/v2"
	"net/http"
	"net/http/cookiejar"
	"net/url"
	"regexp"
	"strings"
	"sync"
	"sync/atomic"
	"syscall"
	"testing"
	"time"

	"github.com/pertinent/pertinent/store"
)

var (
	comparisonField = regexp.MustCompile(`name="comparison" value="(\d+)"`)
	leftField       = regexp.MustCompile(`name="left" value="(\d+)"`)
)

// fetchComparison sends one request as the comparing page's htmx does and returns the
// comparison and left document the answer offers next (empty when nothing is left).
func fetchComparison(ctx context.Context, c *http.Client, method, u string, form url.Values) (id, left string, err error) {
	var body io.Reader
	if form != nil {
		body = strings.NewReader(form.Encode())
	}
	req, _ := http.NewRequestWithContext(ctx, method, u, body)
	if form != nil {
		req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
		req.Header.Set("HX-Request", "true")
	}
	res, err := c.Do(req)
	if err != nil {
		return "", "", err
	}
	defer res.Body.Close()
	b, err := io.ReadAll(res.Body)
	if err != nil {
		return "", "", err
	}
	if res.StatusCode != http.StatusOK {
		return "", "", fmt.Errorf("%s %s: status %d", method, u, res.StatusCode)
	}
	m, l := comparisonField.FindSubmatch(b), leftField.FindSubmatch(b)
	if m == nil || l == nil {
		return "", "", nil
	}
	return string(m[1]), string(l[1]), nil
}

// TestKilledServerLosesNoAcknowledgedPreference is TestKilledServerLosesNoAcknowledgedJudgment
// for comparisons: 30 virtual assessors answer comparisons through the real binary while it
// is killed with SIGKILL ten times; every answer acknowledged with a complete 200 is in the
// database exactly once, and no comparison holds more answers than it needs.
func TestKilledServerLosesNoAcknowledgedPreference(t *testing.T) {
	ctx := context.Background()
	rig := newLoadRig(t, "crash-pref.db", 1000, 30)
	st := openTestStore(t, rig.db)
	lead, err := st.CreateUser(ctx, "crash-lead", "", store.RoleLead, "long enough password")
	if err != nil {
		t.Fatal(err)
	}
	// A fresh file numbers the project's pairs from 1; every document is settled at grade 4.
	for pid := int64(1); pid <= 1000; pid++ {
		if _, err := st.Adjudicate(ctx, pid, lead.ID, 4, ""); err != nil {
			t.Fatalf("pair %d: %v", pid, err)
		}
	}
	if err := st.SetTaskKind(ctx, rig.project, store.TaskPreference, nil, lead.ID); err != nil {
		t.Fatal(err)
	}
	st.Close()
	compareURL := fmt.Sprintf("%s/projects/%d/compare", rig.base, rig.project)

	type answerAck struct{ comparison, user string }
	var mu sync.Mutex
	var acks []answerAck
	var stop atomic.Bool
	var wg sync.WaitGroup
	server := startBinary(t, rig.bin, rig.db, rig.addr)
	clients := make([]*http.Client, len(rig.users))
	for i, u := range rig.users {
		jar, _ := cookiejar.New(nil)
		clients[i] = &http.Client{Jar: jar, Timeout: 5 * time.Second,
			CheckRedirect: func(*http.Request, []*http.Request) error { return http.ErrUseLastResponse }}
		if err := loadSignIn(ctx, clients[i], rig.base, u); err != nil {
			t.Fatal(err)
		}
	}
	outcomes := []string{"left", "right", "same", "neither"}
	for i, u := range rig.users {
		c := clients[i]
		wg.Add(1)
		go func() {
			defer wg.Done()
			rng := rand.New(rand.NewPCG(uint64(i), 11))
			for !stop.Load() {
				id, left, err := fetchComparison(ctx, c, http.MethodGet, compareURL, nil)
				for err == nil && id != "" && !stop.Load() {
					form := url.Values{"comparison": {id}, "left": {left}, "outcome": {outcomes[rng.IntN(len(outcomes))]}}
					var nextID, nextLeft string
					nextID, nextLeft, err = fetchComparison(ctx, c, http.MethodPost, compareURL, form)
					if err == nil { // a complete 200 answer: the answer is acknowledged
						mu.Lock()
						acks = append(acks, answerAck{id, u.name})
						mu.Unlock()
					}
					id, left = nextID, nextLeft
				}
				time.Sleep(10 * time.Millisecond)
			}
		}()
	}
	rng := rand.New(rand.NewPCG(3, 4))
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
		t.Fatalf("only %d answers acknowledged: too few to prove anything", len(acks))
	}
	if err := store.IntegrityCheck(ctx, rig.db); err != nil {
		t.Fatalf("integrity check after ten kills: %v", err)
	}
	st = openTestStore(t, rig.db)
	stored := map[answerAck]int{}
	perComparison := map[int64]int{}
	for _, u := range rig.users {
		uu, err := st.UserByUsername(ctx, u.name)
		if err != nil {
			t.Fatal(err)
		}
		hist, err := st.PreferenceAnswersByAssessor(ctx, rig.project, uu.ID)
		if err != nil {
			t.Fatal(err)
		}
		for _, h := range hist {
			stored[answerAck{fmt.Sprint(h.ComparisonID), u.name}]++
			if h.Current && h.Outcome != "" {
				perComparison[h.ComparisonID]++
			}
		}
	}
	lost := 0
	for _, a := range acks {
		if stored[a] != 1 {
			lost++
			if lost <= 5 {
				t.Errorf("acknowledged answer to comparison %s by %s: %d rows in the database, want exactly 1", a.comparison, a.user, stored[a])
			}
		}
	}
	for id, n := range perComparison {
		if n > 3 {
			t.Errorf("comparison %d holds %d answers, more than the 3 it needs", id, n)
		}
	}
	t.Logf("%d acknowledged answers across 10 kills; %d missing or duplicated", len(acks), lost)
}
