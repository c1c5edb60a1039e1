package web

import (
	"bytes"
	"context"
	"fmt"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"net/url"
	"os"
	"strings"
	"sync"
	"testing"
	"time"

	"golang.org/x/crypto/bcrypt"

	"ebb/demo"
	"ebb/internal/analysis"
	"ebb/internal/auth"
	"ebb/internal/gaps"
	"ebb/internal/history"
	"ebb/internal/jobs"
	"ebb/internal/store"
)

// rig is a server over the demo business with a churn definition, trained
// models, one published list and an API token, for the fuzz targets and
// benchmarks. newEnv takes a *testing.T, which fuzz targets and benchmarks
// do not have, and builds a fresh store for every test; a rig is built once
// per test binary (see sharedRig) because training takes seconds. Jobs
// submitted through a rig are recorded, not run, so fuzzing a form that
// queues work does not queue thousands of analyses.
type rig struct {
	st       *store.Store
	server   *Server
	sessions *auth.Sessions
	tokens   *auth.Tokens
	logs     *lockedBuffer
	dataset  store.Dataset
	listID   int64
	upload   string // token of an upload waiting for its mapping
	apiToken string // bearer token for the demo dataset
	cookies  map[string]*http.Cookie
	jobs     *recordedJobs

	srvOnce sync.Once
	srv     *httptest.Server
}

// lockedBuffer is a log buffer that may be read while handlers write.
type lockedBuffer struct {
	mu  sync.Mutex
	buf bytes.Buffer
}

func (b *lockedBuffer) Write(p []byte) (int, error) {
	b.mu.Lock()
	defer b.mu.Unlock()
	return b.buf.Write(p)
}

func (b *lockedBuffer) String() string {
	b.mu.Lock()
	defer b.mu.Unlock()
	return b.buf.String()
}

// recordedJobs is a Jobs that records submissions instead of running them.
type recordedJobs struct {
	mu     sync.Mutex
	n      int64
	params []byte // of the last submission
}

func (j *recordedJobs) Submit(_ context.Context, _ string, _ int64, params []byte, _ string) (int64, error) {
	j.mu.Lock()
	defer j.mu.Unlock()
	j.n++
	j.params = params
	return j.n, nil
}

// last returns the parameters of the last submitted job.
func (j *recordedJobs) last() []byte {
	j.mu.Lock()
	defer j.mu.Unlock()
	return j.params
}

func (j *recordedJobs) Get(_ context.Context, id int64) (jobs.Job, error) {
	return jobs.Job{ID: id, Status: jobs.Queued}, nil
}
func (j *recordedJobs) List(context.Context, jobs.Filter) ([]jobs.Job, error) { return nil, nil }
func (j *recordedJobs) Cancel(context.Context, int64) error                   { return nil }
func (j *recordedJobs) Rerun(context.Context, int64, string) (int64, error)   { return 0, nil }

var shared struct {
	once sync.Once
	r    *rig
	dir  string
	err  error
}

// sharedRig returns the test binary's rig, building it on first use.
// TestMain removes it at the end.
func sharedRig(tb testing.TB) *rig {
	tb.Helper()
	shared.once.Do(func() {
		shared.dir, shared.err = os.MkdirTemp("", "ebb-rig-")
		if shared.err == nil {
			shared.r, shared.err = buildRig(shared.dir)
		}
	})
	if shared.err != nil {
		tb.Fatalf("build the rig: %v", shared.err)
	}
	return shared.r
}

func TestMain(m *testing.M) {
	code := m.Run()
	if shared.r != nil {
		shared.r.close()
	}
	if shared.dir != "" {
		os.RemoveAll(shared.dir)
	}
	os.Exit(code)
}

func buildRig(dir string) (*rig, error) {
	ctx := context.Background()
	now := func() time.Time { return testNow }
	st, err := store.Open(ctx, dir+"/rig.db", store.Options{Now: now})
	if err != nil {
		return nil, err
	}
	r := &rig{st: st, logs: &lockedBuffer{}, cookies: map[string]*http.Cookie{}, jobs: &recordedJobs{}}
	fail := func(what string, err error) (*rig, error) {
		st.Close()
		return nil, fmt.Errorf("%s: %w", what, err)
	}
	accounts := &auth.Accounts{Store: st, Hasher: auth.Hasher{Cost: bcrypt.MinCost}, Throttle: auth.NewThrottle(now), Now: now}
	if r.sessions, err = auth.NewSessions(st, bytes.Repeat([]byte{7}, 32), now); err != nil {
		return fail("sessions", err)
	}
	r.tokens = &auth.Tokens{Store: st, Now: now}
	for _, role := range auth.Roles {
		if _, err := accounts.Create(ctx, "rig-"+role.String(), role, password); err != nil {
			return fail("create user", err)
		}
	}
	b := demo.Generate(demo.Options{})
	var orders, customers bytes.Buffer
	b.WriteOrders(&orders)
	b.WriteCustomers(&customers)
	if _, err := analysis.Import(ctx, st, analysis.ImportRequest{Dataset: "demo", Orders: analysis.Source{Name: "orders.csv", R: &orders},
		Customers: &analysis.Source{Name: "customers.csv", R: &customers}, Now: testNow}); err != nil {
		return fail("import the demo", err)
	}
	if r.dataset, err = st.DatasetByName(ctx, "demo"); err != nil {
		return fail("demo dataset", err)
	}
	if _, err := analysis.SaveDefinition(ctx, st, r.dataset.ID, analysis.DefinitionInput{WindowDays: 90, Rationale: "a quarter"}, "rig", testNow); err != nil {
		return fail("definition", err)
	}
	hc := history.NewCache(1)
	if _, _, err := analysis.DeriveWindow(ctx, st, hc, r.dataset.ID, gaps.Options{Percentile: 90, LookbackDays: 365}, "", "rig", testNow, nil); err != nil {
		return fail("window", err)
	}
	if _, _, err := analysis.Train(ctx, st, hc, r.dataset.ID, analysis.TrainOptions{Models: []string{"baseline", "logistic"}, Bootstrap: 10}, "rig", testNow, nil); err != nil {
		return fail("train", err)
	}
	holdout := 0.1
	res, err := analysis.Score(ctx, st, hc, analysis.ScoreRequest{DatasetID: r.dataset.ID, Rule: analysis.ListRule{Size: 300}, Holdout: &holdout,
		Publish: true, By: "rig", Now: testNow}, nil)
	if err != nil {
		return fail("score", err)
	}
	r.listID = res.ListID
	if r.apiToken, _, err = r.tokens.Create(ctx, r.dataset.ID, "rig tool", "rig"); err != nil {
		return fail("token", err)
	}
	up := store.Upload{Token: strings.Repeat("ab", 16), UserID: 1, Dir: dir + "/upload", OrdersName: "orders.csv", CreatedAt: testNow}
	if err := os.MkdirAll(up.Dir, 0o700); err != nil {
		return fail("upload folder", err)
	}
	small := "customer_id,order_date,amount,order_id\nA,03/04/2024,12.50,X1\nB,13/04/2024,8,X2\n"
	if err := os.WriteFile(up.Dir+"/"+analysis.UploadOrders, []byte(small), 0o600); err != nil {
		return fail("upload file", err)
	}
	up.OrdersSize = int64(len(small))
	if _, err := st.InsertUpload(ctx, up); err != nil {
		return fail("upload row", err)
	}
	r.upload = up.Token
	log := slog.New(slog.NewTextHandler(r.logs, nil))
	r.server = New(st, accounts, r.sessions, r.tokens, r.jobs, log, Config{UploadDir: dir + "/uploads", MaxUpload: 8 << 20, Now: now})
	for _, role := range auth.Roles {
		form := url.Values{"name": {"rig-" + role.String()}, "password": {password}}
		req := httptest.NewRequest(http.MethodPost, "/signin", strings.NewReader(form.Encode()))
		req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
		rec := httptest.NewRecorder()
		r.server.ServeHTTP(rec, req)
		for _, c := range rec.Result().Cookies() {
			if c.Name == r.sessions.Name && c.Value != "" {
				r.cookies[role.String()] = c
			}
		}
		if r.cookies[role.String()] == nil {
			return fail("sign in", fmt.Errorf("no session cookie for %s (status %d)", role, rec.Code))
		}
	}
	return r, nil
}

func (r *rig) close() {
	if r.srv != nil {
		r.srv.Close()
	}
	r.st.Close()
}

// url returns the rig's loopback HTTP server, started on first use.
func (r *rig) url() string {
	r.srvOnce.Do(func() { r.srv = httptest.NewServer(r.server) })
	return r.srv.URL
}

// serve runs one request as the given role ("" for signed out) without a
// network; body, if not nil, is sent as a form.
func (r *rig) serve(role, method, target string, body io.Reader) *httptest.ResponseRecorder {
	req := httptest.NewRequest(method, target, body)
	if body != nil {
		req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
	}
	if c := r.cookies[role]; c != nil {
		req.AddCookie(c)
	}
	rec := httptest.NewRecorder()
	r.server.ServeHTTP(rec, req)
	return rec
}
