// Package pgtest gives tests a throwaway PostgreSQL: a cluster made with initdb in a temporary
// folder and started with pg_ctl, listening only on a Unix socket inside that folder (no
// port to collide on, no system service), and a fresh database per test in it. A missing
// PostgreSQL fails the test when CI=true and skips it elsewhere (reference.Unavailable).
//
// A package's tests share one cluster when its TestMain calls Main, which stops the cluster
// after the last test; without Main each test that asks gets a cluster of its own, stopped
// in its cleanup. Starting a cluster takes about a second; a database, a few milliseconds.
package pgtest

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"net/url"
	"os"
	"os/exec"
	"os/user"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"syscall"
	"testing"

	// database/sql over pgx: the same handle type the store's migrations take.
	_ "github.com/jackc/pgx/v5/stdlib"

	"github.com/pertinent/pertinent/internal/reference"
)

// superuser is the cluster's one role; trust authentication over the private socket.
const superuser = "pertinent"

var (
	shared     bool // Main is running the tests
	sharedOnce sync.Once
	sharedC    *cluster
	sharedErr  error
	databases  atomic.Int64
)

// Main runs the tests with one cluster for the whole test binary, started by the first New
// and stopped when the tests end. Call it from TestMain: func TestMain(m *testing.M) { pgtest.Main(m) }.
func Main(m *testing.M) {
	shared = true
	code := m.Run()
	if sharedC != nil {
		if err := sharedC.stop(); err != nil {
			fmt.Fprintln(os.Stderr, "pgtest:", err)
		}
	}
	os.Exit(code)
}

// New creates an empty database for the test and returns its connection string (a postgres://
// URL that pgx and libpq read); the database is dropped when the test ends.
func New(t testing.TB) string {
	t.Helper()
	var c *cluster
	if shared {
		sharedOnce.Do(func() { sharedC, sharedErr = start() })
		c = sharedC
		if sharedErr != nil {
			report(t, sharedErr)
		}
	} else {
		var err error
		if c, err = start(); err != nil {
			report(t, err)
		}
		t.Cleanup(func() {
			if err := c.stop(); err != nil {
				t.Error(err)
			}
		})
	}
	name := "test_" + strconv.FormatInt(databases.Add(1), 10)
	ctx := context.Background()
	// The name is made here from a counter, never from input: safe to splice.
	if _, err := c.admin.ExecContext(ctx, "CREATE DATABASE "+name); err != nil {
		t.Fatalf("pgtest: create database: %v", err)
	}
	t.Cleanup(func() {
		if _, err := c.admin.ExecContext(ctx, "DROP DATABASE IF EXISTS "+name+" WITH (FORCE)"); err != nil {
			t.Errorf("pgtest: drop database: %v", err)
		}
	})
	return c.url(name)
}

// unavailableError is a PostgreSQL that is not installed, as against one that fails.
type unavailableError struct{ msg string }

func (e unavailableError) Error() string { return e.msg }

func report(t testing.TB, err error) {
	t.Helper()
	var u unavailableError
	if errors.As(err, &u) {
		reference.Unavailable(t, u.msg)
	}
	t.Fatal(err)
}

type cluster struct {
	dir   string // holds data/, the socket and the server's log
	bin   string // folder of initdb and pg_ctl
	cred  *syscall.Credential
	admin *sql.DB // connected to the "postgres" database, for creating and dropping
}

// binDir finds initdb and pg_ctl: on PATH, else where Debian's packages put them
// (/usr/lib/postgresql/<version>/bin, not on PATH), the newest version first.
func binDir() (string, error) {
	if initdb, err := exec.LookPath("initdb"); err == nil {
		if _, err := exec.LookPath("pg_ctl"); err == nil {
			return filepath.Dir(initdb), nil
		}
	}
	dirs, _ := filepath.Glob("/usr/lib/postgresql/*/bin")
	slices.SortFunc(dirs, func(a, b string) int { return version(b) - version(a) })
	for _, d := range dirs {
		if isFile(filepath.Join(d, "initdb")) && isFile(filepath.Join(d, "pg_ctl")) {
			return d, nil
		}
	}
	return "", unavailableError{"PostgreSQL's initdb and pg_ctl are needed for this test (Debian package postgresql): " +
		"neither on PATH nor under /usr/lib/postgresql/*/bin"}
}

func version(binDir string) int {
	v, _ := strconv.Atoi(filepath.Base(filepath.Dir(binDir)))
	return v
}

func isFile(p string) bool {
	st, err := os.Stat(p)
	return err == nil && !st.IsDir()
}

// start makes and starts a cluster. initdb refuses to run as root, so as root the cluster
// belongs to the postgres system account (made by Debian's postgresql-common) and every
// PostgreSQL program runs with its ids.
func start() (*cluster, error) {
	bin, err := binDir()
	if err != nil {
		return nil, err
	}
	// Not t.TempDir: the postgres account must reach the folder, and root's test folders sit
	// in a folder only root may enter. A short path also keeps the socket's within the
	// 107 bytes a Unix socket address holds.
	dir, err := os.MkdirTemp("", "pgtest")
	if err != nil {
		return nil, err
	}
	c := &cluster{dir: dir, bin: bin}
	fail := func(err error) (*cluster, error) {
		os.RemoveAll(dir)
		return nil, err
	}
	if os.Geteuid() == 0 {
		u, err := user.Lookup("postgres")
		if err != nil {
			return fail(unavailableError{"tests run as root and PostgreSQL refuses to: the postgres system account " +
				"(Debian package postgresql-common) is needed to own the test cluster: " + err.Error()})
		}
		uid, _ := strconv.Atoi(u.Uid)
		gid, _ := strconv.Atoi(u.Gid)
		c.cred = &syscall.Credential{Uid: uint32(uid), Gid: uint32(gid)}
		if err := os.Chown(dir, uid, gid); err != nil {
			return fail(err)
		}
	}
	data := filepath.Join(dir, "data")
	if out, err := c.run("initdb", "-D", data, "-U", superuser, "--auth=trust", "--encoding=UTF8", "--no-locale", "--no-sync"); err != nil {
		return fail(fmt.Errorf("pgtest: initdb: %v\n%s", err, out))
	}
	// Only the socket in our folder; durability is not wanted from a throwaway cluster.
	conf := fmt.Sprintf("\nlisten_addresses = ''\nunix_socket_directories = '%s'\nfsync = off\nsynchronous_commit = off\nfull_page_writes = off\n",
		strings.ReplaceAll(dir, "'", "''"))
	if err := appendFile(filepath.Join(data, "postgresql.conf"), conf); err != nil {
		return fail(err)
	}
	logFile := filepath.Join(dir, "server.log")
	if out, err := c.run("pg_ctl", "-D", data, "-l", logFile, "-w", "-s", "start"); err != nil {
		log, _ := os.ReadFile(logFile)
		return fail(fmt.Errorf("pgtest: pg_ctl start: %v\n%s\n%s", err, out, log))
	}
	c.admin, err = sql.Open("pgx", c.url("postgres"))
	if err == nil {
		err = c.admin.Ping()
	}
	if err != nil {
		return fail(errors.Join(fmt.Errorf("pgtest: connect: %w", err), c.stop()))
	}
	return c, nil
}

// run runs one of PostgreSQL's programs from the cluster's folder, as its owner.
func (c *cluster) run(prog string, args ...string) ([]byte, error) {
	cmd := exec.Command(filepath.Join(c.bin, prog), args...)
	cmd.Dir = c.dir
	if c.cred != nil {
		cmd.SysProcAttr = &syscall.SysProcAttr{Credential: c.cred}
	}
	return cmd.CombinedOutput()
}

func (c *cluster) url(db string) string {
	u := url.URL{Scheme: "postgres", User: url.User(superuser), Path: "/" + db,
		RawQuery: url.Values{"host": {c.dir}, "sslmode": {"disable"}}.Encode()}
	return u.String()
}

// stop shuts the server down at once (fast: no waiting for clients) and removes the folder.
func (c *cluster) stop() error {
	if c.admin != nil {
		c.admin.Close()
	}
	var err error
	if out, e := c.run("pg_ctl", "-D", filepath.Join(c.dir, "data"), "-m", "fast", "-w", "-s", "stop"); e != nil {
		err = fmt.Errorf("pgtest: pg_ctl stop: %v\n%s", e, out)
	}
	return errors.Join(err, os.RemoveAll(c.dir))
}

func appendFile(path, text string) error {
	f, err := os.OpenFile(path, os.O_APPEND|os.O_WRONLY, 0)
	if err != nil {
		return err
	}
	_, err = f.WriteString(text)
	return errors.Join(err, f.Close())
}
