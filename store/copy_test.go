package store

import (
	"context"
	"encoding/json"
	"fmt"
	"go/ast"
	"go/parser"
	"go/token"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/pertinent/pertinent"
	"github.com/pertinent/pertinent/internal/pgtest"
)

// copySource is a SQLite store holding a little of everything: accounts, a session and a
// token, a project with judgments (one withdrawn), an adjudication, a source with
// provenance, features, a kept run, audit rows and the progress and version rows triggers
// keep.
func copySource(t *testing.T) (*Store, Project) {
	t.Helper()
	ctx := context.Background()
	s := openSQLiteTest(t)
	p, lead, pairs, users := fixture(t, s, 3, 4, 3)
	for i, u := range users {
		for range 5 {
			v, err := s.NextPair(ctx, p.ID, u)
			if err != nil {
				t.Fatal(err)
			}
			g := (int(v.PairID) + i) % 5
			if _, err := s.Submit(ctx, Submission{PairID: v.PairID, UserID: u, Grade: &g, Note: "note ünïcode", TimeSpentMs: 1234}); err != nil {
				t.Fatal(err)
			}
		}
	}
	if _, err := s.Undo(ctx, p.ID, users[0]); err != nil {
		t.Fatal(err)
	}
	if _, err := s.Adjudicate(ctx, pairs[0], lead.ID, 3, "settled"); err != nil {
		t.Fatal(err)
	}
	mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportQrels, Source: "model-x", SourceKind: SourceModel, SourceAbout: map[string]string{"model": "m", "date": "2026-12-01"}},
		files("x.qrels", "A 0 Aa 2\nA 0 Ab 3\nB 0 Ba 1\n")...)
	mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportFeatures}, files("f.svm", "0 qid:A 1:0.5 3:-2.25 # Aa\n0 qid:A 2:1e-7 # Ab\n")...)
	if _, err := s.KeepRun(ctx, p.ID, lead.ID, "r1", strings.NewReader("A Q0 Aa 1 2.5 r1\nA Q0 Ab 2 1.5 r1\n")); err != nil {
		t.Fatal(err)
	}
	if _, _, err := s.CreateAPIToken(ctx, lead.ID, "pipeline"); err != nil {
		t.Fatal(err)
	}
	if _, err := s.CreateSession(ctx, users[1], time.Hour); err != nil {
		t.Fatal(err)
	}
	return s, p
}

// exported reads what an export would write of a project, as comparable text.
func exported(t *testing.T, s *Store, projectID int64) string {
	t.Helper()
	var b strings.Builder
	err := s.ExportPairs(context.Background(), projectID, ExportScan{}, func(x *ExportPair) error {
		j, _ := json.Marshal(struct {
			P, Q, D string
			L       any
			J       any
		}{fmt.Sprint(x.PairID), x.QueryID, x.DocID, x.Labels, x.Judgments})
		b.Write(j)
		b.WriteByte('\n')
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return b.String()
}

// Every row arrives, checked by count and checksum; the copy then serves as the original
// did (the same export, the same judging history), numbers new rows past the copied ones,
// and refuses to be copied into again.
func TestCopyMovesEveryRowToPostgreSQL(t *testing.T) {
	ctx := context.Background()
	src, p := copySource(t)
	dst := openAt(t, pgtest.New(t))
	report, err := Copy(ctx, src, dst)
	if err != nil {
		t.Fatal(err)
	}
	if len(report) != len(copyTables) {
		t.Fatalf("%d tables copied, want %d", len(report), len(copyTables))
	}
	rows := map[string]int64{}
	for _, c := range report {
		rows[c.Name] = c.Rows
	}
	for _, table := range []string{"users", "judgments", "adjudications", "pair_features", "runs", "api_tokens", "sessions", "source_details", "audit_events", "query_progress", "project_versions"} {
		var want int64
		if err := src.r.QueryRowContext(ctx, `SELECT COUNT(*) FROM sqlite_schema WHERE type = 'table' AND name = ?`, table).Scan(&want); err != nil || want != 1 {
			t.Fatalf("no table %s in the source", table)
		}
		if rows[table] == 0 {
			t.Errorf("%s: no rows copied", table)
		}
	}
	if a, b := exported(t, src, p.ID), exported(t, dst, p.ID); a != b || a == "" {
		t.Fatalf("the export differs after the copy:\n%s\nwant\n%s", b, a)
	}
	ps, _ := src.ProjectProgress(ctx, p.ID)
	pd, _ := dst.ProjectProgress(ctx, p.ID)
	if ps != pd {
		t.Fatalf("progress %+v, want %+v", pd, ps)
	}
	// New rows are numbered past the copied ones, and the copy keeps working.
	u, err := dst.CreateUser(ctx, "newcomer", "", RoleAssessor, "long enough password")
	if err != nil || u.ID <= int64(rows["users"]) {
		t.Fatalf("a new account on the copy: id %d, %v (copied %d)", u.ID, err, rows["users"])
	}
	if err := dst.SetMember(ctx, p.ID, u.ID, RoleAssessor, 0); err != nil {
		t.Fatal(err)
	}
	v, err := dst.NextPair(ctx, p.ID, u.ID)
	if err != nil {
		t.Fatal(err)
	}
	g := 1
	if _, err := dst.Submit(ctx, Submission{PairID: v.PairID, UserID: u.ID, Grade: &g}); err != nil {
		t.Fatalf("judging on the copy: %v", err)
	}
	if _, err := Copy(ctx, src, dst); pertinent.CodeOf(err) != CodeConflict {
		t.Fatalf("a second copy into a database in use: %v", err)
	}
	if _, err := Copy(ctx, dst, src); pertinent.CodeOf(err) != CodeInvalid {
		t.Fatalf("a copy from PostgreSQL into SQLite: %v", err)
	}
}

// The list of tables to copy is the schema: every table but the migrations' own, in the
// order the migrations create them (so parents come before children), with every stored
// column. On failure the entry to write is printed.
func TestCopyTablesMatchTheSchema(t *testing.T) {
	ctx := context.Background()
	s := openSQLiteTest(t)
	names, err := queryAll(ctx, s.r, `SELECT name FROM sqlite_schema WHERE type = 'table' AND name NOT LIKE 'sqlite_%' AND name != 'schema_migrations' ORDER BY rowid`, scanValue[string])
	if err != nil {
		t.Fatal(err)
	}
	var got []string
	for _, c := range copyTables {
		got = append(got, c.name)
	}
	for i, name := range names {
		cols, err := queryAll(ctx, s.r, `SELECT name FROM pragma_table_xinfo(?) WHERE hidden = 0 ORDER BY cid`, scanValue[string], name)
		if err != nil {
			t.Fatal(err)
		}
		if i >= len(copyTables) || copyTables[i].name != name || !slices.Equal(copyTables[i].columns, cols) ||
			copyTables[i].read != "SELECT "+strings.Join(cols, ", ")+" FROM "+name || copyTables[i].clear != "DELETE FROM "+name {
			t.Errorf("copy_tables.go entry %d should read:\n\t{name: %q, columns: []string{%s},\n\t\tread: `SELECT %s FROM %s`, clear: `DELETE FROM %s`, ...},",
				i, name, `"`+strings.Join(cols, `", "`)+`"`, strings.Join(cols, ", "), name, name)
		}
	}
	if len(got) != len(names) {
		t.Errorf("copy_tables.go lists %v, the schema has %v", got, names)
	}
	// Parents first: every table a table refers to comes before it.
	seen := map[string]bool{}
	for _, c := range copyTables {
		parents, err := queryAll(ctx, s.r, `SELECT DISTINCT "table" FROM pragma_foreign_key_list(?)`, scanValue[string], c.name)
		if err != nil {
			t.Fatal(err)
		}
		for _, p := range parents {
			if p != c.name && !seen[p] {
				t.Errorf("%s refers to %s, which is copied after it", c.name, p)
			}
		}
		seen[c.name] = true
	}
}

// On PostgreSQL, the tables with row triggers are the ones the copy switches them off for,
// and the numbered columns are the identities whose sequences it sets.
func TestCopyTablesKnowPostgreSQLsTriggersAndIdentities(t *testing.T) {
	ctx := context.Background()
	s := openAt(t, pgtest.New(t))
	triggered, err := queryAll(ctx, s.r, `SELECT DISTINCT c.relname FROM pg_trigger g JOIN pg_class c ON c.oid = g.tgrelid
		WHERE NOT g.tgisinternal ORDER BY 1`, scanValue[string])
	if err != nil {
		t.Fatal(err)
	}
	identities, err := queryAll(ctx, s.r, `SELECT table_name || '.' || column_name FROM information_schema.columns
		WHERE table_schema = current_schema() AND is_identity = 'YES' ORDER BY 1`, scanValue[string])
	if err != nil {
		t.Fatal(err)
	}
	var wantT, wantI []string
	for _, c := range copyTables {
		if c.disable != "" {
			wantT = append(wantT, c.name)
			if c.disable != "ALTER TABLE "+c.name+" DISABLE TRIGGER USER" || c.enable != "ALTER TABLE "+c.name+" ENABLE TRIGGER USER" {
				t.Errorf("%s: trigger statements %q, %q", c.name, c.disable, c.enable)
			}
		}
		if c.identity != "" {
			wantI = append(wantI, c.name+"."+c.identity)
		}
	}
	slices.Sort(wantT)
	slices.Sort(wantI)
	if !slices.Equal(triggered, wantT) {
		t.Errorf("tables with triggers %v, copy_tables.go switches off %v", triggered, wantT)
	}
	if !slices.Equal(identities, wantI) {
		t.Errorf("identity columns %v, copy_tables.go sets %v", identities, wantI)
	}
}

// copy_tables.go holds string literals only, so its statements are constants in all but name.
func TestCopyTablesAreLiterals(t *testing.T) {
	f, err := parser.ParseFile(token.NewFileSet(), "copy_tables.go", nil, 0)
	if err != nil {
		t.Fatal(err)
	}
	n := 0
	ast.Inspect(f, func(x ast.Node) bool {
		kv, ok := x.(*ast.KeyValueExpr)
		if !ok {
			return true
		}
		n++
		switch v := kv.Value.(type) {
		case *ast.BasicLit:
		case *ast.CompositeLit:
			for _, e := range v.Elts {
				if _, ok := e.(*ast.BasicLit); !ok {
					t.Errorf("a value in copy_tables.go is not a literal: %T", e)
				}
			}
		default:
			t.Errorf("a value in copy_tables.go is not a literal: %T", v)
		}
		return true
	})
	if n < 3*len(copyTables) {
		t.Fatalf("only %d fields read", n)
	}
}
