package store

import (
	"reflect"
	"testing"
)

// pairLinks lists every pair of p as "query document priority", in query then document order.
func pairLinks(t *testing.T, s *Store, p Project) []string {
	t.Helper()
	rows, err := s.r.Query(`SELECT q.external_id || ' ' || d.external_id || ' ' || x.priority FROM pairs x
		JOIN queries q ON q.id = x.query_id JOIN documents d ON d.id = x.document_id
		WHERE x.project_id = ? AND d.project_id = x.project_id AND q.project_id = x.project_id
		ORDER BY q.external_id, d.external_id`, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	var out []string
	for rows.Next() {
		var l string
		rows.Scan(&l)
		out = append(out, l)
	}
	return out
}

// The first file into an empty project goes through the fresh path (ids chosen by the
// importer; on PostgreSQL the bulk path, see newImporter); a second file of the same import repeats and adds documents through upserts.
// Documents shared by several queries must link to the same row either way.
func TestFreshProjectImportLinksEveryPair(t *testing.T) {
	s := openTest(t)
	p, lead := importProject(t, s)
	// Another project's documents come first, so ids do not start at 1.
	other, err := s.CreateProject(t.Context(), NewProject{Name: "other"}, lead.ID)
	if err != nil {
		t.Fatal(err)
	}
	mustImport(t, s, other, lead.ID, ImportSpec{Kind: ImportRows}, files("o.csv", "query_id,query_text,doc_id,body\nx,x,d9,other\nx,x,d1,other\n")...)

	first := "query_id,query_text,doc_id,body,priority\n" +
		"q1,one,d1,a,1\nq1,one,d2,b,2\nq2,two,d2,b,3\nq2,two,d3,c,4\nq3,three,d1,a,5\n"
	second := "query_id,query_text,doc_id,body,priority\n" +
		"q3,three,d3,c,6\nq1,one,d4,d,7\nq2,two,d2,b,3\nq3,three,d1,a,8\n"
	rep := mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportRows}, files("a.csv", first, "b.csv", second)...)
	wantCount(t, rep, "documents", 4, 0, 3)
	wantCount(t, rep, "pairs", 7, 1, 1)
	want := []string{"q1 d1 1", "q1 d2 2", "q1 d4 7", "q2 d2 3", "q2 d3 4", "q3 d1 8", "q3 d3 6"}
	if got := pairLinks(t, s, p); !reflect.DeepEqual(got, want) {
		t.Errorf("pairs %v, want %v", got, want)
	}
	var bodies string
	s.r.QueryRow(`SELECT string_agg(external_id || '=' || body, ' ' ORDER BY external_id) FROM documents
		WHERE project_id = ?`, p.ID).Scan(&bodies)
	if bodies != "d1=a d2=b d3=c d4=d" {
		t.Errorf("documents %s", bodies)
	}
	checkProgress(t, s, "fresh import")

	// Again: nothing changes, through the upsert path now.
	rep = mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportRows}, files("a.csv", first)...)
	wantCount(t, rep, "pairs", 0, 1, 4) // q3 d1 goes back to priority 5
	rep = mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportRows}, files("a.csv", first)...)
	wantCount(t, rep, "documents", 0, 0, 3)
	wantCount(t, rep, "pairs", 0, 0, 5)
}
