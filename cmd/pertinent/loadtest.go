package main

import (
	"bufio"
	"context"
	"database/sql"
	"errors"
	"fmt"
	"io"
	"math/rand/v2"
	"net"
	"net/http"
	"net/http/cookiejar"
	"net/url"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"sync"
	"time"

	_ "github.com/jackc/pgx/v5/stdlib" // pgbench's probe table on PostgreSQL
	"golang.org/x/crypto/bcrypt"

	"github.com/pertinent/pertinent/store"
)

// runLoadtest drives virtual assessors through sign-in and submit-and-next against real
// servers on loopback, then measures the ceiling the database puts on writes for scale: the
// raw commit rate of the same SQLite file, or pgbench's single-row insert transactions on
// the same PostgreSQL cluster.
func runLoadtest(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("loadtest", stderr)
	target := fs.String("target", "", "base URL of a running server on loopback (default: start one)")
	db := fs.String("db", "", "database of the target server, or of the started ones: a file (default: a new temporary file) or postgres://...")
	instances := fs.Int("instances", 1, "servers to start on the database and spread the assessors over (more than one needs postgres://)")
	assessors := fs.Int("assessors", 200, "virtual assessors")
	pairs := fs.Int("pairs", 20000, "pairs in the throwaway project")
	needed := fs.Int("needed", 3, "judgments needed per pair")
	duration := fs.Duration("duration", 10*time.Second, "how long to drive load")
	count := fs.Int("count", 0, "stop after this many judgments (0: no limit)")
	if err := fs.Parse(args); err != nil {
		return err
	}
	if *assessors < 1 || *pairs < 1 || *needed < 1 || *duration <= 0 || *instances < 1 {
		return errors.New("loadtest: --assessors, --pairs, --needed, --instances and --duration must be positive")
	}
	pg := store.IsPostgres(*db)
	if *instances > 1 && (!pg || *target != "") {
		return errors.New("loadtest: several instances share one PostgreSQL database: give --db postgres://... and no --target")
	}
	if *db == "" {
		dir, err := os.MkdirTemp("", "pertinent-load-")
		if err != nil {
			return err
		}
		defer os.RemoveAll(dir)
		*db = filepath.Join(dir, "load.db")
	}
	bases := []string{*target}
	var servers []*exec.Cmd
	if *target == "" {
		bases = nil
		// The servers share the one stderr, each through its own copying goroutine.
		serverErr := &lockedWriter{w: stderr}
		for range *instances {
			server, base, err := startServer(ctx, *db, serverErr)
			if err != nil {
				return err
			}
			defer func() {
				server.Process.Signal(os.Interrupt)
				server.Wait()
			}()
			servers, bases = append(servers, server), append(bases, base)
		}
	}
	for _, b := range bases {
		if err := loopbackOnly(b); err != nil {
			return err
		}
	}

	fmt.Fprintf(stdout, "setting up a throwaway project: %d pairs, %d assessors, %d judgments each\n", *pairs, *assessors, *needed)
	project, users, err := setupLoadProject(ctx, *db, *pairs, *assessors, *needed)
	if err != nil {
		return err
	}
	fmt.Fprintf(stdout, "driving %s for %s\n", strings.Join(bases, " and "), *duration)
	serversCPU := func() (cpu time.Duration) {
		for _, s := range servers {
			cpu += processCPU(s.Process.Pid)
		}
		return cpu
	}
	cpu0 := serversCPU()
	res := drive(ctx, bases, project, users, *duration, *count)
	var rss, cpuPer string
	if len(servers) > 0 {
		var peaks []string
		for _, s := range servers {
			peaks = append(peaks, peakRSS(s.Process.Pid))
		}
		rss = strings.Join(peaks, " + ")
		// CPU per judgment holds still when other work shares the machine; the rate does not.
		if cpu := serversCPU() - cpu0; cpu > 0 && res.ok > 0 {
			cpuPer = (cpu / time.Duration(res.ok)).Round(time.Microsecond).String()
		}
	}
	var ceiling float64
	var ceilingText string
	if pg {
		one, err := pgbenchRate(ctx, *db, 1, 2*time.Second)
		if err != nil {
			return err
		}
		eight, err := pgbenchRate(ctx, *db, 8, 2*time.Second)
		if err != nil {
			return err
		}
		ceiling = one
		ceilingText = fmt.Sprintf("pgbench single-row insert transactions on the same cluster: %.0f/s with 1 client (one writer, as the judging path of one project), %.0f/s with 8", one, eight)
	} else {
		if ceiling, err = commitRate(ctx, *db, 2*time.Second); err != nil {
			return err
		}
		ceilingText = fmt.Sprintf("raw SQLite commits (single-row write transactions, same file and driver): %.0f/s", ceiling)
	}
	rate := float64(res.ok) / res.elapsed.Seconds()
	p50, p95, p99 := res.percentile(50), res.percentile(95), res.percentile(99)
	fmt.Fprintf(stdout, "judgments: %d in %s (%.0f/s); errors: %d\n", res.ok, res.elapsed.Round(time.Millisecond), rate, res.errors)
	for _, e := range res.sampleErrors {
		fmt.Fprintf(stdout, "  error: %s\n", e)
	}
	fmt.Fprintf(stdout, "latency of submit-and-next: p50 %s, p95 %s, p99 %s\n", p50, p95, p99)
	if rss != "" {
		fmt.Fprintf(stdout, "server peak RSS: %s; server CPU per judgment (sign-in excluded): %s\n", rss, cpuPer)
	}
	fmt.Fprintln(stdout, ceilingText)
	fmt.Fprintf(stdout, "summary: %d assessors on %d instance(s), %.0f judgments/s, p50 %s p95 %s p99 %s, %d errors, rss %s, cpu/judgment %s, %.2f of the ceiling\n",
		len(users), len(bases), rate, p50, p95, p99, res.errors, orDash(rss), orDash(cpuPer), rate/ceiling)
	return nil
}

// lockedWriter lets several writers share one io.Writer, a write at a time.
type lockedWriter struct {
	mu sync.Mutex
	w  io.Writer
}

func (l *lockedWriter) Write(p []byte) (int, error) {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.w.Write(p)
}

func orDash(s string) string {
	if s == "" {
		return "-"
	}
	return s
}

// loopbackOnly refuses any target that is not this machine.
func loopbackOnly(base string) error {
	u, err := url.Parse(base)
	if err != nil || u.Host == "" {
		return fmt.Errorf("loadtest: %q is not a URL", base)
	}
	host := u.Hostname()
	if host == "localhost" {
		return nil
	}
	ip := net.ParseIP(host)
	if ip == nil || !ip.IsLoopback() {
		return fmt.Errorf("loadtest: refusing %s: only loopback addresses (127.0.0.0/8, ::1, localhost) may be targeted", host)
	}
	return nil
}

// startServer runs this binary's serve command on a free loopback port as a separate
// process, so its memory can be measured apart from the load.
// loadServerBinary is the program loadtest starts as the server: itself (a test, which is
// not pertinent, points it at a built binary).
var loadServerBinary = os.Executable

func startServer(ctx context.Context, db string, stderr io.Writer) (*exec.Cmd, string, error) {
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		return nil, "", err
	}
	addr := ln.Addr().String()
	ln.Close()
	self, err := loadServerBinary()
	if err != nil {
		return nil, "", err
	}
	cmd := exec.CommandContext(ctx, self, "serve", "--db", db, "--addr", addr, "--log-level", "warn")
	cmd.Stderr = stderr
	if err := cmd.Start(); err != nil {
		return nil, "", err
	}
	base := "http://" + addr
	for i := 0; i < 100; i++ {
		if res, err := http.Get(base + "/healthz"); err == nil {
			res.Body.Close()
			if res.StatusCode == http.StatusOK {
				return cmd, base, nil
			}
		}
		time.Sleep(100 * time.Millisecond)
	}
	cmd.Process.Kill()
	return nil, "", errors.New("loadtest: the server did not come up")
}

type loadUser struct{ name, password string }

// setupLoadProject writes the throwaway project straight into the database file.
func setupLoadProject(ctx context.Context, db string, pairs, assessors, needed int) (int64, []loadUser, error) {
	st, err := store.Open(ctx, db)
	if err != nil {
		return 0, nil, err
	}
	defer st.Close()
	// Throwaway accounts: a cheap hash keeps sign-in out of what the run measures.
	store.SetPasswordCost(bcrypt.MinCost)
	defer store.SetPasswordCost(bcrypt.DefaultCost)
	tag := strconv.FormatInt(time.Now().UnixNano(), 36)
	p, err := st.CreateProject(ctx, store.NewProject{Name: "load " + tag, JudgmentsPerPair: needed, LeaseSeconds: 600}, 0)
	if err != nil {
		return 0, nil, err
	}
	users := make([]loadUser, assessors)
	for i := range users {
		users[i] = loadUser{fmt.Sprintf("load-%s-%d", tag, i), newPassword()}
		u, err := st.CreateUser(ctx, users[i].name, "", store.RoleAssessor, users[i].password)
		if err != nil {
			return 0, nil, err
		}
		if err := st.SetMember(ctx, p.ID, u.ID, store.RoleAssessor, 0); err != nil {
			return 0, nil, err
		}
	}
	perQuery := 20
	err = st.Load(ctx, p.ID, func(l *store.Loader) error {
		var qid int64
		for i := 0; i < pairs; i++ {
			if i%perQuery == 0 {
				var err error
				qid, err = l.Query(store.Query{ExternalID: fmt.Sprintf("q%d", i/perQuery), Text: fmt.Sprintf("load query %d", i/perQuery)})
				if err != nil {
					return err
				}
			}
			did, err := l.Document(store.Document{ExternalID: fmt.Sprintf("d%d", i), Title: fmt.Sprintf("Document %d", i),
				Body: "A generated document body of a few words, enough to render a page."})
			if err != nil {
				return err
			}
			if _, err := l.Pair(store.PairSpec{QueryID: qid, DocumentID: did}); err != nil {
				return err
			}
		}
		return nil
	})
	return p.ID, users, err
}

var pairInForm = regexp.MustCompile(`name="pair" value="(\d+)"`)

type loadResult struct {
	mu           sync.Mutex
	ok, errors   int
	latencies    []time.Duration
	sampleErrors []string
	elapsed      time.Duration
}

func (r *loadResult) record(d time.Duration, err error) {
	r.mu.Lock()
	defer r.mu.Unlock()
	if err != nil {
		r.errors++
		if len(r.sampleErrors) < 5 {
			r.sampleErrors = append(r.sampleErrors, err.Error())
		}
		return
	}
	r.ok++
	r.latencies = append(r.latencies, d)
}

func (r *loadResult) percentile(p int) time.Duration {
	if len(r.latencies) == 0 {
		return 0
	}
	slices.Sort(r.latencies)
	i := (len(r.latencies)*p + 99) / 100
	return r.latencies[min(max(i-1, 0), len(r.latencies)-1)].Round(10 * time.Microsecond)
}

// drive signs every virtual assessor in, then lets them all judge until the time or count
// runs out or no work is left. Only the judging phase is timed.
func drive(ctx context.Context, bases []string, project int64, users []loadUser, d time.Duration, count int) *loadResult {
	res := &loadResult{}
	tr := &http.Transport{MaxIdleConnsPerHost: len(users), IdleConnTimeout: time.Minute}
	defer tr.CloseIdleConnections()
	clients := make([]*http.Client, len(users))
	var wg sync.WaitGroup
	sem := make(chan struct{}, 8) // sign-ins are bcrypt-bound; do not let them pile up
	for i, u := range users {
		jar, _ := cookiejar.New(nil)
		c := &http.Client{Transport: tr, Jar: jar, CheckRedirect: func(*http.Request, []*http.Request) error { return http.ErrUseLastResponse }}
		wg.Add(1)
		go func() {
			defer wg.Done()
			sem <- struct{}{}
			defer func() { <-sem }()
			if err := loadSignIn(ctx, c, bases[i%len(bases)], u); err != nil {
				res.record(0, err)
				return
			}
			clients[i] = c
		}()
	}
	wg.Wait()

	var budget chan struct{}
	if count > 0 {
		budget = make(chan struct{}, count)
		for i := 0; i < count; i++ {
			budget <- struct{}{}
		}
	}
	ctx, cancel := context.WithTimeout(ctx, d)
	defer cancel()
	start := time.Now()
	for i, c := range clients {
		if c == nil {
			continue
		}
		wg.Add(1)
		// Each assessor stays on one instance: sessions live in the database, so any would
		// do, and spreading them evenly is what a load balancer does.
		judgeURL := fmt.Sprintf("%s/projects/%d/judge", bases[i%len(bases)], project)
		go func() {
			defer wg.Done()
			rng := rand.New(rand.NewPCG(uint64(i), 42))
			pair, err := loadFetch(ctx, c, http.MethodGet, judgeURL, nil)
			for err == nil && pair != "" {
				if budget != nil {
					select {
					case <-budget:
					default:
						return
					}
				}
				form := url.Values{"pair": {pair}, "grade": {strconv.Itoa(rng.IntN(5))}, "elapsed_ms": {"3000"}}
				t := time.Now()
				pair, err = loadFetch(ctx, c, http.MethodPost, judgeURL, form)
				if ctx.Err() != nil {
					return // the deadline cut this request: neither success nor failure
				}
				res.record(time.Since(t), err)
			}
			if err != nil && ctx.Err() == nil {
				res.record(0, err)
			}
		}()
	}
	wg.Wait()
	res.elapsed = time.Since(start)
	return res
}

func loadSignIn(ctx context.Context, c *http.Client, base string, u loadUser) error {
	req, _ := http.NewRequestWithContext(ctx, http.MethodPost, base+"/signin",
		strings.NewReader(url.Values{"username": {u.name}, "password": {u.password}}.Encode()))
	req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
	res, err := c.Do(req)
	if err != nil {
		return err
	}
	io.Copy(io.Discard, res.Body)
	res.Body.Close()
	if res.StatusCode != http.StatusSeeOther {
		return fmt.Errorf("sign-in of %s: status %d", u.name, res.StatusCode)
	}
	return nil
}

// loadFetch sends one request the way the judging page's htmx does and returns the pair the
// answer offers next ("" when nothing is left).
func loadFetch(ctx context.Context, c *http.Client, method, u string, form url.Values) (string, error) {
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
		return "", err
	}
	defer res.Body.Close()
	b, err := io.ReadAll(res.Body)
	if err != nil {
		return "", err
	}
	if res.StatusCode != http.StatusOK {
		return "", fmt.Errorf("%s %s: status %d", method, u, res.StatusCode)
	}
	if m := pairInForm.FindSubmatch(b); m != nil {
		return string(m[1]), nil
	}
	return "", nil
}

// commitRate measures single-row write transactions per second on the same file through the
// same driver and settings as the store: the ceiling any judging write path works under.
func commitRate(ctx context.Context, db string, d time.Duration) (float64, error) {
	conn, err := sql.Open("sqlite", "file:"+db+"?_pragma=busy_timeout(10000)&_pragma=journal_mode(WAL)&_pragma=synchronous(NORMAL)&_txlock=immediate")
	if err != nil {
		return 0, err
	}
	defer conn.Close()
	conn.SetMaxOpenConns(1)
	if _, err := conn.ExecContext(ctx, `CREATE TABLE IF NOT EXISTS load_commit_probe (id INTEGER PRIMARY KEY, v INTEGER NOT NULL)`); err != nil {
		return 0, err
	}
	defer conn.ExecContext(context.Background(), `DROP TABLE load_commit_probe`)
	n := 0
	start := time.Now()
	for time.Since(start) < d {
		tx, err := conn.BeginTx(ctx, nil)
		if err != nil {
			return 0, err
		}
		if _, err := tx.ExecContext(ctx, `INSERT INTO load_commit_probe(v) VALUES (?)`, n); err != nil {
			tx.Rollback()
			return 0, err
		}
		if err := tx.Commit(); err != nil {
			return 0, err
		}
		n++
	}
	return float64(n) / time.Since(start).Seconds(), nil
}

// pgbenchRate runs pgbench on the same PostgreSQL database for d: single-row insert
// transactions into a table of its own (made and dropped here) from the given number of
// clients, and returns their rate. pgbench comes with Debian's postgresql package.
func pgbenchRate(ctx context.Context, dsn string, clients int, d time.Duration) (float64, error) {
	bin, err := postgresTool("pgbench")
	if err != nil {
		return 0, err
	}
	db, err := sql.Open("pgx", dsn)
	if err != nil {
		return 0, err
	}
	defer db.Close()
	if _, err := db.ExecContext(ctx, `CREATE TABLE IF NOT EXISTS load_commit_probe (id bigint GENERATED BY DEFAULT AS IDENTITY PRIMARY KEY, v bigint NOT NULL)`); err != nil {
		return 0, err
	}
	defer db.ExecContext(context.Background(), `DROP TABLE load_commit_probe`)
	dir, err := os.MkdirTemp("", "pertinent-pgbench-")
	if err != nil {
		return 0, err
	}
	defer os.RemoveAll(dir)
	script := filepath.Join(dir, "insert.sql")
	if err := os.WriteFile(script, []byte("INSERT INTO load_commit_probe(v) VALUES (1);\n"), 0o600); err != nil {
		return 0, err
	}
	out, err := exec.CommandContext(ctx, bin, "-n", "-c", strconv.Itoa(clients), "-j", strconv.Itoa(min(clients, 2)),
		"-T", strconv.Itoa(int(d.Seconds())), "-f", script, dsn).CombinedOutput()
	if err != nil {
		return 0, fmt.Errorf("pgbench: %v\n%s", err, out)
	}
	m := regexp.MustCompile(`tps = ([0-9.]+)`).FindSubmatch(out)
	if m == nil {
		return 0, fmt.Errorf("pgbench printed no rate:\n%s", out)
	}
	return strconv.ParseFloat(string(m[1]), 64)
}

// postgresTool finds one of PostgreSQL's programs: on PATH, or where Debian keeps the newest
// version's (/usr/lib/postgresql/<version>/bin).
func postgresTool(name string) (string, error) {
	if p, err := exec.LookPath(name); err == nil {
		return p, nil
	}
	found, _ := filepath.Glob("/usr/lib/postgresql/*/bin/" + name)
	if len(found) == 0 {
		return "", fmt.Errorf("loadtest: %s not found (Debian package postgresql)", name)
	}
	slices.Sort(found)
	return found[len(found)-1], nil
}

// processCPU reads a process's user and system CPU time from /proc (Linux; 0 elsewhere).
func processCPU(pid int) time.Duration {
	b, err := os.ReadFile(fmt.Sprintf("/proc/%d/stat", pid))
	if err != nil {
		return 0
	}
	// Fields after the command name, which is in parentheses and may contain spaces.
	i := strings.LastIndexByte(string(b), ')')
	if i < 0 {
		return 0
	}
	f := strings.Fields(string(b[i+1:]))
	if len(f) < 13 {
		return 0
	}
	utime, _ := strconv.ParseInt(f[11], 10, 64)
	stime, _ := strconv.ParseInt(f[12], 10, 64)
	const ticks = 100 // USER_HZ: 100 on every Linux architecture Go supports
	return time.Duration(utime+stime) * time.Second / ticks
}

// peakRSS reads a process's peak resident set size from /proc.
func peakRSS(pid int) string {
	f, err := os.Open(fmt.Sprintf("/proc/%d/status", pid))
	if err != nil {
		return ""
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		if v, ok := strings.CutPrefix(sc.Text(), "VmHWM:"); ok {
			return strings.TrimSpace(v)
		}
	}
	return ""
}
