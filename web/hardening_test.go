package web

import (
	"bytes"
	"context"
	"io"
	"mime/multipart"
	"net/http"
	"net/http/cookiejar"
	"net/http/httptest"
	"net/url"
	"strings"
	"testing"
	"time"

	"ebb/internal/analysis"
	"ebb/internal/history"
	"ebb/internal/jobs"
	"ebb/internal/store"
)

// The checks below follow the OWASP Authentication, Session Management,
// File Upload and SQL Injection Prevention cheat sheets
// (cheatsheetseries.owasp.org) and RFC 6265 section 4.1.2 for cookie
// attributes.

// signInAs posts the sign-in form and returns the status and the page.
func signInAs(t *testing.T, e *testEnv, c *http.Client, name, pw string) (int, string) {
	t.Helper()
	res, body := e.postBody(c, "/signin", url.Values{"name": {name}, "password": {pw}})
	return res.StatusCode, body
}

// The throttle counts failures per account and per address; once either
// reaches its limit the right password is refused too, until the window
// (15 minutes from the first failure) has passed.
func TestSignInThrottleHoldsUntilTheWindowEnds(t *testing.T) {
	tests := []struct {
		name     string
		failures func(i int) string // the name tried at the i-th failure
		n        int
		victim   string
	}{
		{"per account", func(int) string { return "test-admin" }, 5, "test-admin"},
		{"per account, any case", func(i int) string { return []string{"TEST-ADMIN", "Test-Admin"}[i%2] }, 5, "test-admin"},
		{"per address", func(i int) string { return "nobody-" + itoa(int64(i)) }, 20, "test-viewer"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			e := newEnv(t, false)
			start := e.clock.t
			for i := range tt.n {
				if code, _ := signInAs(t, e, e.client(), tt.failures(i), "wrong password"); code != http.StatusUnauthorized {
					t.Fatalf("failure %d: status %d, want 401", i+1, code)
				}
				e.clock.t = e.clock.t.Add(time.Second)
			}
			e.clock.t = start.Add(15*time.Minute - time.Second)
			code, body := signInAs(t, e, e.client(), tt.victim, password)
			if code != http.StatusTooManyRequests || !strings.Contains(body, "Too many failed sign-ins. Try again in 1 minute.") {
				t.Fatalf("right password 1 s before the window ends: status %d, want 429 with the wait", code)
			}
			e.clock.t = start.Add(15 * time.Minute)
			if code, _ := signInAs(t, e, e.client(), tt.victim, password); code != http.StatusSeeOther {
				t.Errorf("right password once the window has passed: status %d, want 303", code)
			}
		})
	}
}

// A session cookie planted before sign-in (the attacker's own valid
// session, or a made-up value) is replaced at sign-in, and the planted one
// never carries the victim's identity.
func TestSignInReplacesAPlantedSession(t *testing.T) {
	tests := []struct {
		name  string
		plant func(e *testEnv) string
	}{
		{"attacker's own session", func(e *testEnv) string { return sessionCookie(e.t, e, e.signIn("viewer")).Value }},
		{"made-up value", func(*testEnv) string { return "MTcwMDAwMDAwMHxmaXhlZC1ieS1hdHRhY2tlcnw=" }},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			e := newEnv(t, false)
			planted := tt.plant(e)
			u, _ := url.Parse(e.srv.URL)
			victim := e.client()
			victim.Jar.SetCookies(u, []*http.Cookie{{Name: e.sessions.Name, Value: planted}})
			if code, _ := signInAs(t, e, victim, "test-admin", password); code != http.StatusSeeOther {
				t.Fatalf("victim sign-in: %d", code)
			}
			if got := sessionCookie(t, e, victim).Value; got == planted {
				t.Fatal("sign-in kept the planted session cookie")
			}
			attacker := e.client()
			attacker.Jar.SetCookies(u, []*http.Cookie{{Name: e.sessions.Name, Value: planted}})
			if res, _ := e.get(attacker, "/admin/users"); res.StatusCode == http.StatusOK {
				t.Error("the planted cookie reaches the admin pages after the victim signed in")
			}
		})
	}
}

// Behind TLS (ebb serve --behind-tls-proxy sets Sessions.Secure) the
// session cookie is Secure, HttpOnly, SameSite=Lax and scoped to the whole
// site; signing out clears it with the same flags.
func TestCookieFlagsOverTLS(t *testing.T) {
	e := newEnv(t, false)
	e.sessions.Secure = true
	srv := newTLSServer(t, e)
	jar, _ := cookiejar.New(nil)
	c := srv.Client()
	c.Jar, c.CheckRedirect = jar, func(*http.Request, []*http.Request) error { return http.ErrUseLastResponse }
	send := func(path string, form url.Values) *http.Response {
		t.Helper()
		req, _ := http.NewRequest(http.MethodPost, srv.URL+path, strings.NewReader(form.Encode()))
		req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
		req.Header.Set("Origin", srv.URL)
		res, err := c.Do(req)
		if err != nil {
			t.Fatal(err)
		}
		io.Copy(io.Discard, res.Body)
		res.Body.Close()
		return res
	}
	check := func(what string, res *http.Response, wantValue bool) {
		t.Helper()
		var ck *http.Cookie
		for _, x := range res.Cookies() {
			if x.Name == e.sessions.Name {
				ck = x
			}
		}
		switch {
		case ck == nil:
			t.Fatalf("%s: no session cookie set", what)
		case !ck.Secure || !ck.HttpOnly || ck.SameSite != http.SameSiteLaxMode || ck.Path != "/":
			t.Errorf("%s: cookie %+v, want Secure, HttpOnly, SameSite=Lax, Path=/", what, ck)
		case wantValue == (ck.Value == ""):
			t.Errorf("%s: cookie value %q", what, ck.Value)
		}
	}
	check("sign in", send("/signin", url.Values{"name": {"test-viewer"}, "password": {password}}), true)
	check("sign out", send("/signout", nil), false)
}

// One user cannot change another's password through their own form,
// whatever extra fields the request carries; a wrong current password
// changes nothing; another's account pages stay closed.
func TestAccountChangesOnlyYourOwn(t *testing.T) {
	e := newEnv(t, false)
	viewer := e.signIn("viewer")
	admin := e.users["admin"]
	tests := []struct {
		name   string
		form   url.Values
		status int
	}{
		{"wrong current password", url.Values{"current": {"guess"}, "new": {"a brand new secret"}}, http.StatusUnprocessableEntity},
		{"another user's id and name in the form", url.Values{"current": {password}, "new": {"viewer's new secret", "x"}, "id": {itoa(admin.ID)},
			"user_id": {itoa(admin.ID)}, "name": {"test-admin"}, "user": {"test-admin"}}, http.StatusSeeOther},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if res := e.post(viewer, "/account/password", tt.form); res.StatusCode != tt.status {
				t.Fatalf("status %d, want %d", res.StatusCode, tt.status)
			}
			if code, _ := signInAs(t, e, e.client(), "test-admin", password); code != http.StatusSeeOther {
				t.Errorf("the admin's password changed: sign-in status %d", code)
			}
		})
	}
	if code, _ := signInAs(t, e, e.client(), "test-viewer", "viewer's new secret"); code != http.StatusSeeOther {
		t.Errorf("the viewer's own password did not change: %d", code)
	}
	if _, body := e.get(viewer, "/account"); strings.Contains(body, "test-admin") || !strings.Contains(body, "test-viewer") {
		t.Error("the account page shows another user or not the viewer")
	}
	for _, p := range []string{"/admin/users/" + itoa(admin.ID) + "/reset", "/admin/users/" + itoa(admin.ID) + "/disable"} {
		if res := e.post(viewer, p, nil); res.StatusCode != http.StatusForbidden {
			t.Errorf("viewer POST %s: %d, want 403", p, res.StatusCode)
		}
	}
}

// Disabling a user, even straight in the store without ending their
// sessions, refuses their very next request, reading or writing.
func TestDisabledUserRefusedAtOnce(t *testing.T) {
	tests := []struct {
		role, path string
		form       url.Values // nil: GET
	}{
		{"viewer", "/lists", nil},
		{"analyst", "/datasets", nil},
		{"viewer", "/account/password", url.Values{"current": {password}, "new": {"changed after disabling"}}},
		{"admin", "/admin/users", url.Values{"name": {"backdoor"}, "role": {"admin"}}},
	}
	for _, tt := range tests {
		t.Run(tt.role+" "+tt.path, func(t *testing.T) {
			e := newEnv(t, false)
			c := e.signIn(tt.role)
			if err := e.st.SetDisabled(context.Background(), e.users[tt.role].ID, true); err != nil {
				t.Fatal(err)
			}
			var res *http.Response
			if tt.form == nil {
				res, _ = e.get(c, tt.path)
			} else {
				res = e.post(c, tt.path, tt.form)
			}
			if res.StatusCode != http.StatusSeeOther || !strings.HasPrefix(res.Header.Get("Location"), "/signin") {
				t.Fatalf("status %d to %q, want 303 to /signin", res.StatusCode, res.Header.Get("Location"))
			}
			if _, _, err := e.st.UserByName(context.Background(), "backdoor"); err == nil {
				t.Error("a disabled admin added a user")
			}
			if err := e.st.SetDisabled(context.Background(), e.users[tt.role].ID, false); err != nil {
				t.Fatal(err)
			}
			if code, _ := signInAs(t, e, e.client(), "test-"+tt.role, password); code != http.StatusSeeOther {
				t.Errorf("the password changed while disabled: sign-in %d", code)
			}
		})
	}
}

// An upload over the limit is refused with a sentence naming the limit; a
// very long line (a 1 MiB customer key, or a 1 MiB header) fails the
// import with a message naming the line and column, and creates nothing.
func TestUploadSizeAndLongLines(t *testing.T) {
	e := newEnv(t, false)
	c := e.signIn("analyst")
	big := "customer_id,order_date\n" + strings.Repeat("A,2024-01-01\n", (9<<20)/13)
	var body bytes.Buffer
	res := e.uploadBody(c, map[string]string{"orders": big}, &body)
	if res.StatusCode != http.StatusRequestEntityTooLarge || !strings.Contains(body.String(), "larger than the limit of 8 MiB") {
		t.Errorf("over the limit: %d %q", res.StatusCode, answerMessage(body.String()))
	}
	tests := []struct {
		name, file, want string
		maxPage          int
	}{
		{"long customer key", "customer_id,order_date\n" + strings.Repeat("k", 1<<20) + ",2024-01-01\n",
			"the customer key is 1048576 bytes long; at most 256 are allowed", 64 << 10},
		{"long header", strings.Repeat("h", 1<<20) + "\nA,2024-01-01\n", "the customer column &#34;customer_id&#34; is not in the header", 64 << 10},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			res := e.upload(c, map[string]string{"orders": tt.file}, nil)
			if res.StatusCode != http.StatusSeeOther {
				t.Fatalf("upload: %d", res.StatusCode)
			}
			res = e.post(c, res.Header.Get("Location")+"/import", url.Values{"customer": {"customer_id"}, "date": {"order_date"},
				"dates": {"iso"}, "target": {"new"}, "name": {"long " + tt.name}, "timezone": {"UTC"}, "policy": {"reject"}})
			if res.StatusCode != http.StatusSeeOther && res.StatusCode != http.StatusUnprocessableEntity {
				t.Fatalf("import form: %d", res.StatusCode)
			}
			if res.StatusCode == http.StatusSeeOther {
				j := e.waitJob(res.Header.Get("Location"))
				if j.Status != jobs.Failed || j.Error != "orders.csv was not imported: 1 problem" {
					t.Errorf("job %s, error %.200q; want it refused", j.Status, j.Error)
				}
				_, page := e.get(c, res.Header.Get("Location"))
				if !strings.Contains(page, tt.want) {
					t.Errorf("the job page does not say %q", tt.want)
				}
				if len(page) > tt.maxPage {
					t.Errorf("the job page is %d bytes long: the message repeats the long line (a clear message keeps the page under %d)", len(page), tt.maxPage)
				}
			}
			if _, err := e.st.DatasetByName(context.Background(), "long "+tt.name); err == nil {
				t.Error("a refused import created its dataset")
			}
		})
	}
}

// uploadBody is upload, keeping the response body.
func (e *testEnv) uploadBody(c *http.Client, files map[string]string, out *bytes.Buffer) *http.Response {
	e.t.Helper()
	var body bytes.Buffer
	mw := multipart.NewWriter(&body)
	for field, content := range files {
		fw, _ := mw.CreateFormFile(field, field+".csv")
		io.WriteString(fw, content)
	}
	mw.Close()
	req, _ := http.NewRequest(http.MethodPost, e.srv.URL+"/uploads", &body)
	req.Header.Set("Content-Type", mw.FormDataContentType())
	req.Header.Set("Origin", e.srv.URL)
	res, err := c.Do(req)
	if err != nil {
		e.t.Fatal(err)
	}
	io.Copy(out, res.Body)
	res.Body.Close()
	return res
}

// newTLSServer serves e's server over TLS on loopback.
func newTLSServer(t *testing.T, e *testEnv) *httptest.Server {
	t.Helper()
	srv := httptest.NewTLSServer(e.server)
	t.Cleanup(srv.Close)
	return srv
}

// publishedEnv is trainedEnv with one published list; it returns the list.
func publishedEnv(t *testing.T) (*testEnv, int64) {
	t.Helper()
	e, d := trainedEnv(t)
	share := 0.1
	res, err := analysis.Score(context.Background(), e.st, history.NewCache(1), analysis.ScoreRequest{DatasetID: d.ID, Rule: analysis.ListRule{Size: 300},
		Holdout: &share, Publish: true, By: "test", Now: testNow}, nil)
	if err != nil {
		t.Fatal(err)
	}
	return e, res.ListID
}

// Paths that climb out of /static/ or smuggle a path into a download's
// parameters find nothing: 404 (or 400 for a "..", which Go's file server
// refuses outright), and never the content of a file outside.
func TestPathTraversalFindsNothing(t *testing.T) {
	e, listID := publishedEnv(t)
	c := e.signIn("analyst")
	res := e.upload(c, map[string]string{"orders": "customer_id,order_date\nA,2024-01-01\n"}, nil)
	token := strings.TrimPrefix(res.Header.Get("Location"), "/uploads/")
	d, _ := e.st.DatasetByName(context.Background(), "demo")
	list, ds := "/lists/"+itoa(listID), "/datasets/"+itoa(d.ID)
	tests := []struct {
		name, path string
	}{
		{"static dot-dot", "/static/../go.mod"},
		{"static encoded dot-dot", "/static/%2e%2e/%2e%2e/go.mod"},
		{"static encoded slash", "/static/..%2f..%2fgo.mod"},
		{"static absolute", "/static//etc/passwd"},
		{"static backslash", "/static/..%5c..%5cgo.mod"},
		{"list file dot-dot", list + "/..%2f..%2f..%2fgo.mod"},
		{"list file absolute", list + "/%2fetc%2fpasswd"},
		{"list file other name", list + "/export.csv%00.txt"},
		{"list id dot-dot", "/lists/..%2f..%2fetc/export.csv"},
		{"test rows id", "/datasets/..%2f..%2fetc%2fpasswd/test-rows.csv"},
		{"test rows id with a number", "/datasets/" + itoa(d.ID) + "%2f..%2f..%2fgo.mod/test-rows.csv"},
		{"problems token dot-dot", "/uploads/..%2f..%2f..%2fgo.mod/problems.csv"},
		{"problems token dots", "/uploads/../problems.csv"},
		{"problems of a real upload, climbing", "/uploads/" + token + "/..%2f..%2fgo.mod"},
		{"dataset page dot-dot", ds + "/../../go.mod"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			res, body := e.get(c, tt.path)
			if res.StatusCode != http.StatusNotFound && res.StatusCode != http.StatusBadRequest {
				t.Errorf("GET %s: status %d, want 404", tt.path, res.StatusCode)
			}
			for _, outside := range []string{"module ebb", "root:x:0:0", "customer_id,order_date"} {
				if strings.Contains(body, outside) {
					t.Errorf("GET %s served a file outside (%q)", tt.path, outside)
				}
			}
		})
	}
	// The real files are still served, so the refusals above are not a
	// route that is simply missing.
	for _, p := range []string{"/static/ebb.css", list + "/export.csv", ds + "/test-rows.csv"} {
		if res, _ := e.get(c, p); res.StatusCode != http.StatusOK {
			t.Errorf("GET %s: %d, want 200", p, res.StatusCode)
		}
	}
}

// SQL written into every text input is stored and matched as plain text:
// no 500, the tables are intact, and a payload that would match every row
// if it reached the SQL matches none.
func TestSQLInjectionIsPlainText(t *testing.T) {
	e, listID := publishedEnv(t)
	ctx := context.Background()
	analyst, admin := e.signIn("analyst"), e.signIn("admin")
	d, _ := e.st.DatasetByName(ctx, "demo")
	attrs, err := e.st.AttributeNames(ctx, d.ID)
	if err != nil || len(attrs) == 0 {
		t.Fatalf("demo attributes %v, %v", attrs, err)
	}
	before := tableCounts(t, e)
	payloads := []struct{ name, text string }{
		{"quote", `'`},
		{"or true", `' OR 1=1 --`},
		{"double-quoted or true", `" OR ""="`},
		{"drop table", `x'; DROP TABLE users; --`},
		{"delete", `1); DELETE FROM list_rows; --`},
		{"union", `' UNION SELECT name, sql FROM sqlite_master --`},
	}
	for i, p := range payloads {
		t.Run(p.name, func(t *testing.T) {
			if code, body := signInAs(t, e, e.client(), p.text, p.text); code != http.StatusUnauthorized || !strings.Contains(body, "Wrong user name or password.") {
				t.Errorf("sign-in name: %d", code)
			}
			for _, q := range []url.Values{{"q": {p.text}}, {"attr": {attrs[0]}, "value": {p.text}}, {"attr": {p.text}, "value": {p.text}, "status": {"all"}}} {
				res, body := e.get(analyst, "/lists/"+itoa(listID)+"?"+q.Encode())
				wantAll := q.Get("attr") == p.text // an unknown attribute is ignored: every row shows
				switch {
				case res.StatusCode != http.StatusOK:
					t.Errorf("list filter %v: %d", q, res.StatusCode)
				case !wantAll && !strings.Contains(body, "No customer matches."):
					t.Errorf("list filter %v matched customers", q)
				case wantAll && !strings.Contains(body, "Customers 1 to 100 of "):
					t.Errorf("list filter %v with an unknown attribute did not show the list", q)
				}
			}
			res := e.post(analyst, "/datasets/"+itoa(d.ID)+"/schedule", url.Values{"weekday": {"1"}, "at": {p.text}, "mode": {"size"}, "size": {"10"}, "holdout": {"0.1"}})
			if res.StatusCode != http.StatusUnprocessableEntity {
				t.Errorf("schedule time: %d, want 422", res.StatusCode)
			}
			tokenName := p.text + " " + itoa(int64(i))
			if res, _ := e.postBody(admin, "/admin/tokens", url.Values{"name": {tokenName}, "dataset": {itoa(d.ID)}}); res.StatusCode != http.StatusOK {
				t.Errorf("token name: %d", res.StatusCode)
			} else if !hasToken(t, e, tokenName) {
				t.Errorf("token %q not stored under its exact name", tokenName)
			}
			res = e.upload(analyst, map[string]string{"orders": "customer_id,order_date\nA,2024-01-01\n"}, nil)
			dsName := p.text + " " + itoa(int64(i))
			res = e.post(analyst, res.Header.Get("Location")+"/import", url.Values{"customer": {"customer_id"}, "date": {"order_date"},
				"dates": {"iso"}, "target": {"new"}, "name": {dsName}, "timezone": {"UTC"}, "policy": {"reject"}})
			if res.StatusCode != http.StatusSeeOther {
				t.Fatalf("dataset name: %d", res.StatusCode)
			}
			if j := e.waitJob(res.Header.Get("Location")); j.Status != jobs.Done {
				t.Fatalf("import as %q: %s %s", dsName, j.Status, j.Error)
			}
			if got, err := e.st.DatasetByName(ctx, dsName); err != nil || got.Name != dsName {
				t.Errorf("dataset %q not stored under its exact name: %v", dsName, err)
			}
		})
	}
	after := tableCounts(t, e)
	for what, n := range before {
		want := n
		switch what {
		case "datasets":
			want += len(payloads)
		}
		if after[what] != want {
			t.Errorf("%s: %d after the payloads, want %d", what, after[what], want)
		}
	}
	if ok, err := e.st.IntegrityCheck(ctx); err != nil || ok != "ok" {
		t.Errorf("integrity check: %q, %v", ok, err)
	}
}

// tableCounts counts rows through the store's own queries, which fail if
// a table is gone.
func tableCounts(t *testing.T, e *testEnv) map[string]int {
	t.Helper()
	ctx := context.Background()
	users, err := e.st.Users(ctx)
	if err != nil {
		t.Fatalf("users: %v", err)
	}
	ds, err := e.st.Datasets(ctx)
	if err != nil {
		t.Fatalf("datasets: %v", err)
	}
	demo, err := e.st.DatasetByName(ctx, "demo")
	if err != nil {
		t.Fatalf("demo: %v", err)
	}
	ls, err := e.st.Lists(ctx, demo.ID, true)
	if err != nil {
		t.Fatalf("lists: %v", err)
	}
	rows, total, err := e.st.ListRows(ctx, store.ListFilter{ListID: ls[0].ID, DatasetID: demo.ID, Band: -1})
	if err != nil || len(rows) == 0 {
		t.Fatalf("list rows: %v", err)
	}
	vs, err := e.st.Versions(ctx, demo.ID)
	if err != nil {
		t.Fatalf("versions: %v", err)
	}
	stats, err := e.st.VersionStats(ctx, vs[0].ID)
	if err != nil {
		t.Fatalf("stats: %v", err)
	}
	return map[string]int{"users": len(users), "datasets": len(ds), "lists": len(ls), "list rows": total, "demo orders": stats.Orders}
}

// hasToken reports whether a token of that exact name is stored.
func hasToken(t *testing.T, e *testEnv, name string) bool {
	t.Helper()
	ts, err := e.st.Tokens(context.Background())
	if err != nil {
		t.Fatalf("tokens: %v", err)
	}
	for _, tk := range ts {
		if tk.Name == name {
			return true
		}
	}
	return false
}
