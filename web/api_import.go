package web

import (
	"errors"
	"net/http"
	"strconv"
	"strings"

	"github.com/pertinent/pertinent/ingest"
	"github.com/pertinent/pertinent/store"
)

// apiImportReport is what an import through the API did (or, in a dry run, would do).
type apiImportReport struct {
	Kind   store.ImportKind `json:"kind"`
	DryRun bool             `json:"dry_run"`
	Counts []apiImportCount `json:"counts"`
	Notes  []string         `json:"notes"`
}

type apiImportCount struct {
	What      string `json:"what"`
	New       int    `json:"new"`
	Updated   int    `json:"updated"`
	Unchanged int    `json:"unchanged"`
}

type apiProblem struct {
	File   string `json:"file"`
	Line   int    `json:"line"`
	Field  string `json:"field,omitempty"`
	Reason string `json:"reason"`
}

// apiImport brings one file, the request body, into the project through the same store import
// as the Import page and `pertinent import`: all of it or, with any problem, nothing. Query
// parameters: kind, name (the file name problems cite, and the format's hint), format,
// dry_run, depth, and for qrels source, source_kind and source_about (KEY=VALUE, repeated),
// gold. This is how a program hands in a model's grades as a named source.
func (s *Server) apiImport(w http.ResponseWriter, r *http.Request) {
	q := r.URL.Query()
	name := strings.TrimSpace(q.Get("name"))
	if name == "" {
		name = "body"
	}
	spec := store.ImportSpec{Kind: store.ImportKind(q.Get("kind")), Format: q.Get("format"), DryRun: q.Get("dry_run") == "1",
		Source: q.Get("source"), SourceKind: store.SourceKind(q.Get("source_kind")), Gold: q.Get("gold") == "1"}
	if d := q.Get("depth"); d != "" {
		n, err := strconv.Atoi(d)
		if err != nil {
			apiError(w, http.StatusBadRequest, "depth must be a whole number")
			return
		}
		spec.Depth = n
	}
	if about := q["source_about"]; len(about) > 0 {
		m, err := sourceAbout(strings.Join(about, "\n"))
		if err != nil {
			apiError(w, http.StatusBadRequest, err.Error())
			return
		}
		spec.SourceAbout = m
	}
	u := apiUser(r)
	rep, err := s.store.Import(r.Context(), currentProject(r).ID, u.ID, spec, []store.ImportFile{{Name: name, R: r.Body}})
	var ps *ingest.Problems
	if errors.As(err, &ps) {
		out := struct {
			Error    string       `json:"error"`
			Problems []apiProblem `json:"problems"`
			More     int          `json:"more"`
		}{Error: "the file has problems: nothing was imported", More: ps.More}
		for _, p := range ps.List {
			out.Problems = append(out.Problems, apiProblem{File: p.File, Line: p.Line, Field: p.Field, Reason: p.Reason})
		}
		w.Header().Set("Content-Type", "application/json")
		w.Header().Set("Cache-Control", "no-store")
		w.WriteHeader(http.StatusBadRequest)
		apiJSONBody(w, out)
		return
	}
	if err != nil {
		s.apiStoreError(w, r, err)
		return
	}
	out := apiImportReport{Kind: rep.Kind, DryRun: rep.DryRun, Counts: []apiImportCount{}, Notes: rep.Notes}
	for _, c := range rep.Counts {
		out.Counts = append(out.Counts, apiImportCount{What: c.What, New: c.New, Updated: c.Updated, Unchanged: c.Unchanged})
	}
	apiJSON(w, out)
}
