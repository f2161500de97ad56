package web

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"html/template"
	"io/fs"
	"net/http"
	"net/url"
	"path"
	"strings"

	"github.com/pertinent/pertinent"
	"github.com/pertinent/pertinent/store"
)

// pages holds one parsed template set per page: the shared layout and partials plus the page.
type pages struct {
	set map[string]*template.Template
}

var funcs = template.FuncMap{
	"percent": func(part, whole int) int {
		if whole <= 0 {
			return 0
		}
		return part * 100 / whole
	},
	"add": func(a, b int) int { return a + b },
	// wellFormed balances sanitised HTML shown inside a page (document bodies).
	"wellFormed":   wellFormed,
	"outcomeLabel": outcomeLabel,
	"deref": func(p *int) int {
		if p == nil {
			return 0
		}
		return *p
	},
}

func loadPages() (*pages, error) {
	names, err := fs.Glob(assets, "templates/*.html")
	if err != nil {
		return nil, err
	}
	partials, err := fs.Glob(assets, "templates/_*.html")
	if err != nil {
		return nil, err
	}
	p := &pages{set: map[string]*template.Template{}}
	for _, name := range names {
		base := path.Base(name)
		if base == "layout.html" || strings.HasPrefix(base, "_") {
			continue
		}
		t, err := template.New(base).Funcs(funcs).ParseFS(assets, append([]string{"templates/layout.html", name}, partials...)...)
		if err != nil {
			return nil, fmt.Errorf("web: template %s: %w", name, err)
		}
		p.set[strings.TrimSuffix(base, ".html")] = t
	}
	return p, nil
}

// view is what every page template receives.
type view struct {
	User    *store.User
	Project *projectCtx
	Title   string
	Data    any
}

func (s *Server) newView(r *http.Request, title string, data any) view {
	v := view{Title: title, Data: data}
	if u, ok := currentUser(r); ok {
		v.User = &u
	}
	if p := currentProject(r); p.ID != 0 {
		v.Project = &p
	}
	return v
}

// renderEdited renders a form's page from d once edit, where given, has put a refused form's
// values and message into it.
func renderEdited[T any](s *Server, w http.ResponseWriter, r *http.Request, status int, page, title string, d T, edit func(*T)) {
	if edit != nil {
		edit(&d)
	}
	s.render(w, r, status, page, "", s.newView(r, title, d))
}

// render executes a page (the "layout" template) or, with block set, one named block of it;
// output is buffered so a template error becomes a clean 500, not half a page.
func (s *Server) render(w http.ResponseWriter, r *http.Request, status int, page, block string, v view) {
	t, ok := s.pages.set[page]
	if !ok {
		s.log.ErrorContext(r.Context(), "no such page template", "page", page)
		http.Error(w, "internal error", http.StatusInternalServerError)
		return
	}
	if block == "" {
		block = "layout"
	}
	var buf bytes.Buffer
	if err := t.ExecuteTemplate(&buf, block, v); err != nil {
		s.log.ErrorContext(r.Context(), "template failed", "page", page, "err", err)
		http.Error(w, "internal error", http.StatusInternalServerError)
		return
	}
	w.Header().Set("Content-Type", "text/html; charset=utf-8")
	w.Header().Set("Cache-Control", "no-store")
	w.WriteHeader(status)
	w.Write(buf.Bytes())
}

// fail answers with an error page (or a bare fragment for htmx requests).
func (s *Server) fail(w http.ResponseWriter, r *http.Request, status int, msg string) {
	if r.Header.Get("HX-Request") == "true" {
		w.Header().Set("Content-Type", "text/html; charset=utf-8")
		w.WriteHeader(status)
		fmt.Fprintf(w, `<p class="error" role="alert">%s</p>`, template.HTMLEscapeString(msg))
		return
	}
	s.render(w, r, status, "error", "", s.newView(r, http.StatusText(status), msg))
}

// storeError turns an error into a page; the code, not the message, decides the status.
func (s *Server) storeError(w http.ResponseWriter, r *http.Request, err error) {
	if errors.Is(err, context.Canceled) {
		// The client went away; nobody is left to answer.
		s.log.DebugContext(r.Context(), "request abandoned", "err", err)
		w.WriteHeader(499)
		return
	}
	e, ok := pertinent.AsError(err)
	if !ok {
		s.log.ErrorContext(r.Context(), "store failed", "err", err)
		s.fail(w, r, http.StatusInternalServerError, "Something went wrong on our side; please try again.")
		return
	}
	status := codeStatus(e.Code)
	if status == 0 {
		status = http.StatusInternalServerError
	}
	s.fail(w, r, status, e.Message)
}

// codeStatus is the HTTP status of an error code, for pages, forms and the API alike; 0 for
// a code it does not know.
func codeStatus(c pertinent.Code) int {
	switch c {
	case pertinent.Invalid:
		return http.StatusBadRequest
	case pertinent.NotFound:
		return http.StatusNotFound
	case pertinent.Conflict:
		return http.StatusConflict
	case pertinent.Denied:
		return http.StatusForbidden
	}
	return 0
}

func urlQueryEscape(s string) string { return url.QueryEscape(s) }

// localPath accepts only a path on this site as a redirect target. Browsers drop tabs and
// line breaks from a URL and read a backslash as a slash, so "/\t/host" and "/\\host" would
// leave the site: control characters are refused anywhere.
func localPath(p string) string {
	if p == "" || !strings.HasPrefix(p, "/") || strings.HasPrefix(p, "//") || strings.HasPrefix(p, "/\\") ||
		strings.ContainsFunc(p, func(r rune) bool { return r < 0x20 || r == 0x7f }) {
		return "/"
	}
	return p
}
