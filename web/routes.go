package web

import (
	"io/fs"
	"net/http"

	"github.com/go-chi/chi/v5"
	"github.com/go-chi/chi/v5/middleware"

	"github.com/pertinent/pertinent/store"
)

// routes is every URL of the app, grouped by who may reach it. Each group's middleware
// decides that, so no handler checks a role itself; TestEveryRouteEnforcesItsRoles
// (routes_test.go) asks every route as each kind of caller and fails on a route it does not
// list.
func (s *Server) routes() chi.Router {
	r := chi.NewRouter()
	r.Use(clientIP, s.logRequests, middleware.Recoverer, securityHeaders)
	r.Use(crossOriginProtection().Handler)
	r.Use(s.loadUser)

	// Anyone, with or without a session. The set-password links' token travels in the query
	// string, which request logs never record.
	static, _ := fs.Sub(assets, "static")
	r.Handle("/static/*", http.StripPrefix("/static/", cacheStatic(http.FileServerFS(static))))
	r.Get("/healthz", s.healthz)
	r.Get("/signin", s.signinPage)
	r.Post("/signin", s.signin)
	r.Get("/set-password", s.setPasswordPage)
	r.Post("/set-password", s.setPassword)
	r.Get("/set-password/done", s.setPasswordDone)

	// API tokens only (api.go): a cookie session does not open these.
	r.Route("/api/v1", func(r chi.Router) {
		r.Use(s.apiAuth)
		r.Get("/projects", s.apiProjects)
		r.Route("/projects/{project}", func(r chi.Router) {
			r.Use(s.apiProject)
			r.With(s.longTransfer).Get("/export", s.apiExport)
			r.With(s.longTransfer).Post("/evaluate", s.apiEvaluate)
			r.With(s.longTransfer).Post("/import", s.apiImport)
			r.Get("/designs/{design}", s.apiDesign)
			r.Get("/designs/{design}/queries", s.apiDesignQueries)
			r.Get("/assessor-effects", s.apiEffects)
			r.Get("/sources", s.apiSources)
			r.Get("/calibration", s.apiCalibration)
			r.Get("/preferences", s.apiPreferences)
			r.Get("/preference-pairs", s.apiPreferencePairs)
		})
		r.NotFound(func(w http.ResponseWriter, r *http.Request) {
			apiError(w, http.StatusNotFound, "no such endpoint")
		})
	})

	r.Group(func(r chi.Router) {
		r.Use(s.requireUser)

		// Any signed-in account: the start page, the account and its API tokens.
		r.Get("/", s.home)
		r.Post("/signout", s.signout)
		r.Get("/account", s.accountPage)
		r.Post("/account/password", s.changePassword)
		r.Get("/account/tokens", s.tokensPage)
		r.Post("/account/tokens", s.createToken)
		r.Post("/account/tokens/{token}/revoke", s.revokeToken)

		r.Route("/projects/{project}", func(r chi.Router) {
			r.Use(s.loadProject)

			// The project's assessors: judging and undo (judge.go), comparing (compare.go), their own judgments and
			// the feedback on them (mywork.go).
			r.Group(func(r chi.Router) {
				r.Use(s.requireProjectRole(store.RoleAssessor))
				r.Get("/judge", s.judgePage)
				r.Get("/calibration", s.calibrationPage)
				r.Post("/calibration", s.calibrationSubmit)
				r.Post("/judge", s.judgeSubmit)
				r.Post("/undo", s.judgeUndo)
				// Preference judging (compare.go).
				r.Get("/compare", s.comparePage)
				r.Post("/compare", s.compareSubmit)
				r.Post("/compare/undo", s.compareUndo)
				r.Get("/mine", s.myWorkPage)
				r.Post("/mine", s.myWorkChange)
				r.Get("/feedback", s.feedbackPage)
			})

			// The project's leads, and admins; archived projects can be exported and
			// evaluated too. The routes that move large files extend their deadlines
			// (longTransfer) after the role check.
			r.Group(func(r chi.Router) {
				r.Use(s.requireProjectRole(store.RoleLead))
				// The desk (lead*.go).
				r.Get("/overview", s.overview)
				r.Get("/assessors", s.assessorsPage)
				r.Get("/assessors/{user}", s.assessorPage)
				r.Get("/assessor-effects", s.effectsPage)
				r.Get("/sources", s.sourcesPage)
				r.Post("/sources/prelabels", s.sourcesPrelabels)
				r.Get("/calibration-scores", s.calibrationScoresPage)
				r.Get("/preferences", s.preferencesPage)
				r.Get("/preference-pairs.csv", s.preferencePairsCSV)
				r.Get("/agreement", s.agreementPage)
				r.Get("/queue", s.queuePage)
				r.Get("/pairs/{pair}/adjudicate", s.adjudicatePage)
				r.Post("/pairs/{pair}/adjudicate", s.adjudicateSubmit)
				// Import (import.go).
				r.Get("/import", s.importPage)
				r.With(s.longTransfer).Post("/import", s.importSubmit)
				r.Get("/import/{job}", s.importStatus)
				// Setting the project up (projectadmin.go, guidelines.go, team.go).
				r.Get("/settings", s.settingsPage)
				r.Post("/settings", s.saveSettings)
				r.Post("/scale", s.saveScale)
				r.Post("/task", s.saveTask)
				r.Post("/archive", s.archiveProject)
				r.Post("/restore", s.restoreProject)
				r.Get("/guidelines", s.guidelinesPage)
				r.Post("/guidelines", s.reviseGuidelines)
				r.Get("/guidelines/{revision}", s.revisionPage)
				r.Get("/team", s.teamPage)
				r.Post("/team", s.addMember)
				r.Post("/team/{user}/remove", s.removeMember)
				// Export and evaluation (export.go, evaluate.go).
				r.Get("/export", s.exportPage)
				r.With(s.longTransfer).Get("/export.zip", s.exportZip)
				r.Get("/evaluate", s.evaluatePage)
				r.With(s.longTransfer).Post("/evaluate", s.evaluateRuns)
				r.Get("/evaluations/{evaluation}", s.evaluationPage)
				r.Get("/evaluations/{evaluation}/per-query.csv", s.evaluationCSV)
				r.Post("/evaluations/{evaluation}/send", s.sendUnjudged)
				// Plan judging and "How sure are we?" (plan.go).
				r.Get("/plan", s.planPage)
				r.Post("/plan", s.planSubmit)
				r.With(s.longTransfer).Post("/plan/runs", s.planKeepRuns)
				r.Get("/plan/{design}", s.designPage)
				r.Post("/plan/{design}/advance", s.designAdvance)
			})
		})

		// Admins: projects, people and the audit trail (people.go, projectadmin.go, audit.go).
		r.Route("/admin", func(r chi.Router) {
			r.Use(s.requireAdmin)
			r.Get("/users", s.usersPage)
			r.Post("/users", s.createUser)
			r.Post("/users/{user}/disable", s.disableUser)
			r.Post("/users/{user}/enable", s.enableUser)
			r.Post("/users/{user}/password-link", s.issuePasswordLink)
			r.Get("/projects/new", s.newProjectPage)
			r.Post("/projects", s.createProject)
			r.Get("/audit", s.auditPage)
			r.Get("/audit.csv", s.auditCSV)
		})
	})
	r.NotFound(s.notFound)
	return r
}
