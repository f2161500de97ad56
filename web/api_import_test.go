package web

import (
	"encoding/json"
	"fmt"
	"net/http"
	"net/url"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/store"
)

// A program hands in a model's grades through the API as a named source with provenance;
// a file with a bad line is refused whole, with the line; an assessor's token may not import.
func TestAPIImportsASourcesGrades(t *testing.T) {
	a := newTestApp(t, withPairs(2, 3), withAssessors(1), withPerPair(1))
	lead := a.signIn("leader")
	token := newToken(t, a, lead)
	q := url.Values{"kind": {"qrels"}, "name": {"model-x.qrels"}, "source": {"model-x"}, "source_kind": {"model"},
		"source_about": {"model=lamp-grader", "version=3"}}
	path := fmt.Sprintf("/api/v1/projects/%d/import?%s", a.project.ID, q.Encode())
	res, body := a.api("POST", path, token, strings.NewReader("q0 0 q0-d0 2 0.9\nq0 0 q0-d1 4\n"))
	if res.StatusCode != http.StatusOK {
		t.Fatalf("import: %d %s", res.StatusCode, body)
	}
	var rep apiImportReport
	if err := json.Unmarshal([]byte(body), &rep); err != nil {
		t.Fatal(err)
	}
	judged := -1
	for _, c := range rep.Counts {
		if c.What == "judgments" {
			judged = c.New
		}
	}
	if rep.Kind != store.ImportQrels || judged != 2 {
		t.Fatalf("report %+v", rep)
	}
	c, err := a.store.CompareSources(t.Context(), a.project.ID)
	if err != nil || len(c.Sources) != 1 || c.Sources[0].Kind != store.SourceModel || c.Sources[0].About["version"] != "3" {
		t.Fatalf("source as recorded: %+v %v", c.Sources, err)
	}
	// A bad line: nothing imported, the line named.
	res, body = a.api("POST", path, token, strings.NewReader("q0 0 q0-d2 1\nq0 0 q0-d0 9\n"))
	if res.StatusCode != http.StatusBadRequest || !strings.Contains(body, `"line": 2`) || !strings.Contains(body, "outside the scale") {
		t.Fatalf("bad file: %d %s", res.StatusCode, body)
	}
	if c, _ := a.store.CompareSources(t.Context(), a.project.ID); c.Sources[0].Grades != 2 {
		t.Fatalf("a refused file changed the source: %d grades", c.Sources[0].Grades)
	}
	// Assessors do not import.
	assessor := newToken(t, a, a.signIn("a000"))
	if res, body := a.api("POST", path, assessor, strings.NewReader("q0 0 q0-d2 1\n")); res.StatusCode != http.StatusForbidden {
		t.Fatalf("an assessor's import: %d %s", res.StatusCode, body)
	}
}
