package pgtest

import (
	"context"
	"database/sql"
	"os"
	"syscall"
	"testing"
)

func TestMain(m *testing.M) { Main(m) }

// Two databases from one cluster: separate, writable, reached over the socket in the folder,
// and run by a server that is not root.
func TestNewGivesSeparateDatabasesOfOneCluster(t *testing.T) {
	ctx := context.Background()
	open := func(dsn string) *sql.DB {
		db, err := sql.Open("pgx", dsn)
		if err != nil {
			t.Fatal(err)
		}
		t.Cleanup(func() { db.Close() })
		return db
	}
	a, b := open(New(t)), open(New(t))
	if _, err := a.ExecContext(ctx, `CREATE TABLE t (x bigint)`); err != nil {
		t.Fatal(err)
	}
	var n int
	if err := b.QueryRowContext(ctx, `SELECT count(*) FROM pg_tables WHERE tablename = 't'`).Scan(&n); err != nil {
		t.Fatal(err)
	}
	if n != 0 {
		t.Error("a table made in one test database shows in the other")
	}
	var socketDir, dataDir string
	a.QueryRowContext(ctx, `SHOW unix_socket_directories`).Scan(&socketDir)
	a.QueryRowContext(ctx, `SHOW data_directory`).Scan(&dataDir)
	if socketDir != sharedC.dir || dataDir != sharedC.dir+"/data" {
		t.Errorf("socket in %q, data in %q; want both in %q", socketDir, dataDir, sharedC.dir)
	}
	var listen string
	a.QueryRowContext(ctx, `SHOW listen_addresses`).Scan(&listen)
	if listen != "" {
		t.Errorf("listen_addresses = %q, want none (socket only)", listen)
	}
	// PostgreSQL runs only as its data's owner: as root, that must be the postgres account.
	st, err := os.Stat(dataDir)
	if err != nil {
		t.Fatal(err)
	}
	if owner := st.Sys().(*syscall.Stat_t).Uid; owner == 0 {
		t.Errorf("the cluster's data belongs to root")
	}
}

// The cluster is shared: a later test gets a database of the same server.
func TestNewSharesTheClusterAcrossTests(t *testing.T) {
	first := sharedC
	New(t)
	if sharedC != first || first == nil {
		t.Error("a second test started another cluster")
	}
}
