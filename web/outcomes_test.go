package web

import (
	"context"
	"net/http"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"

	"ebb/demo"
	"ebb/demo/replay"
	"ebb/internal/browser"
)

// pastEnv is a server over the demo with its past: weekly published lists
// and measured outcomes.
func pastEnv(t *testing.T) (*testEnv, int64) {
	t.Helper()
	e := newEnv(t, false)
	res, err := replay.Load(context.Background(), e.st, demo.Generate(demo.Options{}), testNow)
	if err != nil {
		t.Fatal(err)
	}
	return e, res.DatasetID
}

// The overview and outcomes pages read the measured report: the demo's
// simulated effect with its label, realized accuracy of matured lists, a
// list not yet matured with its date, drift and cohorts with their charts.
func TestOverviewAndOutcomes(t *testing.T) {
	e, id := pastEnv(t)
	viewer := e.signIn("viewer")
	res, body := e.get(viewer, "/datasets/"+itoa(id)+"/overview")
	if res.StatusCode != http.StatusOK {
		t.Fatalf("overview: %d", res.StatusCode)
	}
	for _, want := range []string{"Demo data: the campaign effect here is simulated", `id="card-definition"`, "lapsed after 90 silent days",
		`id="card-model"`, "Promised: of a top-10% list", `id="card-list"`, "Published", `id="card-effect"`, "customers failed to reorder",
		`id="card-drift"`, "PSI"} {
		if !strings.Contains(body, want) {
			t.Errorf("overview lacks %q", want)
		}
	}
	if strings.Contains(body, `id="measure"`) || strings.Contains(body, `/window"`) {
		t.Error("a viewer is offered analyst actions on the overview")
	}
	_, start := e.get(viewer, "/")
	if !strings.Contains(start, `href="/datasets/`+itoa(id)+`/overview"`) || !strings.Contains(start, "Latest list 2026-10-26") {
		t.Error("the start page does not lead to the overview")
	}
	res, body = e.get(viewer, "/datasets/"+itoa(id)+"/outcomes")
	if res.StatusCode != http.StatusOK {
		t.Fatalf("outcomes: %d", res.StatusCode)
	}
	for _, want := range []string{`id="effect-sentence"`, "95% interval", "Holdout (not contacted)", `id="effect-bands"`,
		"ready 2027-01-24", "matured", `id="calibration-deciles"`, `id="drift-table"`, "retention.svg", "lapse.svg", `id="lapse-table"`, "2024-01"} {
		if !strings.Contains(body, want) {
			t.Errorf("outcomes page lacks %q", want)
		}
	}
	for _, chart := range []string{"retention.svg", "lapse.svg", "retention.png"} {
		if res, b := e.get(viewer, "/datasets/"+itoa(id)+"/outcomes/"+chart); res.StatusCode != http.StatusOK || (strings.HasSuffix(chart, ".svg") && !strings.Contains(b, "<svg")) {
			t.Errorf("chart %s: %d", chart, res.StatusCode)
		}
	}
	if res, _ := e.get(viewer, "/datasets/"+itoa(id)+"/outcomes/pie.svg"); res.StatusCode != http.StatusNotFound {
		t.Errorf("unknown chart: %d", res.StatusCode)
	}
	// An analyst measures again; a viewer may not.
	if res := e.post(viewer, "/datasets/"+itoa(id)+"/measure", nil); res.StatusCode != http.StatusForbidden {
		t.Errorf("viewer measure: %d", res.StatusCode)
	}
	analyst := e.signIn("analyst")
	res = e.post(analyst, "/datasets/"+itoa(id)+"/measure", nil)
	if res.StatusCode != http.StatusSeeOther {
		t.Fatalf("measure: %d", res.StatusCode)
	}
	if j := e.waitJob(res.Header.Get("Location")); j.Error != "" {
		t.Fatalf("measure job: %s", j.Error)
	}
}

// A dataset with no lists yet: sentences, never an empty chart or NaN.
func TestOutcomesBeforeAnyList(t *testing.T) {
	e := newEnv(t, true)
	d, _ := e.st.DatasetByName(context.Background(), "demo")
	c := e.signIn("viewer")
	for _, p := range []string{"/overview", "/outcomes"} {
		res, body := e.get(c, "/datasets/"+itoa(d.ID)+p)
		if res.StatusCode != http.StatusOK || strings.Contains(body, "NaN") || !strings.Contains(body, "not been measured yet") {
			t.Errorf("%s: %d, NaN %v", p, res.StatusCode, strings.Contains(body, "NaN"))
		}
	}
	if res, _ := e.get(c, "/datasets/"+itoa(d.ID)+"/outcomes/retention.svg"); res.StatusCode != http.StatusNotFound {
		t.Errorf("a chart before measuring: %d", res.StatusCode)
	}
}

// TestBrowserOverview: a marketing lead signs in, lands on the start page,
// opens the overview and follows it to the measured effect.
func TestBrowserOverview(t *testing.T) {
	e, id := pastEnv(t)
	ctx := browser.New(t)
	ctx, cancel := context.WithTimeout(ctx, 120*time.Second)
	defer cancel()
	p := &page{t: t, ctx: ctx, url: e.srv.URL}
	p.signIn("test-viewer")
	p.do(chromedp.Navigate(p.url+"/"), chromedp.WaitVisible(chromedp.CSS("#overviews a")), chromedp.Click(chromedp.CSS("#overviews a")),
		chromedp.WaitVisible(chromedp.CSS("#card-effect")))
	browser.Screenshot(t, ctx, "overview")
	if got := p.text("#card-effect"); !strings.Contains(strings.ToLower(got), "contacted customers failed to reorder") {
		t.Errorf("effect card: %s", got)
	}
	if got := p.text("#demo-note"); !strings.Contains(got, "simulated") {
		t.Errorf("demo note: %s", got)
	}
	p.do(chromedp.Click(chromedp.CSS("#card-effect a")), chromedp.WaitVisible(chromedp.CSS("#effect-table")))
	p.waitFor(`Array.from(document.querySelectorAll("main img")).every(i => i.complete && i.naturalWidth > 0)`, 15*time.Second)
	browser.Screenshot(t, ctx, "outcomes")
	if !p.eval(`document.querySelectorAll("#accuracy-table tbody tr").length === 9`) {
		t.Error("the accuracy table does not list the nine published lists")
	}
	if got := p.text("#effect-table"); !strings.Contains(got, "Contacted") || !strings.Contains(got, "Holdout") {
		t.Errorf("effect table: %s", got)
	}
	_ = id
}
