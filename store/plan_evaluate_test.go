package store

import (
	"bytes"
	"context"
	"os"
	"reflect"
	"slices"
	"strconv"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/export"
	"github.com/pertinent/pertinent/ingest"
	"github.com/pertinent/pertinent/rankeval"
)

// fixtureQrels are the fixture's final grades under "adjudicated first, then median, at least
// one judgment", written out by hand from the fixture's answers.
func fixtureQrels() rankeval.Qrels {
	q := rankeval.Qrels{
		"q1": {"q1-d1": 1, "q1-d2": 1, "q1-d3": 2},
		"q2": {"q2-d1": 4, "q2-d2": 2, "q2-d3": 3},
	}
	for qi := 3; qi <= 6; qi++ {
		docs := map[string]int{}
		for di := 1; di <= 3; di++ {
			docs["q"+strconv.Itoa(qi)+"-d"+strconv.Itoa(di)] = (qi + di) % 5 // median of g, g, g+1
		}
		q["q"+strconv.Itoa(qi)] = docs
	}
	return q
}

const runA = `q1 Q0 q1-d3 1 9.0 alpha
q1 Q0 q1-d4 2 8.0 alpha
q1 Q0 q1-d1 3 7.0 alpha
q1 Q0 q1-d2 4 6.0 alpha
q2 Q0 q2-d1 1 3.0 alpha
q2 Q0 q2-d2 2 2.0 alpha
q3 Q0 q3-d2 1 5.0 alpha
q3 Q0 q3-d1 2 4.0 alpha
q4 Q0 q4-d1 1 1.0 alpha
q9 Q0 nowhere 1 1.0 alpha
`

const runB = `q1 Q0 q1-d1 1 9.0 beta
q1 Q0 q1-d3 2 8.0 beta
q2 Q0 q2-d3 1 3.0 beta
q2 Q0 q2-d1 2 2.0 beta
q3 Q0 q3-d1 1 5.0 beta
q4 Q0 q4-d3 1 1.0 beta
q4 Q0 q4-d9 2 0.5 beta
q5 Q0 q5-d1 1 1.0 beta
`

func readRun(t *testing.T, text string) rankeval.Run {
	t.Helper()
	run := rankeval.Run{}
	if err := ingest.ReadRun(strings.NewReader(text), ingest.Options{}, func(e ingest.RunEntry) error {
		run[e.QueryID] = append(run[e.QueryID], rankeval.ScoredDoc{DocID: e.DocID, Score: e.Score})
		return nil
	}); err != nil {
		t.Fatal(err)
	}
	return run
}

func TestEvaluateFromDatabaseEqualsRankevalOnHandBuiltQrels(t *testing.T) {
	f := newExportFixture(t)
	ctx := context.Background()
	policy := export.LabelPolicy{AdjudicationFirst: true, Consensus: export.ConsensusMedian}
	q, top, err := f.s.FinalGrades(ctx, f.project.ID, policy)
	if err != nil {
		t.Fatal(err)
	}
	if top != 4 || !reflect.DeepEqual(q, fixtureQrels()) {
		t.Fatalf("final grades %v (top %d), want %v (top 4)", q, top, fixtureQrels())
	}
	req := EvalRequest{Policy: policy, K: 3, Gain: rankeval.GainExponential, Threshold: 2}
	ev, err := f.s.Evaluate(ctx, f.project.ID, req, []NamedRun{{"alpha.run", strings.NewReader(runA)}, {"beta.run", strings.NewReader(runB)}})
	if err != nil {
		t.Fatal(err)
	}
	opts := rankeval.Options{K: 3, Gain: rankeval.GainExponential, Threshold: 2, MaxGrade: 4}
	for i, text := range []string{runA, runB} {
		want, err := rankeval.Evaluate(fixtureQrels(), readRun(t, text), opts)
		if err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(ev.Summaries[i], want) {
			t.Errorf("run %d: evaluation from the database %+v\nwant %+v", i+1, ev.Summaries[i], want)
		}
	}
	if len(ev.Comparisons) == 0 {
		t.Fatalf("no comparisons; notes %v", ev.CompareNotes)
	}
	c := ev.Comparisons[0]
	want, _ := rankeval.Compare(ev.Summaries[0], ev.Summaries[1], c.Metric, 10000, 1)
	if c.RandomisationP != want.RandomisationP || c.TTestP != want.TTestP || !slices.Equal(c.Diff, want.Diff) {
		t.Errorf("comparison %+v, want %+v", c, want)
	}

	// Unjudged top 3: q1-d4 (alpha rank 2), nowhere (q9), q4-d9 (beta rank 2). q1-d4 exists
	// as a document without a pair; the other two are not in the project.
	var unjudged []string
	for _, pp := range ev.Unjudged {
		unjudged = append(unjudged, pp.QueryID+" "+pp.DocID)
	}
	if !slices.Equal(unjudged, []string{"q1 q1-d4", "q4 q4-d9", "q9 nowhere"}) {
		t.Errorf("unjudged %v", unjudged)
	}
	if err := f.s.SaveEvaluation(ctx, f.project.ID, f.lead.ID, &ev); err != nil {
		t.Fatal(err)
	}
	back, err := f.s.Evaluation(ctx, f.project.ID, ev.ID)
	if err != nil || back.Summaries[1].NDCG != ev.Summaries[1].NDCG || len(back.Unjudged) != 3 {
		t.Errorf("saved evaluation reads back as %+v (err %v)", back, err)
	}
	if _, err := f.s.Evaluation(ctx, f.project.ID+1, ev.ID); ErrorCode(err) != CodeNotFound {
		t.Errorf("another project's evaluation: err %v, want not found", err)
	}

	// A broken run file is the caller's mistake.
	if _, err := f.s.Evaluate(ctx, f.project.ID, req, []NamedRun{{"bad.run", strings.NewReader("q1 Q0 d1 one 2.0 x\n")}}); ErrorCode(err) != CodeInvalid {
		t.Errorf("run with a bad rank: err %v, want CodeInvalid", err)
	}
}

func TestAddPooledPairs(t *testing.T) {
	f := newExportFixture(t)
	ctx := context.Background()
	err := f.s.Load(ctx, f.project.ID, func(l *Loader) error {
		_, err := l.Document(Document{ExternalID: "q1-d4", Title: "fourth"})
		return err
	})
	if err != nil {
		t.Fatal(err)
	}
	pool := []ingest.PoolPair{
		{QueryID: "q1", DocID: "q1-d4", Runs: []ingest.RunRank{{Run: "alpha", Rank: 2}, {Run: "beta", Rank: 3}}, BestRank: 2, Priority: 2},
		{QueryID: "q1", DocID: "q1-d1", Runs: []ingest.RunRank{{Run: "alpha", Rank: 1}}, BestRank: 1, Priority: 3},
		{QueryID: "q9", DocID: "nowhere", Runs: []ingest.RunRank{{Run: "alpha", Rank: 1}}, BestRank: 1, Priority: 3},
		{QueryID: "q1", DocID: "missing-doc", Runs: []ingest.RunRank{{Run: "alpha", Rank: 3}}, BestRank: 3, Priority: 1},
	}
	added, missing, err := f.s.AddPooledPairs(ctx, f.project.ID, pool, f.lead.ID)
	if err != nil {
		t.Fatal(err)
	}
	if added != 1 || !slices.Equal(missing, []string{"q9 nowhere", "q1 missing-doc"}) {
		t.Errorf("added %d, missing %v; want 1 and the two unknown entries", added, missing)
	}
	var origin string
	var priority, judged int
	err = f.s.r.QueryRowContext(ctx, `SELECT p.origin, p.priority, p.judged FROM pairs p JOIN documents d ON d.id = p.document_id
		WHERE p.project_id = ? AND d.external_id = 'q1-d4'`, f.project.ID).Scan(&origin, &priority, &judged)
	if err != nil || origin != "pool:alpha,beta" || priority != 2 || judged != 0 {
		t.Errorf("new pair: origin %q priority %d judged %d (err %v); want pool:alpha,beta, 2, 0", origin, priority, judged, err)
	}
	runs, _ := queryAll(ctx, f.s.r, `SELECT run || ':' || rank FROM pair_sources WHERE pair_id IN
		(SELECT p.id FROM pairs p JOIN documents d ON d.id = p.document_id WHERE d.external_id = 'q1-d4') ORDER BY run`, scanValue[string])
	if sources := strings.Join(runs, " "); sources != "alpha:2 beta:3" {
		t.Errorf("pair sources %q, want alpha:2 beta:3", sources)
	}
	// The existing pair keeps its judgments and takes the higher priority.
	f.s.r.QueryRowContext(ctx, `SELECT priority, judged FROM pairs WHERE id = ?`, f.pairs["q1 q1-d1"]).Scan(&priority, &judged)
	if priority != 3 || judged != 3 {
		t.Errorf("existing pair: priority %d judged %d, want 3 and its 3 judgments", priority, judged)
	}
	// Archived projects are read-only.
	if err := f.s.SetProjectArchived(ctx, f.project.ID, true, f.lead.ID); err != nil {
		t.Fatal(err)
	}
	if _, _, err := f.s.AddPooledPairs(ctx, f.project.ID, pool[:1], f.lead.ID); ErrorCode(err) != CodeConflict {
		t.Errorf("pooling into an archived project: err %v, want a conflict", err)
	}
}

func TestAPITokensAreStoredHashed(t *testing.T) {
	f := newExportFixture(t)
	ctx := context.Background()
	u := f.users["lena"]
	token, tok, err := f.s.CreateAPIToken(ctx, u.ID, "laptop")
	if err != nil {
		t.Fatal(err)
	}
	if !strings.HasPrefix(token, APITokenPrefix) || len(token) < 40 {
		t.Fatalf("token %q", token)
	}
	got, err := f.s.UserByAPIToken(ctx, token)
	if err != nil || got.ID != u.ID {
		t.Fatalf("token user %+v, %v; want lena", got, err)
	}
	list, _ := f.s.APITokens(ctx, u.ID)
	if len(list) != 1 || list[0].ID != tok.ID || list[0].LastUsed.IsZero() {
		t.Errorf("tokens %+v; want one, used", list)
	}
	if _, err := f.s.UserByAPIToken(ctx, token+"x"); err != ErrNotFound {
		t.Errorf("wrong token: %v, want not found", err)
	}
	if err := f.s.RevokeAPIToken(ctx, f.users["amir"].ID, tok.ID); ErrorCode(err) != CodeNotFound {
		t.Errorf("someone else revoking: %v, want not found", err)
	}
	if err := f.s.RevokeAPIToken(ctx, u.ID, tok.ID); err != nil {
		t.Fatal(err)
	}
	if _, err := f.s.UserByAPIToken(ctx, token); err != ErrNotFound {
		t.Errorf("revoked token: %v, want not found", err)
	}
	hash := tokenHash(token)
	if f.s.Postgres() {
		// No file to read: the stored row holds the hash and nothing of the token text.
		var stored []byte
		if err := f.s.r.QueryRowContext(ctx, `SELECT token_hash FROM api_tokens WHERE id = ?`, tok.ID).Scan(&stored); err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(stored, hash) {
			t.Errorf("stored %x, want the token's SHA-256 %x", stored, hash)
		}
		return
	}
	// The token text is nowhere in the database files, its hash is.
	f.s.Close()
	found := false
	for _, suffix := range []string{"", "-wal"} {
		b, err := os.ReadFile(f.s.Path() + suffix)
		if err != nil {
			continue
		}
		if strings.Contains(string(b), token) || strings.Contains(string(b), strings.TrimPrefix(token, APITokenPrefix)) {
			t.Errorf("the database file%s holds the token text", suffix)
		}
		found = found || strings.Contains(string(b), string(hash))
	}
	if !found {
		t.Error("the token's SHA-256 is not in the database files either: the check reads the wrong files")
	}
}
