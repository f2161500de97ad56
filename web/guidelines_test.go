package web

import (
	"context"
	"fmt"
	"net/url"
	"regexp"
	"strings"
	"testing"

	"golang.org/x/net/html"

	"github.com/pertinent/pertinent/store"
)

// Payloads a guideline author might paste, knowingly or not: raw script, event handlers,
// javascript: links in Markdown and HTML form.
const hostileGuidelines = "# Rules\n\nRead **everything**.\n\n" +
	"<script>alert(1)</script>\n\n" +
	"<img src=x onerror=alert(2)>\n\n" +
	"[click me](javascript:alert(3))\n\n" +
	"<svg onload=alert(4)><circle r=1></circle></svg>\n\n" +
	"<a href=\"javascript:alert(5)\" onclick=\"alert(6)\">raw link</a>\n\n" +
	"[fine link](https://example.org/guide)\n\n" +
	"![pic](javascript:alert(7))\n\n" +
	"<iframe src=\"https://example.org\"></iframe><p style=\"color:red\" onmouseover=\"alert(8)\">styled</p>\n"

// assertInert fails when the element holds anything that could run: a script, svg or
// iframe element, an on* attribute, a style attribute, or a javascript: URL.
func assertInert(t *testing.T, where string, n *html.Node) {
	t.Helper()
	if n == nil {
		t.Fatalf("%s: the guidelines element is missing", where)
	}
	walk(n, func(e *html.Node) {
		switch e.Data {
		case "script", "svg", "iframe", "object", "embed":
			t.Errorf("%s: a <%s> element survived", where, e.Data)
		}
		for _, at := range e.Attr {
			key := strings.ToLower(at.Key)
			val := strings.ToLower(strings.Join(strings.Fields(at.Val), ""))
			if strings.HasPrefix(key, "on") || key == "style" {
				t.Errorf("%s: <%s %s=%q> survived", where, e.Data, at.Key, at.Val)
			}
			if strings.Contains(val, "javascript:") {
				t.Errorf("%s: <%s %s=%q> keeps a javascript: URL", where, e.Data, at.Key, at.Val)
			}
		}
	})
}

func TestGuidelinesWithScriptRenderInert(t *testing.T) {
	a := newTestApp(t)
	c := a.signIn("lena")
	path := fmt.Sprintf("/projects/%d/guidelines", a.project.ID)
	a.postOK(c, path, url.Values{"body": {hostileGuidelines}})
	_, body := a.get(c, path)
	doc := parseHTML(t, body)
	current := findByID(doc, "guidelines-current")
	assertInert(t, "guidelines page", current)
	// The harmless parts are kept: the renderer did not simply throw everything away.
	var text strings.Builder
	var links []string
	walk(current, func(e *html.Node) {
		for c := e.FirstChild; c != nil; c = c.NextSibling {
			if c.Type == html.TextNode {
				text.WriteString(c.Data)
			}
		}
		if e.Data == "a" {
			for _, at := range e.Attr {
				if at.Key == "href" {
					links = append(links, at.Val)
				}
			}
		}
	})
	for _, want := range []string{"Rules", "everything", "click me", "fine link"} {
		if !strings.Contains(text.String(), want) {
			t.Errorf("rendered guidelines lost %q; text is %q", want, text.String())
		}
	}
	if len(links) != 1 || links[0] != "https://example.org/guide" {
		t.Errorf("links kept = %v, want only the https one", links)
	}
	// The page as a whole has no script element beyond the layout's two same-origin files.
	scripts := 0
	walk(doc, func(e *html.Node) {
		if e.Data == "script" {
			scripts++
			for _, at := range e.Attr {
				if at.Key == "src" && !strings.HasPrefix(at.Val, "/static/") {
					t.Errorf("script from %s", at.Val)
				}
			}
			if e.FirstChild != nil {
				t.Errorf("inline script: %q", e.FirstChild.Data)
			}
		}
	})
	if scripts != 2 {
		t.Errorf("the page has %d script elements, want the layout's 2", scripts)
	}
	// The same holds on the page of a single revision.
	hist, _ := a.store.GuidelineHistory(context.Background(), a.project.ID)
	_, body = a.get(c, fmt.Sprintf("%s/%d", path, hist[0].ID))
	rev := parseHTML(t, body)
	var md *html.Node
	walk(rev, func(e *html.Node) {
		for _, at := range e.Attr {
			if md == nil && at.Key == "class" && at.Val == "markdown" {
				md = e
			}
		}
	})
	assertInert(t, "revision page", md)
}

func TestRenderMarkdownKeepsStructure(t *testing.T) {
	got := string(renderMarkdown("## Grade 4\n\n- *exact* match\n- [spec](https://example.org)\n\n| a | b |\n|---|---|\n| 1 | 2 |\n"))
	for _, want := range []string{"<h2", "Grade 4</h2>", "<li><em>exact</em> match</li>", `href="https://example.org"`, `rel="nofollow noreferrer noopener"`, "<table>", "<td>1</td>"} {
		if !strings.Contains(got, want) {
			t.Errorf("rendered Markdown lacks %q:\n%s", want, got)
		}
	}
}

var judgmentsCell = regexp.MustCompile(`data-revision="(\d+)">[\s\S]*?<td data-judgments>(\d+)</td>`)

// Each revision shows how many judgments were made under it, so a lead can tell which
// version a judgment followed.
func TestGuidelineRevisionsCountTheirJudgments(t *testing.T) {
	a := newTestApp(t)
	ctx := context.Background()
	c := a.signIn("lena")
	path := fmt.Sprintf("/projects/%d/guidelines", a.project.ID)
	grade := func(pair int64, user string) {
		g := 2
		if _, err := a.store.Submit(ctx, store.Submission{PairID: pair, UserID: a.users[user].ID, Grade: &g}); err != nil {
			t.Fatal(err)
		}
	}
	grade(a.pairs[0], "amir") // under revision 1, written at creation
	a.postOK(c, path, url.Values{"body": {"Second version."}})
	wantAudit(t, a, "guidelines.revise", "lena")
	grade(a.pairs[1], "amir")
	grade(a.pairs[1], "bea")
	grade(a.pairs[1], "amir") // a revision of amir's judgment is a judgment made under it too
	// Saving the same text again adds no revision.
	a.postOK(c, path, url.Values{"body": {"Second version."}})
	a.postOK(c, path, url.Values{"body": {"Third version."}})

	_, body := a.get(c, path)
	got := map[string]string{}
	for _, m := range judgmentsCell.FindAllStringSubmatch(body, -1) {
		got[m[1]] = m[2]
	}
	want := map[string]string{"1": "1", "2": "3", "3": "0"}
	if fmt.Sprint(got) != fmt.Sprint(want) {
		t.Errorf("judgments per revision = %v, want %v", got, want)
	}
	if !strings.Contains(body, "In force: revision 3") || !strings.Contains(body, "Third version.") {
		t.Error("the page does not show revision 3 as in force")
	}
	hist, err := a.store.GuidelineHistory(ctx, a.project.ID)
	if err != nil || len(hist) != 3 || hist[2].Body != "Grade carefully." || hist[1].Author != "lena" || hist[2].Author != "root" {
		t.Fatalf("history = %+v, %v", hist, err)
	}
	_, body = a.get(c, fmt.Sprintf("%s/%d", path, hist[2].ID))
	if !strings.Contains(body, "revision 1") || !strings.Contains(body, "Grade carefully.") {
		t.Error("an old revision's page does not show it")
	}
	other := a.projectByName("Teapots")
	if res, _ := a.get(a.signIn("root"), fmt.Sprintf("/projects/%d/guidelines/%d", other.ID, hist[0].ID)); res.StatusCode != 404 {
		t.Errorf("a revision looked up under another project: status %d, want 404", res.StatusCode)
	}
}
