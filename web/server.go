// Package web is ebb's HTTP face: the chi router, handlers, middleware and
// templ views. Handlers parse input, call one function, then render,
// redirect or stream; nothing slow runs in a handler.
package web

import (
	"bytes"
	"context"
	"crypto/rand"
	"encoding/hex"
	"log/slog"
	"net/http"

	"github.com/a-h/templ"
	"github.com/go-chi/chi/v5"
	"github.com/go-chi/chi/v5/middleware"

	"ebb/internal/problem"
	"ebb/internal/store"
	"ebb/static"
	"ebb/web/views"
)

// Store is what the handlers need from storage.
type Store interface {
	Datasets(ctx context.Context) ([]store.Dataset, error)
}

// Server serves ebb's pages.
type Server struct {
	store  Store
	log    *slog.Logger
	router chi.Router
}

// New returns a server over st that logs to log.
func New(st Store, log *slog.Logger) *Server {
	s := &Server{store: st, log: log}
	s.router = s.routes()
	return s
}

func (s *Server) ServeHTTP(w http.ResponseWriter, r *http.Request) { s.router.ServeHTTP(w, r) }

// routes lists every route of the server.
func (s *Server) routes() chi.Router {
	r := chi.NewRouter()
	r.Use(middleware.Recoverer)
	r.Use(securityHeaders)
	r.Use(http.NewCrossOriginProtection().Handler)
	r.NotFound(s.handleNotFound)

	r.Get("/healthz", s.handleHealth)
	r.Handle("/static/*", http.StripPrefix("/static/", staticFiles()))

	r.Get("/", http.RedirectHandler("/datasets", http.StatusSeeOther).ServeHTTP)
	r.Get("/datasets", s.handleDatasets)
	return r
}

func staticFiles() http.Handler {
	fs := http.FileServerFS(static.FS)
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		w.Header().Set("Cache-Control", "public, max-age=3600")
		fs.ServeHTTP(w, r)
	})
}

// securityHeaders sets a strict Content-Security-Policy (no inline script
// or style anywhere) and the usual companions on every response.
func securityHeaders(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		h := w.Header()
		h.Set("Content-Security-Policy", "default-src 'self'; script-src 'self'; style-src 'self'; img-src 'self' data:; "+
			"object-src 'none'; base-uri 'none'; form-action 'self'; frame-ancestors 'none'")
		h.Set("X-Content-Type-Options", "nosniff")
		h.Set("X-Frame-Options", "DENY")
		h.Set("Referrer-Policy", "same-origin")
		next.ServeHTTP(w, r)
	})
}

func (s *Server) handleHealth(w http.ResponseWriter, r *http.Request) {
	w.Header().Set("Content-Type", "text/plain; charset=utf-8")
	w.Write([]byte("ok\n"))
}

func (s *Server) handleDatasets(w http.ResponseWriter, r *http.Request) {
	ds, err := s.store.Datasets(r.Context())
	if err != nil {
		s.fail(w, r, err)
		return
	}
	v := views.DatasetsView{}
	for _, d := range ds {
		v.Datasets = append(v.Datasets, views.DatasetRow{
			Name: d.Name, Orders: views.Count(d.Orders), Customers: views.Count(d.Customers),
			FirstDay: d.FirstDay.String(), LastDay: d.LastDay.String(), DataThrough: d.DataThrough().String(),
			TimeZone: d.TimeZone, Version: views.Count(d.Seq),
		})
	}
	s.render(w, r, http.StatusOK, views.Datasets(v))
}

func (s *Server) handleNotFound(w http.ResponseWriter, r *http.Request) {
	s.render(w, r, http.StatusNotFound, views.Error(views.ErrorView{
		Title: "Page not found", Message: "There is no page at this address. It may have moved; start again from the datasets page.",
	}))
}

// render writes c into a buffer first, so a render error becomes a clean
// error page rather than half a page.
func (s *Server) render(w http.ResponseWriter, r *http.Request, status int, c templ.Component) {
	var buf bytes.Buffer
	if err := c.Render(r.Context(), &buf); err != nil {
		s.fail(w, r, err)
		return
	}
	w.Header().Set("Content-Type", "text/html; charset=utf-8")
	w.WriteHeader(status)
	buf.WriteTo(w)
}

// fail shows a problem's own message with a fitting status, and any other
// error as "Something went wrong" with a reference that the log line
// carries beside the whole error.
func (s *Server) fail(w http.ResponseWriter, r *http.Request, err error) {
	if p := problem.As(err); p != nil {
		status, title := http.StatusBadRequest, "That did not work"
		switch p.Kind {
		case problem.NotFound:
			status, title = http.StatusNotFound, "Not found"
		case problem.Conflict:
			status, title = http.StatusConflict, "That clashes with the current state"
		case problem.Forbidden:
			status, title = http.StatusForbidden, "Not allowed"
		case problem.Invalid:
			status = http.StatusUnprocessableEntity
		}
		s.writeError(w, r, status, views.ErrorView{Title: title, Message: p.Message})
		return
	}
	b := make([]byte, 3)
	rand.Read(b)
	ref := hex.EncodeToString(b)
	s.log.Error("request failed", "ref", ref, "method", r.Method, "path", r.URL.Path, "err", err)
	s.writeError(w, r, http.StatusInternalServerError, views.ErrorView{
		Title: "Something went wrong", Message: "ebb could not finish this request. Try again in a moment.", Ref: ref,
	})
}

func (s *Server) writeError(w http.ResponseWriter, r *http.Request, status int, v views.ErrorView) {
	var buf bytes.Buffer
	if err := views.Error(v).Render(r.Context(), &buf); err != nil {
		http.Error(w, v.Title, status)
		return
	}
	w.Header().Set("Content-Type", "text/html; charset=utf-8")
	w.WriteHeader(status)
	buf.WriteTo(w)
}
