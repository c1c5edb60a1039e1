package web

import (
	"context"
	"net/http"
	"net/url"
	"strings"
	"testing"
	"time"
)

func sessionCookie(t *testing.T, e *testEnv, c *http.Client) *http.Cookie {
	t.Helper()
	u, _ := url.Parse(e.srv.URL)
	for _, ck := range c.Jar.Cookies(u) {
		if ck.Name == e.sessions.Name {
			return ck
		}
	}
	return nil
}

func TestCrossOriginPostRefused(t *testing.T) {
	e := newEnv(t, false)
	c := e.signIn("admin")
	req, _ := http.NewRequest(http.MethodPost, e.srv.URL+"/admin/users", strings.NewReader("name=mallory&role=admin"))
	req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
	req.Header.Set("Origin", "https://evil.example")
	req.Header.Set("Sec-Fetch-Site", "cross-site")
	res, err := c.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	res.Body.Close()
	if res.StatusCode != http.StatusForbidden {
		t.Errorf("cross-site POST: status %d, want 403", res.StatusCode)
	}
	if _, _, err := e.st.UserByName(context.Background(), "mallory"); err == nil {
		t.Error("the cross-site POST created a user")
	}
}

func TestSignInCookieAndFixation(t *testing.T) {
	e := newEnv(t, false)
	c := e.client()
	// A session from before sign-in (set by signing in and out as someone
	// else) must not survive: the id changes at sign-in.
	res := e.post(c, "/signin", url.Values{"name": {"test-viewer"}, "password": {password}})
	if res.StatusCode != http.StatusSeeOther {
		t.Fatalf("sign in: %d", res.StatusCode)
	}
	var set *http.Cookie
	for _, ck := range res.Cookies() {
		if ck.Name == e.sessions.Name && ck.Value != "" {
			set = ck
		}
	}
	if set == nil || !set.HttpOnly || set.SameSite != http.SameSiteLaxMode || set.Secure {
		t.Fatalf("session cookie = %+v, want HttpOnly, SameSite=Lax, not Secure over plain HTTP", set)
	}
	before := sessionCookie(t, e, c).Value
	res = e.post(c, "/signin", url.Values{"name": {"test-analyst"}, "password": {password}})
	after := sessionCookie(t, e, c).Value
	if res.StatusCode != http.StatusSeeOther || before == after {
		t.Fatalf("second sign-in kept the session cookie (status %d)", res.StatusCode)
	}
	// The old cookie no longer works.
	old := e.client()
	u, _ := url.Parse(e.srv.URL)
	old.Jar.SetCookies(u, []*http.Cookie{{Name: e.sessions.Name, Value: before}})
	if res, _ := e.get(old, "/account"); res.StatusCode != http.StatusSeeOther {
		t.Errorf("the pre-sign-in session still works: status %d", res.StatusCode)
	}
	// The cookie carries a signed random token, not the user id.
	if strings.Contains(after, "test-analyst") || len(after) < 40 {
		t.Errorf("cookie value %q does not look like a signed random token", after)
	}
	e.sessions.Secure = true
	res = e.post(e.client(), "/signin", url.Values{"name": {"test-viewer"}, "password": {password}})
	for _, ck := range res.Cookies() {
		if ck.Name == e.sessions.Name && !ck.Secure {
			t.Error("with Secure configured (TLS proxy) the cookie lacks the Secure flag")
		}
	}
}

func TestSignInFailuresAndThrottle(t *testing.T) {
	e := newEnv(t, false)
	c := e.client()
	for i := 0; i < 5; i++ {
		res := e.post(c, "/signin", url.Values{"name": {"test-admin"}, "password": {"wrong password"}})
		if res.StatusCode != http.StatusUnauthorized {
			t.Fatalf("attempt %d: status %d, want 401", i+1, res.StatusCode)
		}
	}
	// Now even the right password is refused for a while.
	res := e.post(c, "/signin", url.Values{"name": {"test-admin"}, "password": {password}})
	if res.StatusCode != http.StatusTooManyRequests {
		t.Fatalf("after 5 failures: status %d, want 429", res.StatusCode)
	}
	// Another account from the same address is not yet blocked.
	if res := e.post(c, "/signin", url.Values{"name": {"test-viewer"}, "password": {password}}); res.StatusCode != http.StatusSeeOther {
		t.Errorf("other account: status %d, want 303", res.StatusCode)
	}
	e.clock.t = e.clock.t.Add(16 * time.Minute)
	if res := e.post(e.client(), "/signin", url.Values{"name": {"test-admin"}, "password": {password}}); res.StatusCode != http.StatusSeeOther {
		t.Errorf("after the window: status %d, want 303", res.StatusCode)
	}
	// Unknown names fail the same way as wrong passwords.
	res2, body := e.postBody(e.client(), "/signin", url.Values{"name": {"nobody"}, "password": {password}})
	if res2.StatusCode != http.StatusUnauthorized || !strings.Contains(body, "Wrong user name or password.") {
		t.Errorf("unknown name: %d", res2.StatusCode)
	}
}

func TestSignOutAndDisableEndSessions(t *testing.T) {
	e := newEnv(t, false)
	viewer := e.signIn("viewer")
	if res, _ := e.get(viewer, "/account"); res.StatusCode != http.StatusOK {
		t.Fatalf("account page: %d", res.StatusCode)
	}
	token := sessionCookie(t, e, viewer).Value
	if res := e.post(viewer, "/signout", nil); res.StatusCode != http.StatusSeeOther {
		t.Fatalf("sign out: %d", res.StatusCode)
	}
	replay := e.client()
	u, _ := url.Parse(e.srv.URL)
	replay.Jar.SetCookies(u, []*http.Cookie{{Name: e.sessions.Name, Value: token}})
	if res, _ := e.get(replay, "/account"); res.StatusCode != http.StatusSeeOther {
		t.Errorf("a signed-out session's cookie still works: %d", res.StatusCode)
	}

	analyst := e.signIn("analyst")
	admin := e.signIn("admin")
	id := e.users["analyst"].ID
	if res := e.post(admin, "/admin/users/"+itoa(id)+"/disable", nil); res.StatusCode != http.StatusSeeOther {
		t.Fatalf("disable: %d", res.StatusCode)
	}
	if res, _ := e.get(analyst, "/datasets"); res.StatusCode != http.StatusSeeOther {
		t.Errorf("a disabled user's session still works: %d", res.StatusCode)
	}
	if res := e.post(e.client(), "/signin", url.Values{"name": {"test-analyst"}, "password": {password}}); res.StatusCode != http.StatusUnauthorized {
		t.Errorf("a disabled user signed in: %d", res.StatusCode)
	}
	if res := e.post(admin, "/admin/users/"+itoa(id)+"/enable", nil); res.StatusCode != http.StatusSeeOther {
		t.Fatalf("enable: %d", res.StatusCode)
	}
	if res := e.post(e.client(), "/signin", url.Values{"name": {"test-analyst"}, "password": {password}}); res.StatusCode != http.StatusSeeOther {
		t.Errorf("an enabled user cannot sign in: %d", res.StatusCode)
	}
	// An admin cannot disable themself.
	if res := e.post(admin, "/admin/users/"+itoa(e.users["admin"].ID)+"/disable", nil); res.StatusCode != http.StatusConflict {
		t.Errorf("self-disable: %d, want 409", res.StatusCode)
	}
}

func TestSessionExpiry(t *testing.T) {
	e := newEnv(t, false)
	c := e.signIn("viewer")
	e.clock.t = e.clock.t.Add(7 * time.Hour) // within the 8 h idle limit
	if res, _ := e.get(c, "/account"); res.StatusCode != http.StatusOK {
		t.Fatalf("after 7 h: %d, want 200", res.StatusCode)
	}
	e.clock.t = e.clock.t.Add(8*time.Hour + time.Minute) // idle past the limit
	if res, _ := e.get(c, "/account"); res.StatusCode != http.StatusSeeOther {
		t.Errorf("after 8 h idle: %d, want a redirect to sign in", res.StatusCode)
	}
	// Absolute expiry: keep the session busy for more than a week.
	c = e.signIn("viewer")
	for i := 0; i < 7*4+1; i++ {
		e.clock.t = e.clock.t.Add(6 * time.Hour)
		e.get(c, "/account")
	}
	if res, _ := e.get(c, "/account"); res.StatusCode != http.StatusSeeOther {
		t.Errorf("after a week of use: %d, want the session ended", res.StatusCode)
	}
}

func TestSetupLinkCreatesFirstAdminOnce(t *testing.T) {
	e := newEnv(t, false)
	ctx := context.Background()
	if err := e.st.SetSetting(ctx, SettingSetupToken, "abc123"); err != nil {
		t.Fatal(err)
	}
	c := e.client()
	if res, _ := e.get(c, "/setup/wrong"); res.StatusCode != http.StatusNotFound {
		t.Errorf("wrong token: %d, want 404", res.StatusCode)
	}
	if res, body := e.get(c, "/setup/abc123"); res.StatusCode != http.StatusOK || !strings.Contains(body, "Create administrator") {
		t.Fatalf("setup page: %d", res.StatusCode)
	}
	if res, body := e.postBody(c, "/setup/abc123", url.Values{"name": {"boss"}, "password": {"short"}}); res.StatusCode != http.StatusUnprocessableEntity || !strings.Contains(body, "at least 10 characters") {
		t.Errorf("short password: %d", res.StatusCode)
	}
	if res := e.post(c, "/setup/abc123", url.Values{"name": {"boss"}, "password": {"a long enough secret"}}); res.StatusCode != http.StatusSeeOther {
		t.Fatalf("setup: %d", res.StatusCode)
	}
	if res, body := e.get(c, "/admin/users"); res.StatusCode != http.StatusOK || !strings.Contains(body, "boss") {
		t.Errorf("the new admin is not signed in: %d", res.StatusCode)
	}
	if res, _ := e.get(e.client(), "/setup/abc123"); res.StatusCode != http.StatusNotFound {
		t.Errorf("the setup link worked twice: %d", res.StatusCode)
	}
}

func TestAdminAddsAndResetsUsers(t *testing.T) {
	e := newEnv(t, false)
	admin := e.signIn("admin")
	res, body := e.postBody(admin, "/admin/users", url.Values{"name": {"marketing.lead"}, "role": {"viewer"}})
	if res.StatusCode != http.StatusOK {
		t.Fatalf("add user: %d", res.StatusCode)
	}
	pw := between(body, `<code id="new-secret">`, "</code>")
	if len(pw) != 16 {
		t.Fatalf("generated password %q, want 16 characters", pw)
	}
	if res := e.post(e.client(), "/signin", url.Values{"name": {"marketing.lead"}, "password": {pw}}); res.StatusCode != http.StatusSeeOther {
		t.Errorf("new user cannot sign in: %d", res.StatusCode)
	}
	if res, body := e.postBody(admin, "/admin/users", url.Values{"name": {"Marketing.Lead"}, "role": {"viewer"}}); res.StatusCode != http.StatusUnprocessableEntity || !strings.Contains(body, "is taken") {
		t.Errorf("duplicate name (other case): %d", res.StatusCode)
	}
	u, _, _ := e.st.UserByName(context.Background(), "marketing.lead")
	res, body = e.postBody(admin, "/admin/users/"+itoa(u.ID)+"/reset", nil)
	npw := between(body, `<code id="new-secret">`, "</code>")
	if res.StatusCode != http.StatusOK || npw == "" || npw == pw {
		t.Fatalf("reset: %d %q", res.StatusCode, npw)
	}
	if res := e.post(e.client(), "/signin", url.Values{"name": {"marketing.lead"}, "password": {pw}}); res.StatusCode != http.StatusUnauthorized {
		t.Errorf("the old password still works: %d", res.StatusCode)
	}
}

func TestChangeOwnPassword(t *testing.T) {
	e := newEnv(t, false)
	c := e.signIn("viewer")
	if res, body := e.postBody(c, "/account/password", url.Values{"current": {"nope"}, "new": {"another long secret"}}); res.StatusCode != http.StatusUnprocessableEntity || !strings.Contains(body, "current password is wrong") {
		t.Errorf("wrong current password: %d", res.StatusCode)
	}
	if res := e.post(c, "/account/password", url.Values{"current": {password}, "new": {"another long secret"}}); res.StatusCode != http.StatusSeeOther {
		t.Fatalf("change: %d", res.StatusCode)
	}
	if _, body := e.get(c, "/account"); !strings.Contains(body, "Your password was changed.") {
		t.Error("no confirmation shown after the change")
	}
	if res := e.post(e.client(), "/signin", url.Values{"name": {"test-viewer"}, "password": {"another long secret"}}); res.StatusCode != http.StatusSeeOther {
		t.Errorf("new password refused: %d", res.StatusCode)
	}
}

func TestSafeNext(t *testing.T) {
	for in, want := range map[string]string{"/datasets": "/datasets", "//evil.example": "/", "https://evil.example": "/", "/\\evil": "/", "": "/"} {
		if got := safeNext(in); got != want {
			t.Errorf("safeNext(%q) = %q, want %q", in, got, want)
		}
	}
}
