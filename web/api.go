package web

import (
	"context"
	"encoding/json"
	"errors"
	"net/http"
	"strconv"
	"strings"
	"time"

	"github.com/go-chi/chi/v5"

	"github.com/pertinent/pertinent"
	"github.com/pertinent/pertinent/store"
)

// The JSON API under /api/v1 is for programs. Requests authenticate with
// "Authorization: Bearer <token>" and nothing else: a session cookie is ignored here, so a
// page on another site cannot make a signed-in browser drive the API, and the cross-origin
// check (which guards cookie-authenticated forms) is skipped for these paths.

type apiUserKey struct{}

// crossOriginProtection guards every cookie-authenticated route; the API, which never reads
// cookies, is exempt so clients that send an Origin header are not refused.
func crossOriginProtection() *http.CrossOriginProtection {
	c := http.NewCrossOriginProtection()
	c.AddInsecureBypassPattern("/api/")
	return c
}

func apiError(w http.ResponseWriter, status int, msg string) {
	w.Header().Set("Content-Type", "application/json")
	w.Header().Set("Cache-Control", "no-store")
	w.WriteHeader(status)
	json.NewEncoder(w).Encode(map[string]string{"error": msg})
}

func apiJSON(w http.ResponseWriter, v any) {
	w.Header().Set("Content-Type", "application/json")
	w.Header().Set("Cache-Control", "no-store")
	apiJSONBody(w, v)
}

// apiJSONBody writes v as indented JSON, headers already sent.
func apiJSONBody(w http.ResponseWriter, v any) {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	enc.Encode(v)
}

// apiStoreError answers an error as JSON, with the status storeError gives pages.
func (s *Server) apiStoreError(w http.ResponseWriter, r *http.Request, err error) {
	if e, ok := pertinent.AsError(err); ok {
		if status := codeStatus(e.Code); status != 0 {
			apiError(w, status, e.Message)
			return
		}
	}
	if errors.Is(err, context.Canceled) {
		return
	}
	s.log.ErrorContext(r.Context(), "api request failed", "err", err)
	apiError(w, http.StatusInternalServerError, "something went wrong on our side")
}

// apiAuth admits a request with a live bearer token and nothing else.
func (s *Server) apiAuth(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		scheme, token, _ := strings.Cut(r.Header.Get("Authorization"), " ")
		if !strings.EqualFold(scheme, "Bearer") || strings.TrimSpace(token) == "" {
			w.Header().Set("WWW-Authenticate", `Bearer realm="pertinent"`)
			apiError(w, http.StatusUnauthorized, "send an API token as: Authorization: Bearer <token> (create one under Your account → API tokens)")
			return
		}
		u, err := s.store.UserByAPIToken(r.Context(), strings.TrimSpace(token))
		if err != nil {
			if errors.Is(err, store.ErrNotFound) {
				w.Header().Set("WWW-Authenticate", `Bearer realm="pertinent", error="invalid_token"`)
				apiError(w, http.StatusUnauthorized, "the token is unknown, revoked, or its account is disabled")
				return
			}
			s.apiStoreError(w, r, err)
			return
		}
		if p, ok := r.Context().Value(logUserKey{}).(*int64); ok {
			*p = u.ID
		}
		next.ServeHTTP(w, r.WithContext(context.WithValue(r.Context(), apiUserKey{}, u)))
	})
}

func apiUser(r *http.Request) store.User {
	u, _ := r.Context().Value(apiUserKey{}).(store.User)
	return u
}

type apiProjectJSON struct {
	ID          int64  `json:"id"`
	Name        string `json:"name"`
	Description string `json:"description"`
	Role        string `json:"role"`
	Archived    bool   `json:"archived"`
	Pairs       int    `json:"pairs"`
	Judgments   int    `json:"judgments"`
	Needed      int    `json:"judgments_needed"`
}

func (s *Server) apiProjects(w http.ResponseWriter, r *http.Request) {
	ls, err := s.store.ProjectsByUser(r.Context(), apiUser(r))
	if err != nil {
		s.apiStoreError(w, r, err)
		return
	}
	out := make([]apiProjectJSON, 0, len(ls))
	for _, l := range ls {
		out = append(out, apiProjectJSON{ID: l.ID, Name: l.Name, Description: l.Description, Role: string(l.Role),
			Archived: l.Archived, Pairs: l.Pairs, Judgments: l.Judgments, Needed: l.Needed})
	}
	apiJSON(w, map[string]any{"projects": out})
}

// apiProject resolves {project} (an id or a name) and admits the project's leads and admins
// only: exports and evaluations show final grades. Non-members get 404, as on pages.
func (s *Server) apiProject(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		u := apiUser(r)
		ref := chi.URLParam(r, "project")
		var p store.Project
		var err error
		if id, perr := strconv.ParseInt(ref, 10, 64); perr == nil {
			p, err = s.store.Project(r.Context(), id)
		} else {
			p, err = s.store.ProjectByName(r.Context(), ref)
		}
		if errors.Is(err, store.ErrNotFound) {
			apiError(w, http.StatusNotFound, "no such project")
			return
		}
		if err != nil {
			s.apiStoreError(w, r, err)
			return
		}
		role, member, err := s.store.MemberRole(r.Context(), p.ID, u.ID)
		if err != nil {
			s.apiStoreError(w, r, err)
			return
		}
		switch {
		case u.Role == store.RoleAdmin:
			if !member {
				role = store.RoleAdmin
			}
		case !member:
			apiError(w, http.StatusNotFound, "no such project")
			return
		}
		if role != store.RoleLead && role != store.RoleAdmin && u.Role != store.RoleAdmin {
			apiError(w, http.StatusForbidden, "imports, exports and evaluations are for the project's leads and admins")
			return
		}
		next.ServeHTTP(w, r.WithContext(context.WithValue(r.Context(), projectKey{}, projectCtx{Project: p, Role: role})))
	})
}

// apiExport streams the export: a zip of every file and the manifest, or with archive=none
// just the one data file of a CSV, JSON Lines or unsplit qrels export.
func (s *Server) apiExport(w http.ResponseWriter, r *http.Request) {
	p := currentProject(r)
	f := readExportForm(r.URL.Query())
	req, err := f.request()
	if err != nil {
		s.apiStoreError(w, r, err)
		return
	}
	plan, err := s.store.PlanExport(r.Context(), p.ID, req)
	if err != nil {
		s.apiStoreError(w, r, err)
		return
	}
	if r.URL.Query().Get("archive") != "none" {
		s.streamExportZip(w, r, p.Project, plan)
		return
	}
	req = plan.Request()
	var ctype, ext string
	switch {
	case req.Format == store.FormatCSV:
		ctype, ext = "text/csv; charset=utf-8", ".csv"
	case req.Format == store.FormatJSONL:
		ctype, ext = "application/jsonl; charset=utf-8", ".jsonl"
	case req.Format == store.FormatQrels && req.Split.Method == "none":
		ctype, ext = "text/plain; charset=utf-8", ".qrels"
	default:
		apiError(w, http.StatusBadRequest, "archive=none gives one file: use it with csv, jsonl or an unsplit qrels export; SVMlight and splits come as a zip")
		return
	}
	now := time.Now()
	w.Header().Set("Content-Type", ctype)
	w.Header().Set("Content-Disposition", `attachment; filename="`+exportName(p.Project, plan, now)+ext+`"`)
	w.Header().Set("Cache-Control", "no-store")
	if _, err := plan.Write(r.Context(), &singleFileSink{w: w}, now, nil); err != nil {
		s.log.ErrorContext(r.Context(), "export failed while streaming", "project", p.ID, "err", err)
	}
}

// apiEvaluate scores the run file in the request body and answers with the evaluation as
// JSON. It is not kept: the project's Evaluate page keeps what people upload there.
func (s *Server) apiEvaluate(w http.ResponseWriter, r *http.Request) {
	p := currentProject(r)
	req, err := readEvalForm(r.URL.Query()).request()
	if err != nil {
		s.apiStoreError(w, r, err)
		return
	}
	name := r.URL.Query().Get("name")
	if name == "" {
		name = "run"
	}
	body := http.MaxBytesReader(w, r.Body, maxRunUpload)
	ev, err := s.store.Evaluate(r.Context(), p.ID, req, []store.NamedRun{{Name: name, Body: body}})
	if err != nil {
		var tooBig *http.MaxBytesError
		if errors.As(err, &tooBig) {
			apiError(w, http.StatusRequestEntityTooLarge, "the run file is larger than 256 MB")
			return
		}
		s.apiStoreError(w, r, err)
		return
	}
	apiJSON(w, ev)
}
