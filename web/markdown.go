package web

import (
	"bytes"
	"html/template"

	"github.com/microcosm-cc/bluemonday"
	"github.com/yuin/goldmark"
	"github.com/yuin/goldmark/extension"
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
