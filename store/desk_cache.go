package store

import (
	"context"
	"database/sql"
	"errors"
	"sync"
	"time"

	"github.com/pertinent/pertinent/agreement"
)

// Desk is a snapshot of everything the lead's pages compute from a project's current
// judgments: the agreement report, per-assessor figures, activity, and per-pair summaries for
// the disagreement queue. It is cached per project until project_versions.version changes
// (triggers bump it on every judgment and pair change), so repeated views are instant and
// never stale; the next desk is made from this one and the judgments changed since
// (store/desk_load.go), read from the database in full only when that cannot be done.
// Adjudications are not part of it: they are small and read fresh. A desk never changes
// once returned.
type Desk struct {
	ProjectID int64
	Version   int64
	Scale     int
	BuiltAt   time.Time
	BuildTook time.Duration
	// Incremental tells that the desk was made from the previous one and the changes since.
	Incremental bool

	// Data holds the current grades exactly as AgreementData builds them (items named by pair
	// id, raters by username, added in pair order), so the report equals the CLI's.
	Data *agreement.Data
	Gold map[string]int
	// Report is agreement.Compute over Data without the bootstrap; Bootstrap gives that part.
	Report agreement.Report

	Progress       Progress // pairs by state, as ProjectProgress counts them
	Judgments      int      // current judgments, grades and "cannot judge"
	Graded         int
	CannotJudge    int
	Flagged        int // pairs with a current "disturbing" judgment
	PerDay         []DayCount
	TimeMedianMs   int
	TimeQ1Ms       int
	TimeQ3Ms       int
	Assessors      []AssessorFigures
	BootstrapCount int // replicates the bootstrap uses for this data size

	rows []deskRow // current judgments sorted by pair, then user; never changed once built
	// The judgments the desk has seen: every id up to seenID and desk_log up to seenLog, read
	// in one snapshot, so the next desk reads only what lies beyond (store/desk_load.go).
	seenID, seenLog int64
	pairs           []int // start of each pair's rows in rows; len = pairs with judgments + 1
	users           map[int64]string
	goldPair        map[int64]int
	cache           *deskCache

	boot    lazy[agreement.BootstrapResult]
	ds      lazy[dsSnapshot]
	queries lazy[queryInfo]
}

// deskRow is one current judgment, packed into 24 bytes: a million of them stay at 24 MB,
// and the copy a change makes is quick. key holds pair (35 bits), user (24) and grade (4), so
// ordering by key>>4 orders by pair, then user; idms holds the judgment id (40 bits) and the
// time spent in ms (24 bits, capped).
type deskRow struct {
	key  uint64
	idms uint64
	at   int64 // Unix milliseconds
}

func newDeskRow(pair, user int64, grade int8, id int64, ms int32, at int64) deskRow {
	return deskRow{key: uint64(pair)<<28 | uint64(user)<<4 | uint64(grade)&15, idms: uint64(id)<<24 | uint64(ms)&(1<<24-1), at: at}
}

func (r deskRow) pair() int64 { return int64(r.key >> 28) }
func (r deskRow) user() int64 { return int64(r.key>>4) & (1<<24 - 1) }
func (r deskRow) grade() int8 { return int8(r.key & 15) } // 0.. on the scale, or gradeCannot/gradeDisturbing
func (r deskRow) id() int64   { return int64(r.idms >> 24) }
func (r deskRow) ms() int32   { return int32(r.idms & (1<<24 - 1)) }

const (
	gradeDisturbing = 14
	gradeCannot     = 15
)

// DayCount is the number of judgments made on one UTC day.
type DayCount struct {
	Day       string // YYYY-MM-DD
	Judgments int
}

// AssessorFigures are one assessor's figures on the lead's assessor table.
type AssessorFigures struct {
	UserID      int64
	Username    string
	Judgments   int // current judgments, grades and "cannot judge"
	CannotJudge int
	CannotShare float64
	MedianMs    int
	Grades      []int // count per grade
	// Stats are the agreement package's figures for this rater (zero Rater when the assessor
	// has no grades): mean pairwise quadratic kappa, agreement with consensus, gold.
	Stats agreement.RaterStats
	// Drift compares agreement with consensus over the assessor's last DriftWindow compared
	// judgments (by time) with their earlier ones: Recent − Earlier.
	DriftRecent   agreement.Value
	DriftEarlier  agreement.Value
	Drift         agreement.Value
	DriftEarlierN int
}

// DriftWindow is how many of an assessor's latest compared judgments make the "recent" side
// of the drift figure.
const DriftWindow = agreement.DriftWindow

// BootstrapReplicates is the number of bootstrap replicates used for the lead's intervals and
// by `pertinent agreement --db`: 1000 up to 50,000 judgments, fewer above (200), because one
// replicate costs a pass over every pairable item (about 25 ms per million judgments).
func BootstrapReplicates(judgments int) int {
	if judgments <= 50000 {
		return 1000
	}
	return 200
}

// BootstrapSeed is the fixed seed of the lead's bootstrap, so pages and CLI agree.
const BootstrapSeed = 1

// syncLimit is the data size up to which slow parts (bootstrap, Dawid–Skene) are computed
// while the page waits; above it they run in the background and pages say so until done.
const syncLimit = 50000

type deskCache struct {
	mu       sync.Mutex
	desks    map[int64]*Desk
	building map[int64]*sync.Mutex
	latest   map[int64]int64 // newest version seen per project: older desks are stale
	bg       chan struct{}   // one background computation at a time
}

// seen records that a project has reached version v.
func (c *deskCache) seen(projectID, v int64) {
	c.mu.Lock()
	if c.latest == nil {
		c.latest = map[int64]int64{}
	}
	c.latest[projectID] = max(c.latest[projectID], v)
	c.mu.Unlock()
}

// stale tells that a newer version of the desk's project has been seen, so a slow
// computation for it can stop: no page will show its result.
func (d *Desk) stale() bool {
	c := d.cache
	if c == nil {
		return false
	}
	c.mu.Lock()
	defer c.mu.Unlock()
	return c.latest[d.ProjectID] > d.Version
}

// background runs fn for a desk of a large project, one at a time per store, and skips it
// when a newer desk has replaced this one meanwhile (no one will ask for its figures).
func (c *deskCache) background(d *Desk, fn func()) {
	c.bg <- struct{}{}
	defer func() { <-c.bg }()
	c.mu.Lock()
	current := c.desks[d.ProjectID] == d
	c.mu.Unlock()
	if current {
		fn()
	}
}

// ProjectVersion is the project's change counter: it moves on every judgment written,
// revised or withdrawn, every pair added, changed or removed and every username change.
func (s *Store) ProjectVersion(ctx context.Context, projectID int64) (int64, error) {
	var v int64
	err := s.r.QueryRowContext(ctx, `SELECT version FROM project_versions WHERE project_id = ?`, projectID).Scan(&v)
	if errors.Is(err, sql.ErrNoRows) {
		return 0, nil
	}
	return v, err
}

// Desk returns the project's lead figures, rebuilt only when the project changed since the
// cached copy was made.
func (s *Store) Desk(ctx context.Context, projectID int64) (*Desk, error) {
	v, err := s.ProjectVersion(ctx, projectID)
	if err != nil {
		return nil, err
	}
	c := &s.desks
	c.seen(projectID, v)
	c.mu.Lock()
	if d := c.desks[projectID]; d != nil && d.Version == v {
		c.mu.Unlock()
		return d, nil
	}
	if c.building == nil {
		c.building = map[int64]*sync.Mutex{}
		c.desks = map[int64]*Desk{}
		c.bg = make(chan struct{}, 1)
	}
	b := c.building[projectID]
	if b == nil {
		b = &sync.Mutex{}
		c.building[projectID] = b
	}
	c.mu.Unlock()

	// One build per project at a time; whoever waited may find it done.
	b.Lock()
	defer b.Unlock()
	if v, err = s.ProjectVersion(ctx, projectID); err != nil {
		return nil, err
	}
	c.mu.Lock()
	d := c.desks[projectID]
	c.mu.Unlock()
	if d != nil && d.Version == v {
		return d, nil
	}
	d, err = s.loadDesk(ctx, projectID, d)
	if err != nil {
		return nil, err
	}
	d.cache = c
	c.seen(projectID, d.Version)
	c.mu.Lock()
	c.desks[projectID] = d
	c.mu.Unlock()
	return d, nil
}

// unixMillis reads the store's fixed time layout (2006-01-02T15:04:05.000Z) without the
// general parser, which would dominate a million-row load; other shapes fall back to it.
func unixMillis(b []byte) int64 {
	if len(b) != len(timeLayout) || b[4] != '-' || b[10] != 'T' || b[19] != '.' {
		return parseTime(string(b)).UnixMilli()
	}
	n := func(i, j int) int {
		v := 0
		for _, c := range b[i:j] {
			v = v*10 + int(c-'0')
		}
		return v
	}
	days := daysFromCivil(n(0, 4), n(5, 7), n(8, 10))
	return ((days*24+int64(n(11, 13)))*60+int64(n(14, 16)))*60000 + int64(n(17, 19))*1000 + int64(n(20, 23))
}

// daysFromCivil counts days since 1970-01-01 (H. Hinnant's algorithm for the proleptic
// Gregorian calendar).
func daysFromCivil(y, m, d int) int64 {
	if m <= 2 {
		y--
	}
	era := y / 400
	if y < 0 && y%400 != 0 {
		era--
	}
	yoe := y - era*400
	mp := (m + 9) % 12
	doy := (153*mp+2)/5 + d - 1
	doe := yoe*365 + yoe/4 - yoe/100 + doy
	return int64(era)*146097 + int64(doe) - 719468
}

// lazy runs a slow computation once, in the background, and lets callers wait for it or not.
type lazy[T any] struct {
	once sync.Once
	done chan struct{}
	val  T
}

func (l *lazy[T]) start(fn func() T) {
	l.once.Do(func() {
		l.done = make(chan struct{})
		go func() {
			l.val = fn()
			close(l.done)
		}()
	})
}

// get starts fn if needed and returns its value when it finishes within wait.
func (l *lazy[T]) get(fn func() T, wait bool) (T, bool) {
	l.start(fn)
	if wait {
		<-l.done
		return l.val, true
	}
	select {
	case <-l.done:
		return l.val, true
	default:
		var zero T
		return zero, false
	}
}

// Bootstrap returns the bootstrap intervals (alpha, mean quadratic kappa) with
// BootstrapCount replicates and BootstrapSeed. For small data it waits; for large data it
// starts them in the background and ok is false until they are done. A background run stops
// as soon as a newer version of the project is seen, so it never slows the desk that
// replaces it; ok stays false for this desk then.
func (d *Desk) Bootstrap() (agreement.BootstrapResult, bool) {
	r, ok := d.boot.get(func() (r agreement.BootstrapResult) {
		o := agreement.BootstrapOptions{Replicates: d.BootstrapCount, Seed: BootstrapSeed}
		if d.Background() {
			o.Stop = d.stale
		}
		r.Stopped = true // unless it runs: the queue skips desks already replaced
		d.slow(func() { r = agreement.Bootstrap(d.Data, o) })
		return r
	}, !d.Background())
	if r.Stopped {
		return agreement.BootstrapResult{}, false
	}
	return r, ok
}

// slow runs a slow computation: at once for small data, else through the background queue.
func (d *Desk) slow(fn func()) {
	if !d.Background() || d.cache == nil {
		fn()
		return
	}
	d.cache.background(d, fn)
}

// Background tells whether slow figures of this desk are computed in the background.
func (d *Desk) Background() bool { return d.Report.Judgments > syncLimit }

// Usernames maps user ids to usernames as they were when the desk was built.
func (d *Desk) Username(id int64) string { return d.users[id] }
