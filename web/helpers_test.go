package web

import (
	"bytes"
	"context"
	"io"
	"log/slog"
	"net/http"
	"net/http/cookiejar"
	"net/http/httptest"
	"net/url"
	"strconv"
	"strings"
	"testing"
	"time"

	"golang.org/x/crypto/bcrypt"

	"ebb/demo"
	"ebb/internal/analysis"
	"ebb/internal/auth"
	"ebb/internal/history"
	"ebb/internal/jobs"
	"ebb/internal/store"
)

// testNow is the fixed clock of the web tests.
var testNow = time.Date(2026, 12, 1, 9, 0, 0, 0, time.UTC)

// password is every test user's password.
const password = "correct horse battery"

type testEnv struct {
	t        *testing.T
	srv      *httptest.Server
	st       *store.Store
	server   *Server
	runner   *jobs.Runner
	accounts *auth.Accounts
	sessions *auth.Sessions
	tokens   *auth.Tokens
	users    map[string]auth.User // by role name: "viewer", "analyst", "admin"
	clock    *clock
	logs     *bytes.Buffer
	business demo.Business
}

// clock is a settable time source for expiry tests.
type clock struct{ t time.Time }

func (c *clock) now() time.Time { return c.t }

// newEnv starts a server over a fresh store with one user per role and, if
// withDemo, the demo business imported as dataset "demo".
func newEnv(t *testing.T, withDemo bool) *testEnv {
	t.Helper()
	ctx := context.Background()
	dir := t.TempDir()
	c := &clock{t: testNow}
	st, err := store.Open(ctx, dir+"/web.db", store.Options{Now: c.now})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { st.Close() })
	e := &testEnv{t: t, st: st, clock: c, users: map[string]auth.User{}, logs: &bytes.Buffer{}}
	log := slog.New(slog.NewTextHandler(e.logs, nil))
	e.accounts = &auth.Accounts{Store: st, Hasher: auth.Hasher{Cost: bcrypt.MinCost}, Throttle: auth.NewThrottle(c.now), Now: c.now}
	e.sessions, err = auth.NewSessions(st, bytes.Repeat([]byte{7}, 32), c.now)
	if err != nil {
		t.Fatal(err)
	}
	e.runner = jobs.New(st, jobs.Options{Workers: 1, Now: c.now, Log: log, PersistEvery: 50 * time.Millisecond})
	e.runner.Register(analysis.KindImport, analysis.ImportJob(st, c.now))
	hc := history.NewCache(2)
	e.runner.Register(analysis.KindWindow, analysis.WindowJob(st, hc, c.now))
	e.runner.Register(analysis.KindTrain, analysis.TrainJob(st, hc, c.now, nil))
	e.runner.Register(analysis.KindScore, analysis.ScoreJob(st, hc, c.now))
	e.runner.Register(analysis.KindScheduledList, analysis.ScheduledListJob(st, hc, c.now))
	e.runner.Register(analysis.KindMeasure, analysis.MeasureJob(st, hc, c.now))
	if _, err := e.runner.Start(ctx); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(e.runner.Stop)
	for _, r := range auth.Roles {
		u, err := e.accounts.Create(ctx, "test-"+r.String(), r, password)
		if err != nil {
			t.Fatal(err)
		}
		e.users[r.String()] = u
	}
	if withDemo {
		e.business = demo.Generate(demo.Options{})
		var orders, customers bytes.Buffer
		e.business.WriteOrders(&orders)
		e.business.WriteCustomers(&customers)
		if _, err := analysis.Import(ctx, st, analysis.ImportRequest{
			Dataset: "demo", Orders: analysis.Source{Name: "orders.csv", R: &orders},
			Customers: &analysis.Source{Name: "customers.csv", R: &customers}, Now: testNow,
		}); err != nil {
			t.Fatal(err)
		}
	}
	e.tokens = &auth.Tokens{Store: st, Now: c.now}
	e.server = New(st, e.accounts, e.sessions, e.tokens, e.runner, log, Config{UploadDir: dir + "/uploads", MaxUpload: 8 << 20, Now: c.now})
	e.srv = httptest.NewServer(e.server)
	t.Cleanup(e.srv.Close)
	return e
}

// client returns an HTTP client with its own cookie jar that does not
// follow redirects, so tests see each response.
func (e *testEnv) client() *http.Client {
	jar, _ := cookiejar.New(nil)
	return &http.Client{Jar: jar, CheckRedirect: func(*http.Request, []*http.Request) error { return http.ErrUseLastResponse }}
}

// signIn returns a client signed in as the user of the given role.
func (e *testEnv) signIn(role string) *http.Client {
	e.t.Helper()
	c := e.client()
	res := e.post(c, "/signin", url.Values{"name": {"test-" + role}, "password": {password}})
	if res.StatusCode != http.StatusSeeOther {
		e.t.Fatalf("sign in as %s: status %d", role, res.StatusCode)
	}
	return c
}

// post sends a same-origin form POST, as a browser would (the Origin
// header matters: cross-origin protection lets header-less requests pass).
func (e *testEnv) post(c *http.Client, path string, form url.Values) *http.Response {
	e.t.Helper()
	req, _ := http.NewRequest(http.MethodPost, e.srv.URL+path, strings.NewReader(form.Encode()))
	req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
	req.Header.Set("Origin", e.srv.URL)
	req.Header.Set("Sec-Fetch-Site", "same-origin")
	res, err := c.Do(req)
	if err != nil {
		e.t.Fatal(err)
	}
	io.Copy(io.Discard, res.Body)
	res.Body.Close()
	return res
}

// get fetches path and returns the response with its body read.
func (e *testEnv) get(c *http.Client, path string) (*http.Response, string) {
	e.t.Helper()
	res, err := c.Get(e.srv.URL + path)
	if err != nil {
		e.t.Fatal(err)
	}
	defer res.Body.Close()
	b, _ := io.ReadAll(res.Body)
	return res, string(b)
}

// postBody is post, keeping the body.
func (e *testEnv) postBody(c *http.Client, path string, form url.Values) (*http.Response, string) {
	e.t.Helper()
	req, _ := http.NewRequest(http.MethodPost, e.srv.URL+path, strings.NewReader(form.Encode()))
	req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
	req.Header.Set("Origin", e.srv.URL)
	res, err := c.Do(req)
	if err != nil {
		e.t.Fatal(err)
	}
	defer res.Body.Close()
	b, _ := io.ReadAll(res.Body)
	return res, string(b)
}

func itoa(n int64) string { return strconv.FormatInt(n, 10) }

// between returns the text of s between the first from and the next to.
func between(s, from, to string) string {
	_, rest, ok := strings.Cut(s, from)
	if !ok {
		return ""
	}
	v, _, _ := strings.Cut(rest, to)
	return v
}
