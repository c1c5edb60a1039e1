// Package web is ebb's HTTP face: the chi router, handlers, middleware and
// templ views. Handlers parse input, call one function, then render,
// redirect or stream; anything slow runs as a job.
package web

import (
	"context"
	"log/slog"
	"net/http"
	"time"

	"github.com/go-chi/chi/v5"
	"github.com/go-chi/chi/v5/middleware"

	"ebb/internal/analysis"
	"ebb/internal/auth"
	"ebb/internal/civil"
	"ebb/internal/jobs"
	"ebb/internal/store"
	"ebb/static"
)

// Store is what the handlers need from storage.
type Store interface {
	Datasets(ctx context.Context) ([]store.Dataset, error)
	DatasetByID(ctx context.Context, id int64) (store.Dataset, error)
	Versions(ctx context.Context, datasetID int64) ([]store.Version, error)
	VersionStats(ctx context.Context, versionID int64) (store.VersionStats, error)
	SetDataThrough(ctx context.Context, datasetID int64, day *civil.Date) error
	UserByID(ctx context.Context, id int64) (auth.User, error)
	Users(ctx context.Context) ([]auth.User, error)
	SetDisabled(ctx context.Context, id int64, disabled bool) error
	InsertUpload(ctx context.Context, u store.Upload) (int64, error)
	UploadByToken(ctx context.Context, token string) (store.Upload, error)
	Setting(ctx context.Context, key string) (string, error)
	SetSetting(ctx context.Context, key, value string) error
	CountUsers(ctx context.Context) (int, error)
	LatestWindowRun(ctx context.Context, datasetID int64) (store.WindowRun, error)
	Definitions(ctx context.Context, datasetID int64) ([]store.Definition, error)
	InsertDefinition(ctx context.Context, d store.Definition) (store.Definition, error)
	AttributeNames(ctx context.Context, datasetID int64) ([]string, error)
	LatestTrainingRunID(ctx context.Context, datasetID int64) (int64, error)
	TrainingRunByID(ctx context.Context, id int64) (store.TrainingRun, error)
	ModelsBrief(ctx context.Context, datasetID int64) ([]store.StoredModel, error)
	Models(ctx context.Context, datasetID int64) ([]store.StoredModel, error)
	ModelByID(ctx context.Context, id int64) (store.StoredModel, error)
	UseModel(ctx context.Context, id int64) error
	RankedLists(ctx context.Context, runID int64, model string) ([]store.RankedList, error)
	TestRows(ctx context.Context, runID int64) ([]byte, error)
	DatasetByName(ctx context.Context, name string) (store.Dataset, error)
	Lists(ctx context.Context, datasetID int64, withDrafts bool) ([]store.List, error)
	ListByID(ctx context.Context, id int64) (store.List, error)
	LatestPublishedList(ctx context.Context, datasetID int64) (store.List, error)
	LatestList(ctx context.Context, datasetID int64) (store.List, error)
	ListRows(ctx context.Context, f store.ListFilter) ([]store.ListedCustomer, int, error)
	EachListRowWith(ctx context.Context, datasetID, listID int64, statuses []int, attrs []string, fn func(store.ListedCustomer) error) error
	PublishList(ctx context.Context, id int64, by string, at time.Time) error
	DeleteDraftList(ctx context.Context, id int64) error
	ScheduleOf(ctx context.Context, datasetID int64) (store.Schedule, error)
	SaveSchedule(ctx context.Context, sc store.Schedule) error
	CurrentDefinition(ctx context.Context, datasetID int64) (store.Definition, error)
	LatestOutcomes(ctx context.Context, datasetID int64) (store.Outcomes, error)
}

// Jobs is what the handlers need from the job runner.
type Jobs interface {
	Submit(ctx context.Context, kind string, datasetID int64, params []byte, by string) (int64, error)
	Get(ctx context.Context, id int64) (jobs.Job, error)
	List(ctx context.Context, f jobs.Filter) ([]jobs.Job, error)
	Cancel(ctx context.Context, id int64) error
	Rerun(ctx context.Context, id int64, by string) (int64, error)
}

// Config holds the server's settings.
type Config struct {
	UploadDir string // where uploaded files wait for their import
	MaxUpload int64  // bytes per upload request
	Now       func() time.Time
}

// Server serves ebb's pages.
type Server struct {
	store    Store
	accounts *auth.Accounts
	sessions *auth.Sessions
	tokens   *auth.Tokens
	jobs     Jobs
	log      *slog.Logger
	cfg      Config
	router   chi.Router
	// Decoded immutable things: training reports by run, list summaries
	// and small published lists' CSV by list.
	reports   *lru[int64, cachedReport]
	summaries *lru[int64, analysis.ListSummary]
	csvs      *lru[csvKey, []byte]
	ranked    *lru[rankKey, []analysis.Ranked]
	aucs      *lru[int64, float64]
	counts    *lru[string, int]
	pages     *lru[string, []store.ListedCustomer]
	briefs    *lru[int64, modelBrief]
}

// New returns a server.
func New(st Store, accounts *auth.Accounts, sessions *auth.Sessions, tokens *auth.Tokens, jr Jobs, log *slog.Logger, cfg Config) *Server {
	if cfg.MaxUpload <= 0 {
		cfg.MaxUpload = 1 << 30
	}
	if cfg.Now == nil {
		cfg.Now = time.Now
	}
	s := &Server{store: st, accounts: accounts, sessions: sessions, tokens: tokens, jobs: jr, log: log, cfg: cfg,
		reports: newLRU[int64, cachedReport](8), summaries: newLRU[int64, analysis.ListSummary](64), csvs: newLRU[csvKey, []byte](16),
		ranked: newLRU[rankKey, []analysis.Ranked](16), aucs: newLRU[int64, float64](256), counts: newLRU[string, int](1024),
		pages: newLRU[string, []store.ListedCustomer](256), briefs: newLRU[int64, modelBrief](64)}
	s.router = s.routes()
	return s
}

func (s *Server) ServeHTTP(w http.ResponseWriter, r *http.Request) { s.router.ServeHTTP(w, r) }

// Router exposes the routes, for the test that walks them all.
func (s *Server) Router() chi.Router { return s.router }

// routes lists every route of the server, grouped by the role it needs.
// web's route table test fails for a route it does not know.
func (s *Server) routes() chi.Router {
	r := chi.NewRouter()
	r.Use(middleware.Recoverer)
	r.Use(securityHeaders)
	r.Use(http.NewCrossOriginProtection().Handler)
	r.Use(s.identify)
	r.NotFound(s.handleNotFound)
	r.MethodNotAllowed(s.handleMethodNotAllowed)

	// Anyone.
	r.Get("/healthz", s.handleHealth)
	r.Get("/static/*", http.StripPrefix("/static/", staticFiles()).ServeHTTP)
	r.Get("/signin", s.handleSignInForm)
	r.Post("/signin", s.handleSignIn)
	r.Get("/setup/{token}", s.handleSetupForm)
	r.Post("/setup/{token}", s.handleSetup)
	// Campaign tools, with a bearer token instead of a session.
	r.Get("/api/v1/datasets/{name}/lists/latest.csv", s.handleAPILatestList)

	r.Group(func(r chi.Router) {
		r.Use(s.require(auth.Viewer))
		r.Get("/", s.handleStart)
		r.Post("/signout", s.handleSignOut)
		r.Get("/account", s.handleAccount)
		r.Post("/account/password", s.handlePasswordChange)
		r.Get("/lists", s.handleLists)
		r.Get("/lists/{id}", s.handleListShow)
		r.Get("/lists/{id}/{file}", s.handleListExport)
		r.Get("/datasets/{id}/overview", s.handleOverview)
		r.Get("/datasets/{id}/outcomes", s.handleOutcomes)
		r.Get("/datasets/{id}/outcomes/{chart}", s.handleOutcomesChart)
	})

	r.Group(func(r chi.Router) {
		r.Use(s.require(auth.Analyst))
		r.Get("/datasets", s.handleDatasets)
		r.Get("/datasets/{id}", s.handleDatasetShow)
		r.Post("/datasets/{id}/data-through", s.handleDataThrough)
		r.Get("/datasets/{id}/orders-per-month.svg", s.handleMonthlyChart)
		r.Get("/datasets/{id}/orders-per-month.png", s.handleMonthlyChart)
		r.Get("/datasets/{id}/window", s.handleWindowShow)
		r.Post("/datasets/{id}/window", s.handleWindowDerive)
		r.Post("/datasets/{id}/definitions", s.handleDefinitionSave)
		r.Post("/datasets/{id}/train", s.handleTrain)
		r.Get("/datasets/{id}/models", s.handleModels)
		r.Get("/datasets/{id}/models/{chart}", s.handleModelChart)
		r.Get("/datasets/{id}/test-rows.csv", s.handleTestRows)
		r.Post("/models/{id}/use", s.handleModelUse)
		r.Get("/datasets/{id}/lists/new", s.handleListForm)
		r.Post("/datasets/{id}/lists", s.handleListDraft)
		r.Post("/lists/{id}/publish", s.handleListPublish)
		r.Post("/lists/{id}/discard", s.handleListDiscard)
		r.Get("/datasets/{id}/schedule", s.handleScheduleShow)
		r.Post("/datasets/{id}/schedule", s.handleScheduleSave)
		r.Post("/datasets/{id}/measure", s.handleMeasure)
		r.Get("/datasets/{id}/window/{chart}", s.handleWindowChart)
		r.Get("/uploads/new", s.handleUploadForm)
		r.Post("/uploads", s.handleUpload)
		r.Get("/uploads/{token}", s.handleMappingForm)
		r.Post("/uploads/{token}/import", s.handleImport)
		r.Get("/uploads/{token}/problems.csv", s.handleProblemReport)
		r.Get("/jobs", s.handleJobs)
		r.Get("/jobs/{id}", s.handleJobShow)
		r.Get("/jobs/{id}/status", s.handleJobStatus)
		r.Post("/jobs/{id}/cancel", s.handleJobCancel)
		r.Post("/jobs/{id}/rerun", s.handleJobRerun)
	})

	r.Group(func(r chi.Router) {
		r.Use(s.require(auth.Admin))
		r.Get("/admin/users", s.handleUsers)
		r.Post("/admin/users", s.handleUserAdd)
		r.Post("/admin/users/{id}/disable", s.handleUserDisable)
		r.Post("/admin/users/{id}/enable", s.handleUserEnable)
		r.Post("/admin/users/{id}/reset", s.handleUserReset)
		r.Get("/admin/tokens", s.handleTokens)
		r.Post("/admin/tokens", s.handleTokenCreate)
		r.Post("/admin/tokens/{id}/revoke", s.handleTokenRevoke)
	})
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

type ctxKey int

const userKey ctxKey = 1

// identify puts the signed-in user, if any, into the request's context.
// A disabled user's sessions are gone from the store, so they show as
// signed out at once.
func (s *Server) identify(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		sess, err := s.sessions.Get(r, s.sessions.Name)
		if err != nil {
			s.fail(w, r, err)
			return
		}
		if id := auth.UserID(sess); id != 0 {
			u, err := s.store.UserByID(r.Context(), id)
			if err == nil && !u.Disabled {
				r = r.WithContext(context.WithValue(r.Context(), userKey, u))
			}
		}
		next.ServeHTTP(w, r)
	})
}

// currentUser returns the signed-in user.
func currentUser(r *http.Request) (auth.User, bool) {
	u, ok := r.Context().Value(userKey).(auth.User)
	return u, ok
}

// require lets through users whose role allows need; others are sent to
// sign in (when signed out) or refused (when signed in).
func (s *Server) require(need auth.Role) func(http.Handler) http.Handler {
	return func(next http.Handler) http.Handler {
		return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
			u, ok := currentUser(r)
			if !ok {
				target := "/signin"
				if r.Method == http.MethodGet && r.URL.Path != "/" {
					target += "?next=" + urlQueryEscape(r.URL.RequestURI())
				}
				http.Redirect(w, r, target, http.StatusSeeOther)
				return
			}
			if !u.Role.Allows(need) {
				s.writeError(w, r, http.StatusForbidden, "Not allowed",
					"This page needs the "+need.String()+" role; you are signed in as a "+u.Role.String()+".",
					"Ask an administrator if you need it.", "")
				return
			}
			next.ServeHTTP(w, r)
		})
	}
}

func (s *Server) handleHealth(w http.ResponseWriter, r *http.Request) {
	w.Header().Set("Content-Type", "text/plain; charset=utf-8")
	w.Write([]byte("ok\n"))
}
