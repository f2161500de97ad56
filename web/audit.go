package web

import (
	"context"
	"net/http"
	"net/url"
	"strconv"
	"strings"
	"time"

	"github.com/pertinent/pertinent/store"
)

const auditPageSize = 50

// auditQuery is the audit trail's filter as the form and links carry it.
type auditQuery struct {
	Actor, Project, Action, From, To string
	Page                             int
}

// parseAuditQuery reads the filter; a date that does not parse is reported, not ignored,
// so a mistyped filter never shows an unfiltered trail as if it were filtered.
func parseAuditQuery(v url.Values) (auditQuery, store.AuditFilter, string) {
	q := auditQuery{Actor: v.Get("actor"), Project: v.Get("project"), Action: v.Get("action"), From: v.Get("from"), To: v.Get("to")}
	q.Page, _ = strconv.Atoi(v.Get("page"))
	q.Page = max(q.Page, 1)
	var f store.AuditFilter
	var bad []string
	if q.Actor != "" {
		id, err := strconv.ParseInt(q.Actor, 10, 64)
		if err != nil {
			bad = append(bad, "actor")
		}
		f.ActorID = id
	}
	if q.Project != "" {
		id, err := strconv.ParseInt(q.Project, 10, 64)
		if err != nil {
			bad = append(bad, "project")
		}
		f.ProjectID = id
	}
	f.Action = q.Action
	if q.From != "" {
		t, err := time.Parse(time.DateOnly, q.From)
		if err != nil {
			bad = append(bad, "from date")
		}
		f.From = t
	}
	if q.To != "" {
		t, err := time.Parse(time.DateOnly, q.To)
		if err != nil {
			bad = append(bad, "to date")
		}
		f.Until = t.AddDate(0, 0, 1) // the "to" day is included
	}
	msg := ""
	if len(bad) > 0 {
		msg = "These filters could not be read: " + strings.Join(bad, ", ") + " (dates are YYYY-MM-DD)."
	}
	return q, f, msg
}

// encode gives the query string of the filter at another page.
func (q auditQuery) encode(page int) string {
	v := url.Values{}
	for k, x := range map[string]string{"actor": q.Actor, "project": q.Project, "action": q.Action, "from": q.From, "to": q.To} {
		if x != "" {
			v.Set(k, x)
		}
	}
	if page > 1 {
		v.Set("page", strconv.Itoa(page))
	}
	return v.Encode()
}

type auditData struct {
	Query   auditQuery
	Events  []store.AuditEvent
	Choices []auditChoice // the filter's drop-downs: who, project, action
	Newer   string        // query strings of the neighbouring pages, empty when none
	Older   string
	CSV     string
	Error   string
	Page    int
}

// auditChoice is one drop-down of the filter; its first option, Any, leaves it out.
type auditChoice struct {
	Name, Label, Any string
	Options          []auditOption
}

type auditOption struct {
	Value, Label string
	Selected     bool
}

// newAuditChoice offers each item as an option, the one whose value is current selected.
func newAuditChoice[T any](name, label, anyLabel, current string, items []T, option func(T) (value, label string)) auditChoice {
	c := auditChoice{Name: name, Label: label, Any: anyLabel}
	for _, it := range items {
		v, l := option(it)
		c.Options = append(c.Options, auditOption{Value: v, Label: l, Selected: v == current})
	}
	return c
}

func (s *Server) auditPage(w http.ResponseWriter, r *http.Request) {
	q, f, msg := parseAuditQuery(r.URL.Query())
	if wantsCSV(r) && msg != "" {
		s.fail(w, r, http.StatusBadRequest, msg)
		return
	}
	events := auditTable(r.Context(), s.store, f)
	if s.offerTables(w, r, &events) {
		return
	}
	d := auditData{Query: q, Error: msg, Page: q.Page, CSV: "/admin/audit?format=csv&table=audit"}
	if enc := q.encode(1); enc != "" {
		d.CSV += "&" + enc
	}
	users, err := s.store.Users(r.Context())
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	projects, err := s.store.Projects(r.Context())
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	actions, err := s.store.AuditActions(r.Context())
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	d.Choices = []auditChoice{
		newAuditChoice("actor", "Who", "Anyone", q.Actor, users, func(u store.User) (string, string) { return strconv.FormatInt(u.ID, 10), u.Username }),
		newAuditChoice("project", "Project", "Any project", q.Project, projects, func(p store.Project) (string, string) { return strconv.FormatInt(p.ID, 10), p.Name }),
		newAuditChoice("action", "Action", "Any action", q.Action, actions, func(a string) (string, string) { return a, a }),
	}
	status := http.StatusOK
	if msg != "" {
		status = http.StatusBadRequest
	} else {
		f.Limit, f.Offset = auditPageSize, (q.Page-1)*auditPageSize
		var more bool
		if d.Events, more, err = s.store.AuditEvents(r.Context(), f); err != nil {
			s.storeError(w, r, err)
			return
		}
		if q.Page > 1 {
			d.Newer = "?" + q.encode(q.Page-1)
		}
		if more {
			d.Older = "?" + q.encode(q.Page+1)
		}
	}
	s.render(w, r, status, "audit", "", s.newView(r, "Audit trail", d))
}

// auditTable is every event matching the filter, newest first, read while it downloads. The
// page draws its own rows: it shows one page of the events, the download streams them all.
func auditTable(ctx context.Context, st *store.Store, f store.AuditFilter) table {
	return table{Name: "audit", File: "audit-trail", Columns: cols("id", "", "at", "", "actor", "", "project", "", "action", "", "target", "", "target_name", "", "detail", ""),
		Stream: func(add func([]string) error) error {
			return st.EachAuditEvent(ctx, f, func(e store.AuditEvent) error {
				actor := e.Actor
				if e.ActorID == 0 {
					actor = "(command line)"
				}
				return add([]string{strconv.FormatInt(e.ID, 10), e.At.UTC().Format("2006-01-02T15:04:05.000Z07:00"), defused(actor), defused(e.Project),
					e.Action, defused(e.Target), defused(e.TargetName), defused(e.Detail)})
			})
		}}
}

// auditCSV keeps the trail's former download address working.
func (s *Server) auditCSV(w http.ResponseWriter, r *http.Request) {
	s.auditPage(w, tableAlias(r, "audit"))
}

// defused defuses text that a spreadsheet would run as a formula (common practice for CSV
// meant to be opened in one): a leading =, +, -, @ or control character gets a quote.
func defused(s string) string {
	if s != "" && strings.ContainsRune("=+-@\t\r", rune(s[0])) {
		return "'" + s
	}
	return s
}
