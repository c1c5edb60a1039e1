package web

import (
	"bytes"
	"crypto/rand"
	"encoding/hex"
	"io"
	"mime"
	"net/http"
	"net/url"
	"strconv"

	"github.com/a-h/templ"
	"github.com/go-chi/chi/v5"

	"ebb/internal/auth"
	"ebb/internal/problem"
	"ebb/web/views"
)

func urlQueryEscape(s string) string { return url.QueryEscape(s) }

// chrome builds the page frame for the request: who is signed in, the
// navigation entry, and the session's flash message (taken once).
func (s *Server) chrome(w http.ResponseWriter, r *http.Request, title, nav string) views.Chrome {
	c := views.Chrome{Title: title, Nav: nav}
	if u, ok := currentUser(r); ok {
		c.User, c.Role = u.Name, u.Role.String()
		c.IsAnalyst, c.IsAdmin = u.Role.Allows(auth.Analyst), u.Role.Allows(auth.Admin)
		if msg, err := s.sessions.TakeFlash(w, r); err == nil {
			c.Flash = msg
		} else {
			s.log.Warn("take flash", "err", err)
		}
	}
	return c
}

// flash leaves a message for the next page; failures only cost the message.
func (s *Server) flash(w http.ResponseWriter, r *http.Request, msg string) {
	if err := s.sessions.Flash(w, r, msg); err != nil {
		s.log.Warn("set flash", "err", err)
	}
}

// render writes c into a buffer first, so a render error becomes a clean
// error page rather than half a page.
func (s *Server) render(w http.ResponseWriter, r *http.Request, status int, c templ.Component) {
	var buf bytes.Buffer
	if err := c.Render(r.Context(), &buf); err != nil {
		s.fail(w, r, err)
		return
	}
	writeHTML(w, status, &buf)
}

func writeHTML(w http.ResponseWriter, status int, buf *bytes.Buffer) {
	w.Header().Set("Content-Type", "text/html; charset=utf-8")
	w.Header().Set("Cache-Control", "no-store")
	w.WriteHeader(status)
	buf.WriteTo(w)
}

// fail shows a problem's own message with a fitting status, and any other
// error as "Something went wrong" with a reference that the log line
// carries beside the whole error.
func (s *Server) fail(w http.ResponseWriter, r *http.Request, err error) {
	if p := problem.As(err); p != nil {
		status, title, next := http.StatusUnprocessableEntity, "That did not work", "Go back, correct it and try again."
		switch p.Kind {
		case problem.NotFound:
			status, title, next = http.StatusNotFound, "Not found", "It may have been removed; start again from the start page."
		case problem.Conflict:
			status, title, next = http.StatusConflict, "That clashes with the current state", "Reload the page to see the current state."
		case problem.Forbidden:
			status, title, next = http.StatusForbidden, "Not allowed", ""
		}
		s.writeError(w, r, status, title, p.Message, next, "")
		return
	}
	b := make([]byte, 3)
	rand.Read(b)
	ref := hex.EncodeToString(b)
	user := ""
	if u, ok := currentUser(r); ok {
		user = u.Name
	}
	s.log.Error("request failed", "ref", ref, "method", r.Method, "path", r.URL.Path, "user", user, "err", err)
	s.writeError(w, r, http.StatusInternalServerError, "Something went wrong",
		"ebb could not finish this request.", "Try again in a moment.", ref)
}

func (s *Server) writeError(w http.ResponseWriter, r *http.Request, status int, title, msg, next, ref string) {
	v := views.ErrorView{Chrome: views.Chrome{Title: title}, Message: msg, Next: next, Ref: ref}
	if u, ok := currentUser(r); ok {
		v.Chrome.User, v.Chrome.Role = u.Name, u.Role.String()
		v.Chrome.IsAnalyst, v.Chrome.IsAdmin = u.Role.Allows(auth.Analyst), u.Role.Allows(auth.Admin)
	}
	var buf bytes.Buffer
	if err := views.Error(v).Render(r.Context(), &buf); err != nil {
		http.Error(w, title, status)
		return
	}
	writeHTML(w, status, &buf)
}

func (s *Server) handleNotFound(w http.ResponseWriter, r *http.Request) {
	s.writeError(w, r, http.StatusNotFound, "Page not found", "There is no page at this address.",
		"It may have moved; start again from the start page.", "")
}

func (s *Server) handleMethodNotAllowed(w http.ResponseWriter, r *http.Request) {
	s.writeError(w, r, http.StatusMethodNotAllowed, "Not possible here", "This address does not take that kind of request.",
		"Use the links and buttons on the pages.", "")
}

// idParam reads a numeric URL parameter; a bad one is a NotFound problem.
func idParam(r *http.Request, name string) (int64, error) {
	id, err := strconv.ParseInt(chi.URLParam(r, name), 10, 64)
	if err != nil || id <= 0 {
		return 0, problem.New(problem.NotFound, "there is no such page")
	}
	return id, nil
}

// seeOther redirects after a POST (POST → redirect → GET).
func seeOther(w http.ResponseWriter, r *http.Request, to string) {
	http.Redirect(w, r, to, http.StatusSeeOther)
}

// chart is any of internal/charts' figures.
type chart interface {
	SVG(w io.Writer) error
	PNG(w io.Writer) error
}

// sendChart draws c as SVG or PNG (ext) into a buffer and sends it; a PNG
// is offered as a download named name.png. gonum's SVG styles its text with
// inline style attributes, so SVG responses carry their own narrow policy
// (no script either way).
func (s *Server) sendChart(w http.ResponseWriter, r *http.Request, ext, name string, c chart) {
	var buf bytes.Buffer
	var err error
	if ext == "png" {
		err = c.PNG(&buf)
	} else {
		err = c.SVG(&buf)
	}
	if err != nil {
		s.fail(w, r, err)
		return
	}
	if ext == "png" {
		w.Header().Set("Content-Type", "image/png")
		w.Header().Set("Content-Disposition", mime.FormatMediaType("attachment", map[string]string{"filename": name + ".png"}))
	} else {
		w.Header().Set("Content-Type", "image/svg+xml")
		w.Header().Set("Content-Security-Policy", "default-src 'none'; style-src 'unsafe-inline'; frame-ancestors 'none'")
	}
	w.Header().Set("Cache-Control", "private, max-age=60")
	buf.WriteTo(w)
}
