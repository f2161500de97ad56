package web

import (
	"fmt"
	"math"
	"net/http"
	"strconv"
	"strings"

	"github.com/pertinent/pertinent/store"
)

// settingsForm is the settings as the form shows them: percentages and minutes.
type settingsForm struct {
	Name             string
	Description      string
	JudgmentsPerPair int
	GoldPercent      string
	LeaseMinutes     int
	AllowChanges     bool
}

func formOf(ps store.ProjectSettings) settingsForm {
	return settingsForm{Name: ps.Name, Description: ps.Description, JudgmentsPerPair: ps.JudgmentsPerPair,
		GoldPercent:  strconv.FormatFloat(math.Round(ps.GoldRate*1000)/10, 'f', -1, 64),
		LeaseMinutes: (ps.LeaseSeconds + 59) / 60, AllowChanges: ps.AllowChanges}
}

type settingsData struct {
	Form        settingsForm
	Scale       []store.ScaleLevel
	Levels      int  // rows the scale form shows
	ScaleLocked bool // stored grades fix the number of levels
	GradeUses   int
	Pairs       int
	Assessors   int
	Notices     []string
	Error       string // about the settings form
	ScaleError  string // about the scale form
	TaskError   string // about the task form
	// The task form: what assessors are asked, and the lowest final grade compared (Floor
	// is the one in force, DefaultFloor the top two levels).
	TaskKind     string
	Threshold    string // as entered; empty for the top two levels
	Floor        int
	DefaultFloor int
}

func (s *Server) settingsData(w http.ResponseWriter, r *http.Request) (settingsData, error) {
	p := currentProject(r)
	d := settingsData{Form: formOf(p.Settings()), Notices: s.flashes(w, r, "notice")}
	var err error
	if d.Scale, err = s.store.Scale(r.Context(), p.ID); err != nil {
		return d, err
	}
	if d.GradeUses, err = s.store.GradeUses(r.Context(), p.ID); err != nil {
		return d, err
	}
	d.ScaleLocked = d.GradeUses > 0
	if d.Pairs, err = s.store.PairCount(r.Context(), p.ID); err != nil {
		return d, err
	}
	members, err := s.store.Members(r.Context(), p.ID)
	if err != nil {
		return d, err
	}
	for _, m := range members {
		if m.ProjectRole == store.RoleAssessor {
			d.Assessors++
		}
	}
	// ?levels=N shows the scale form with N rows, so the number of levels changes without
	// JavaScript: new rows start from the default wording or blank.
	d.Levels = len(d.Scale)
	d.TaskKind, d.Floor, d.DefaultFloor = p.TaskKind, store.PreferenceFloor(p.Project, len(d.Scale)), store.PreferenceFloor(store.Project{}, len(d.Scale))
	if p.PreferenceThreshold != nil {
		d.Threshold = strconv.Itoa(*p.PreferenceThreshold)
	}
	if n, err := strconv.Atoi(r.URL.Query().Get("levels")); err == nil && n >= 2 && n <= 11 && !d.ScaleLocked {
		d.Levels = n
		d.Scale = resizeScale(d.Scale, n)
	}
	return d, nil
}

// resizeScale keeps the first n levels, adding blank ones as needed.
func resizeScale(levels []store.ScaleLevel, n int) []store.ScaleLevel {
	out := make([]store.ScaleLevel, n)
	for i := range out {
		out[i].Grade = i
		if i < len(levels) {
			out[i] = levels[i]
		}
	}
	return out
}

func (s *Server) renderSettings(w http.ResponseWriter, r *http.Request, status int, edit func(*settingsData)) {
	d, err := s.settingsData(w, r)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	renderEdited(s, w, r, status, "settings", "Project settings: "+currentProject(r).Name, d, edit)
}

func (s *Server) settingsPage(w http.ResponseWriter, r *http.Request) {
	s.renderSettings(w, r, http.StatusOK, nil)
}

func projectPath(r *http.Request, page string) string {
	return fmt.Sprintf("/projects/%d/%s", currentProject(r).ID, page)
}

func (s *Server) saveSettings(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	f := settingsForm{Name: r.PostFormValue("name"), Description: r.PostFormValue("description"),
		GoldPercent: strings.TrimSpace(r.PostFormValue("gold_percent")), AllowChanges: r.PostFormValue("allow_changes") == "on"}
	ps := store.ProjectSettings{Name: f.Name, Description: f.Description, AllowChanges: f.AllowChanges}
	var err error
	var bad string
	if f.JudgmentsPerPair, err = formInt(r, "judgments_per_pair", 0); err != nil {
		bad = "Judgments per pair must be a whole number."
	}
	if f.LeaseMinutes, err = formInt(r, "lease_minutes", 0); err != nil {
		bad = "The lease must be a whole number of minutes."
	}
	gold, err := strconv.ParseFloat(strings.TrimSuffix(f.GoldPercent, "%"), 64)
	if f.GoldPercent == "" {
		gold, err = 0, nil
	}
	if err != nil || math.IsNaN(gold) {
		bad = "The gold rate must be a percentage such as 5 or 2.5."
	}
	ps.JudgmentsPerPair, ps.LeaseSeconds, ps.GoldRate = f.JudgmentsPerPair, f.LeaseMinutes*60, gold/100
	status := http.StatusBadRequest
	if bad == "" {
		err = s.store.UpdateProject(r.Context(), currentProject(r).ID, ps, u.ID)
		if err == nil {
			s.flash(w, r, "notice", "Settings saved.")
			http.Redirect(w, r, projectPath(r, "settings"), http.StatusSeeOther)
			return
		}
		var ok bool
		if status, bad, ok = userError(err); !ok {
			s.storeError(w, r, err)
			return
		}
	}
	s.renderSettings(w, r, status, func(d *settingsData) { d.Form, d.Error = f, bad })
}

// saveTask sets what the project asks its assessors: grades, or preferences between the
// documents whose final grade reaches the threshold (empty: the top two levels).
func (s *Server) saveTask(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	kind, entered := r.PostFormValue("task_kind"), strings.TrimSpace(r.PostFormValue("threshold"))
	var threshold *int
	var err error
	if entered != "" {
		n, convErr := strconv.Atoi(entered)
		if convErr != nil {
			s.renderSettings(w, r, http.StatusBadRequest, func(d *settingsData) {
				d.TaskError, d.TaskKind, d.Threshold = "The threshold must be a grade, a whole number.", kind, entered
			})
			return
		}
		threshold = &n
	}
	if err = s.store.SetTaskKind(r.Context(), currentProject(r).ID, kind, threshold, u.ID); err == nil {
		s.flash(w, r, "notice", "Task saved.")
		http.Redirect(w, r, projectPath(r, "settings"), http.StatusSeeOther)
		return
	}
	s.formError(w, r, err, func(status int, msg string) {
		s.renderSettings(w, r, status, func(d *settingsData) { d.TaskError, d.TaskKind, d.Threshold = msg, kind, entered })
	})
}

func (s *Server) saveScale(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	if err := r.ParseForm(); err != nil {
		s.fail(w, r, http.StatusBadRequest, "The form could not be read.")
		return
	}
	labels, descs := r.PostForm["label"], r.PostForm["description"]
	if len(labels) != len(descs) {
		s.fail(w, r, http.StatusBadRequest, "Every level needs a label and a description field.")
		return
	}
	levels := make([]store.ScaleLevel, len(labels))
	for i := range labels {
		levels[i] = store.ScaleLevel{Grade: i, Label: labels[i], Description: descs[i]}
	}
	err := s.store.SetScale(r.Context(), currentProject(r).ID, levels, u.ID)
	if err == nil {
		s.flash(w, r, "notice", "Scale saved.")
		http.Redirect(w, r, projectPath(r, "settings"), http.StatusSeeOther)
		return
	}
	s.formError(w, r, err, func(status int, msg string) {
		s.renderSettings(w, r, status, func(d *settingsData) {
			d.ScaleError = msg
			if !d.ScaleLocked || len(levels) == len(d.Scale) {
				d.Scale, d.Levels = levels, len(levels)
			}
		})
	})
}

func (s *Server) archiveProject(w http.ResponseWriter, r *http.Request) { s.setArchived(w, r, true) }
func (s *Server) restoreProject(w http.ResponseWriter, r *http.Request) { s.setArchived(w, r, false) }

func (s *Server) setArchived(w http.ResponseWriter, r *http.Request, archived bool) {
	u, _ := currentUser(r)
	if err := s.store.SetProjectArchived(r.Context(), currentProject(r).ID, archived, u.ID); err != nil {
		s.storeError(w, r, err)
		return
	}
	msg := "Project restored: assessors can judge it again."
	if archived {
		msg = "Project archived: it is read-only, takes no judgments, and can still be read and exported."
	}
	s.flash(w, r, "notice", msg)
	http.Redirect(w, r, projectPath(r, "settings"), http.StatusSeeOther)
}

// newProjectForm is what an admin fills in to start a project; the rest has defaults that
// the settings page changes.
type newProjectForm struct {
	Name, Description, Lead string
	JudgmentsPerPair        int
	Levels                  int
	Leads                   []store.User
	Error                   string
}

func (s *Server) newProjectPage(w http.ResponseWriter, r *http.Request) {
	s.renderNewProject(w, r, http.StatusOK, newProjectForm{JudgmentsPerPair: 3, Levels: 5})
}

func (s *Server) renderNewProject(w http.ResponseWriter, r *http.Request, status int, f newProjectForm) {
	users, err := s.store.Users(r.Context())
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	for _, u := range users {
		if !u.Disabled && (u.Role == store.RoleLead || u.Role == store.RoleAdmin) {
			f.Leads = append(f.Leads, u)
		}
	}
	s.render(w, r, status, "newproject", "", s.newView(r, "New project", f))
}

// scaleOfSize is the scale a new project starts with: the default wording for five levels,
// plain numbered labels otherwise (the settings page words them).
func scaleOfSize(n int) []store.ScaleLevel {
	if n == 5 {
		return store.DefaultScale()
	}
	out := make([]store.ScaleLevel, n)
	for i := range out {
		out[i] = store.ScaleLevel{Grade: i, Label: fmt.Sprintf("Grade %d", i)}
	}
	out[0].Label = "Not relevant"
	return out
}

func (s *Server) createProject(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	f := newProjectForm{Name: r.PostFormValue("name"), Description: r.PostFormValue("description"), Lead: strings.TrimSpace(r.PostFormValue("lead"))}
	var err1, err2 error
	f.JudgmentsPerPair, err1 = formInt(r, "judgments_per_pair", 3)
	f.Levels, err2 = formInt(r, "levels", 5)
	if err1 != nil || err2 != nil || f.Levels < 2 || f.Levels > 11 || f.JudgmentsPerPair < 1 || f.JudgmentsPerPair > 50 {
		f.Error = "Judgments per pair must be a whole number from 1 to 50, and the scale needs 2 to 11 levels."
		s.renderNewProject(w, r, http.StatusBadRequest, f)
		return
	}
	var lead store.User
	if f.Lead != "" {
		var err error
		if lead, err = s.store.UserByUsername(r.Context(), f.Lead); err != nil {
			f.Error = "There is no account named " + f.Lead + "."
			s.renderNewProject(w, r, http.StatusBadRequest, f)
			return
		}
	}
	p, err := s.store.CreateProject(r.Context(), store.NewProject{Name: f.Name, Description: strings.TrimSpace(f.Description),
		JudgmentsPerPair: f.JudgmentsPerPair, AllowChanges: true, Scale: scaleOfSize(f.Levels)}, u.ID)
	if err == nil && lead.ID != 0 {
		err = s.store.SetMember(r.Context(), p.ID, lead.ID, store.RoleLead, u.ID)
	}
	if err != nil {
		s.formError(w, r, err, func(status int, msg string) {
			if p.ID != 0 {
				// The project exists; only the lead could not be added. Say so on its page.
				s.flash(w, r, "notice", "Project created, but the lead was not added: "+msg)
				http.Redirect(w, r, fmt.Sprintf("/projects/%d/team", p.ID), http.StatusSeeOther)
				return
			}
			f.Error = msg
			s.renderNewProject(w, r, status, f)
		})
		return
	}
	s.flash(w, r, "notice", "Project created. Word its scale and guidelines, then add assessors and pairs.")
	http.Redirect(w, r, fmt.Sprintf("/projects/%d/settings", p.ID), http.StatusSeeOther)
}
