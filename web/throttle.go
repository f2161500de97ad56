package web

import (
	"sync"
	"time"
)

// throttle counts failed sign-ins per account and per address within a window and refuses
// further tries once a limit is reached. It lives in memory: a restart forgets, which is
// acceptable for slowing down guessing, not a lockout record.
type throttle struct {
	mu         sync.Mutex
	window     time.Duration
	perAccount int
	perAddress int
	fails      map[string][]time.Time
	now        func() time.Time
}

func newThrottle() *throttle {
	return &throttle{window: 15 * time.Minute, perAccount: 5, perAddress: 20,
		fails: map[string][]time.Time{}, now: time.Now}
}

// allowed reports whether a sign-in for this account from this address may be tried now.
func (t *throttle) allowed(account, address string) bool {
	t.mu.Lock()
	defer t.mu.Unlock()
	return len(t.recent("a:"+account)) < t.perAccount && len(t.recent("ip:"+address)) < t.perAddress
}

func (t *throttle) failed(account, address string) {
	t.mu.Lock()
	defer t.mu.Unlock()
	for _, k := range []string{"a:" + account, "ip:" + address} {
		t.fails[k] = append(t.recent(k), t.now())
	}
	if len(t.fails) > 100000 { // bound memory under a spray of names
		t.sweep()
	}
}

// succeeded clears the account's failures; the address keeps its count.
func (t *throttle) succeeded(account string) {
	t.mu.Lock()
	defer t.mu.Unlock()
	delete(t.fails, "a:"+account)
}

func (t *throttle) recent(key string) []time.Time {
	cut := t.now().Add(-t.window)
	list := t.fails[key]
	i := 0
	for i < len(list) && list[i].Before(cut) {
		i++
	}
	if i == len(list) {
		delete(t.fails, key)
		return nil
	}
	list = list[i:]
	t.fails[key] = list
	return list
}

func (t *throttle) sweep() {
	for k := range t.fails {
		t.recent(k)
	}
}
