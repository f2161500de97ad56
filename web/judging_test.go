package web

import (
	"context"
	"errors"
	"fmt"
	"math"
	"net/http"
	"net/url"
	"strings"
	"sync"
	"testing"

	"github.com/go-chi/chi/v5"
)

// 200 assessors, each with their own signed-in client, drain 2,000 pairs needing 3
// judgments each through the submit-and-next request; afterwards every pair has exactly 3
// current judgments from 3 different assessors and no other judgment rows exist.
func TestConcurrentAssessorsDrainProjectExactly(t *testing.T) {
	a := newTestApp(t, withPairs(100, 20), withAssessors(200), withPerPair(3))
	clients := make([]*http.Client, len(a.assessors))
	for i, u := range a.assessors {
		clients[i] = a.signIn(u.Username)
	}
	var wg sync.WaitGroup
	errs := make(chan error, len(clients))
	var mu sync.Mutex
	refused := 0
	for i, c := range clients {
		wg.Add(1)
		go func() {
			defer wg.Done()
			status, body, err := a.send(c, http.MethodGet, a.judgePath(), nil, false)
			if err != nil || status != http.StatusOK {
				errs <- fmt.Errorf("judge page: %d %v", status, err)
				return
			}
			for pair := offeredPair(body); pair != 0; pair = offeredPair(body) {
				status, body, err = a.send(c, http.MethodPost, a.judgePath(), url.Values{
					"pair": {fmt.Sprint(pair)}, "grade": {fmt.Sprint(i % 5)}, "elapsed_ms": {"1500"}}, true)
				if err != nil || status != http.StatusOK {
					errs <- fmt.Errorf("submit of pair %d: %d %v %s", pair, status, err, body)
					return
				}
				if strings.Contains(body, "Not saved") {
					mu.Lock()
					refused++
					mu.Unlock()
				}
			}
		}()
	}
	wg.Wait()
	close(errs)
	for err := range errs {
		t.Fatal(err)
	}
	var pairs, exact, rows, nonCurrent int
	for _, p := range a.pairs {
		judged, err := a.store.JudgedCount(context.Background(), p)
		if err != nil {
			t.Fatal(err)
		}
		current, by := 0, map[int64]bool{}
		for _, j := range a.judgments(p) {
			rows++
			if j.Current {
				current++
				by[j.UserID] = true
			} else {
				nonCurrent++
			}
		}
		pairs++
		if judged == 3 && current == 3 && len(by) == 3 {
			exact++
		}
	}
	if pairs != 2000 || exact != 2000 {
		t.Errorf("%d of %d pairs have exactly 3 current judgments from 3 assessors", exact, pairs)
	}
	if rows != 6000 || nonCurrent != 0 {
		t.Errorf("%d judgment rows (%d not current), want exactly 6000 current ones", rows, nonCurrent)
	}
	if refused != 0 {
		t.Errorf("%d submissions were refused although every pair was leased to its assessor", refused)
	}
}

// Assessor B walks every GET route of the router after assessor A graded a pair with a
// distinctive note: A's note and name appear nowhere. A sees their own note on My work, so
// the check would catch a page that showed it.
func TestAssessorNeverSeesAnotherAssessorsWork(t *testing.T) {
	a := newTestApp(t, withPairs(1, 2), withAssessors(2), withPerPair(3))
	const note = "zebra-quartz-1729 spotted"
	ua, ub := a.assessors[0], a.assessors[1]
	ca, cb := a.signIn(ua.Username), a.signIn(ub.Username)
	_, body, _ := a.send(ca, http.MethodGet, a.judgePath(), nil, false)
	pair := offeredPair(body)
	for _, form := range []url.Values{
		{"pair": {fmt.Sprint(pair)}, "grade": {"4"}, "note": {note}},
	} {
		if status, body, err := a.send(ca, http.MethodPost, a.judgePath(), form, true); err != nil || status != http.StatusOK {
			t.Fatalf("A's judgment: %d %v %s", status, err, body)
		}
	}
	_, body, _ = a.send(ca, http.MethodGet, a.judgePath(), nil, false)
	if status, _, _ := a.send(ca, http.MethodPost, a.judgePath(), url.Values{"pair": {fmt.Sprint(offeredPair(body))}, "cannot_judge": {"disturbing"}, "note": {note}}, false); status != http.StatusSeeOther {
		t.Fatalf("A's flag: status %d", status)
	}
	if _, mine, _ := a.send(ca, http.MethodGet, fmt.Sprintf("/projects/%d/mine", a.project.ID), nil, false); !strings.Contains(mine, note) {
		t.Fatalf("A's own My work page should show A's note")
	}
	// B judges too (so B's pages have history) and sees both of A's pairs.
	secret := []string{note, ua.Username, ua.DisplayName}
	check := func(where, body string) {
		for _, s := range secret {
			if strings.Contains(body, s) {
				t.Errorf("%s shows %q to another assessor", where, s)
			}
		}
	}
	var paths []string
	err := chi.Walk(a.srv.Router(), func(method, route string, _ http.Handler, _ ...func(http.Handler) http.Handler) error {
		if method != http.MethodGet {
			return nil
		}
		p := strings.ReplaceAll(route, "{project}", fmt.Sprint(a.project.ID))
		p = strings.ReplaceAll(p, "/*", "/app.js")
		// A's own id and the pairs A judged are the likeliest places for A's work to leak.
		p = strings.NewReplacer("{user}", fmt.Sprint(ua.ID), "{pair}", fmt.Sprint(offeredPair(body)),
			"{revision}", "1", "{token}", "1", "{evaluation}", "1", "{design}", "1", "{job}", "1").Replace(p)
		if strings.Contains(p, "{") {
			return errors.New("route with an unknown parameter: " + route)
		}
		paths = append(paths, p, p+"?saved=4", p+"?changed=1")
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if len(paths) < 5*3 {
		t.Fatalf("walked only %v", paths)
	}
	for range 2 {
		_, body, _ := a.send(cb, http.MethodGet, a.judgePath(), nil, false)
		check("the judging page", body)
		status, frag, _ := a.send(cb, http.MethodPost, a.judgePath(), url.Values{"pair": {fmt.Sprint(offeredPair(body))}, "grade": {"1"}}, true)
		if status != http.StatusOK {
			t.Fatalf("B's judgment: %d", status)
		}
		check("the submit-and-next fragment", frag)
	}
	for _, p := range paths {
		_, body, err := a.send(cb, http.MethodGet, p, nil, false)
		if err != nil {
			t.Fatal(err)
		}
		check("GET "+p, body)
	}
	// B's own change and undo answers carry nothing of A either.
	_, frag, _ := a.send(cb, http.MethodPost, fmt.Sprintf("/projects/%d/mine", a.project.ID), url.Values{"pair": {fmt.Sprint(pair)}, "grade": {"3"}}, true)
	check("the My work change fragment", frag)
	_, frag, _ = a.send(cb, http.MethodPost, fmt.Sprintf("/projects/%d/undo", a.project.ID), url.Values{}, true)
	check("the undo fragment", frag)
}

func TestExpiredLeaseReturnsPairOverHTTP(t *testing.T) {
	a := newTestApp(t, withPairs(1, 1), withAssessors(3), withPerPair(1))
	c0, c1 := a.signIn("a000"), a.signIn("a001")
	_, body, _ := a.send(c0, http.MethodGet, a.judgePath(), nil, false)
	if offeredPair(body) != a.pairs[0] {
		t.Fatalf("first assessor was not offered the only pair")
	}
	if _, body, _ = a.send(c1, http.MethodGet, a.judgePath(), nil, false); offeredPair(body) != 0 || !strings.Contains(body, "Nothing left") {
		t.Fatalf("the only pair, leased to another, was offered again")
	}
	if _, err := a.store.ExpireLeases(context.Background(), a.assessors[0].ID); err != nil {
		t.Fatal(err)
	}
	if _, body, _ = a.send(c1, http.MethodGet, a.judgePath(), nil, false); offeredPair(body) != a.pairs[0] {
		t.Fatalf("after the lease expired the pair did not come back")
	}
	// The first assessor, answering late, finds the pair taken: told so, and nothing is stored twice.
	status, frag, _ := a.send(c1, http.MethodPost, a.judgePath(), url.Values{"pair": {fmt.Sprint(a.pairs[0])}, "grade": {"2"}}, true)
	if status != http.StatusOK {
		t.Fatal(status)
	}
	status, frag, _ = a.send(c0, http.MethodPost, a.judgePath(), url.Values{"pair": {fmt.Sprint(a.pairs[0])}, "grade": {"3"}}, true)
	if status != http.StatusOK || !strings.Contains(frag, "Not saved") {
		t.Errorf("late answer: status %d, want the next-pair fragment saying it was not saved:\n%s", status, frag)
	}
	if n := len(a.judgments(a.pairs[0])); n != 1 {
		t.Errorf("pair needing one judgment has %d", n)
	}
}

// Gold pairs come at the project's rate. Rate 0.2 over 500 servings: the count is binomial
// with standard deviation sqrt(0.2*0.8/500) = 0.0179, so ±0.06 is about 3.4 sigma (a false
// alarm about once in 1,300 runs; the bound is common practice, not a published value).
func TestGoldPairsServedAtTheConfiguredRate(t *testing.T) {
	a := newTestApp(t, withPairs(30, 20), withAssessors(1), withPerPair(1), withGold(200, 0.2))
	c := a.signIn("a000")
	_, body, _ := a.send(c, http.MethodGet, a.judgePath(), nil, false)
	gold, seen := 0, map[int64]bool{}
	for range 500 {
		pair := offeredPair(body)
		if pair == 0 {
			t.Fatal("ran out of pairs")
		}
		if seen[pair] {
			t.Fatalf("pair %d served twice to one assessor", pair)
		}
		seen[pair] = true
		if a.gold[pair] {
			gold++
			if strings.Contains(strings.ToLower(body), "gold") {
				t.Fatal("a gold pair's page gives it away")
			}
		}
		var status int
		status, body, _ = a.send(c, http.MethodPost, a.judgePath(), url.Values{"pair": {fmt.Sprint(pair)}, "grade": {"2"}}, true)
		if status != http.StatusOK {
			t.Fatalf("status %d", status)
		}
	}
	rate := float64(gold) / 500
	if math.Abs(rate-0.2) > 0.06 {
		t.Errorf("gold served at rate %.3f over 500 servings, want 0.2 ± 0.06", rate)
	}
	// Gold judgments do not move the project's progress.
	judged, needed, err := a.store.JudgingProgress(context.Background(), a.project.ID)
	if err != nil {
		t.Fatal(err)
	}
	if judged != 500-gold || needed != 600 {
		t.Errorf("progress %d of %d, want %d of 600 (gold pairs excluded)", judged, needed, 500-gold)
	}
	t.Logf("gold rate %.3f (%d of 500)", rate, gold)
}
