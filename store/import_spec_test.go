package store

import (
	"context"
	"errors"
	"fmt"
	"reflect"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/ingest"
)

// importProject makes an empty project with the default 0-4 scale and returns it with its lead.
func importProject(t *testing.T, s *Store) (Project, User) {
	t.Helper()
	return leadProject(t, s, NewProject{Name: "imports"})
}

func files(nameContent ...string) []ImportFile {
	var out []ImportFile
	for i := 0; i+1 < len(nameContent); i += 2 {
		out = append(out, ImportFile{Name: nameContent[i], R: strings.NewReader(nameContent[i+1])})
	}
	return out
}

func mustImport(t *testing.T, s *Store, p Project, by int64, spec ImportSpec, fs ...ImportFile) ImportReport {
	t.Helper()
	rep, err := s.Import(context.Background(), p.ID, by, spec, fs)
	if err != nil {
		t.Fatalf("import %s: %v", spec.Kind, err)
	}
	return rep
}

func wantCount(t *testing.T, rep ImportReport, what string, n, u, same int) {
	t.Helper()
	if c := rep.Count(what); c.New != n || c.Updated != u || c.Unchanged != same {
		t.Errorf("%s: %d new, %d updated, %d unchanged; want %d, %d, %d", what, c.New, c.Updated, c.Unchanged, n, u, same)
	}
}

const rowsCSV = `query_id,query_text,query_need,doc_id,title,body,priority,gold_grade,lang
q1,kettle,a quiet one,d1,Kettle A,Quiet.,2,,en
q1,kettle,a quiet one,d2,Kettle B,Loud.,1,,en
q2,teapot,,d2,Kettle B,Loud.,0,3,en
`

func TestImportRowsThenTwiceUnchangedThenEdited(t *testing.T) {
	s := openTest(t)
	p, lead := importProject(t, s)
	spec := ImportSpec{Kind: ImportRows}
	rep := mustImport(t, s, p, lead.ID, spec, files("rows.csv", rowsCSV)...)
	wantCount(t, rep, "queries", 2, 0, 0)
	wantCount(t, rep, "documents", 2, 0, 0)
	wantCount(t, rep, "pairs", 3, 0, 0)
	var meta string
	var gold *int
	s.r.QueryRow(`SELECT metadata FROM documents WHERE external_id = 'd2'`).Scan(&meta)
	s.r.QueryRow(`SELECT x.gold_grade FROM pairs x JOIN queries q ON q.id = x.query_id WHERE q.external_id = 'q2'`).Scan(&gold)
	if meta != `{"lang":"en"}` || gold == nil || *gold != 3 {
		t.Errorf("metadata %s, gold grade %v: want {\"lang\":\"en\"} and 3", meta, gold)
	}

	before := dump(t, s)
	rep = mustImport(t, s, p, lead.ID, spec, files("rows.csv", rowsCSV)...)
	wantCount(t, rep, "queries", 0, 0, 2)
	wantCount(t, rep, "documents", 0, 0, 2)
	wantCount(t, rep, "pairs", 0, 0, 3)
	after := dump(t, s)
	delete(before, "audit_events")
	delete(after, "audit_events")
	if !reflect.DeepEqual(before, after) {
		t.Error("importing the same file twice changed the database")
	}

	// Edit one query's text, one document's body and one pair's priority: updated in place.
	var qid, did int64
	s.r.QueryRow(`SELECT id FROM queries WHERE external_id = 'q1'`).Scan(&qid)
	s.r.QueryRow(`SELECT id FROM documents WHERE external_id = 'd1'`).Scan(&did)
	edited := strings.NewReplacer("kettle,a quiet one", "kettle,a silent one", "Quiet.,2", "Silent.,5").Replace(rowsCSV)
	rep = mustImport(t, s, p, lead.ID, spec, files("rows.csv", edited)...)
	wantCount(t, rep, "queries", 0, 1, 1)
	wantCount(t, rep, "documents", 0, 1, 1)
	wantCount(t, rep, "pairs", 0, 1, 2)
	var need, body string
	var prio int
	s.r.QueryRow(`SELECT need FROM queries WHERE id = ?`, qid).Scan(&need)
	s.r.QueryRow(`SELECT body FROM documents WHERE id = ?`, did).Scan(&body)
	s.r.QueryRow(`SELECT priority FROM pairs WHERE query_id = ? AND document_id = ?`, qid, did).Scan(&prio)
	if need != "a silent one" || body != "Silent." || prio != 5 {
		t.Errorf("after the edit: need %q, body %q, priority %d", need, body, prio)
	}
}

func TestImportEachTableKind(t *testing.T) {
	s := openTest(t)
	p, lead := importProject(t, s)
	rep := mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportQueries},
		files("q.csv", "query_id,text,need\nq1,kettle,quiet\nq2,teapot,\n")...)
	wantCount(t, rep, "queries", 2, 0, 0)
	rep = mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportDocuments},
		files("d.jsonl", `{"doc_id":"d1","title":"A","body":"<p>x</p>","body_format":"html","meta":{"brand":"Acme"}}`+"\n"+`{"doc_id":"d2","title":"B"}`+"\n")...)
	wantCount(t, rep, "documents", 2, 0, 0)
	rep = mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportPairs},
		files("p.csv", "query_id,doc_id,priority,gold_grade\nq1,d1,3,\nq1,d2,,4\nq2,d2,1,\n")...)
	wantCount(t, rep, "pairs", 3, 0, 0)
	var fmtHTML, meta string
	s.r.QueryRow(`SELECT body_format, metadata FROM documents WHERE external_id = 'd1'`).Scan(&fmtHTML, &meta)
	if fmtHTML != "html" || meta != `{"brand":"Acme"}` {
		t.Errorf("d1 stored as %s with %s", fmtHTML, meta)
	}
	var n int
	s.r.QueryRow(`SELECT COUNT(*) FROM pairs WHERE project_id = ? AND gold_grade = 4 AND priority = 0`, p.ID).Scan(&n)
	if n != 1 {
		t.Errorf("%d gold pairs with grade 4, want 1", n)
	}

	// Features: CSV names map onto indexes; a second file with the columns swapped agrees.
	rep = mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportFeatures},
		files("f.csv", "query_id,doc_id,bm25,clicks\nq1,d1,1.5,\nq1,d2,0.25,7\n")...)
	wantCount(t, rep, "features", 2, 0, 0)
	wantCount(t, rep, "feature names", 2, 0, 0)
	rep = mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportFeatures},
		files("f2.csv", "query_id,doc_id,clicks,bm25\nq1,d2,7,0.25\nq2,d2,1,2\n")...)
	wantCount(t, rep, "features", 1, 0, 1)
	wantCount(t, rep, "feature names", 0, 0, 2)
	if got := pairFeatures(t, s, "q2", "d2"); !reflect.DeepEqual(got, []ingest.Feature{{Index: 1, Value: 2}, {Index: 2, Value: 1}}) {
		t.Errorf("q2/d2 features %v, want bm25 (1) = 2 and clicks (2) = 1", got)
	}
	rep = mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportFeatures},
		files("f.svm", "2 qid:q1 1:0.5 3:9 # d1 anything\n")...)
	wantCount(t, rep, "features", 0, 1, 0)
	if got := pairFeatures(t, s, "q1", "d1"); !reflect.DeepEqual(got, []ingest.Feature{{Index: 1, Value: 0.5}, {Index: 3, Value: 9}}) {
		t.Errorf("q1/d1 features %v after the SVMlight file", got)
	}
}

func pairFeatures(t *testing.T, s *Store, q, d string) []ingest.Feature {
	t.Helper()
	var b []byte
	err := s.r.QueryRow(`SELECT f.data FROM pair_features f JOIN pairs x ON x.id = f.pair_id
		JOIN queries q ON q.id = x.query_id JOIN documents d ON d.id = x.document_id
		WHERE q.external_id = ? AND d.external_id = ?`, q, d).Scan(&b)
	if err != nil {
		t.Fatal(err)
	}
	fs, err := ingest.DecodeFeatures(b)
	if err != nil {
		t.Fatal(err)
	}
	return fs
}

func problemsOf(t *testing.T, err error) *ingest.Problems {
	t.Helper()
	var ps *ingest.Problems
	if !errors.As(err, &ps) {
		t.Fatalf("err = %v, want *ingest.Problems", err)
	}
	return ps
}

func TestRejectedImportLeavesEveryTableAsItWas(t *testing.T) {
	s := openTest(t)
	p, lead := importProject(t, s)
	mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportRows}, files("rows.csv", rowsCSV)...)
	before := dump(t, s)
	ctx := context.Background()
	cases := []struct {
		spec  ImportSpec
		files []ImportFile
		want  string
	}{
		// Good rows first (written, then rolled back), a bad grade on the last line.
		{ImportSpec{Kind: ImportRows}, files("new.csv", "query_id,query_text,doc_id,gold_grade\nq9,new,d9,\nq1,kettle changed,d1,\nq8,x,d8,7\n"),
			"new.csv:4: column 4 (gold_grade): grade 7 is outside the scale 0..4"},
		{ImportSpec{Kind: ImportPairs}, files("p.csv", "query_id,doc_id\nq1,d2\nq1,nope\n"),
			`p.csv:3: doc_id: no document "nope" in this project: import documents first`},
		{ImportSpec{Kind: ImportQrels, Source: "oldsys", Gold: true}, files("a.qrels", "q1 0 d1 3\n", "b.qrels", "q1 0 d2 2\nzz 0 d1 1\n"),
			`b.qrels:2: column 1 (query id): no query "zz" in this project: import queries first`},
		{ImportSpec{Kind: ImportFeatures}, files("f.csv", "query_id,doc_id,bm25\nq1,d1,1\nq2,d1,2\n"),
			`f.csv:3: no pair ("q2", "d1") in this project: import pairs first`},
	}
	for _, c := range cases {
		_, err := s.Import(ctx, p.ID, lead.ID, c.spec, c.files)
		ps := problemsOf(t, err)
		if len(ps.List) == 0 || ps.List[0].Error() != c.want {
			t.Errorf("%s: problems\n%v\nwant first %q", c.spec.Kind, err, c.want)
		}
		if after := dump(t, s); !reflect.DeepEqual(before, after) {
			t.Errorf("%s: a rejected import changed the database", c.spec.Kind)
		}
	}
}

func TestProblemsAreCappedThenCounted(t *testing.T) {
	s := openTest(t)
	p, lead := importProject(t, s)
	var b strings.Builder
	b.WriteString("query_id,doc_id\n")
	for i := range 30 {
		fmt.Fprintf(&b, "q%d,d%d\n", i, i)
	}
	_, err := s.Import(context.Background(), p.ID, lead.ID, ImportSpec{Kind: ImportPairs, MaxProblems: 5}, files("p.csv", b.String()))
	ps := problemsOf(t, err)
	// Each row names an unknown query and an unknown document: 60 problems, 5 listed.
	if len(ps.List) != 5 || ps.More != 55 || ps.List[0].Line != 2 || !strings.HasSuffix(err.Error(), "... and 55 more problems") {
		t.Errorf("%d listed, %d more:\n%v", len(ps.List), ps.More, err)
	}
}

func TestDryRunCountsExactlyAndWritesNothing(t *testing.T) {
	s := openTest(t)
	p, lead := importProject(t, s)
	mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportRows}, files("rows.csv", rowsCSV)...)
	before := dump(t, s)
	more := rowsCSV + "q3,mug,,d3,Mug,Ceramic.,0,,en\n"
	more = strings.ReplaceAll(more, "Loud.", "Loud!")
	rep := mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportRows, DryRun: true}, files("rows.csv", more)...)
	if !rep.DryRun {
		t.Error("report does not say it was a dry run")
	}
	wantCount(t, rep, "queries", 1, 0, 2)
	wantCount(t, rep, "documents", 1, 1, 1)
	wantCount(t, rep, "pairs", 1, 0, 3)
	if after := dump(t, s); !reflect.DeepEqual(before, after) {
		t.Error("a dry run changed the database")
	}
	// The real import then reports the same counts.
	real := mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportRows}, files("rows.csv", more)...)
	if !reflect.DeepEqual(real.Counts, rep.Counts) {
		t.Errorf("import counts %v differ from the dry run's %v", real.Counts, rep.Counts)
	}
}

// Two small runs by hand. Pooling orders by score (the rank column is ignored), so
// bm25's file lists its entries out of order and with misleading ranks.
const (
	runBM25 = `q1 Q0 d4 1 6.0 bm25
q1 Q0 d1 4 9.0 bm25
q1 Q0 d3 2 7.0 bm25
q1 Q0 d2 3 8.0 bm25
q2 Q0 d2 1 3.0 bm25
`
	runNeural = `q1 Q0 d3 1 0.9 neural
q1 Q0 d5 2 0.8 neural
q1 Q0 d1 3 0.7 neural
q1 Q0 ghost 4 0.1 neural
q2 Q0 d1 1 0.5 neural
`
)

func TestPoolingTwoRunsRecordsSourcesAndPriority(t *testing.T) {
	s := openTest(t)
	p, lead := importProject(t, s)
	mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportQueries}, files("q.csv", "query_id,text\nq1,kettle\nq2,teapot\n")...)
	mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportDocuments}, files("d.csv", "doc_id,title\nd1,a\nd2,b\nd3,c\nd4,d\nd5,e\n")...)
	spec := ImportSpec{Kind: ImportRuns, Depth: 3}
	rep := mustImport(t, s, p, lead.ID, spec, files("bm25.run", runBM25, "neural.run", runNeural)...)
	// Depth 3, by hand: bm25 q1 = d1, d2, d3; neural q1 = d3, d5, d1; q2: bm25 d2, neural d1.
	// d4 (bm25 rank 4) and ghost (neural rank 4) stay out.
	want := []string{
		"q1 d1 prio 3: bm25@1 neural@3",
		"q1 d2 prio 2: bm25@2",
		"q1 d3 prio 3: bm25@3 neural@1",
		"q1 d5 prio 2: neural@2",
		"q2 d1 prio 3: neural@1",
		"q2 d2 prio 3: bm25@1",
	}
	if got := poolState(t, s); !reflect.DeepEqual(got, want) {
		t.Errorf("pool\n%s\nwant\n%s", strings.Join(got, "\n"), strings.Join(want, "\n"))
	}
	wantCount(t, rep, "pairs", 6, 0, 0)
	wantCount(t, rep, "pair sources", 8, 0, 0)
	rep = mustImport(t, s, p, lead.ID, spec, files("bm25.run", runBM25, "neural.run", runNeural)...)
	wantCount(t, rep, "pairs", 0, 0, 6)
	wantCount(t, rep, "pair sources", 0, 0, 8)

	// Deeper, the unknown document is pooled and reported at its line.
	before := dump(t, s)
	_, err := s.Import(context.Background(), p.ID, lead.ID, ImportSpec{Kind: ImportRuns, Depth: 4}, files("bm25.run", runBM25, "neural.run", runNeural))
	ps := problemsOf(t, err)
	if len(ps.List) != 1 || ps.List[0].Error() != `neural.run:4: column 3 (doc id): no document "ghost" in this project: import documents first` {
		t.Errorf("problems:\n%v", err)
	}
	if !reflect.DeepEqual(before, dump(t, s)) {
		t.Error("the rejected pooling changed the database")
	}
}

func poolState(t *testing.T, s *Store) []string {
	t.Helper()
	rows, err := s.r.Query(`SELECT q.external_id, d.external_id, x.priority,
			(SELECT string_agg(run || '@' || rank, ' ' ORDER BY run) FROM pair_sources WHERE pair_id = x.id)
		FROM pairs x JOIN queries q ON q.id = x.query_id JOIN documents d ON d.id = x.document_id
		ORDER BY q.external_id, d.external_id`)
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	var out []string
	for rows.Next() {
		var q, d, src string
		var prio int
		if err := rows.Scan(&q, &d, &prio, &src); err != nil {
			t.Fatal(err)
		}
		out = append(out, fmt.Sprintf("%s %s prio %d: %s", q, d, prio, src))
	}
	return out
}

func TestQrelsBecomeSourceJudgmentsThatSurviveReimport(t *testing.T) {
	s := openTest(t)
	p, lead := importProject(t, s)
	ctx := context.Background()
	mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportRows}, files("rows.csv", rowsCSV)...)
	spec := ImportSpec{Kind: ImportQrels, Source: "oldsys", Gold: true}
	// q2/d1 is not a pair yet: the qrels add it.
	rep := mustImport(t, s, p, lead.ID, spec, files("old.qrels", "q1 0 d1 3\nq2 0 d1 0\n")...)
	wantCount(t, rep, "judgments", 2, 0, 0)
	wantCount(t, rep, "pairs", 1, 0, 1)
	wantCount(t, rep, "gold grades", 2, 0, 0)
	src, err := s.UserByUsername(ctx, "oldsys")
	if err != nil || src.Role != RoleSource {
		t.Fatalf("source account %+v, %v", src, err)
	}
	if _, err := s.Authenticate(ctx, "oldsys", ""); !errors.Is(err, ErrBadCredentials) {
		t.Error("a judgment source could sign in")
	}
	var judged int
	s.r.QueryRow(`SELECT SUM(judged) FROM pairs`).Scan(&judged)
	if judged != 0 {
		t.Errorf("source judgments counted as %d judgments by people", judged)
	}

	// An assessor judges q1/d1; re-importing the rows and changed qrels keeps every judgment.
	as, _ := s.CreateUser(ctx, "asse", "", RoleAssessor, "long enough password")
	s.SetMember(ctx, p.ID, as.ID, RoleAssessor, lead.ID)
	var pair int64
	s.r.QueryRow(`SELECT x.id FROM pairs x JOIN documents d ON d.id = x.document_id JOIN queries q ON q.id = x.query_id
		WHERE q.external_id = 'q1' AND d.external_id = 'd2'`).Scan(&pair)
	g := 2
	if _, err := s.Submit(ctx, Submission{PairID: pair, UserID: as.ID, Grade: &g}); err != nil {
		t.Fatal(err)
	}
	mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportRows}, files("rows.csv", rowsCSV)...)
	rep = mustImport(t, s, p, lead.ID, spec, files("old.qrels", "q1 0 d1 4\nq2 0 d1 0\n")...)
	wantCount(t, rep, "judgments", 0, 1, 1)
	wantCount(t, rep, "gold grades", 0, 1, 1)
	var total, current, byAssessor int
	s.r.QueryRow(`SELECT COUNT(*), SUM(current), COUNT(*) FILTER (WHERE user_id = ?) FROM judgments`, as.ID).Scan(&total, &current, &byAssessor)
	if total != 4 || current != 3 || byAssessor != 1 {
		t.Errorf("%d judgments, %d current, %d by the assessor; want 4, 3, 1 (the old source grade kept as history)", total, current, byAssessor)
	}

	// A person's account is not a source.
	_, err = s.Import(ctx, p.ID, lead.ID, ImportSpec{Kind: ImportQrels, Source: "lead"}, files("x.qrels", "q1 0 d1 1\n"))
	if ErrorCode(err) != CodeConflict {
		t.Errorf("qrels under a person's name: %v, want a conflict", err)
	}
}

func TestHostileContentIsStoredVerbatim(t *testing.T) {
	s := openTest(t)
	p, lead := importProject(t, s)
	title := `<script>alert(1)</script>`
	body := `<img src=x onerror="alert(2)"><a href="javascript:alert(3)">x</a>`
	doc := fmt.Sprintf(`{"doc_id":"evil","title":%q,"body":%q,"body_format":"html"}`, title, body)
	mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportDocuments}, files("d.jsonl", doc+"\n")...)
	var gt, gb string
	s.r.QueryRow(`SELECT title, body FROM documents WHERE external_id = 'evil'`).Scan(&gt, &gb)
	if gt != title || gb != body {
		t.Errorf("stored %q / %q; the store keeps content as given and rendering makes it inert", gt, gb)
	}
	// A control character is refused by the reader, with its place.
	_, err := s.Import(context.Background(), p.ID, lead.ID, ImportSpec{Kind: ImportQueries}, files("q.csv", "query_id,text\nq1,bell\x07\n"))
	if ps := problemsOf(t, err); !strings.Contains(ps.List[0].Error(), "q.csv:2") || !strings.Contains(ps.List[0].Error(), "control character") {
		t.Errorf("problem %v", err)
	}
}

func TestImportRefusesBadSpecs(t *testing.T) {
	s := openTest(t)
	p, lead := importProject(t, s)
	ctx := context.Background()
	for _, c := range []struct {
		spec ImportSpec
		name string
	}{
		{ImportSpec{Kind: "widgets"}, "a.csv"},
		{ImportSpec{Kind: ImportRows}, "a.bin"},
		{ImportSpec{Kind: ImportRows, Format: "svmlight"}, "a.csv"},
		{ImportSpec{Kind: ImportFeatures, Format: "jsonl"}, "a.jsonl"},
		{ImportSpec{Kind: ImportQrels}, "a.qrels"},
		{ImportSpec{Kind: ImportRuns, Depth: -1}, "a.run"},
	} {
		_, err := s.Import(ctx, p.ID, lead.ID, c.spec, files(c.name, ""))
		if ErrorCode(err) != CodeInvalid {
			t.Errorf("%+v on %s: err %v, want invalid", c.spec, c.name, err)
		}
	}
}

// bulkRowsCSV has more rows than one bulk statement holds, with a remainder: 45 queries
// of 13 documents each (585 pairs, 585 documents; 585 = 2×256 + 64 + 8 + 1).
func bulkRowsCSV(edit func(q, d int) (body string, prio int)) string {
	var b strings.Builder
	b.WriteString("query_id,query_text,doc_id,title,body,priority\n")
	for q := range 45 {
		for d := range 13 {
			body, prio := edit(q, d)
			fmt.Fprintf(&b, "q%d,query %d,q%d-d%d,Title %d,%s,%d\n", q, q, q, d, d, body, prio)
		}
	}
	return b.String()
}

func TestBulkPathCountsAcrossBatches(t *testing.T) {
	s := openTest(t)
	p, lead := importProject(t, s)
	plain := func(q, d int) (string, int) { return "body", d }
	rep := mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportRows}, files("bulk.csv", bulkRowsCSV(plain))...)
	wantCount(t, rep, "queries", 45, 0, 0)
	wantCount(t, rep, "documents", 585, 0, 0)
	wantCount(t, rep, "pairs", 585, 0, 0)
	var linked int
	s.r.QueryRow(`SELECT COUNT(*) FROM pairs x JOIN documents d ON d.id = x.document_id JOIN queries q ON q.id = x.query_id
		WHERE d.external_id = q.external_id || '-d' || x.priority`).Scan(&linked)
	if linked != 585 {
		t.Errorf("%d of 585 pairs link the query and document their row named", linked)
	}
	// Five documents get a new body (in several batches), eight pairs a new priority.
	edited := func(q, d int) (string, int) {
		body, prio := "body", d
		if q%9 == 0 && d == 1 {
			body = "new body"
		}
		if q%6 == 1 && d == 2 {
			prio = 9
		}
		return body, prio
	}
	rep = mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportRows, DryRun: true}, files("bulk.csv", bulkRowsCSV(edited))...)
	wantCount(t, rep, "documents", 0, 5, 580)
	wantCount(t, rep, "pairs", 0, 8, 577)
	rep = mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportRows}, files("bulk.csv", bulkRowsCSV(edited))...)
	wantCount(t, rep, "queries", 0, 0, 45)
	wantCount(t, rep, "documents", 0, 5, 580)
	wantCount(t, rep, "pairs", 0, 8, 577)
	var n int
	s.r.QueryRow(`SELECT COUNT(*) FROM documents WHERE body = 'new body'`).Scan(&n)
	if n != 5 {
		t.Errorf("%d documents with the new body, want 5", n)
	}
}
