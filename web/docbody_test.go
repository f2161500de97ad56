package web

import (
	"fmt"
	"net/http"
	"testing"

	"golang.org/x/net/html"
)

// hasAncestor reports whether n sits inside an element named tag.
func hasAncestor(n *html.Node, tag string) bool {
	for p := n.Parent; p != nil; p = p.Parent {
		if p.Type == html.ElementNode && p.Data == tag {
			return true
		}
	}
	return false
}

// insideID reports whether n sits inside the element with the given id.
func insideID(n *html.Node, id string) bool {
	for p := n.Parent; p != nil; p = p.Parent {
		for _, at := range p.Attr {
			if at.Key == "id" && at.Val == id {
				return true
			}
		}
	}
	return false
}

// A document body that opens an element and never closes it stays inside its pane: the
// grade buttons remain in the judging form, outside the document and outside any link of
// it, and the adjudication form stays whole.
func TestUnclosedDocumentMarkupStaysInItsPane(t *testing.T) {
	a := newTestApp(t, withPairs(1, 1), withAssessors(1), withPerPair(1))
	assessor := a.signIn("a000")
	lead := a.signIn("leader")
	for _, body := range []string{
		`<p>Specs</p><table><tr><td>cell`,
		`<a href="https://evil.example/">see the offer`,
		`<ul><li>first`, `<blockquote><div>quote`, `<details open><summary>more`,
		`<math><mtext><table><mglyph><style><img src=x>`,
		`<b><i><u>styled`, `<h2>heading`, `<pre>code`,
	} {
		a.rewriteDocuments("", body, "html")
		status, page, err := a.send(assessor, http.MethodGet, a.judgePath(), nil, false)
		if err != nil || status != http.StatusOK {
			t.Fatalf("judging page: %d %v", status, err)
		}
		doc := parseHTML(t, page)
		buttons := 0
		walk(doc, func(e *html.Node) {
			if e.Data != "button" {
				return
			}
			for _, at := range e.Attr {
				if at.Key == "name" && at.Val == "grade" {
					buttons++
					if !insideID(e, "judge-form") || insideID(e, "doc-title") || hasAncestor(e, "a") || hasAncestor(e, "table") {
						t.Errorf("body %q: grade button %s is out of the judging form or inside the document's markup", body, attr(e, "value"))
					}
				}
			}
		})
		if buttons != 5 {
			t.Errorf("body %q: %d grade buttons on the page, want 5", body, buttons)
		}
		status, page, err = a.send(lead, http.MethodGet, fmt.Sprintf("/projects/%d/pairs/%d/adjudicate", a.project.ID, a.pairs[0]), nil, false)
		if err != nil || status != http.StatusOK {
			t.Fatalf("adjudication page: %d %v", status, err)
		}
		form := findByID(parseHTML(t, page), "adjudication")
		if form == nil || hasAncestor(form, "a") || hasAncestor(form, "table") || hasAncestor(form, "ul") {
			t.Errorf("body %q: the adjudication form is missing or inside the document's markup", body)
		}
	}
}

func attr(e *html.Node, key string) string {
	for _, at := range e.Attr {
		if at.Key == key {
			return at.Val
		}
	}
	return ""
}
