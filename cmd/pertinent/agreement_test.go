package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"math"
	"path/filepath"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/store"
)

// cohenCSV is the 2x2 textbook example (yes/yes 20, yes/no 5, no/yes 10,
// no/no 15; kappa 0.400, statsmodels std_kappa 0.12700) as judgments, with
// a third rater on a few items so Fleiss and alpha have data too.
func cohenCSV() string {
	var b strings.Builder
	b.WriteString("item,rater,grade\n")
	n := 0
	add := func(c, ga, gb int) {
		for range c {
			n++
			fmt.Fprintf(&b, "p%d,ann,%d\np%d,bob,%d\n", n, ga, n, gb)
		}
	}
	add(20, 1, 1)
	add(5, 1, 0)
	add(10, 0, 1)
	add(15, 0, 0)
	return b.String()
}

func agreementCmd(t *testing.T, args ...string) (string, string, error) {
	t.Helper()
	var out, errOut bytes.Buffer
	err := run(context.Background(), append([]string{"agreement"}, args...), &out, &errOut)
	return out.String(), errOut.String(), err
}

func TestAgreementJSON(t *testing.T) {
	p := writeFile(t, "j.csv", cohenCSV())
	out, _, err := agreementCmd(t, "--from", p, "--json", "--scale", "2", "--bootstrap", "50", "--seed", "3")
	if err != nil {
		t.Fatal(err)
	}
	var m map[string]any
	if err := json.Unmarshal([]byte(out), &m); err != nil {
		t.Fatalf("not one JSON object: %v\n%s", err, out)
	}
	for _, k := range []string{"items", "raters", "judgments", "fleiss_kappa", "krippendorff_alpha", "cohen", "percent_agreement"} {
		if _, ok := m[k]; !ok {
			t.Errorf("missing key %q", k)
		}
	}
	if m["items"] != 50.0 || m["raters"] != 2.0 || m["judgments"] != 100.0 {
		t.Errorf("counts: %v %v %v", m["items"], m["raters"], m["judgments"])
	}
	alpha := m["krippendorff_alpha"].(map[string]any)
	for _, k := range []string{"nominal", "ordinal", "interval", "ratio"} {
		if _, ok := alpha[k].(float64); !ok {
			t.Errorf("alpha %s = %v", k, alpha[k])
		}
	}
	cohen := m["cohen"].([]any)
	if len(cohen) != 1 {
		t.Fatalf("cohen: %v", cohen)
	}
	c := cohen[0].(map[string]any)
	if c["a"] != "ann" || c["b"] != "bob" || c["n"] != 50.0 {
		t.Errorf("pair: %v", c)
	}
	// Textbook value 0.400; statsmodels std_kappa 0.12700.
	for k, want := range map[string]float64{"kappa": 0.4, "kappa_linear": 0.4, "kappa_quadratic": 0.4, "se": 0.127} {
		if got, _ := c[k].(float64); math.Abs(got-want) > 5e-6 {
			t.Errorf("%s = %v, want %v", k, c[k], want)
		}
	}
	// 35 of 50 items agree.
	if got := m["percent_agreement"].(float64); math.Abs(got-0.7) > 1e-12 {
		t.Errorf("percent_agreement %v", got)
	}
	if m["bootstrap"].(map[string]any)["replicates"] != 50.0 {
		t.Errorf("bootstrap: %v", m["bootstrap"])
	}
}

func TestAgreementJSONNulls(t *testing.T) {
	p := writeFile(t, "same.csv", "item,rater,grade\na,x,3\na,y,3\nb,x,3\nb,y,3\n")
	out, _, err := agreementCmd(t, "--from", p, "--json", "--bootstrap", "0")
	if err != nil {
		t.Fatal(err)
	}
	var m map[string]json.RawMessage
	if err := json.Unmarshal([]byte(out), &m); err != nil {
		t.Fatal(err)
	}
	if string(m["fleiss_kappa"]) != "null" {
		t.Errorf("fleiss_kappa %s, want null", m["fleiss_kappa"])
	}
	if !strings.Contains(string(m["krippendorff_alpha"]), `"ordinal": null`) || !strings.Contains(string(m["cohen"]), `"kappa": null`) {
		t.Errorf("alpha %s cohen %s", m["krippendorff_alpha"], m["cohen"])
	}
	if !strings.Contains(string(m["undefined"]), "grade 3") {
		t.Errorf("undefined reasons: %s", m["undefined"])
	}
}

func TestAgreementText(t *testing.T) {
	p := writeFile(t, "t.csv", cohenCSV())
	out, _, err := agreementCmd(t, "--from", p, "--scale", "2", "--bootstrap", "20")
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"items 50, raters 2, judgments 100", "Fleiss' kappa", "Krippendorff's alpha", "nominal", "bootstrap 95% CI", "Percent agreement       0.7000", "ann", "0.4000", "0.1270"} {
		if !strings.Contains(out, want) {
			t.Errorf("text report lacks %q:\n%s", want, out)
		}
	}
}

func TestReadRatingsCSVErrors(t *testing.T) {
	cases := []struct {
		name, body, want string
	}{
		{"range.csv", "item,rater,grade\na,x,1\nb,x,5\n", "range.csv:3: grade 5 out of range 0..4"},
		{"neg.csv", "item,rater,grade\na,x,-1\n", "neg.csv:2: grade -1 out of range"},
		{"word.csv", "item,rater,grade\na,x,high\n", `word.csv:2: grade "high" is not an integer`},
		{"float.csv", "item,rater,grade\na,x,1.5\n", `float.csv:2: grade "1.5" is not an integer`},
		{"col.csv", "item,assessor,grade\na,x,1\n", `col.csv:1: header lacks column "rater"`},
		{"short.csv", "item,rater,grade\na,x,1\nb,y\n", "short.csv:3:"},
		{"empty.csv", "", "empty.csv: empty file"},
		{"blank.csv", "item,rater,grade\na,,1\n", "blank.csv:2: empty rater"},
		{"nograde.csv", "item,rater,grade\na,x,\n", "nograde.csv:2: missing grade"},
	}
	for _, c := range cases {
		p := writeFile(t, c.name, c.body)
		_, err := readRatingsCSV(p, 5)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want %q", c.name, err, c.want)
		}
		if _, _, err := agreementCmd(t, "--from", p); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s via command: %v", c.name, err)
		}
	}
	if _, err := readRatingsCSV(filepath.Join(t.TempDir(), "missing.csv"), 5); err == nil || !strings.Contains(err.Error(), "missing.csv") {
		t.Errorf("missing file: %v", err)
	}
}

func TestReadRatingsCSVColumnsAnyOrder(t *testing.T) {
	p := writeFile(t, "o.csv", "\ufeffGrade, note ,Rater,Item\n2,ok,x,a\n3,,y,a\n1,\"q,uoted\",x,b\n")
	d, err := readRatingsCSV(p, 5)
	if err != nil {
		t.Fatal(err)
	}
	if d.Items() != 2 || d.Raters() != 2 || d.Judgments() != 3 {
		t.Errorf("items %d raters %d judgments %d", d.Items(), d.Raters(), d.Judgments())
	}
}

func TestAgreementFlags(t *testing.T) {
	if _, _, err := agreementCmd(t, "--db", filepath.Join(t.TempDir(), "x.db"), "--project", "p"); err == nil || !strings.Contains(err.Error(), "no project named") {
		t.Errorf("--db with an unknown project: %v", err)
	}
	if _, _, err := agreementCmd(t); err == nil || !strings.Contains(err.Error(), "--from") {
		t.Errorf("no source: %v", err)
	}
	if _, _, err := agreementCmd(t, "--from", "x.csv", "--scale", "1"); err == nil || !strings.Contains(err.Error(), "--scale") {
		t.Errorf("scale: %v", err)
	}
	if _, _, err := agreementCmd(t, "--nope"); err == nil {
		t.Error("unknown flag accepted")
	}
	if _, errOut, err := agreementCmd(t, "-h"); err != nil || !strings.Contains(errOut, "--from") {
		t.Errorf("help: %v %q", err, errOut)
	}
}

// The database path and the CSV path must print the same report for the same judgments.
func TestAgreementFromDatabaseMatchesCSV(t *testing.T) {
	ctx := context.Background()
	db := filepath.Join(t.TempDir(), "demo.db")
	st := openTestStore(t, db)
	if _, err := seedDemo(ctx, st); err != nil {
		t.Fatal(err)
	}
	p := testProject(t, st, demoProjectName)
	names, _ := st.UserNames(ctx)
	var csv strings.Builder
	csv.WriteString("item,rater,grade\n")
	err := st.Ratings(ctx, p.ID, func(r store.Rating) error {
		fmt.Fprintf(&csv, "%d,%s,%d\n", r.PairID, names[r.UserID], r.Grade)
		return nil
	})
	st.Close()
	if err != nil {
		t.Fatal(err)
	}
	fromCSV, _, err := agreementCmd(t, "--from", writeFile(t, "r.csv", csv.String()), "--json", "--bootstrap", "20")
	if err != nil {
		t.Fatal(err)
	}
	fromDB, _, err := agreementCmd(t, "--db", db, "--project", demoProjectName, "--json", "--bootstrap", "20")
	if err != nil {
		t.Fatal(err)
	}
	var a, b map[string]any
	json.Unmarshal([]byte(fromCSV), &a)
	json.Unmarshal([]byte(fromDB), &b)
	if a["judgments"] == nil || a["judgments"].(float64) < 100 {
		t.Fatalf("the demo history should give hundreds of judgments, got %v", a["judgments"])
	}
	for _, k := range []string{"items", "raters", "judgments", "fleiss_kappa", "krippendorff_alpha", "cohen", "percent_agreement"} {
		if fmt.Sprint(a[k]) != fmt.Sprint(b[k]) {
			t.Errorf("%s differs: CSV %v, database %v", k, a[k], b[k])
		}
	}
}
