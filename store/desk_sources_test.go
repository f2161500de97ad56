package store

import (
	"context"
	"fmt"
	"math"
	"slices"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/export"
)

// qrelsText writes grades as a qrels file, changed by f.
func qrelsText(truth map[[2]string]int, f func(int) int) string {
	var b strings.Builder
	keys := make([][2]string, 0, len(truth))
	for k := range truth {
		keys = append(keys, k)
	}
	slices.SortFunc(keys, func(a, b [2]string) int { return strings.Compare(a[0]+" "+a[1], b[0]+" "+b[1]) })
	for _, k := range keys {
		fmt.Fprintf(&b, "%s 0 %s %d\n", k[0], k[1], f(truth[k]))
	}
	return b.String()
}

// A source one grade above the people on 0s, 1s and 2s is reported lenient by about one grade
// there; a source equal to the people gets kappa 1 and the same order of the runs (tau 1).
// The source that grades everything 4 (in the fixture) stands out as lenient too; its kind and
// provenance, given at import, come back.
func TestCompareSourcesDirectionAndEquality(t *testing.T) {
	ctx := context.Background()
	s, p, truth, lead := effectsProjectTruth(t, "", 11)
	plus := func(g int) int {
		if g <= 2 {
			return g + 1
		}
		return g
	}
	for _, imp := range []struct {
		name string
		f    func(int) int
		kind SourceKind
	}{{"plus-one", plus, SourceModel}, {"same", func(g int) int { return g }, SourceCampaign}} {
		spec := ImportSpec{Kind: ImportQrels, Source: imp.name, SourceKind: imp.kind, SourceAbout: map[string]string{"model": "grader-7", "prompt_sha256": strings.Repeat("ab", 32)}}
		if _, err := s.Import(ctx, p.ID, lead.ID, spec, []ImportFile{{Name: imp.name + ".qrels", R: strings.NewReader(qrelsText(truth, imp.f))}}); err != nil {
			t.Fatal(err)
		}
	}
	c, err := s.CompareSources(ctx, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	got := map[string]SourceFigures{}
	for _, f := range c.Sources {
		got[f.Name] = f
	}
	if len(c.Sources) != 3 || len(c.Runs) != 8 {
		t.Fatalf("%d sources, runs %v", len(c.Sources), c.Runs)
	}
	same := got["same"]
	if same.Report.N != len(truth) || same.Report.KappaQuadratic.Kappa.V != 1 || same.Order == nil || same.Order.Tau != 1 || same.Kind != SourceCampaign {
		t.Errorf("same: n %d, kappa %+v, order %+v, kind %q", same.Report.N, same.Report.KappaQuadratic.Kappa, same.Order, same.Kind)
	}
	one := got["plus-one"]
	if one.Kind != SourceModel || one.About["model"] != "grader-7" {
		t.Errorf("plus-one provenance: %q %v", one.Kind, one.About)
	}
	if len(one.Report.Leans) != 1 || !one.Report.Leans[0].Lenient || one.Report.Leans[0].Steps != 1 || !slices.Equal(one.Report.Leans[0].Grades, []int{0, 1, 2}) {
		t.Errorf("plus-one leans %+v, summary %q", one.Report.Leans, one.Report.Summary)
	}
	for _, b := range one.Report.ByHuman {
		want := 0.0
		if b.Grade <= 2 {
			want = 1
		}
		if b.N > 0 && math.Abs(b.MeanDiff.V-want) > 1e-12 {
			t.Errorf("plus-one at human grade %d: mean difference %v, want %v", b.Grade, b.MeanDiff.V, want)
		}
	}
	if !strings.Contains(one.Report.Summary, "lenient by about one grade on 0s, 1s and 2s") {
		t.Errorf("summary %q", one.Report.Summary)
	}
	if x := got["model-x"]; x.Kind != "" || x.Report.Above.V < 0.5 {
		t.Errorf("model-x: kind %q, above %+v", x.Kind, x.Report.Above)
	}
}

// Provenance is checked before anything is written.
func TestSourceDetailsAreChecked(t *testing.T) {
	ctx := context.Background()
	s, p, truth, lead := effectsProjectTruth(t, "", 12)
	body := qrelsText(truth, func(g int) int { return g })
	for _, c := range []struct {
		spec ImportSpec
		want string
	}{
		{ImportSpec{Kind: ImportQrels, Source: "m", SourceKind: "oracle"}, "unknown kind of source"},
		{ImportSpec{Kind: ImportQrels, Source: "m", SourceAbout: map[string]string{"model": "x"}}, "say what kind of source"},
		{ImportSpec{Kind: ImportQrels, Source: "m", SourceKind: SourceModel, SourceAbout: map[string]string{"prompt": strings.Repeat("x", 2001)}}, "at most 2000"},
	} {
		_, err := s.Import(ctx, p.ID, lead.ID, c.spec, []ImportFile{{Name: "m.qrels", R: strings.NewReader(body)}})
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%+v: %v, want %q", c.spec, err, c.want)
		}
	}
	srcs, err := s.Sources(ctx, p.ID)
	if err != nil || len(srcs) != 1 || srcs[0].Name != "model-x" {
		t.Errorf("after refused imports: %+v %v", srcs, err)
	}
}

// External sources are measured against people, never counted among them: the desk, the
// agreement input and the final grades leave them out, also when their grades arrive after the
// desk was built (the incremental desk). A label policy's FillFrom takes a source's grade only
// where no person graded, and the manifest counts each such grade.
func TestSourcesAreNotPeople(t *testing.T) {
	ctx := context.Background()
	s, p, truth, lead := effectsProjectTruth(t, "", 13)
	if _, err := s.Desk(ctx, p.ID); err != nil { // built before the new source's grades
		t.Fatal(err)
	}
	err := s.Load(ctx, p.ID, func(l *Loader) error {
		qid, err := l.Query(Query{ExternalID: "q-new", Text: "query"})
		if err != nil {
			return err
		}
		did, err := l.Document(Document{ExternalID: "d-new"})
		if err != nil {
			return err
		}
		_, err = l.Pair(PairSpec{QueryID: qid, DocumentID: did})
		return err
	})
	if err != nil {
		t.Fatal(err)
	}
	qrels := qrelsText(truth, func(g int) int { return 4 - g }) + "q-new 0 d-new 3\n"
	if _, err := s.Import(ctx, p.ID, lead.ID, ImportSpec{Kind: ImportQrels, Source: "flip", SourceKind: SourceHeuristic},
		[]ImportFile{{Name: "flip.qrels", R: strings.NewReader(qrels)}}); err != nil {
		t.Fatal(err)
	}
	d, err := s.Desk(ctx, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	for _, a := range d.Assessors {
		if a.Username == "flip" || a.Username == "model-x" {
			t.Errorf("the desk counts source %s as an assessor", a.Username)
		}
	}
	if !d.Incremental {
		t.Error("the second desk was rebuilt, so the incremental path went unchecked")
	}
	data, _, err := s.AgreementData(ctx, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	if names := data.RaterNames(); slices.Contains(names, "flip") || slices.Contains(names, "model-x") || len(names) != 5 {
		t.Errorf("agreement raters %v", names)
	}
	policy := export.LabelPolicy{AdjudicationFirst: true, Consensus: export.ConsensusMedian}
	final, _, err := s.FinalGrades(ctx, p.ID, policy)
	if err != nil {
		t.Fatal(err)
	}
	for k, g := range truth {
		if final[k[0]][k[1]] != g {
			t.Fatalf("final grade of %v is %d, want the people's %d", k, final[k[0]][k[1]], g)
		}
	}
	if _, ok := final["q-new"]; ok {
		t.Error("a pair no person graded has a final grade without FillFrom")
	}
	policy.FillFrom = "flip"
	final, _, err = s.FinalGrades(ctx, p.ID, policy)
	if err != nil {
		t.Fatal(err)
	}
	if final["q-new"]["d-new"] != 3 || final["q00"]["q00-d00"] != truth[[2]string{"q00", "q00-d00"}] {
		t.Errorf("filled from flip: q-new %v, q00-d00 %d", final["q-new"], final["q00"]["q00-d00"])
	}
	plan, err := s.PlanExport(ctx, p.ID, ExportRequest{Policy: policy, Format: FormatQrels})
	if err != nil {
		t.Fatal(err)
	}
	sink := &export.DirSink{Dir: t.TempDir()}
	m, err := plan.Write(ctx, sink, s.clock(), nil)
	if err != nil {
		t.Fatal(err)
	}
	sink.Close()
	if m.FromSources["flip"] != 1 || len(m.FromSources) != 1 || !strings.Contains(m.PolicyDescription, "the grade of source flip") {
		t.Errorf("manifest: from sources %v, policy %q", m.FromSources, m.PolicyDescription)
	}
	policy.FillFrom = "nobody"
	if _, err := s.PlanExport(ctx, p.ID, ExportRequest{Policy: policy, Format: FormatQrels}); ErrorCode(err) != CodeInvalid {
		t.Errorf("FillFrom naming no source: %v", err)
	}
}
