package store

import (
	"context"
	"database/sql"
	"testing"
)

// Re-adding a pair without a gold grade keeps the one it has, as a pairs import does; the
// priority is updated.
func TestLoaderReAddKeepsGoldGrade(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	p, _, pairs, _ := fixture(t, s, 1, 1, 1)
	var qid, did int64
	if err := s.r.QueryRowContext(ctx, `SELECT query_id, document_id FROM pairs WHERE id = ?`, pairs[0]).Scan(&qid, &did); err != nil {
		t.Fatal(err)
	}
	add := func(spec PairSpec) int64 {
		t.Helper()
		var id int64
		if err := s.Load(ctx, p.ID, func(l *Loader) (err error) { id, err = l.Pair(spec); return err }); err != nil {
			t.Fatal(err)
		}
		return id
	}
	if id := add(PairSpec{QueryID: qid, DocumentID: did, GoldGrade: grade(3)}); id != pairs[0] {
		t.Fatalf("pair id %d, want %d", id, pairs[0])
	}
	if id := add(PairSpec{QueryID: qid, DocumentID: did, Priority: 5}); id != pairs[0] {
		t.Fatalf("re-added pair id %d, want %d", id, pairs[0])
	}
	var gold sql.NullInt64
	var prio int
	if err := s.r.QueryRowContext(ctx, `SELECT gold_grade, priority FROM pairs WHERE id = ?`, pairs[0]).Scan(&gold, &prio); err != nil {
		t.Fatal(err)
	}
	if !gold.Valid || gold.Int64 != 3 || prio != 5 {
		t.Errorf("after re-adding: gold %v priority %d, want gold 3 priority 5", gold, prio)
	}
	// Unchanged rows still give their ids.
	if id := add(PairSpec{QueryID: qid, DocumentID: did, Priority: 5}); id != pairs[0] {
		t.Fatalf("unchanged pair id %d, want %d", id, pairs[0])
	}
}

// Metadata that cannot be stored as given (a value that is not UTF-8, which JSON would
// silently replace) is an error, and nothing of the load is kept.
func TestLoaderDocumentBadMetadataIsAnError(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	p, _, _, _ := fixture(t, s, 1, 1, 1)
	err := s.Load(ctx, p.ID, func(l *Loader) error {
		if _, err := l.Document(Document{ExternalID: "fine", Metadata: map[string]string{"brand": "Harbour"}}); err != nil {
			t.Fatalf("valid metadata: %v", err)
		}
		_, err := l.Document(Document{ExternalID: "bad", Metadata: map[string]string{"brand": "Harb\xffour"}})
		return err
	})
	if err == nil || ErrorCode(err) != CodeInvalid {
		t.Fatalf("bad metadata: %v (code %d), want a CodeInvalid error", err, ErrorCode(err))
	}
	var n int
	s.r.QueryRowContext(ctx, `SELECT COUNT(*) FROM documents WHERE project_id = ? AND external_id IN ('fine', 'bad')`, p.ID).Scan(&n)
	if n != 0 {
		t.Errorf("%d documents of the failed load were kept", n)
	}
	// Documents and queries added again return the same ids, changed or not.
	var ids [3]int64
	for i := range ids {
		err := s.Load(ctx, p.ID, func(l *Loader) (err error) {
			ids[i], err = l.Document(Document{ExternalID: "same", Title: []string{"a", "a", "b"}[i]})
			return err
		})
		if err != nil {
			t.Fatal(err)
		}
	}
	if ids[0] == 0 || ids[1] != ids[0] || ids[2] != ids[0] {
		t.Errorf("document ids %v, want one id", ids)
	}
}
