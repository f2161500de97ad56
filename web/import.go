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
// byte counter, and the page polls a small status fragment. A job runs in the Server that
// received the upload, but lives in the database (store.ImportJob): its row is stamped about
// once a second with the bytes read and gets the outcome at the end, so every instance
// serving the database shows any job, within its own project only (ids are random). A row
// no longer stamped reads as interrupted; a job is kept an hour after its last stamp. The
// running Server also holds its own jobs in memory, to drain them when it stops
// (Server.Shutdown) and to show their live byte count.

// maxUpload bounds one import's files together.
const maxUpload = 4 << 30

// stampEvery is how often a running job stamps its row: well inside store.ImportJobStale.
const stampEvery = time.Second

// importJob is a job running in this Server.
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
	outcome  store.ImportOutcome
}

// importJobs are the jobs running in this Server, and finished ones whose outcome could not
// be recorded in the database (kept here for their report instead). The uploads and jobs it
// holds run on ctx, which drain cancels when the server stops.
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
		stale := old.done && time.Since(old.finished) > store.ImportJobKept
		old.mu.Unlock()
		if stale {
			delete(j.jobs, id)
		}
	}
	j.jobs[job.id] = job
}

// remove forgets a job once the database holds its outcome.
func (j *importJobs) remove(id string) {
	j.mu.Lock()
	defer j.mu.Unlock()
	delete(j.jobs, id)
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

// jobView is what the status shows of a job as the database holds it.
func jobView(j store.ImportJob, now time.Time) *importJobView {
	v := &importJobView{ID: j.ID, Kind: j.Kind, Files: j.Files, Done: j.Done, Read: j.Read, Total: j.Total,
		Report: j.Outcome.Report, Problems: j.Outcome.Problems, Failure: j.Outcome.Failure}
	end := now
	if j.Done {
		end = j.Finished
	}
	v.finish(j.Started, end)
	return v
}

// view is what the status shows of a job running in this Server: it knows the live byte
// count, and that the job runs even while its stamps cannot reach the database.
func (job *importJob) view(now time.Time) *importJobView {
	job.mu.Lock()
	defer job.mu.Unlock()
	v := &importJobView{ID: job.id, Kind: job.kind, Files: job.files, Done: job.done, Read: job.read.Load(), Total: job.total,
		Report: job.outcome.Report, Problems: job.outcome.Problems, Failure: job.outcome.Failure}
	end := now
	if job.done {
		end = job.finished
	}
	v.finish(job.started, end)
	return v
}

func (v *importJobView) finish(started, end time.Time) {
	if v.Total > 0 {
		v.Percent = int(min(v.Read, v.Total) * 100 / v.Total)
	}
	v.Elapsed = max(0, end.Sub(started)).Round(time.Second).String()
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
	job := &importJob{id: newJobID(), projectID: p.ID, kind: spec.Kind, started: time.Now(), files: []string{}}
	for _, f := range tmp {
		job.files = append(job.files, f.name)
		job.total += f.size
	}
	row := store.ImportJob{ID: job.id, ProjectID: p.ID, Kind: job.kind, Files: job.files, Total: job.total}
	// On PostgreSQL the job's row is written before the answer, so that the poll finds it
	// whichever instance it reaches. On SQLite, served by one instance, it is written in the
	// background: a running import holds the one writer, and the answer to this upload need
	// not wait for it, since this instance shows its own jobs from memory meanwhile.
	pg := s.store.Postgres()
	if pg {
		if err := s.store.CreateImportJob(r.Context(), row); err != nil {
			removeAll(tmp)
			s.storeError(w, r, err)
			return
		}
	}
	s.jobs.add(job)
	if !s.jobs.hold() { // the server began to stop during the upload
		removeAll(tmp)
		s.finishJob(r.Context(), job, store.ImportReport{}, errInterrupted)
		s.fail(w, r, http.StatusServiceUnavailable, "The server is stopping; send the import again once it is back.")
		return
	}
	go func() {
		defer s.jobs.release()
		if !pg {
			if err := s.store.CreateImportJob(s.jobs.ctx, row); err != nil {
				s.log.Error("import job: recording it failed; it is shown by this instance only", "err", err)
			}
		}
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
	stop := make(chan struct{})
	stamped := make(chan struct{})
	go func() {
		defer close(stamped)
		s.stampJob(ctx, job, stop)
	}()
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
	close(stop)
	<-stamped
	var ps *ingest.Problems
	var se *pertinent.Error
	switch {
	case err == nil, errors.As(err, &ps), errors.As(err, &se):
	case ctx.Err() != nil:
		err = errInterrupted
	default:
		s.log.ErrorContext(ctx, "import failed", "project", job.projectID, "err", err)
	}
	s.finishJob(ctx, job, rep, err)
}

// stampJob stamps the job's row every stampEvery until stop closes: the bytes read so far,
// and that this instance still runs it. A stamp that cannot be written within the interval
// is given up (a SQLite database takes no other write while the import's transaction is
// open); the next one tries again.
func (s *Server) stampJob(ctx context.Context, job *importJob, stop <-chan struct{}) {
	tick := time.NewTicker(stampEvery)
	defer tick.Stop()
	for {
		select {
		case <-stop:
			return
		case <-ctx.Done():
			return
		case <-tick.C:
		}
		sctx, cancel := context.WithTimeout(ctx, stampEvery)
		err := s.store.StampImportJob(sctx, job.id, job.read.Load())
		cancel()
		if err != nil {
			s.log.DebugContext(ctx, "import job not stamped", "job", job.id, "err", err)
		}
	}
}

// finishJob records a job's outcome in the database for every instance's status page, and
// in the job itself for this one's; once the database has it, the job leaves this Server.
func (s *Server) finishJob(ctx context.Context, job *importJob, rep store.ImportReport, err error) {
	out := store.ImportOutcome{Report: rep}
	var ps *ingest.Problems
	var se *pertinent.Error
	switch {
	case errors.As(err, &ps):
		out.Problems = ps
	case errors.As(err, &se):
		out.Failure = se.Message
	case errors.Is(err, errInterrupted):
		out.Failure = "The import was interrupted because the server stopped; nothing was changed."
	case err != nil:
		out.Failure = "The import failed on our side; nothing was changed."
	}
	job.mu.Lock()
	job.done, job.finished, job.outcome = true, time.Now(), out
	job.mu.Unlock()
	// Recorded even when the job was cancelled: the stop is what its outcome reports.
	if err := s.store.FinishImportJob(context.WithoutCancel(ctx), job.id, job.read.Load(), out); err != nil {
		s.log.ErrorContext(ctx, "import outcome not recorded; only this instance can show it", "job", job.id, "err", err)
		return
	}
	s.jobs.remove(job.id)
}

func newJobID() string {
	b := make([]byte, 12)
	rand.Read(b)
	return hex.EncodeToString(b)
}

// importStatus shows a job: the whole page, or with htmx the status fragment it polls. The
// database answers for every job, whichever instance runs it. A job running in this Server
// answers from memory instead: it has the live byte count, and knows that it runs, which a
// SQLite database cannot be told while the import's transaction holds its writes.
func (s *Server) importStatus(w http.ResponseWriter, r *http.Request) {
	p := currentProject(r)
	id := chi.URLParam(r, "job")
	var v *importJobView
	if job := s.jobs.get(id, p.ID); job != nil {
		v = job.view(time.Now())
	} else {
		j, err := s.store.ImportJob(r.Context(), id, p.ID)
		if errors.Is(err, store.ErrNotFound) {
			s.fail(w, r, http.StatusNotFound, "There is no such import (imports are kept for an hour after they finish).")
			return
		}
		if err != nil {
			s.storeError(w, r, err)
			return
		}
		v = jobView(j, time.Now())
	}
	page := importView{Kinds: store.ImportKinds, Job: v, Defaults: importForm{Kind: string(v.Kind), Depth: store.DefaultPoolDepth}}
	block := ""
	if r.Header.Get("HX-Request") == "true" {
		block = "status"
	}
	s.render(w, r, http.StatusOK, "import", block, s.newView(r, "Import: "+p.Name, page))
}
