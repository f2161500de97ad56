// Package testclock is a clock tests move by hand, for the store's SetClock: two writes a
// step apart get distinct timestamps without sleeping, and a link can expire without
// waiting a day. Its own folder because shared test plumbing belongs to no product package.
package testclock

import (
	"sync"
	"time"
)

// Clock reads a time that moves only when told; safe for concurrent use.
type Clock struct {
	mu sync.Mutex
	t  time.Time
}

// New starts a clock at start.
func New(start time.Time) *Clock { return &Clock{t: start} }

// Now is the clock's time.
func (c *Clock) Now() time.Time {
	c.mu.Lock()
	defer c.mu.Unlock()
	return c.t
}

// Advance moves the clock on by d.
func (c *Clock) Advance(d time.Duration) {
	c.mu.Lock()
	defer c.mu.Unlock()
	c.t = c.t.Add(d)
}
