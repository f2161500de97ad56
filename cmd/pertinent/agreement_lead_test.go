package main

import (
	"context"
	"encoding/json"
	"io"
	"log/slog"
	"net/http"
	"net/http/cookiejar"
	"net/http/httptest"
	"net/url"
	"path/filepath"
	"regexp"
	"strconv"
	"testing"

	"github.com/pertinent/pertinent/store"
	"github.com/pertinent/pertinent/web"
)

// `pertinent agreement --db` prints the numbers the lead's overview shows, intervals
// included, on the seeded demo project.
func TestAgreementCommandMatchesOverviewPage(t *testing.T) {
	ctx := context.Background()
	db := filepath.Join(t.TempDir(), "demo.db")
	st := openTestStore(t, db)
	accounts, err := seedDemo(ctx, st)
	if err != nil {
		t.Fatal(err)
	}
	p := testProject(t, st, demoProjectName)
	srv, err := web.New(ctx, st, web.Options{Logger: slog.New(slog.NewTextHandler(io.Discard, nil))})
	if err != nil {
		t.Fatal(err)
	}
	ts := httptest.NewServer(srv)
	defer ts.Close()
	jar, _ := cookiejar.New(nil)
	c := &http.Client{Jar: jar}
	var lead demoAccount
	for _, a := range accounts {
		if a.role == store.RoleLead {
			lead = a
		}
	}
	res, err := c.PostForm(ts.URL+"/signin", url.Values{"username": {lead.username}, "password": {lead.password}})
	if err != nil {
		t.Fatal(err)
	}
	res.Body.Close()
	res, err = c.Get(ts.URL + "/projects/" + strconv.FormatInt(p.ID, 10) + "/overview")
	if err != nil {
		t.Fatal(err)
	}
	body, _ := io.ReadAll(res.Body)
	res.Body.Close()
	if res.StatusCode != http.StatusOK {
		t.Fatalf("overview: %d", res.StatusCode)
	}
	page := map[string]string{}
	for _, m := range regexp.MustCompile(`data-figure="([^"]+)" data-value="([^"]*)"`).FindAllStringSubmatch(string(body), -1) {
		page[m[1]] = m[2]
	}

	out, _, err := agreementCmd(t, "--db", db, "--project", demoProjectName, "--json")
	if err != nil {
		t.Fatal(err)
	}
	var rep struct {
		Fleiss struct {
			Kappa *float64 `json:"kappa"`
			CI    struct{ Lo, Hi *float64 }
		} `json:"fleiss"`
		Alpha struct {
			Ordinal *float64 `json:"ordinal"`
		} `json:"krippendorff_alpha"`
		MeanKappa *float64 `json:"mean_quadratic_kappa"`
		Bootstrap struct {
			Alpha struct {
				Ordinal struct{ Lo, Hi *float64 } `json:"ordinal"`
			} `json:"alpha"`
			MeanKappa struct{ Lo, Hi *float64 } `json:"mean_quadratic_kappa"`
		} `json:"bootstrap"`
	}
	if err := json.Unmarshal([]byte(out), &rep); err != nil {
		t.Fatal(err)
	}
	for name, v := range map[string]*float64{
		"fleiss-kappa": rep.Fleiss.Kappa, "fleiss-kappa-lo": rep.Fleiss.CI.Lo, "fleiss-kappa-hi": rep.Fleiss.CI.Hi,
		"alpha-ordinal": rep.Alpha.Ordinal, "alpha-ordinal-lo": rep.Bootstrap.Alpha.Ordinal.Lo, "alpha-ordinal-hi": rep.Bootstrap.Alpha.Ordinal.Hi,
		"mean-kappa": rep.MeanKappa, "mean-kappa-lo": rep.Bootstrap.MeanKappa.Lo, "mean-kappa-hi": rep.Bootstrap.MeanKappa.Hi,
	} {
		if v == nil {
			t.Errorf("%s: undefined in the command's report", name)
			continue
		}
		if want := strconv.FormatFloat(*v, 'g', -1, 64); page[name] != want {
			t.Errorf("%s: page %q, command %s", name, page[name], want)
		}
	}
}
