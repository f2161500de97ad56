package web

import (
	"io"
	"net/http"
	"strings"
	"time"
	"unicode"

	"github.com/pertinent/pertinent/export"
	"github.com/pertinent/pertinent/store"
)

type exportData struct {
	Form  exportForm
	Pairs int
	Error string
}

func (s *Server) exportPage(w http.ResponseWriter, r *http.Request) {
	s.renderExport(w, r, http.StatusOK, readExportForm(r.URL.Query()), "")
}

func (s *Server) renderExport(w http.ResponseWriter, r *http.Request, status int, f exportForm, msg string) {
	p := currentProject(r)
	n, err := s.store.PairCount(r.Context(), p.ID)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	s.render(w, r, status, "export", "", s.newView(r, "Export: "+p.Name, exportData{Form: f, Pairs: n, Error: msg}))
}

// exportZip streams the export as a zip: files are compressed into the response as the
// pairs are read, so memory stays flat however large the project. Everything that can be
// refused is checked before the first byte goes out.
func (s *Server) exportZip(w http.ResponseWriter, r *http.Request) {
	p := currentProject(r)
	f := readExportForm(r.URL.Query())
	req, err := f.request()
	if err == nil {
		var plan *store.ExportPlan
		if plan, err = s.store.PlanExport(r.Context(), p.ID, req); err == nil {
			s.streamExportZip(w, r, p.Project, plan)
			return
		}
	}
	s.formError(w, r, err, func(status int, msg string) { s.renderExport(w, r, status, f, msg) })
}

func (s *Server) streamExportZip(w http.ResponseWriter, r *http.Request, p store.Project, plan *store.ExportPlan) {
	now := time.Now()
	w.Header().Set("Content-Type", "application/zip")
	w.Header().Set("Content-Disposition", `attachment; filename="`+exportName(p, plan, now)+`.zip"`)
	w.Header().Set("Cache-Control", "no-store")
	zs := export.NewZipSink(w, now)
	if _, err := plan.Write(r.Context(), zs, now, nil); err != nil {
		// The status is gone with the first byte; an unfinished archive tells the client.
		s.log.ErrorContext(r.Context(), "export failed while streaming", "project", p.ID, "err", err)
		return
	}
	if err := zs.Close(); err != nil {
		s.log.ErrorContext(r.Context(), "export failed while finishing", "project", p.ID, "err", err)
	}
}

// exportName is the download's file name: project, format and time, in safe characters.
func exportName(p store.Project, plan *store.ExportPlan, t time.Time) string {
	name := strings.Map(func(r rune) rune {
		if r < 128 && (unicode.IsLetter(r) || unicode.IsDigit(r) || r == '-' || r == '_') {
			return unicode.ToLower(r)
		}
		return '-'
	}, p.Name)
	return name + "-" + string(plan.Request().Format) + "-" + t.UTC().Format("20060102-150405")
}

// singleFileSink sends only the first file of an export (its one data file) and drops the
// rest, for API clients that asked for a bare file.
type singleFileSink struct {
	w     io.Writer
	count int
}

func (s *singleFileSink) Create(string) (io.Writer, error) {
	s.count++
	if s.count == 1 {
		return s.w, nil
	}
	return io.Discard, nil
}

func (s *singleFileSink) Sequential() bool { return true }
