package web

import (
	"bytes"
	"html/template"
	"sync"

	"github.com/microcosm-cc/bluemonday"
	"github.com/yuin/goldmark"
	"github.com/yuin/goldmark/extension"

	"github.com/pertinent/pertinent/store"
)

// markdown turns guidelines into HTML. goldmark already leaves raw HTML out and drops
// javascript: links; the sanitiser after it is the guarantee, so neither a parser bug nor a
// later change of options can let script through.
var markdown = goldmark.New(goldmark.WithExtensions(extension.Table, extension.Strikethrough, extension.Linkify))

// markdownPolicy keeps the structure Markdown produces and drops anything that could run or
// load: scripts, event attributes, styles, frames, forms, non-web URL schemes.
var markdownPolicy = func() *bluemonday.Policy {
	p := bluemonday.UGCPolicy()
	p.RequireNoReferrerOnLinks(true)
	p.AddTargetBlankToFullyQualifiedLinks(true)
	return p
}()

// renderMarkdown renders text written by leads (guidelines) as safe HTML.
func renderMarkdown(src string) template.HTML {
	var buf bytes.Buffer
	if err := markdown.Convert([]byte(src), &buf); err != nil {
		return template.HTML("<pre>" + template.HTMLEscapeString(src) + "</pre>")
	}
	return template.HTML(markdownPolicy.Sanitize(buf.String()))
}

// guidelinesCache keeps rendered guidelines by revision id. A revision is never edited (a
// change is a new revision), so an entry can never go stale; rendering Markdown and
// sanitising it on every judging page would cost more than the rest of the page.
type guidelinesCache struct {
	mu sync.Mutex
	m  map[int64]template.HTML
}

// guidelinesHTML renders a project's current guidelines, once per revision.
func (s *Server) guidelinesHTML(g store.Guidelines) template.HTML {
	if g.ID == 0 {
		return renderMarkdown(g.Body)
	}
	c := &s.guidelines
	c.mu.Lock()
	h, ok := c.m[g.ID]
	c.mu.Unlock()
	if ok {
		return h
	}
	h = renderMarkdown(g.Body)
	c.mu.Lock()
	defer c.mu.Unlock()
	if c.m == nil || len(c.m) >= 256 {
		c.m = map[int64]template.HTML{} // revisions in use are few; start over rather than grow
	}
	c.m[g.ID] = h
	return h
}
