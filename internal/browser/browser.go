// Package browser starts headless Chromium for tests that click through
// ebb's pages as a user would. Tests call New; when no Chromium is installed
// the test is skipped, unless EBB_BROWSER_REQUIRED=1 (set by CI), which turns
// a missing browser into a failure.
package browser

import (
	"context"
	"os"
	"os/exec"
	"path/filepath"
	"testing"

	"github.com/chromedp/chromedp"
)

// RequiredEnv names the variable that makes a missing browser a failure.
const RequiredEnv = "EBB_BROWSER_REQUIRED"

// Path returns the Chromium executable, or "" when there is none.
func Path() string {
	for _, name := range []string{"chromium", "chromium-browser", "google-chrome"} {
		if p, err := exec.LookPath(name); err == nil {
			return p
		}
	}
	return ""
}

// New starts a headless browser for t and returns a context for chromedp
// actions in one tab; everything is closed by t.Cleanup.
func New(t *testing.T) context.Context {
	t.Helper()
	path := Path()
	if path == "" {
		if os.Getenv(RequiredEnv) == "1" {
			t.Fatalf("no chromium found and %s=1; install Debian's chromium package", RequiredEnv)
		}
		t.Skip("no chromium installed; browser tests skipped (set " + RequiredEnv + "=1 to make this a failure)")
	}
	opts := []chromedp.ExecAllocatorOption{
		chromedp.ExecPath(path),
		chromedp.Headless,
		chromedp.NoSandbox,
		chromedp.DisableGPU,
		chromedp.NoFirstRun,
		chromedp.NoDefaultBrowserCheck,
		chromedp.UserDataDir(t.TempDir()),
		chromedp.WindowSize(1280, 900),
		chromedp.Flag("disable-background-networking", true),
		chromedp.Flag("disable-component-update", true),
		chromedp.Flag("disable-sync", true),
		chromedp.Flag("disable-quic", true),
		chromedp.Flag("disable-dev-shm-usage", true),
	}
	actx, cancelAlloc := chromedp.NewExecAllocator(context.Background(), opts...)
	ctx, cancelCtx := chromedp.NewContext(actx)
	t.Cleanup(func() {
		cancelCtx()
		cancelAlloc()
	})
	// Start the browser now, without a deadline: a timeout on the first
	// run would kill the browser itself.
	if err := chromedp.Do(ctx); err != nil {
		t.Fatalf("start chromium: %v", err)
	}
	return ctx
}

// Screenshot saves a full-page PNG of the current page as an artefact under
// EBB_ARTEFACTS (default: the test's temp folder) and returns its path.
func Screenshot(t *testing.T, ctx context.Context, name string) string {
	t.Helper()
	png, err := chromedp.Run(ctx, chromedp.FullScreenshot(100))
	if err != nil {
		t.Fatalf("screenshot %s: %v", name, err)
	}
	dir := os.Getenv("EBB_ARTEFACTS")
	if dir == "" {
		dir = t.TempDir()
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	p := filepath.Join(dir, name+".png")
	if err := os.WriteFile(p, png, 0o644); err != nil {
		t.Fatal(err)
	}
	t.Logf("screenshot: %s", p)
	return p
}
