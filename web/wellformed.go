package web

import (
	"html/template"
	"strings"

	"golang.org/x/net/html"
	"golang.org/x/net/html/atom"
)

// wellFormed closes what sanitised HTML left open. The sanitiser works token by token and
// keeps an allowed start tag whose end tag never comes, so a document body of "<table>" or
// `<a href="https://…">` would swallow the judging form placed after it (the buttons then
// sit inside the document's table, or inside its link). Parsing the fragment as a browser
// does, inside the <div> it is shown in, and writing the tree back ends it where it began.
// The input has passed the sanitiser, so it holds no foreign (SVG, MathML) or raw-text
// elements whose reparsing could change meaning.
func wellFormed(h template.HTML) template.HTML {
	div := &html.Node{Type: html.ElementNode, Data: "div", DataAtom: atom.Div}
	nodes, err := html.ParseFragment(strings.NewReader(string(h)), div)
	if err != nil {
		return template.HTML(template.HTMLEscapeString(string(h)))
	}
	var b strings.Builder
	for _, n := range nodes {
		if err := html.Render(&b, n); err != nil {
			return template.HTML(template.HTMLEscapeString(string(h)))
		}
	}
	return template.HTML(b.String())
}
