package web

import (
	"os"
	"path/filepath"
	"testing"

	"github.com/pertinent/pertinent/internal/pgtest"
)

// One PostgreSQL cluster for the test binary, started by the first test that asks.
func TestMain(m *testing.M) { pgtest.Main(m) }

// testDatabase is where a test app keeps its data: a SQLite file in the test's folder, or,
// with PERTINENT_TEST_DB=postgres (scripts/test.sh's second pass), a fresh PostgreSQL
// database in the shared cluster.
func testDatabase(tb testing.TB) string {
	tb.Helper()
	if os.Getenv("PERTINENT_TEST_DB") == "postgres" {
		return pgtest.New(tb)
	}
	return filepath.Join(tb.TempDir(), "test.db")
}
