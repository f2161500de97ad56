package web

import (
	"bytes"
	"html/template"

	"github.com/microcosm-cc/bluemonday"
	"github.com/yuin/goldmark"
	"github.com/yuin/goldmark/extension"
)

// markdown turns guidelines into HTML. Raw HTML in the source is dropped by goldmark (its
// default), and the output still goes through the sanitiser: guidelines are written by
// people, and shown to everyone judging.
var markdown = goldmark.New(goldmark.WithExtensions(extension.Table, extension.Strikethrough))

var markdownPolicy = func() *bluemonday.Policy {
	p := bluemonday.UGCPolicy()
	p.RequireNoReferrerOnLinks(true)
	p.AddTargetBlankToFullyQualifiedLinks(true)
	return p
}()

// renderMarkdown renders Markdown source as sanitised HTML.
func renderMarkdown(src string) template.HTML {
	var buf bytes.Buffer
	if err := markdown.Convert([]byte(src), &buf); err != nil {
		return template.HTML("<p>" + template.HTMLEscapeString(src) + "</p>")
	}
	return template.HTML(markdownPolicy.Sanitize(buf.String()))
}
