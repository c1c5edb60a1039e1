package web

import (
	"net/http"
	"net/url"
	"strings"
	"testing"

	"github.com/go-chi/chi/v5"

	"ebb/internal/auth"
)

// access is the one table of who may use each route: the least role, or
// 0 for everyone. A route the router has and this table lacks fails
// TestRouteTableCoversEveryRoute.
var access = map[string]auth.Role{
	"GET /healthz":        0,
	"GET /static/*":       0,
	"GET /signin":         0,
	"POST /signin":        0,
	"GET /setup/{token}":  0,
	"POST /setup/{token}": 0,
	// Guarded by a bearer token instead of a session (see tokens_test.go).
	"GET /api/v1/datasets/{name}/lists/latest.csv": 0,

	"GET /":                               auth.Viewer,
	"POST /signout":                       auth.Viewer,
	"GET /account":                        auth.Viewer,
	"POST /account/password":              auth.Viewer,
	"GET /lists":                          auth.Viewer,
	"GET /lists/{id}":                     auth.Viewer,
	"GET /lists/{id}/{file}":              auth.Viewer,
	"GET /datasets/{id}/overview":         auth.Viewer,
	"GET /datasets/{id}/outcomes":         auth.Viewer,
	"GET /datasets/{id}/outcomes/{chart}": auth.Viewer,

	"GET /datasets":                           auth.Analyst,
	"GET /datasets/{id}":                      auth.Analyst,
	"POST /datasets/{id}/data-through":        auth.Analyst,
	"GET /datasets/{id}/orders-per-month.svg": auth.Analyst,
	"GET /datasets/{id}/orders-per-month.png": auth.Analyst,
	"GET /datasets/{id}/window":               auth.Analyst,
	"POST /datasets/{id}/window":              auth.Analyst,
	"POST /datasets/{id}/definitions":         auth.Analyst,
	"GET /datasets/{id}/models":               auth.Analyst,
	"GET /datasets/{id}/models/{chart}":       auth.Analyst,
	"GET /datasets/{id}/test-rows.csv":        auth.Analyst,
	"POST /models/{id}/use":                   auth.Analyst,
	"POST /datasets/{id}/train":               auth.Analyst,
	"GET /datasets/{id}/window/{chart}":       auth.Analyst,
	"GET /uploads/new":                        auth.Analyst,
	"POST /uploads":                           auth.Analyst,
	"GET /uploads/{token}":                    auth.Analyst,
	"POST /uploads/{token}/import":            auth.Analyst,
	"GET /uploads/{token}/problems.csv":       auth.Analyst,
	"GET /jobs":                               auth.Analyst,
	"GET /jobs/{id}":                          auth.Analyst,
	"GET /jobs/{id}/status":                   auth.Analyst,
	"POST /jobs/{id}/cancel":                  auth.Analyst,
	"POST /jobs/{id}/rerun":                   auth.Analyst,
	"GET /datasets/{id}/lists/new":            auth.Analyst,
	"POST /datasets/{id}/lists":               auth.Analyst,
	"POST /lists/{id}/publish":                auth.Analyst,
	"POST /lists/{id}/discard":                auth.Analyst,
	"GET /datasets/{id}/schedule":             auth.Analyst,
	"POST /datasets/{id}/schedule":            auth.Analyst,
	"POST /datasets/{id}/measure":             auth.Analyst,

	"GET /admin/users":               auth.Admin,
	"POST /admin/users":              auth.Admin,
	"POST /admin/users/{id}/disable": auth.Admin,
	"POST /admin/users/{id}/enable":  auth.Admin,
	"POST /admin/users/{id}/reset":   auth.Admin,
	"GET /admin/tokens":              auth.Admin,
	"POST /admin/tokens":             auth.Admin,
	"POST /admin/tokens/{id}/revoke": auth.Admin,
}

func routes(t *testing.T, s *Server) []string {
	t.Helper()
	var out []string
	err := chi.Walk(s.Router(), func(method, route string, _ http.Handler, _ ...func(http.Handler) http.Handler) error {
		out = append(out, method+" "+route)
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return out
}

func TestRouteTableCoversEveryRoute(t *testing.T) {
	e := newEnv(t, false)
	seen := map[string]bool{}
	for _, r := range routes(t, e.server) {
		seen[r] = true
		if _, ok := access[r]; !ok {
			t.Errorf("route %s has no entry in the access table", r)
		}
	}
	for r := range access {
		if !seen[r] {
			t.Errorf("the access table names %s, which the router does not have", r)
		}
	}
}

// TestRouteAccess requests every route signed out and as each role, and
// checks it is let through exactly when the table says so. Signed-out
// requests to protected routes are sent to sign in; signed-in users
// without the role get 403.
func TestRouteAccess(t *testing.T) {
	e := newEnv(t, true)
	clients := map[string]*http.Client{"signed out": e.client()}
	for _, r := range auth.Roles {
		clients[r.String()] = e.signIn(r.String())
	}
	// Ids that do not exist: allowed requests get 404, denied ones 403 or a
	// redirect, and nothing is changed on the way.
	fill := strings.NewReplacer("{id}", "999", "{token}", "0000", "{chart}", "gaps.svg", "*", "ebb.css")
	for _, route := range routes(t, e.server) {
		method, pattern, _ := strings.Cut(route, " ")
		if route == "POST /signout" {
			continue // would end the shared sessions; covered by TestSignOut
		}
		need := access[route]
		for who, c := range clients {
			path := fill.Replace(pattern)
			var res *http.Response
			if method == http.MethodGet {
				res, _ = e.get(c, path)
			} else {
				res = e.post(c, path, url.Values{})
			}
			loc := res.Header.Get("Location")
			toSignIn := res.StatusCode == http.StatusSeeOther && strings.HasPrefix(loc, "/signin")
			denied := res.StatusCode == http.StatusForbidden || toSignIn
			var allowed bool
			switch who {
			case "signed out":
				allowed = need == 0
			default:
				role, _ := auth.ParseRole(who)
				allowed = need == 0 || role.Allows(need)
			}
			// The sign-in page itself redirects signed-in users onwards.
			if route == "GET /signin" || route == "POST /signin" {
				continue
			}
			if allowed && denied {
				t.Errorf("%s as %s: got %d %s, want it let through", route, who, res.StatusCode, loc)
			}
			if !allowed {
				if who == "signed out" && !toSignIn {
					t.Errorf("%s signed out: got %d %s, want a redirect to /signin", route, res.StatusCode, loc)
				}
				if who != "signed out" && res.StatusCode != http.StatusForbidden {
					t.Errorf("%s as %s: got %d, want 403", route, who, res.StatusCode)
				}
			}
		}
	}
}
