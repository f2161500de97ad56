package web

import (
	"net/http"
	"strings"
	"time"

	"github.com/pertinent/pertinent/store"
)

// issuedLink is a set-password link shown once to the admin who issued it.
type issuedLink struct {
	Username string
	URL      string
	Expires  string
}

type peopleData struct {
	Users   []store.User
	Roles   []store.Role
	Links   []issuedLink
	Notices []string
	Error   string
	Form    struct{ Username, DisplayName, Role string }
}

func (s *Server) renderPeople(w http.ResponseWriter, r *http.Request, status int, edit func(*peopleData)) {
	d := peopleData{Roles: []store.Role{store.RoleAssessor, store.RoleLead, store.RoleAdmin}, Notices: s.flashes(w, r, "notice")}
	for _, l := range s.flashes(w, r, "link") {
		// Kept as "username expires url": none of the three holds a space.
		if f := strings.Fields(l); len(f) == 3 {
			d.Links = append(d.Links, issuedLink{Username: f[0], Expires: f[1], URL: f[2]})
		}
	}
	d.Form.Role = string(store.RoleAssessor)
	var err error
	if d.Users, err = s.store.Users(r.Context()); err != nil {
		s.storeError(w, r, err)
		return
	}
	renderEdited(s, w, r, status, "users", "People", d, edit)
}

func (s *Server) usersPage(w http.ResponseWriter, r *http.Request) {
	s.renderPeople(w, r, http.StatusOK, nil)
}

// keepLink hands a freshly issued link to the next page over the encrypted session cookie:
// it is shown once and never stored in clear.
func (s *Server) keepLink(w http.ResponseWriter, r *http.Request, l store.PasswordLink) {
	url := s.siteURL(r) + "/set-password?token=" + l.Token
	s.flash(w, r, "link", l.User.Username+" "+l.Expires.UTC().Format(time.RFC3339)+" "+url)
}

// createUser adds an account without a password and shows the one-time link with which
// its holder chooses one.
func (s *Server) createUser(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	username, display := strings.TrimSpace(r.PostFormValue("username")), strings.TrimSpace(r.PostFormValue("display_name"))
	role := r.PostFormValue("role")
	l, err := s.store.InviteUser(r.Context(), username, display, store.Role(role), u.ID)
	if err != nil {
		s.formError(w, r, err, func(status int, msg string) {
			s.renderPeople(w, r, status, func(d *peopleData) {
				d.Error = msg
				d.Form.Username, d.Form.DisplayName, d.Form.Role = username, display, role
			})
		})
		return
	}
	s.keepLink(w, r, l)
	s.flash(w, r, "notice", "Account "+l.User.Username+" created. It signs in once its holder has chosen a password with the link below.")
	http.Redirect(w, r, "/admin/users", http.StatusSeeOther)
}

func (s *Server) issuePasswordLink(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	id, ok := s.routeID(w, r, "user", "There is no such account.")
	if !ok {
		return
	}
	l, err := s.store.IssuePasswordLink(r.Context(), id, u.ID)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	s.keepLink(w, r, l)
	http.Redirect(w, r, "/admin/users", http.StatusSeeOther)
}

func (s *Server) disableUser(w http.ResponseWriter, r *http.Request) { s.setDisabled(w, r, true) }
func (s *Server) enableUser(w http.ResponseWriter, r *http.Request)  { s.setDisabled(w, r, false) }

func (s *Server) setDisabled(w http.ResponseWriter, r *http.Request, disabled bool) {
	u, _ := currentUser(r)
	id, ok := s.routeID(w, r, "user", "There is no such account.")
	if !ok {
		return
	}
	target, err := s.store.User(r.Context(), id)
	if err == nil {
		err = s.store.SetUserDisabled(r.Context(), id, disabled, u.ID)
	}
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	msg := target.Username + " is enabled again and can sign in."
	if disabled {
		msg = target.Username + " is disabled and signed out everywhere. Their judgments stay."
	}
	s.flash(w, r, "notice", msg)
	http.Redirect(w, r, "/admin/users", http.StatusSeeOther)
}
