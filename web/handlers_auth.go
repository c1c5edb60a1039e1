package web

import (
	"fmt"
	"net"
	"net/http"
	"strings"

	"github.com/go-chi/chi/v5"

	"ebb/internal/auth"
	"ebb/internal/problem"
	"ebb/web/views"
)

// SettingSetupToken is the settings key of the one-time setup token.
const SettingSetupToken = "setup_token"

// safeNext keeps a post-sign-in target only when it is a path on this site.
func safeNext(next string) string {
	if !strings.HasPrefix(next, "/") || strings.HasPrefix(next, "//") || strings.HasPrefix(next, "/\\") {
		return "/"
	}
	return next
}

func clientAddr(r *http.Request) string {
	host, _, err := net.SplitHostPort(r.RemoteAddr)
	if err != nil {
		return r.RemoteAddr
	}
	return host
}

func (s *Server) handleSignInForm(w http.ResponseWriter, r *http.Request) {
	if _, ok := currentUser(r); ok {
		seeOther(w, r, safeNext(r.URL.Query().Get("next")))
		return
	}
	s.render(w, r, http.StatusOK, views.SignIn(views.SignInView{
		Chrome: s.chrome(w, r, "Sign in", ""), Next: r.URL.Query().Get("next"),
	}))
}

func (s *Server) handleSignIn(w http.ResponseWriter, r *http.Request) {
	name, pw, next := strings.TrimSpace(r.PostFormValue("name")), r.PostFormValue("password"), r.PostFormValue("next")
	u, err := s.accounts.Authenticate(r.Context(), name, pw, clientAddr(r))
	if err != nil {
		p := problem.As(err)
		if p == nil {
			s.fail(w, r, err)
			return
		}
		status := http.StatusUnauthorized
		if p.Kind == problem.Forbidden {
			status = http.StatusTooManyRequests
		}
		s.render(w, r, status, views.SignIn(views.SignInView{
			Chrome: s.chrome(w, r, "Sign in", ""), Name: name, Next: next, Error: p.Message,
		}))
		return
	}
	if err := s.sessions.SignIn(w, r, u.ID); err != nil {
		s.fail(w, r, err)
		return
	}
	s.log.Info("signed in", "user", u.Name, "addr", clientAddr(r))
	seeOther(w, r, safeNext(next))
}

func (s *Server) handleSignOut(w http.ResponseWriter, r *http.Request) {
	if err := s.sessions.SignOut(w, r); err != nil {
		s.fail(w, r, err)
		return
	}
	seeOther(w, r, "/signin")
}

// checkSetupToken compares the URL's token with the stored one.
func (s *Server) checkSetupToken(r *http.Request) error {
	stored, err := s.store.Setting(r.Context(), SettingSetupToken)
	if err != nil {
		return err
	}
	if stored == "" || !auth.TokensEqual(stored, chi.URLParam(r, "token")) {
		return problem.New(problem.NotFound, "this setup link is not valid; it works only once, and only while ebb has no users")
	}
	return nil
}

func (s *Server) handleSetupForm(w http.ResponseWriter, r *http.Request) {
	if err := s.checkSetupToken(r); err != nil {
		s.fail(w, r, err)
		return
	}
	s.render(w, r, http.StatusOK, views.Setup(views.SetupView{Chrome: s.chrome(w, r, "Set up ebb", ""), Token: chi.URLParam(r, "token")}))
}

func (s *Server) handleSetup(w http.ResponseWriter, r *http.Request) {
	if err := s.checkSetupToken(r); err != nil {
		s.fail(w, r, err)
		return
	}
	name := strings.TrimSpace(r.PostFormValue("name"))
	u, err := s.accounts.Create(r.Context(), name, auth.Admin, r.PostFormValue("password"))
	if err != nil {
		if p := problem.As(err); p != nil {
			s.render(w, r, http.StatusUnprocessableEntity, views.Setup(views.SetupView{
				Chrome: s.chrome(w, r, "Set up ebb", ""), Token: chi.URLParam(r, "token"), Name: name, Error: p.Message}))
			return
		}
		s.fail(w, r, err)
		return
	}
	if err := s.store.SetSetting(r.Context(), SettingSetupToken, ""); err != nil {
		s.fail(w, r, err)
		return
	}
	if err := s.sessions.SignIn(w, r, u.ID); err != nil {
		s.fail(w, r, err)
		return
	}
	s.log.Info("first administrator created", "user", u.Name)
	seeOther(w, r, "/admin/users")
}

func (s *Server) handleAccount(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	s.render(w, r, http.StatusOK, views.Account(views.AccountView{Chrome: s.chrome(w, r, "Your account", "account"), Name: u.Name, Role: u.Role.String()}))
}

func (s *Server) handlePasswordChange(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	err := s.accounts.ChangePassword(r.Context(), u, r.PostFormValue("current"), r.PostFormValue("new"))
	if p := problem.As(err); p != nil {
		s.render(w, r, http.StatusUnprocessableEntity, views.Account(views.AccountView{
			Chrome: s.chrome(w, r, "Your account", "account"), Name: u.Name, Role: u.Role.String(), Error: p.Message}))
		return
	}
	if err != nil {
		s.fail(w, r, err)
		return
	}
	s.flash(w, r, "Your password was changed.")
	seeOther(w, r, "/account")
}

func (s *Server) usersView(w http.ResponseWriter, r *http.Request) (views.UsersView, error) {
	me, _ := currentUser(r)
	us, err := s.store.Users(r.Context())
	if err != nil {
		return views.UsersView{}, err
	}
	v := views.UsersView{Chrome: s.chrome(w, r, "Users", "users")}
	for _, u := range us {
		v.Users = append(v.Users, views.UserRow{ID: u.ID, Name: u.Name, Role: u.Role.String(), Disabled: u.Disabled,
			Created: u.CreatedAt.UTC().Format("2006-01-02"), Self: u.ID == me.ID})
	}
	return v, nil
}

func (s *Server) handleUsers(w http.ResponseWriter, r *http.Request) {
	v, err := s.usersView(w, r)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	s.render(w, r, http.StatusOK, views.Users(v))
}

func (s *Server) handleUserAdd(w http.ResponseWriter, r *http.Request) {
	name, roleText := strings.TrimSpace(r.PostFormValue("name")), r.PostFormValue("role")
	pw := auth.NewPassword()
	role, err := auth.ParseRole(roleText)
	if err == nil {
		_, err = s.accounts.Create(r.Context(), name, role, pw)
	}
	v, verr := s.usersView(w, r)
	if verr != nil {
		s.fail(w, r, verr)
		return
	}
	if p := problem.As(err); p != nil {
		v.Error, v.Name, v.Role = p.Message, name, roleText
		s.render(w, r, http.StatusUnprocessableEntity, views.Users(v))
		return
	}
	if err != nil {
		s.fail(w, r, err)
		return
	}
	me, _ := currentUser(r)
	s.log.Info("user added", "user", name, "role", role.String(), "by", me.Name)
	v.NewSecret, v.SecretFor = pw, name
	s.render(w, r, http.StatusOK, views.Users(v))
}

// targetUser reads {id} and refuses actions on oneself (an admin must not
// lock themself out).
func (s *Server) targetUser(r *http.Request) (auth.User, error) {
	id, err := idParam(r, "id")
	if err != nil {
		return auth.User{}, err
	}
	if me, _ := currentUser(r); me.ID == id {
		return auth.User{}, problem.New(problem.Conflict, "you cannot do that to your own account here; use Your account")
	}
	return s.store.UserByID(r.Context(), id)
}

func (s *Server) setDisabled(w http.ResponseWriter, r *http.Request, disabled bool) {
	u, err := s.targetUser(r)
	if err == nil {
		err = s.store.SetDisabled(r.Context(), u.ID, disabled)
	}
	if err != nil {
		s.fail(w, r, err)
		return
	}
	me, _ := currentUser(r)
	s.log.Info("user disabled changed", "user", u.Name, "disabled", disabled, "by", me.Name)
	if disabled {
		s.flash(w, r, u.Name+" is disabled and signed out everywhere.")
	} else {
		s.flash(w, r, u.Name+" can sign in again.")
	}
	seeOther(w, r, "/admin/users")
}

func (s *Server) handleUserDisable(w http.ResponseWriter, r *http.Request) { s.setDisabled(w, r, true) }
func (s *Server) handleUserEnable(w http.ResponseWriter, r *http.Request)  { s.setDisabled(w, r, false) }

func (s *Server) handleUserReset(w http.ResponseWriter, r *http.Request) {
	u, err := s.targetUser(r)
	var pw string
	if err == nil {
		pw, err = s.accounts.Reset(r.Context(), u.ID)
	}
	if err != nil {
		s.fail(w, r, err)
		return
	}
	v, err := s.usersView(w, r)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	me, _ := currentUser(r)
	s.log.Info("password reset", "user", u.Name, "by", me.Name)
	v.NewSecret, v.SecretFor = pw, u.Name
	s.render(w, r, http.StatusOK, views.Users(v))
}

func (s *Server) handleStart(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	v := views.StartView{Chrome: s.chrome(w, r, "Start", "start"), IsAnalyst: u.Role.Allows(auth.Analyst)}
	all, err := s.store.Datasets(r.Context())
	if err != nil {
		s.fail(w, r, err)
		return
	}
	for _, d := range all {
		sd := views.StartDataset{ID: d.ID, Name: d.Name, Line: "No list published yet."}
		if l, err := s.store.LatestPublishedList(r.Context(), d.ID); err == nil {
			sum := s.summary(l)
			sd.Line = fmt.Sprintf("Latest list %s: %s customers to contact.", l.AsOf, views.Count(sum.Contact))
		} else if !problem.Is(err, problem.NotFound) {
			s.fail(w, r, err)
			return
		}
		v.Overviews = append(v.Overviews, sd)
	}
	if v.IsAnalyst {
		ds, err := s.store.Datasets(r.Context())
		if err != nil {
			s.fail(w, r, err)
			return
		}
		v.Datasets = len(ds)
		js, err := s.jobs.List(r.Context(), jobFilterRecent)
		if err != nil {
			s.fail(w, r, err)
			return
		}
		for _, j := range js {
			if !j.Status.Finished() {
				v.Running++
			}
		}
	}
	s.render(w, r, http.StatusOK, views.Start(v))
}
