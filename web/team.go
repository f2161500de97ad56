package web

import (
	"net/http"
	"strings"

	"github.com/pertinent/pertinent/store"
)

type teamData struct {
	Members    []store.Member
	Leads      int
	Assessors  int
	Candidates []store.User // active accounts not yet in the project
	CanLead    bool         // the caller may add and remove leads (admins)
	Notices    []string
	Error      string
	Username   string
}

func (s *Server) renderTeam(w http.ResponseWriter, r *http.Request, status int, edit func(*teamData)) {
	u, _ := currentUser(r)
	d := teamData{CanLead: u.Role == store.RoleAdmin, Notices: s.flashes(w, r, "notice")}
	var err error
	if d.Members, err = s.store.Members(r.Context(), currentProject(r).ID); err != nil {
		s.storeError(w, r, err)
		return
	}
	in := map[int64]bool{}
	for _, m := range d.Members {
		in[m.ID] = true
		if m.ProjectRole == store.RoleLead {
			d.Leads++
		} else {
			d.Assessors++
		}
	}
	users, err := s.store.Users(r.Context())
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	for _, x := range users {
		if !in[x.ID] && !x.Disabled {
			d.Candidates = append(d.Candidates, x)
		}
	}
	renderEdited(s, w, r, status, "team", "Team: "+currentProject(r).Name, d, edit)
}

func (s *Server) teamPage(w http.ResponseWriter, r *http.Request) {
	s.renderTeam(w, r, http.StatusOK, nil)
}

// addMember adds a person to the project. Leads add assessors; only admins add leads or
// change a lead's place.
func (s *Server) addMember(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	p := currentProject(r)
	username := strings.TrimSpace(r.PostFormValue("username"))
	role := store.Role(r.PostFormValue("role"))
	if role == "" {
		role = store.RoleAssessor
	}
	formErr := func(status int, msg string) {
		s.renderTeam(w, r, status, func(d *teamData) { d.Error, d.Username = msg, username })
	}
	if role != store.RoleAssessor && u.Role != store.RoleAdmin {
		s.fail(w, r, http.StatusForbidden, "Only admins add leads to a project.")
		return
	}
	target, err := s.store.UserByUsername(r.Context(), username)
	if err != nil {
		formErr(http.StatusBadRequest, "There is no account named "+username+".")
		return
	}
	if current, member, err := s.store.MemberRole(r.Context(), p.ID, target.ID); err != nil {
		s.storeError(w, r, err)
		return
	} else if member && current == store.RoleLead && u.Role != store.RoleAdmin {
		s.fail(w, r, http.StatusForbidden, "Only admins change a lead's place in a project.")
		return
	}
	if err := s.store.SetMember(r.Context(), p.ID, target.ID, role, u.ID); err != nil {
		s.formError(w, r, err, formErr)
		return
	}
	s.flash(w, r, "notice", target.Name()+" is now "+string(role)+" of "+p.Name+".")
	http.Redirect(w, r, projectPath(r, "team"), http.StatusSeeOther)
}

// removeMember takes a person out of the project; their judgments stay.
func (s *Server) removeMember(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	p := currentProject(r)
	id, ok := s.routeID(w, r, "user", "There is no such member.")
	if !ok {
		return
	}
	role, member, err := s.store.MemberRole(r.Context(), p.ID, id)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	if !member {
		s.fail(w, r, http.StatusNotFound, "That person is not a member of this project.")
		return
	}
	if role == store.RoleLead && u.Role != store.RoleAdmin {
		s.fail(w, r, http.StatusForbidden, "Only admins remove a project's leads.")
		return
	}
	if err := s.store.DeleteMember(r.Context(), p.ID, id, u.ID); err != nil {
		s.storeError(w, r, err)
		return
	}
	s.flash(w, r, "notice", "Removed from the team. Their judgments stay in the project.")
	http.Redirect(w, r, projectPath(r, "team"), http.StatusSeeOther)
}
