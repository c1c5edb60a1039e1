package web

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"

	"ebb/demo"
	"ebb/internal/analysis"
	"ebb/internal/browser"
)

// page wraps a browser tab with the test's failure handling.
type page struct {
	t   *testing.T
	ctx context.Context
	url string
}

func (p *page) do(actions ...chromedp.Action[chromedp.Void]) {
	p.t.Helper()
	if err := chromedp.Do(p.ctx, actions...); err != nil {
		p.t.Fatal(err)
	}
}

func (p *page) text(sel string) string {
	p.t.Helper()
	v, err := chromedp.Run(p.ctx, chromedp.Text(chromedp.CSS(sel)))
	if err != nil {
		p.t.Fatalf("text of %s: %v", sel, err)
	}
	return strings.TrimSpace(v)
}

func (p *page) eval(js string) bool {
	p.t.Helper()
	v, err := chromedp.Run(p.ctx, chromedp.Evaluate[bool]("!!("+js+")"))
	if err != nil {
		p.t.Fatalf("evaluate %s: %v", js, err)
	}
	return v
}

// waitFor polls a JavaScript condition until it holds. Errors while the
// page reloads (the job page reloads itself when the job ends) count as
// "not yet".
func (p *page) waitFor(js string, within time.Duration) {
	p.t.Helper()
	deadline := time.Now().Add(within)
	for {
		ok, err := chromedp.Run(p.ctx, chromedp.Evaluate[bool]("!!("+js+")"))
		if err == nil && ok {
			return
		}
		if time.Now().After(deadline) {
			browser.Screenshot(p.t, p.ctx, "timeout")
			p.t.Fatalf("waited %v for %s (last error: %v)", within, js, err)
		}
		time.Sleep(100 * time.Millisecond)
	}
}

func (p *page) signIn(name string) {
	p.t.Helper()
	p.do(chromedp.Navigate(p.url+"/signin"),
		chromedp.WaitVisible(chromedp.CSS("#name")),
		chromedp.SendKeys(chromedp.CSS("#name"), name),
		chromedp.SendKeys(chromedp.CSS("#password"), password),
		chromedp.Click(chromedp.CSS("form button[type=submit]")),
		chromedp.WaitVisible(chromedp.CSS("header .who")))
}

// upload sends a file through the upload page and confirms the mapping
// with the dataset name given, returning on the job page.
func (p *page) upload(file, dataset string) {
	p.t.Helper()
	p.do(chromedp.Navigate(p.url+"/uploads/new"),
		chromedp.WaitVisible(chromedp.CSS("#orders")),
		chromedp.SetUploadFiles(chromedp.CSS("#orders"), []string{file}),
		chromedp.Click(chromedp.CSS("main form button[type=submit]")),
		chromedp.WaitVisible(chromedp.CSS("table.preview")))
	browser.Screenshot(p.t, p.ctx, "mapping-"+dataset)
	p.eval(`(() => { document.querySelector("#name").value = ""; return true })()`)
	p.do(chromedp.SendKeys(chromedp.CSS("#name"), dataset),
		chromedp.Click(chromedp.CSS("main form button[type=submit]")),
		chromedp.WaitVisible(chromedp.CSS("#job-progress")))
}

// TestBrowserImportFlow walks the whole import as an analyst would: sign
// in, upload the demo orders, confirm the mapping, watch the job reach
// done, open the dataset page with its chart; then a broken file shows its
// line and column messages; and a viewer cannot reach the upload page.
func TestBrowserImportFlow(t *testing.T) {
	e := newEnv(t, false)
	dir := t.TempDir()
	if err := demo.WriteDir(dir, demo.Options{}); err != nil {
		t.Fatal(err)
	}
	broken := filepath.Join(dir, "broken.csv")
	os.WriteFile(broken, []byte("customer_id,order_date,amount\nC1,2024-01-05,12.50\nC2,2024-02-30,3\nC3,2024-03-01,ten\n"), 0o644)

	ctx := browser.New(t)
	ctx, cancel := context.WithTimeout(ctx, 150*time.Second)
	defer cancel()
	p := &page{t: t, ctx: ctx, url: e.srv.URL}

	p.signIn("test-analyst")
	browser.Screenshot(t, ctx, "start")
	p.upload(filepath.Join(dir, "orders.csv"), "refills")
	browser.Screenshot(t, ctx, "job-running")
	// The script polls the job and reloads the page when it is finished.
	p.waitFor(`document.querySelector("#job-status") && document.querySelector("#job-status").textContent === "done" && !!document.querySelector("#dataset-link")`, 60*time.Second)
	browser.Screenshot(t, ctx, "job-done")
	if got := p.text("#job-result li"); !strings.HasPrefix(got, "19\u202f352 orders imported into dataset \"refills\"") {
		t.Errorf("job result = %q", got)
	}
	if !p.eval(`document.querySelector("#job-progress").value === 100`) {
		t.Error("the progress bar of a finished job is not at 100")
	}
	p.do(chromedp.Click(chromedp.CSS("#dataset-link")), chromedp.WaitVisible(chromedp.CSS("dl.facts")))
	p.waitFor(`(() => { const i = document.querySelector("#per-month ~ div img, .chart-with-table img"); return i && i.complete && i.naturalWidth > 0 })()`, 10*time.Second)
	browser.Screenshot(t, ctx, "dataset")
	if got := p.text("h1"); got != "Dataset refills" {
		t.Errorf("dataset page heading = %q", got)
	}
	// 2023-11 … 2026-10 is 36 months of the demo business.
	if !p.eval(`document.querySelectorAll(".chart-with-table tbody tr").length === 36`) {
		t.Error("the orders-per-month table does not have 36 months")
	}

	p.upload(broken, "broken")
	p.waitFor(`document.querySelector("#job-status") && document.querySelector("#job-status").textContent === "failed" && !!document.querySelector("#problems")`, 30*time.Second)
	browser.Screenshot(t, ctx, "job-rejected")
	body := p.text("#problems")
	for _, want := range []string{"broken.csv:3:2", `"2024-02-30" is not a real calendar day`, "broken.csv:4:3", `"ten" is not a number`} {
		if !strings.Contains(body, want) {
			t.Errorf("problems panel lacks %q:\n%s", want, body)
		}
	}

	// A viewer is refused the upload page.
	p.do(chromedp.Click(chromedp.CSS("header .who button")), chromedp.WaitVisible(chromedp.CSS("#name")))
	p.signIn("test-viewer")
	if p.eval(`!!document.querySelector('nav a[href="/uploads/new"]')`) {
		t.Error("a viewer's navigation offers Upload")
	}
	p.do(chromedp.Navigate(p.url+"/uploads/new"), chromedp.WaitVisible(chromedp.CSS("h1")))
	browser.Screenshot(t, ctx, "viewer-refused")
	if got := p.text("h1"); got != "Not allowed" {
		t.Errorf("viewer on /uploads/new sees %q, want Not allowed", got)
	}
}

// TestBrowserWindow derives the churn window of the demo data, types a
// rounded X and sees its sensitivity row at once, and saves the definition.
func TestBrowserWindow(t *testing.T) {
	e := newEnv(t, true)
	ctx := browser.New(t)
	ctx, cancel := context.WithTimeout(ctx, 150*time.Second)
	defer cancel()
	p := &page{t: t, ctx: ctx, url: e.srv.URL}
	p.signIn("test-analyst")
	p.do(chromedp.Navigate(p.url+"/datasets"), chromedp.WaitVisible(chromedp.CSS("table")),
		chromedp.Click(chromedp.CSS("tbody th a")), chromedp.WaitVisible(chromedp.CSS("#window-link")),
		chromedp.Click(chromedp.CSS("#window-link")), chromedp.WaitVisible(chromedp.CSS("#derive button")),
		chromedp.Click(chromedp.CSS("#derive button")), chromedp.WaitVisible(chromedp.CSS("#job-progress")))
	p.waitFor(`document.querySelector("#job-status").textContent === "done" && document.querySelector("#result-link")`, 60*time.Second)
	p.do(chromedp.Click(chromedp.CSS("#result-link")), chromedp.WaitVisible(chromedp.CSS("#methods")))
	p.waitFor(`Array.from(document.querySelectorAll("main img")).every(i => i.complete && i.naturalWidth > 0)`, 15*time.Second)
	browser.Screenshot(t, ctx, "window")
	for _, m := range []string{"mean-gap", "pooled-gap", "censored"} {
		if got := p.text("#method-" + m + " .x-days"); got == "" {
			t.Errorf("no X shown for %s", m)
		}
	}
	// Type a rounded X into the save form: its row appears without a request.
	p.eval(`(() => { document.querySelector("#save-days").value = ""; return true })()`)
	p.do(chromedp.SendKeys(chromedp.CSS("#save-days"), "90"))
	p.waitFor(`!document.querySelector("#live-lookup").hidden`, 20*time.Second)
	if got := p.text("#live-lookup tbody th"); got != "90" {
		t.Errorf("live lookup shows X %q, want 90", got)
	}
	p.do(chromedp.SendKeys(chromedp.CSS("#rationale"), "Rounded to a quarter of a year."),
		chromedp.Click(chromedp.CSS("#save button[type=submit]")),
		chromedp.WaitVisible(chromedp.CSS("#definitions")))
	browser.Screenshot(t, ctx, "window-saved")
	if got := p.text("#definitions tbody tr td:nth-of-type(2)"); got != "90" {
		t.Errorf("saved X = %q, want 90", got)
	}
	if got := p.text(".flash"); !strings.Contains(got, "90 silent days") {
		t.Errorf("flash = %q", got)
	}
}

// TestBrowserTrain trains on the demo data from the dataset page, watches
// the job, and reads on the models page what a list would catch and miss.
func TestBrowserTrain(t *testing.T) {
	e := newEnv(t, true)
	d, _ := e.st.DatasetByName(context.Background(), "demo")
	if _, err := analysis.SaveDefinition(context.Background(), e.st, d.ID, analysis.DefinitionInput{WindowDays: 90, Rationale: "a quarter"}, "test", testNow); err != nil {
		t.Fatal(err)
	}
	ctx := browser.New(t)
	ctx, cancel := context.WithTimeout(ctx, 150*time.Second)
	defer cancel()
	p := &page{t: t, ctx: ctx, url: e.srv.URL}
	p.signIn("test-analyst")
	p.do(chromedp.Navigate(p.url+"/datasets/"+itoa(d.ID)), chromedp.WaitVisible(chromedp.CSS("#train button")),
		chromedp.Click(chromedp.CSS("#train button")), chromedp.WaitVisible(chromedp.CSS("#job-progress")))
	p.waitFor(`document.querySelector("#job-status")?.textContent === "done" && document.querySelector("#result-link")`, 60*time.Second)
	browser.Screenshot(t, ctx, "train-done")
	p.do(chromedp.Click(chromedp.CSS("#result-link")), chromedp.WaitVisible(chromedp.CSS("#model-table")))
	p.waitFor(`Array.from(document.querySelectorAll("main img")).every(i => i.complete && i.naturalWidth > 0)`, 15*time.Second)
	browser.Screenshot(t, ctx, "models")
	got := p.text("#model-logistic .sentences")
	for _, want := range []string{"A top 10% list on the last test date: Of the", "did not order again within 90 days.", "were on the list."} {
		if !strings.Contains(got, want) {
			t.Errorf("the logistic model's sentences lack %q:\n%s", want, got)
		}
	}
	// The first run marks its best non-baseline model (by test ROC AUC) in use.
	if !p.eval(`(() => {
		const rows = Array.from(document.querySelectorAll("#model-table tbody tr")).filter(r => r.querySelector("th").textContent !== "baseline");
		const auc = r => parseFloat(r.querySelector("td").textContent);
		const best = rows.reduce((a, b) => auc(b) > auc(a) ? b : a);
		return rows.length === 3 && best.querySelector(".tag")?.textContent === "in use";
	})()`) {
		t.Error("the best non-baseline model is not the one marked in use")
	}
}
