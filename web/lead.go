package web

import (
	"net/http"
	"strconv"

	"github.com/pertinent/pertinent/agreement"
	"github.com/pertinent/pertinent/store"
)

// The lead's desk: overview (lead_overview.go), assessors (lead_assessors.go), agreement
// detail (lead_agreement.go), disagreement queue and adjudication (lead_queue.go); this file
// holds what they share. Every figure comes from store.Desk (which uses the agreement
// package); the handlers only choose, format and render.

// figure is one number on a page: its text, and its exact value (data-value) or the reason
// it is undefined (data-undefined), so tests read the same numbers people see.
type figure struct {
	Name  string
	OK    bool
	Text  string
	Value string
	Why   string
}

func figV(name string, v agreement.Value, digits int) figure {
	if !v.OK {
		return figure{Name: name, Why: v.Why}
	}
	return figure{Name: name, OK: true, Text: strconv.FormatFloat(v.V, 'f', digits, 64), Value: strconv.FormatFloat(v.V, 'g', -1, 64)}
}

func figPct(name string, v agreement.Value) figure {
	f := figV(name, v, 3)
	if f.OK {
		f.Text = strconv.FormatFloat(100*v.V, 'f', 1, 64) + "%"
	}
	return f
}

func figN(name string, n int) figure {
	s := strconv.Itoa(n)
	return figure{Name: name, OK: true, Text: s, Value: s}
}

func seconds(ms int) string {
	return strconv.FormatFloat(float64(ms)/1000, 'f', 1, 64) + " s"
}

func figMs(name string, ms int) figure {
	return figure{Name: name, OK: true, Text: seconds(ms), Value: strconv.Itoa(ms)}
}

func (s *Server) desk(w http.ResponseWriter, r *http.Request) (*store.Desk, bool) {
	d, err := s.store.Desk(r.Context(), currentProject(r).ID)
	if err != nil {
		s.storeError(w, r, err)
		return nil, false
	}
	return d, true
}
