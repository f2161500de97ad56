package store

import (
	"context"
	"reflect"
	"testing"

	"github.com/pertinent/pertinent/ingest"
)

// progressRecount is query_progress by its definition (migration 0003's initial fill): per
// query with pairs, the non-gold pairs, their current judgments and their top priority.
func progressRecount(t *testing.T, s *Store) (kept, recount [][4]int64) {
	t.Helper()
	read := func(q string) [][4]int64 {
		rows, err := s.r.Query(q)
		if err != nil {
			t.Fatal(err)
		}
		defer rows.Close()
		var out [][4]int64
		for rows.Next() {
			var r [4]int64
			if err := rows.Scan(&r[0], &r[1], &r[2], &r[3]); err != nil {
				t.Fatal(err)
			}
			out = append(out, r)
		}
		return out
	}
	kept = read(`SELECT query_id, pairs, judged, top_priority FROM query_progress ORDER BY query_id`)
	recount = read(`SELECT q.id,
		(SELECT COUNT(*) FROM pairs p WHERE p.query_id = q.id AND p.gold_grade IS NULL),
		(SELECT COALESCE(SUM(p.judged), 0) FROM pairs p WHERE p.query_id = q.id AND p.gold_grade IS NULL),
		(SELECT COALESCE(MAX(p.priority), 0) FROM pairs p WHERE p.query_id = q.id AND p.gold_grade IS NULL)
		FROM queries q WHERE EXISTS (SELECT 1 FROM pairs p WHERE p.query_id = q.id) ORDER BY q.id`)
	return kept, recount
}

func projectVersion(t *testing.T, s *Store, p Project) int64 {
	t.Helper()
	var v int64
	if err := s.r.QueryRow(`SELECT COALESCE((SELECT version FROM project_versions WHERE project_id = ?), 0)`, p.ID).Scan(&v); err != nil {
		t.Fatal(err)
	}
	return v
}

func checkProgress(t *testing.T, s *Store, when string) {
	t.Helper()
	kept, recount := progressRecount(t, s)
	if len(recount) == 0 {
		t.Fatalf("%s: no pairs to check", when)
	}
	if !reflect.DeepEqual(kept, recount) {
		t.Errorf("%s: query_progress %v, recounted %v", when, kept, recount)
	}
	var left int
	s.r.QueryRow(`SELECT COUNT(*) FROM bulk_imports`).Scan(&left)
	if left != 0 {
		t.Errorf("%s: %d bulk_imports rows outlived the import", when, left)
	}
}

// Imports settle query progress and the project version once at the end, instead of through
// the per-pair triggers; the result must be what the triggers would have kept.
func TestImportKeepsQueryProgressAndVersion(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	p, lead := importProject(t, s)
	v0 := projectVersion(t, s, p)
	mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportRows}, files("rows.csv", rowsCSV)...)
	checkProgress(t, s, "first import")
	v1 := projectVersion(t, s, p)
	if v1 <= v0 {
		t.Errorf("version %d after adding pairs, was %d", v1, v0)
	}

	// Pairs added outside an import go through the triggers, which must be in force again.
	var q1 int64
	s.r.QueryRow(`SELECT id FROM queries WHERE external_id = 'q1'`).Scan(&q1)
	if _, _, err := s.AddPooledPairs(ctx, p.ID, []ingest.PoolPair{{QueryID: "q2", DocID: "d1", Priority: 7}}, lead.ID); err != nil {
		t.Fatal(err)
	}
	checkProgress(t, s, "pooled pair added")
	var top int64
	s.r.QueryRow(`SELECT top_priority FROM query_progress q JOIN queries x ON x.id = q.query_id WHERE x.external_id = 'q2'`).Scan(&top)
	if top != 7 {
		t.Errorf("q2's top priority %d after a pooled pair of priority 7", top)
	}
	v2 := projectVersion(t, s, p)
	if v2 <= v1 {
		t.Errorf("version %d after a pooled pair, was %d", v2, v1)
	}

	// One import of two files: the first adds pairs to an old and a new query, the second
	// changes a pair the first added (priority, gold grade) and adds another.
	first := `query_id,query_text,query_need,doc_id,title,body,priority,gold_grade
q1,kettle,a quiet one,d3,Kettle C,Hums.,4,
q3,toaster,,d1,Kettle A,Quiet.,1,
q3,toaster,,d3,Kettle C,Hums.,6,
`
	second := `query_id,query_text,query_need,doc_id,title,body,priority,gold_grade
q3,toaster,,d3,Kettle C,Hums.,2,1
q3,toaster,,d2,Kettle B,Loud.,3,
q1,kettle,a quiet one,d1,Kettle A,Quiet.,9,
`
	rep := mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportRows}, files("a.csv", first, "b.csv", second)...)
	wantCount(t, rep, "pairs", 4, 2, 0)
	checkProgress(t, s, "two files in one import")
	v3 := projectVersion(t, s, p)
	if v3 <= v2 {
		t.Errorf("version %d after the second import, was %d", v3, v2)
	}

	// Nothing new: the version stays.
	rep = mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportRows}, files("b.csv", second)...)
	wantCount(t, rep, "pairs", 0, 0, 3)
	checkProgress(t, s, "repeated import")
	if v := projectVersion(t, s, p); v != v3 {
		t.Errorf("version %d after an import that changed nothing, was %d", v, v3)
	}
}
