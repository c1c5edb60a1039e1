package web

import (
	"bytes"
	"context"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"

	"ebb/demo"
	"ebb/internal/analysis"
	"ebb/internal/browser"
	"ebb/internal/store"
	"ebb/web/views"
)

// mustDemoServer returns a test server over a fresh store holding the demo
// business as dataset "demo".
func mustDemoServer(t *testing.T) (*httptest.Server, demo.Business) {
	t.Helper()
	ctx := context.Background()
	st, err := store.Open(ctx, t.TempDir()+"/web.db", store.Options{})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { st.Close() })
	b := demo.Generate(demo.Options{})
	var orders, customers bytes.Buffer
	if err := b.WriteOrders(&orders); err != nil {
		t.Fatal(err)
	}
	if err := b.WriteCustomers(&customers); err != nil {
		t.Fatal(err)
	}
	if _, err := analysis.Import(ctx, st, analysis.ImportRequest{
		Dataset: "demo", Orders: analysis.Source{Name: "orders.csv", R: &orders},
		Customers: &analysis.Source{Name: "customers.csv", R: &customers},
		Now:       time.Date(2026, 12, 1, 0, 0, 0, 0, time.UTC),
	}); err != nil {
		t.Fatal(err)
	}
	srv := httptest.NewServer(New(st, slog.New(slog.NewTextHandler(io.Discard, nil))))
	t.Cleanup(srv.Close)
	return srv, b
}

func get(t *testing.T, url string) (*http.Response, string) {
	t.Helper()
	res, err := http.Get(url)
	if err != nil {
		t.Fatal(err)
	}
	defer res.Body.Close()
	body, _ := io.ReadAll(res.Body)
	return res, string(body)
}

func TestPages(t *testing.T) {
	srv, b := mustDemoServer(t)
	tests := []struct {
		name   string
		path   string
		status int
		want   []string
	}{
		{"health", "/healthz", 200, []string{"ok"}},
		{"datasets", "/datasets", 200, []string{"<th scope=\"row\">demo</th>", views.Count(len(b.Orders)), views.Count(len(b.Customers)), "2023-11-01", "2026-10-31", "personal data"}},
		{"start page follows to datasets", "/", 200, []string{"<h1>Datasets</h1>"}},
		{"unknown page", "/no/such/page", 404, []string{"Page not found", "datasets page"}},
		{"stylesheet", "/static/ebb.css", 200, []string{"--accent"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			res, body := get(t, srv.URL+tt.path)
			if res.StatusCode != tt.status {
				t.Fatalf("GET %s = %d, want %d", tt.path, res.StatusCode, tt.status)
			}
			for _, w := range tt.want {
				if !strings.Contains(body, w) {
					t.Errorf("GET %s: body lacks %q", tt.path, w)
				}
			}
			csp := res.Header.Get("Content-Security-Policy")
			if !strings.Contains(csp, "script-src 'self'") || !strings.Contains(csp, "frame-ancestors 'none'") || strings.Contains(csp, "unsafe-inline") {
				t.Errorf("GET %s: Content-Security-Policy = %q", tt.path, csp)
			}
			if res.Header.Get("X-Content-Type-Options") != "nosniff" || res.Header.Get("Referrer-Policy") == "" {
				t.Errorf("GET %s: missing nosniff or Referrer-Policy", tt.path)
			}
		})
	}
}

func TestInlineStyleAndScriptAbsent(t *testing.T) {
	srv, _ := mustDemoServer(t)
	for _, path := range []string{"/datasets", "/nowhere"} {
		_, body := get(t, srv.URL+path)
		for _, bad := range []string{"style=", "<style", "<script>", "onclick="} {
			if strings.Contains(body, bad) {
				t.Errorf("GET %s contains %q, which the Content-Security-Policy forbids", path, bad)
			}
		}
	}
}

// TestBrowserDatasets opens the start page in headless Chromium as a user
// would and reads the demo dataset's figures off the rendered table.
func TestBrowserDatasets(t *testing.T) {
	srv, b := mustDemoServer(t)
	ctx := browser.New(t)
	ctx, cancel := context.WithTimeout(ctx, 30*time.Second)
	defer cancel()
	if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+"/"), chromedp.WaitVisible(chromedp.CSS("table"))); err != nil {
		t.Fatal(err)
	}
	text := func(sel string) string {
		t.Helper()
		v, err := chromedp.Run(ctx, chromedp.Text(chromedp.CSS(sel)))
		if err != nil {
			t.Fatalf("text of %s: %v", sel, err)
		}
		return v
	}
	title, err := chromedp.Run(ctx, chromedp.Title())
	if err != nil {
		t.Fatal(err)
	}
	name, orders, customers := text("tbody tr th"), text("tbody tr td:nth-of-type(1)"), text("tbody tr td:nth-of-type(2)")
	// A stylesheet blocked by the Content-Security-Policy has no rules.
	styled, err := chromedp.Run(ctx, chromedp.Evaluate[bool](`getComputedStyle(document.querySelector("header.top")).display === "flex"`))
	if err != nil {
		t.Fatal(err)
	}
	browser.Screenshot(t, ctx, "datasets")
	if title != "Datasets · ebb" {
		t.Errorf("title = %q", title)
	}
	if name != "demo" || orders != views.Count(len(b.Orders)) || customers != views.Count(len(b.Customers)) {
		t.Errorf("row = %q %q %q, want demo %s %s", name, orders, customers, views.Count(len(b.Orders)), views.Count(len(b.Customers)))
	}
	if !styled {
		t.Errorf("the stylesheet did not apply (blocked by the Content-Security-Policy?)")
	}
}
