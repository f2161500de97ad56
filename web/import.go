package web

import (
	"context"
	"crypto/rand"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"mime/multipart"
	"net/http"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"time"

	"github.com/go-chi/chi/v5"

	"github.com/pertinent/pertinent"
	"github.com/pertinent/pertinent/ingest"
	"github.com/pertinent/pertinent/store"
)

// Imports run in the background so a long one can show its progress: the upload is
// streamed to temporary files (never held in memory), the import reads them through a
// byte counter, and the page polls a small status fragment. Jobs belong to their Server
// and live in this process only (ids are random, each job is shown only within its own
// project); a finished one is kept for an hour so its report can be read again. Stopping
// the server drains them (Server.Shutdown).

// maxUpload bounds one import's files together.
const maxUpload = 4 << 30

type importJob struct {
	id        string
	projectID int64
	kind      store.ImportKind
	files     []string
	total     int64
	read      atomic.Int64
	started   time.Time

	mu       sync.Mutex
	done     bool
	finished time.Time
	report   store.ImportReport
	problems *ingest.Problems
	failure  string
}

// importJobs are a Server's imports: running jobs, and finished ones kept for their report.
// The uploads and jobs it holds run on ctx, which drain cancels when the server stops.
type importJobs struct {
	mu     sync.Mutex
	jobs   map[string]*importJob
	closed bool
	wg     sync.WaitGroup
	ctx    context.Context
	cancel context.CancelFunc
}

func newImportJobs(ctx context.Context) *importJobs {
	ctx, cancel := context.WithCancel(context.WithoutCancel(ctx))
	return &importJobs{jobs: map[string]*importJob{}, ctx: ctx, cancel: cancel}
}

// hold counts an upload or a job as running, so drain waits for it; false once draining.
func (j *importJobs) hold() bool {
	j.mu.Lock()
	defer j.mu.Unlock()
	if j.closed {
		return false
	}
	j.wg.Add(1)
	return true
}

func (j *importJobs) release() { j.wg.Done() }

func (j *importJobs) add(job *importJob) {
	j.mu.Lock()
	defer j.mu.Unlock()
	for id, old := range j.jobs {
		old.mu.Lock()
		stale := old.done && time.Since(old.finished) > time.Hour
		old.mu.Unlock()
		if stale {
			delete(j.jobs, id)
		}
	}
	j.jobs[job.id] = job
}

func (j *importJobs) get(id string, projectID int64) *importJob {
	j.mu.Lock()
	defer j.mu.Unlock()
	if job := j.jobs[id]; job != nil && job.projectID == projectID {
		return job
	}
	return nil
}

// drain refuses new imports, gives the running uploads and jobs up to wait to finish, then
// cancels them: an import stops at its next batch and rolls back (it is one transaction),
// an upload stops reading, and each removes its temporary files. It returns once all have,
// or when ctx ends first; interrupted reports whether any had to be cancelled.
func (j *importJobs) drain(ctx context.Context, wait time.Duration) (interrupted bool, err error) {
	j.mu.Lock()
	j.closed = true
	j.mu.Unlock()
	done := make(chan struct{})
	go func() {
		j.wg.Wait()
		close(done)
	}()
	timer := time.NewTimer(wait)
	defer timer.Stop()
	select {
	case <-done:
		j.cancel()
		return false, nil
	case <-timer.C:
	case <-ctx.Done():
	}
	j.cancel()
	select {
	case <-done:
		return true, nil
	case <-ctx.Done():
		return true, ctx.Err()
	}
}

// importView is what the import page and its status fragment show.
type importView struct {
	Kinds    []store.ImportKind
	Depth    int
	Job      *importJobView
	Problem  string
	Defaults importForm
}

type importForm struct {
	Kind       string
	Format     string
	Depth      int
	Source     string
	SourceKind string
	About      string // qrels: the source's provenance, one KEY=VALUE a line
	about      map[string]string
	DryRun     bool
	Gold       bool
}

// sourceAbout reads the provenance lines of the import form.
func sourceAbout(text string) (map[string]string, error) {
	out := map[string]string{}
	for i, line := range strings.Split(text, "\n") {
		line = strings.TrimSpace(line)
		if line == "" {
			continue
		}
		k, v, ok := strings.Cut(line, "=")
		k = strings.TrimSpace(k)
		if !ok || k == "" {
			return nil, fmt.Errorf("provenance line %d: write KEY=VALUE", i+1)
		}
		if _, dup := out[k]; dup {
			return nil, fmt.Errorf("provenance line %d: %s given twice", i+1, k)
		}
		out[k] = strings.TrimSpace(v)
	}
	return out, nil
}

type importJobView struct {
	ID       string
	Kind     store.ImportKind
	Files    []string
	Done     bool
	Read     int64
	Total    int64
	Percent  int
	Elapsed  string
	Report   store.ImportReport
	Problems *ingest.Problems
	Failure  string
}

func (job *importJob) view() *importJobView {
	job.mu.Lock()
	defer job.mu.Unlock()
	v := &importJobView{ID: job.id, Kind: job.kind, Files: job.files, Done: job.done, Read: job.read.Load(), Total: job.total,
		Report: job.report, Problems: job.problems, Failure: job.failure}
	if v.Total > 0 {
		v.Percent = int(min(v.Read, v.Total) * 100 / v.Total)
	}
	end := time.Now()
	if job.done {
		end = job.finished
	}
	v.Elapsed = end.Sub(job.started).Round(time.Second).String()
	return v
}

func (s *Server) importPage(w http.ResponseWriter, r *http.Request) {
	v := importView{Kinds: store.ImportKinds, Defaults: importForm{Kind: string(store.ImportRows), Depth: store.DefaultPoolDepth}}
	s.render(w, r, http.StatusOK, "import", "", s.newView(r, "Import: "+currentProject(r).Name, v))
}

// importSubmit streams the uploaded files to temporary files, starts the import and
// redirects to its status page.
func (s *Server) importSubmit(w http.ResponseWriter, r *http.Request) {
	p := currentProject(r)
	u, _ := currentUser(r)
	if !s.jobs.hold() {
		s.fail(w, r, http.StatusServiceUnavailable, "The server is stopping; send the import again once it is back.")
		return
	}
	defer s.jobs.release()
	// A stop that cannot wait for the upload ends its reading (and so its temporary files).
	stop := context.AfterFunc(s.jobs.ctx, func() { http.NewResponseController(w).SetReadDeadline(time.Now()) })
	defer stop()
	r.Body = http.MaxBytesReader(w, r.Body, maxUpload)
	form, tmp, err := receiveUpload(r, s.opts.UploadDir)
	if err != nil {
		removeAll(tmp)
		v := importView{Kinds: store.ImportKinds, Problem: err.Error(), Defaults: form}
		s.render(w, r, http.StatusBadRequest, "import", "", s.newView(r, "Import: "+p.Name, v))
		return
	}
	spec := store.ImportSpec{Kind: store.ImportKind(form.Kind), Format: form.Format, DryRun: form.DryRun,
		Depth: form.Depth, Source: form.Source, SourceKind: store.SourceKind(form.SourceKind), SourceAbout: form.about, Gold: form.Gold}
	job := &importJob{id: newJobID(), projectID: p.ID, kind: spec.Kind, started: time.Now()}
	for _, f := range tmp {
		job.files = append(job.files, f.name)
		job.total += f.size
	}
	s.jobs.add(job)
	if !s.jobs.hold() { // the server began to stop during the upload
		removeAll(tmp)
		job.finish(store.ImportReport{}, errInterrupted)
		s.fail(w, r, http.StatusServiceUnavailable, "The server is stopping; send the import again once it is back.")
		return
	}
	go func() {
		defer s.jobs.release()
		s.runImportJob(s.jobs.ctx, job, u.ID, spec, tmp)
	}()
	http.Redirect(w, r, fmt.Sprintf("/projects/%d/import/%s", p.ID, job.id), http.StatusSeeOther)
}

type upload struct {
	name string // as the browser gave it, base name only
	path string
	size int64
}

func removeAll(tmp []upload) {
	for _, f := range tmp {
		os.Remove(f.path)
	}
}

// receiveUpload reads the multipart form part by part: fields into the form, each file
// straight to a temporary file.
func receiveUpload(r *http.Request, dir string) (importForm, []upload, error) {
	form := importForm{Depth: store.DefaultPoolDepth}
	var tmp []upload
	mr, err := r.MultipartReader()
	if err != nil {
		return form, nil, errors.New("the form must be sent as multipart/form-data with the files")
	}
	for {
		part, err := mr.NextPart()
		if err == io.EOF {
			break
		}
		if err != nil {
			return form, tmp, fmt.Errorf("the upload broke off: %v", err)
		}
		if part.FileName() != "" {
			if part.FormName() != "files" {
				part.Close()
				continue
			}
			up, err := saveFile(part, dir)
			part.Close()
			if up.path != "" {
				tmp = append(tmp, up)
			}
			if err != nil {
				return form, tmp, err
			}
			continue
		}
		val, err := io.ReadAll(io.LimitReader(part, 4096))
		part.Close()
		if err != nil {
			return form, tmp, err
		}
		v := strings.TrimSpace(string(val))
		switch part.FormName() {
		case "kind":
			form.Kind = v
		case "format":
			form.Format = v
		case "depth":
			if v != "" {
				n, err := strconv.Atoi(v)
				if err != nil || n < 1 {
					return form, tmp, errors.New("the pool depth must be a whole number of at least 1")
				}
				form.Depth = n
			}
		case "source":
			form.Source = v
		case "source_kind":
			form.SourceKind = v
		case "source_about":
			form.About = v
		case "dry_run":
			form.DryRun = v != ""
		case "gold":
			form.Gold = v != ""
		}
	}
	if len(tmp) == 0 {
		return form, tmp, errors.New("choose at least one file to import")
	}
	if form.about, err = sourceAbout(form.About); err != nil {
		return form, tmp, err
	}
	return form, tmp, nil
}

func saveFile(part *multipart.Part, dir string) (upload, error) {
	up := upload{name: filepath.Base(part.FileName())}
	f, err := os.CreateTemp(dir, "pertinent-import-*")
	if err != nil {
		return up, err
	}
	up.path = f.Name()
	up.size, err = io.Copy(f, part)
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err != nil {
		return up, fmt.Errorf("the upload of %s broke off: %v", up.name, err)
	}
	return up, nil
}

// countingReader reports the bytes read so far to the job's progress.
type countingReader struct {
	r io.Reader
	n *atomic.Int64
}

func (c countingReader) Read(p []byte) (int, error) {
	n, err := c.r.Read(p)
	c.n.Add(int64(n))
	return n, err
}

// errInterrupted is what a job reports when the server stopped before it finished.
var errInterrupted = errors.New("interrupted by a stop of the server")

func (s *Server) runImportJob(ctx context.Context, job *importJob, by int64, spec store.ImportSpec, tmp []upload) {
	defer removeAll(tmp)
	var files []store.ImportFile
	var rep store.ImportReport
	var err error
	for _, up := range tmp {
		f, ferr := os.Open(up.path)
		if ferr != nil {
			err = ferr
			break
		}
		defer f.Close()
		files = append(files, store.ImportFile{Name: up.name, R: countingReader{f, &job.read}})
	}
	if err == nil {
		rep, err = s.store.Import(ctx, job.projectID, by, spec, files)
	}
	var ps *ingest.Problems
	var se *pertinent.Error
	switch {
	case err == nil, errors.As(err, &ps), errors.As(err, &se):
	case ctx.Err() != nil:
		err = errInterrupted
	default:
		s.log.Error("import failed", "project", job.projectID, "err", err)
	}
	job.finish(rep, err)
}

// finish records a job's outcome for its status page.
func (job *importJob) finish(rep store.ImportReport, err error) {
	job.mu.Lock()
	defer job.mu.Unlock()
	job.done, job.finished, job.report = true, time.Now(), rep
	var ps *ingest.Problems
	var se *pertinent.Error
	switch {
	case errors.As(err, &ps):
		job.problems = ps
	case errors.As(err, &se):
		job.failure = se.Message
	case errors.Is(err, errInterrupted):
		job.failure = "The import was interrupted because the server stopped; nothing was changed."
	case err != nil:
		job.failure = "The import failed on our side; nothing was changed."
	}
}

func newJobID() string {
	b := make([]byte, 12)
	rand.Read(b)
	return hex.EncodeToString(b)
}

// importStatus shows a job: the whole page, or with htmx the status fragment it polls.
func (s *Server) importStatus(w http.ResponseWriter, r *http.Request) {
	p := currentProject(r)
	job := s.jobs.get(chi.URLParam(r, "job"), p.ID)
	if job == nil {
		s.fail(w, r, http.StatusNotFound, "There is no such import (imports are kept for an hour after they finish).")
		return
	}
	v := importView{Kinds: store.ImportKinds, Job: job.view(), Defaults: importForm{Kind: string(job.kind), Depth: store.DefaultPoolDepth}}
	block := ""
	if r.Header.Get("HX-Request") == "true" {
		block = "status"
	}
	s.render(w, r, http.StatusOK, "import", block, s.newView(r, "Import: "+p.Name, v))
}
