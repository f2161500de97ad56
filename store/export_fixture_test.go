package store

import (
	"context"
	"fmt"
	"testing"

	"github.com/pertinent/pertinent/ingest"
)

// exportFixture is a project of six queries with three documents each, judged by three
// assessors, with one adjudicated pair, one spread-out pair, one pair with a single grade, a
// flagged pair, a pair with a cannot-judge answer and a gold pair, all in queries q1 and q2.
type exportFixture struct {
	s       *Store
	project Project
	lead    User
	users   map[string]User
	pairs   map[string]int64 // "q1 q1-d1" -> pair id
	feats   map[string][]ingest.Feature
}

func g(x int) *int { return &x }

func newExportFixture(t *testing.T) *exportFixture {
	t.Helper()
	ctx := context.Background()
	s := openTest(t)
	f := &exportFixture{s: s, users: map[string]User{}, pairs: map[string]int64{}, feats: map[string][]ingest.Feature{}}
	for _, n := range []string{"amir", "bea", "cyd", "lena"} {
		role := RoleAssessor
		if n == "lena" {
			role = RoleLead
		}
		u, err := s.CreateUser(ctx, n, "", role, "a long enough password")
		if err != nil {
			t.Fatal(err)
		}
		f.users[n] = u
	}
	f.lead = f.users["lena"]
	var err error
	f.project, err = s.CreateProject(ctx, NewProject{Name: "Export"}, 0)
	if err != nil {
		t.Fatal(err)
	}
	type answer struct {
		user   string
		grade  *int
		reason string
	}
	special := map[string][]answer{
		"q1 q1-d1": {{"amir", g(3), ""}, {"bea", g(3), ""}, {"cyd", g(2), ""}},          // adjudicated to 1 below
		"q1 q1-d2": {{"amir", g(0), ""}, {"bea", g(1), ""}, {"cyd", g(4), ""}},          // spread 4
		"q1 q1-d3": {{"amir", g(2), ""}},                                                // one grade
		"q2 q2-d1": {{"amir", g(4), ""}, {"bea", nil, "disturbing"}, {"cyd", g(4), ""}}, // flagged
		"q2 q2-d2": {{"amir", nil, "language"}, {"bea", g(2), ""}, {"cyd", g(3), ""}},   // cannot judge; lower median 2
		"q2 q2-d3": {{"amir", g(4), ""}, {"bea", g(3), ""}},                             // gold
	}
	err = s.Load(ctx, f.project.ID, func(l *Loader) error {
		for qi := 1; qi <= 6; qi++ {
			q := fmt.Sprintf("q%d", qi)
			qid, err := l.Query(Query{ExternalID: q, Text: "query " + q})
			if err != nil {
				return err
			}
			for di := 1; di <= 3; di++ {
				d := fmt.Sprintf("%s-d%d", q, di)
				did, err := l.Document(Document{ExternalID: d, Title: d})
				if err != nil {
					return err
				}
				spec := PairSpec{QueryID: qid, DocumentID: did}
				key := q + " " + d
				if key == "q2 q2-d3" {
					spec.GoldGrade = g(4)
				}
				pid, err := l.Pair(spec)
				if err != nil {
					return err
				}
				f.pairs[key] = pid
				answers, ok := special[key]
				if !ok {
					gr := (qi + di) % 5
					answers = []answer{{"amir", g(gr), ""}, {"bea", g(gr), ""}, {"cyd", g(min(gr+1, 4)), ""}}
				}
				for _, a := range answers {
					if err := l.Judgment(RecordedJudgment{PairID: pid, UserID: f.users[a.user].ID, Grade: a.grade, CannotJudge: a.reason}); err != nil {
						return err
					}
				}
				// Features: index 2 only on odd documents, values that do not survive a
				// float32 or a short decimal form.
				fs := []ingest.Feature{{Index: 1, Value: float64(qi) + float64(di)/10}}
				if di%2 == 1 {
					fs = append(fs, ingest.Feature{Index: 2, Value: 1.0 / float64(qi*di+2)})
				}
				fs = append(fs, ingest.Feature{Index: 5, Value: -2.5e-7 * float64(qi*10+di)})
				f.feats[key] = fs
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	for key, fs := range f.feats {
		if _, err := s.w.ExecContext(ctx, `INSERT INTO pair_features(pair_id, data) VALUES (?, ?)`, f.pairs[key], ingest.EncodeFeatures(fs)); err != nil {
			t.Fatal(err)
		}
	}
	// The adjudication feature writes these rows; a superseded one must not count.
	if _, err := s.w.ExecContext(ctx, `INSERT INTO adjudications(pair_id, lead_id, grade, current, created_at) VALUES (?, ?, 4, 0, ?), (?, ?, 1, 1, ?)`,
		f.pairs["q1 q1-d1"], f.lead.ID, s.now(), f.pairs["q1 q1-d1"], f.lead.ID, s.now()); err != nil {
		t.Fatal(err)
	}
	return f
}
