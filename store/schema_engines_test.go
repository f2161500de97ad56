package store

import (
	"context"
	"database/sql"
	"fmt"
	"regexp"
	"slices"
	"strings"
	"testing"

	// database/sql rather than pgx's native pool: MigratePostgres takes a *sql.DB, the handle
	// type the rest of the store is written against, and these reads need nothing native.
	_ "github.com/jackc/pgx/v5/stdlib"

	"github.com/pertinent/pertinent/internal/pgtest"
)

func TestMain(m *testing.M) { pgtest.Main(m) }

// The two migration sequences are one schema: the same numbered files, and once applied the
// same tables, columns (name, type class, nullability, whether there is a default, generated
// or database-numbered), keys, unique constraints, indexes, foreign keys and triggers, with
// each engine's spellings normalised away. A migration added to one engine only fails here.
func TestPostgresMigrationsMatchSQLiteSchema(t *testing.T) {
	ctx := context.Background()
	lite, err := Migrations()
	if err != nil {
		t.Fatal(err)
	}
	pg, err := PostgresMigrations()
	if err != nil {
		t.Fatal(err)
	}
	if d := lineDiff(migrationNames(lite), migrationNames(pg)); d != "" {
		t.Errorf("the migration sequences differ (migrations/ against migrations/postgres/):\n%s", d)
	}

	s := openSQLiteTest(t) // SQLite against PostgreSQL, on either pass
	db := migratedPostgres(t)
	// Again: a no-op, as for SQLite.
	if err := MigratePostgres(ctx, db); err != nil {
		t.Fatal(err)
	}
	recorded := func(db *sql.DB) []string {
		rows, err := queryAll(ctx, db, `SELECT version || ' ' || name FROM schema_migrations ORDER BY version`, scanValue[string])
		if err != nil {
			t.Fatal(err)
		}
		return rows
	}
	if d := lineDiff(recorded(s.r), recorded(db)); d != "" {
		t.Errorf("schema_migrations records differ:\n%s", d)
	}

	want := sqliteSchema(t, s.r)
	got := postgresSchema(t, db)
	if d := lineDiff(want, got); d != "" {
		t.Errorf("the PostgreSQL schema differs from SQLite's (- SQLite only, + PostgreSQL only):\n%s", d)
	}
	if len(want) < 100 {
		t.Errorf("only %d schema lines read from SQLite; the introspection is broken", len(want))
	}
}

func migrationNames(ms []Migration) []string {
	var out []string
	for _, m := range ms {
		out = append(out, fmt.Sprintf("%04d %s", m.Version, m.Name))
	}
	return out
}

// lineDiff lists the lines only in a (-) and only in b (+), sorted; "" when the sets agree.
func lineDiff(a, b []string) string {
	var out []string
	for _, l := range a {
		if !slices.Contains(b, l) {
			out = append(out, "- "+l)
		}
	}
	for _, l := range b {
		if !slices.Contains(a, l) {
			out = append(out, "+ "+l)
		}
	}
	slices.SortFunc(out, func(x, y string) int { return strings.Compare(x[2:]+x[:1], y[2:]+y[:1]) })
	return strings.Join(out, "\n")
}

// storeGivenKeys are the single-column INTEGER PRIMARY KEYs SQLite would number by itself
// but the store always fills in: their PostgreSQL columns are plain bigint, every other such
// key is an identity column.
var storeGivenKeys = map[string]bool{
	"schema_migrations.version":    true, // the migration's number
	"query_progress.query_id":      true, // the query's id
	"pair_features.pair_id":        true, // the pair's id
	"project_versions.project_id":  true, // the project's id
	"bulk_imports.project_id":      true, // the importing project's id
	"source_details.user_id":       true, // the source account's id
	"prelabel_settings.project_id": true, // the project's id
	"prelabel_raises.pair_id":      true, // the pair's id
}

// The schema is written as one line per fact, the same words for both engines:
//
//	table T
//	column T.c <integer|real|text|blob|...> [not null] [default] [generated] [numbered] [nocase]
//	primary key T (a, b)
//	unique T (a nocase, b)          a UNIQUE constraint in the table
//	index N on T (a, b desc) [unique] [where p]
//	foreign key T (a) references R (b) on delete X on update Y
//	trigger N after update of a, b on T

// sqliteTypeClass follows SQLite's rules for a declared type's affinity.
func sqliteTypeClass(decl string) string {
	d := strings.ToUpper(decl)
	switch {
	case strings.Contains(d, "INT"):
		return "integer"
	case strings.Contains(d, "CHAR"), strings.Contains(d, "CLOB"), strings.Contains(d, "TEXT"):
		return "text"
	case d == "", strings.Contains(d, "BLOB"):
		return "blob"
	case strings.Contains(d, "REAL"), strings.Contains(d, "FLOA"), strings.Contains(d, "DOUB"):
		return "real"
	}
	return "numeric"
}

func postgresTypeClass(t string) string {
	switch t {
	case "bigint", "integer", "smallint":
		return "integer"
	case "text", "character varying":
		return "text"
	case "bytea":
		return "blob"
	case "double precision", "real":
		return "real"
	}
	return t // compared as spelt: nothing in the SQLite schema maps to it
}

// normPredicate makes a partial index's WHERE comparable: PostgreSQL adds parentheses and
// quotes, the spelling of keywords varies in case.
func normPredicate(p string) string {
	return strings.NewReplacer("(", "", ")", "", `"`, "", " ", "", "\n", "", "\t", "").Replace(strings.ToLower(p))
}

func schemaColumn(table, name, class string, notNull, hasDefault, generated, numbered, nocase bool) string {
	l := "column " + table + "." + name + " " + class
	for _, f := range []struct {
		on   bool
		word string
	}{{notNull, "not null"}, {hasDefault, "default"}, {generated, "generated"}, {numbered, "numbered"}, {nocase, "nocase"}} {
		if f.on {
			l += " " + f.word
		}
	}
	return l
}

var (
	sqliteWhere   = regexp.MustCompile(`(?is)\bWHERE\b(.*)$`)
	sqliteTrigger = regexp.MustCompile(`(?is)^CREATE\s+TRIGGER\s+(?:IF\s+NOT\s+EXISTS\s+)?(\w+)\s+(BEFORE|AFTER|INSTEAD\s+OF)?\s*(INSERT|DELETE|UPDATE(?:\s+OF\s+(.+?))?)\s+ON\s+(\w+)`)
)

func sqliteSchema(t *testing.T, db *sql.DB) []string {
	t.Helper()
	ctx := context.Background()
	type obj struct{ name, sql string }
	tables, err := queryAll(ctx, db, `SELECT name, sql FROM sqlite_schema WHERE type = 'table' AND name NOT LIKE 'sqlite_%' ORDER BY name`,
		func(r rowScanner) (o obj, err error) { return o, r.Scan(&o.name, &o.sql) })
	if err != nil {
		t.Fatal(err)
	}
	var out []string
	for _, tb := range tables {
		out = append(out, "table "+tb.name)
		withoutRowid := regexp.MustCompile(`(?i)\)\s*WITHOUT\s+ROWID\s*$`).MatchString(tb.sql)
		type col struct {
			name, decl      string
			notNull, hasDef bool
			pk, hidden      int
		}
		cols, err := queryAll(ctx, db, `SELECT name, type, "notnull", dflt_value IS NOT NULL, pk, hidden FROM pragma_table_xinfo(?) ORDER BY cid`,
			func(r rowScanner) (c col, err error) {
				return c, r.Scan(&c.name, &c.decl, &c.notNull, &c.hasDef, &c.pk, &c.hidden)
			}, tb.name)
		if err != nil {
			t.Fatal(err)
		}
		var pk []string
		pkCount := 0
		for _, c := range cols {
			if c.pk > 0 {
				pkCount++
			}
		}
		for _, c := range cols {
			if c.pk > 0 {
				pk = append(pk, "")
			}
		}
		for _, c := range cols {
			if c.pk > 0 {
				pk[c.pk-1] = c.name
			}
			// An INTEGER PRIMARY KEY of a rowid table is the rowid: numbered when not given.
			rowid := c.pk > 0 && pkCount == 1 && strings.EqualFold(c.decl, "INTEGER") && !withoutRowid
			nocase := regexp.MustCompile(`(?im)^\s*` + regexp.QuoteMeta(c.name) + `\s[^\n]*\bCOLLATE\s+NOCASE\b`).MatchString(tb.sql)
			// Primary-key columns count as NOT NULL: PostgreSQL enforces it, and the store never
			// relies on SQLite's leniency of a NULL in a rowid table's non-integer key.
			out = append(out, schemaColumn(tb.name, c.name, sqliteTypeClass(c.decl), c.notNull || c.pk > 0, c.hasDef,
				c.hidden == 2 || c.hidden == 3, rowid && !storeGivenKeys[tb.name+"."+c.name], nocase))
		}
		if len(pk) > 0 {
			out = append(out, "primary key "+tb.name+" ("+strings.Join(pk, ", ")+")")
		}

		type index struct {
			name, origin string
			unique       bool
		}
		idx, err := queryAll(ctx, db, `SELECT name, origin, "unique" FROM pragma_index_list(?)`,
			func(r rowScanner) (i index, err error) { return i, r.Scan(&i.name, &i.origin, &i.unique) }, tb.name)
		if err != nil {
			t.Fatal(err)
		}
		for _, ix := range idx {
			if ix.origin == "pk" {
				continue
			}
			type key struct {
				name, coll string
				desc       bool
			}
			keys, err := queryAll(ctx, db, `SELECT name, "desc", coll FROM pragma_index_xinfo(?) WHERE key = 1 ORDER BY seqno`,
				func(r rowScanner) (k key, err error) { return k, r.Scan(&k.name, &k.desc, &k.coll) }, ix.name)
			if err != nil {
				t.Fatal(err)
			}
			var parts []string
			for _, k := range keys {
				p := k.name
				if k.desc {
					p += " desc"
				}
				if strings.EqualFold(k.coll, "NOCASE") {
					p += " nocase"
				}
				parts = append(parts, p)
			}
			if ix.origin == "u" {
				out = append(out, "unique "+tb.name+" ("+strings.Join(parts, ", ")+")")
				continue
			}
			var def string
			if err := db.QueryRowContext(ctx, `SELECT sql FROM sqlite_schema WHERE type = 'index' AND name = ?`, ix.name).Scan(&def); err != nil {
				t.Fatal(err)
			}
			l := "index " + ix.name + " on " + tb.name + " (" + strings.Join(parts, ", ") + ")"
			if ix.unique {
				l += " unique"
			}
			if m := sqliteWhere.FindStringSubmatch(def); m != nil {
				l += " where " + normPredicate(m[1])
			}
			out = append(out, l)
		}

		type fkCol struct {
			id           int
			ref, from    string
			to           sql.NullString
			onUpd, onDel string
		}
		fks, err := queryAll(ctx, db, `SELECT id, "table", "from", "to", on_update, on_delete FROM pragma_foreign_key_list(?) ORDER BY id, seq`,
			func(r rowScanner) (f fkCol, err error) {
				return f, r.Scan(&f.id, &f.ref, &f.from, &f.to, &f.onUpd, &f.onDel)
			}, tb.name)
		if err != nil {
			t.Fatal(err)
		}
		for i := 0; i < len(fks); {
			j := i
			var from, to []string
			for ; j < len(fks) && fks[j].id == fks[i].id; j++ {
				from = append(from, fks[j].from)
				to = append(to, fks[j].to.String) // every reference here names its columns
			}
			out = append(out, fmt.Sprintf("foreign key %s (%s) references %s (%s) on delete %s on update %s", tb.name,
				strings.Join(from, ", "), fks[i].ref, strings.Join(to, ", "), strings.ToLower(fks[i].onDel), strings.ToLower(fks[i].onUpd)))
			i = j
		}
	}

	triggers, err := queryAll(ctx, db, `SELECT name, sql FROM sqlite_schema WHERE type = 'trigger' ORDER BY name`,
		func(r rowScanner) (o obj, err error) { return o, r.Scan(&o.name, &o.sql) })
	if err != nil {
		t.Fatal(err)
	}
	for _, tr := range triggers {
		m := sqliteTrigger.FindStringSubmatch(tr.sql)
		if m == nil {
			t.Fatalf("trigger %s: cannot read its header: %s", tr.name, tr.sql)
		}
		timing := strings.ToLower(strings.Join(strings.Fields(m[2]), " "))
		if timing == "" {
			timing = "before" // SQLite's default
		}
		event := strings.ToLower(strings.Fields(m[3])[0])
		if m[4] != "" {
			var cols []string
			for _, c := range strings.Split(m[4], ",") {
				cols = append(cols, strings.TrimSpace(c))
			}
			event += " of " + strings.Join(cols, ", ")
		}
		out = append(out, "trigger "+m[1]+" "+timing+" "+event+" on "+m[5])
	}
	return out
}

// pgColumns lists a constraint's or trigger's columns by their numbers, in order.
const pgColumnsOf = `(SELECT string_agg(a.attname, ', ' ORDER BY u.i) FROM unnest(%s::int2[]) WITH ORDINALITY AS u(n, i)
	JOIN pg_attribute a ON a.attrelid = %s AND a.attnum = u.n)`

func postgresSchema(t *testing.T, db *sql.DB) []string {
	t.Helper()
	ctx := context.Background()
	var out []string
	lines := func(query string, scan func(r rowScanner) (string, error)) {
		t.Helper()
		ls, err := queryAll(ctx, db, query, scan)
		if err != nil {
			t.Fatalf("%v\n%s", err, query)
		}
		out = append(out, ls...)
	}
	lines(`SELECT c.relname FROM pg_class c JOIN pg_namespace n ON n.oid = c.relnamespace
		WHERE n.nspname = current_schema() AND c.relkind = 'r'`, func(r rowScanner) (string, error) {
		var name string
		return "table " + name, r.Scan(&name)
	})
	lines(`SELECT c.relname, a.attname, format_type(a.atttypid, NULL), a.attnotnull,
			a.atthasdef AND a.attgenerated = '', a.attgenerated <> '', a.attidentity <> '',
			COALESCE(co.collname = 'nocase', false)
		FROM pg_attribute a JOIN pg_class c ON c.oid = a.attrelid JOIN pg_namespace n ON n.oid = c.relnamespace
		LEFT JOIN pg_collation co ON co.oid = a.attcollation
		WHERE n.nspname = current_schema() AND c.relkind = 'r' AND a.attnum > 0 AND NOT a.attisdropped`,
		func(r rowScanner) (string, error) {
			var table, name, typ string
			var notNull, hasDef, generated, identity, nocase bool
			err := r.Scan(&table, &name, &typ, &notNull, &hasDef, &generated, &identity, &nocase)
			return schemaColumn(table, name, postgresTypeClass(typ), notNull, hasDef, generated, identity, nocase), err
		})
	lines(`SELECT ci.relname, ct.relname, ix.indisunique, COALESCE(con.contype::text, ''),
			COALESCE(pg_get_expr(ix.indpred, ix.indrelid), ''),
			(SELECT string_agg(pg_get_indexdef(ix.indexrelid, k, true)
					|| CASE WHEN (ix.indoption[k - 1] & 1) = 1 THEN ' desc' ELSE '' END
					|| CASE WHEN (SELECT collname FROM pg_collation WHERE oid = ix.indcollation[k - 1]) = 'nocase' THEN ' nocase' ELSE '' END,
				', ' ORDER BY k) FROM generate_series(1, ix.indnkeyatts) AS k)
		FROM pg_index ix JOIN pg_class ci ON ci.oid = ix.indexrelid JOIN pg_class ct ON ct.oid = ix.indrelid
		JOIN pg_namespace n ON n.oid = ct.relnamespace
		LEFT JOIN pg_constraint con ON con.conindid = ix.indexrelid AND con.contype IN ('p', 'u')
		WHERE n.nspname = current_schema()`,
		func(r rowScanner) (string, error) {
			var name, table, contype, pred, cols string
			var unique bool
			if err := r.Scan(&name, &table, &unique, &contype, &pred, &cols); err != nil {
				return "", err
			}
			cols = strings.ReplaceAll(cols, `"`, "")
			switch contype {
			case "p":
				return "primary key " + table + " (" + cols + ")", nil
			case "u":
				return "unique " + table + " (" + cols + ")", nil
			}
			l := "index " + name + " on " + table + " (" + cols + ")"
			if unique {
				l += " unique"
			}
			if pred != "" {
				l += " where " + normPredicate(pred)
			}
			return l, nil
		})
	lines(`SELECT ct.relname, cr.relname, `+fmt.Sprintf(pgColumnsOf, "c.conkey", "c.conrelid")+`, `+
		fmt.Sprintf(pgColumnsOf, "c.confkey", "c.confrelid")+`, c.confdeltype, c.confupdtype
		FROM pg_constraint c JOIN pg_class ct ON ct.oid = c.conrelid JOIN pg_class cr ON cr.oid = c.confrelid
		JOIN pg_namespace n ON n.oid = ct.relnamespace
		WHERE n.nspname = current_schema() AND c.contype = 'f'`,
		func(r rowScanner) (string, error) {
			var table, ref, from, to, del, upd string
			err := r.Scan(&table, &ref, &from, &to, &del, &upd)
			action := map[string]string{"a": "no action", "r": "restrict", "c": "cascade", "n": "set null", "d": "set default"}
			return fmt.Sprintf("foreign key %s (%s) references %s (%s) on delete %s on update %s",
				table, from, ref, to, action[del], action[upd]), err
		})
	lines(`SELECT t.tgname, c.relname, t.tgtype, COALESCE(`+fmt.Sprintf(pgColumnsOf, "t.tgattr", "t.tgrelid")+`, '')
		FROM pg_trigger t JOIN pg_class c ON c.oid = t.tgrelid JOIN pg_namespace n ON n.oid = c.relnamespace
		WHERE n.nspname = current_schema() AND NOT t.tgisinternal`,
		func(r rowScanner) (string, error) {
			var name, table, cols string
			var typ int
			if err := r.Scan(&name, &table, &typ, &cols); err != nil {
				return "", err
			}
			// tgtype's bits (PostgreSQL's pg_trigger.h): 2 before, 4 insert, 8 delete, 16 update, 64 instead of.
			timing := "after"
			if typ&2 != 0 {
				timing = "before"
			} else if typ&64 != 0 {
				timing = "instead of"
			}
			var events []string
			if typ&4 != 0 {
				events = append(events, "insert")
			}
			if typ&8 != 0 {
				events = append(events, "delete")
			}
			if typ&16 != 0 {
				e := "update"
				if cols != "" {
					e += " of " + cols
				}
				events = append(events, e)
			}
			return "trigger " + name + " " + timing + " " + strings.Join(events, " or ") + " on " + table, nil
		})
	return out
}

// The translated triggers do what SQLite's do: the same writes, on both engines, leave the
// same query progress, project versions and desk log, and usernames match whatever their case.
func TestPostgresTriggersKeepWhatSQLitesKeep(t *testing.T) {
	ctx := context.Background()
	s := openSQLiteTest(t) // SQLite against PostgreSQL, on either pass
	db := migratedPostgres(t)
	// Plain SQL both engines read alike, no parameters.
	writes := []string{
		`INSERT INTO users(id, username, role, created_at) VALUES (1, 'ann', 'assessor', 't'), (2, 'bob', 'assessor', 't')`,
		`INSERT INTO projects(id, name, created_at) VALUES (1, 'p', 't'), (2, 'other', 't')`,
		`INSERT INTO project_versions(project_id, version) VALUES (2, 0)`,
		`INSERT INTO queries(id, project_id, external_id, text) VALUES (1, 1, 'q1', 'x'), (2, 1, 'q2', 'y')`,
		`INSERT INTO documents(id, project_id, external_id) VALUES (1, 1, 'd1'), (2, 1, 'd2'), (3, 1, 'd3')`,
		`INSERT INTO pairs(id, project_id, query_id, document_id, priority, created_at) VALUES (1, 1, 1, 1, 0, 't')`,
		`INSERT INTO pairs(id, project_id, query_id, document_id, priority, created_at) VALUES (2, 1, 1, 2, 5, 't')`,
		`INSERT INTO pairs(id, project_id, query_id, document_id, gold_grade, created_at) VALUES (3, 1, 2, 3, 2, 't')`,
		`INSERT INTO judgments(id, pair_id, user_id, grade, created_at) VALUES (1, 1, 1, 2, 't')`,
		`UPDATE pairs SET judged = 1 WHERE id = 1`,
		`INSERT INTO judgments(id, pair_id, user_id, grade, created_at) VALUES (2, 2, 2, 1, 't')`,
		`UPDATE pairs SET judged = 1 WHERE id = 2`,
		// A revision: the old judgment retires, the new one supersedes it.
		`UPDATE judgments SET current = 0 WHERE id = 1`,
		`INSERT INTO judgments(id, pair_id, user_id, grade, supersedes, created_at) VALUES (3, 1, 1, 3, 1, 't')`,
		// Undone: the revision retires, the old judgment revives (kind 1); then back again.
		`UPDATE judgments SET current = 0 WHERE id = 3`,
		`UPDATE judgments SET current = 1 WHERE id = 1`,
		`UPDATE judgments SET current = 0 WHERE id = 1`,
		`UPDATE judgments SET current = 1 WHERE id = 3`,
		`UPDATE pairs SET priority = 7 WHERE id = 1`,
		`UPDATE pairs SET gold_grade = NULL WHERE id = 3`,
		`UPDATE pairs SET judged = 2 WHERE id = 3`,
		`UPDATE users SET username = 'Ann' WHERE id = 1`,
		// An import holding its row: the per-pair triggers stand aside.
		`INSERT INTO bulk_imports(project_id) VALUES (1)`,
		`INSERT INTO pairs(id, project_id, query_id, document_id, priority, created_at) VALUES (4, 1, 2, 1, 9, 't')`,
		`DELETE FROM bulk_imports`,
		`UPDATE judgments SET grade = 4 WHERE id = 2`,
		`DELETE FROM pairs WHERE id = 2`,
		`DELETE FROM judgments WHERE id = 3`,
	}
	for _, w := range writes {
		if _, err := s.w.ExecContext(ctx, w); err != nil {
			t.Fatalf("SQLite: %v\n%s", err, w)
		}
		if _, err := db.ExecContext(ctx, w); err != nil {
			t.Fatalf("PostgreSQL: %v\n%s", err, w)
		}
	}
	reads := []string{
		`SELECT query_id, project_id, pairs, judged, top_priority, coverage FROM query_progress ORDER BY query_id`,
		`SELECT project_id, version FROM project_versions ORDER BY project_id`,
		`SELECT seq, project_id, judgment_id, kind FROM desk_log ORDER BY seq`,
		`SELECT id FROM users WHERE username = 'ANN'`,
	}
	for _, q := range reads {
		lite, pg := rowsText(t, s.w, q), rowsText(t, db, q)
		if d := lineDiff(lite, pg); d != "" || len(lite) == 0 {
			t.Errorf("%s\nSQLite:     %v\nPostgreSQL: %v", q, lite, pg)
		}
	}
	// The case-blind uniqueness of usernames holds on both.
	const twin = `INSERT INTO users(username, role, created_at) VALUES ('BOB', 'assessor', 't')`
	if _, err := s.w.ExecContext(ctx, twin); err == nil {
		t.Error("SQLite accepted a username differing only in case")
	}
	if _, err := db.ExecContext(ctx, twin); err == nil {
		t.Error("PostgreSQL accepted a username differing only in case")
	}
}

// rowsText reads every row of q as one line of its values.
func rowsText(t *testing.T, db *sql.DB, q string) []string {
	t.Helper()
	rows, err := db.QueryContext(context.Background(), q)
	if err != nil {
		t.Fatalf("%v\n%s", err, q)
	}
	defer rows.Close()
	var out []string
	for rows.Next() {
		out = append(out, fmt.Sprint(scanAny(t, rows)...))
	}
	if err := rows.Err(); err != nil {
		t.Fatal(err)
	}
	return out
}

// scanAny reads the current row's values, whatever its columns.
func scanAny(t *testing.T, rows *sql.Rows) []any {
	t.Helper()
	cols, err := rows.Columns()
	if err != nil {
		t.Fatal(err)
	}
	vals := make([]any, len(cols))
	ptrs := make([]any, len(cols))
	for i := range vals {
		ptrs[i] = &vals[i]
	}
	if err := rows.Scan(ptrs...); err != nil {
		t.Fatal(err)
	}
	return vals
}

// migratedPostgres is a fresh PostgreSQL database with every migration applied.
func migratedPostgres(t *testing.T) *sql.DB {
	t.Helper()
	db, err := sql.Open("pgx", pgtest.New(t))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { db.Close() })
	if err := MigratePostgres(context.Background(), db); err != nil {
		t.Fatal(err)
	}
	return db
}
