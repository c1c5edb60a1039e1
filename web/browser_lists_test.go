package web

import (
	"context"
	"encoding/csv"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	cdpbrowser "github.com/chromedp/cdproto/browser"
	"github.com/chromedp/chromedp"

	"ebb/internal/browser"
)

// TestBrowserLists: an analyst drafts a list from the form, reviews it and
// publishes it; a viewer signs in, filters the list by band and downloads
// the CSV through the browser.
func TestBrowserLists(t *testing.T) {
	e, d := trainedEnv(t)
	ctx := browser.New(t)
	ctx, cancel := context.WithTimeout(ctx, 150*time.Second)
	defer cancel()
	p := &page{t: t, ctx: ctx, url: e.srv.URL}
	p.signIn("test-analyst")
	p.do(chromedp.Navigate(p.url+"/lists"), chromedp.WaitVisible(chromedp.CSS("#dataset-"+itoa(d.ID))),
		chromedp.Click(chromedp.CSS("#dataset-"+itoa(d.ID)+" a.button")), chromedp.WaitVisible(chromedp.CSS("#draft")))
	p.eval(`(() => { const s = document.querySelector("#size"); s.value = ""; return true })()`)
	p.do(chromedp.SendKeys(chromedp.CSS("#size"), "250"), chromedp.Click(chromedp.CSS("#draft button[type=submit]")),
		chromedp.WaitVisible(chromedp.CSS("#job-progress")))
	p.waitFor(`document.querySelector("#job-status")?.textContent === "done" && document.querySelector("#result-link")`, 60*time.Second)
	p.do(chromedp.Click(chromedp.CSS("#result-link")), chromedp.WaitVisible(chromedp.CSS("#list-facts")))
	browser.Screenshot(t, ctx, "list-draft")
	if got := p.text("#list-facts"); !strings.Contains(got, "250 selected") || !strings.Contains(got, "may not be contacted and were removed first") {
		t.Errorf("facts: %s", got)
	}
	if got := p.text("h1"); !strings.Contains(got, "draft") {
		t.Errorf("heading %q does not say draft", got)
	}
	p.do(chromedp.Click(chromedp.CSS("#publish button")), chromedp.WaitVisible(chromedp.CSS(".flash")))
	if got := p.text("h1"); !strings.Contains(got, "published") {
		t.Errorf("after publishing the heading says %q", got)
	}
	listURL := p.url + "/lists/" + itoa(mustLatestList(t, e, d.ID))

	// The viewer.
	p.do(chromedp.Click(chromedp.CSS("header form[action='/signout'] button")), chromedp.WaitVisible(chromedp.CSS("#name")))
	p.signIn("test-viewer")
	p.do(chromedp.Navigate(p.url+"/lists"), chromedp.WaitVisible(chromedp.CSS("table.lists a")))
	if p.eval(`document.querySelector("a.button[href$='/lists/new']")`) {
		t.Error("a viewer is offered to draft a list")
	}
	p.do(chromedp.Click(chromedp.CSS("table.lists a")), chromedp.WaitVisible(chromedp.CSS("#list-rows")))
	p.do(chromedp.SetValue(chromedp.CSS("#band"), "high"), chromedp.Click(chromedp.CSS("#filter button")))
	p.waitFor(`location.search.includes("band=high") && document.querySelector("#list-rows tbody tr")`, 15*time.Second)
	if !p.eval(`Array.from(document.querySelectorAll("#list-rows tbody tr")).every(r => r.querySelector(".tag").textContent === "high")`) {
		t.Error("filtering by the high band shows other bands")
	}
	browser.Screenshot(t, ctx, "list-viewer")
	if p.eval(`document.querySelector("#publish")`) {
		t.Error("a viewer is offered to publish")
	}

	dir := t.TempDir()
	if _, err := chromedp.CallBrowser(ctx, cdpbrowser.SetDownloadBehavior, cdpbrowser.SetDownloadBehaviorParams{
		Behavior: cdpbrowser.SetDownloadBehaviorBehaviorAllow, DownloadPath: dir}); err != nil {
		t.Fatal(err)
	}
	p.do(chromedp.Navigate(listURL), chromedp.WaitVisible(chromedp.CSS("#export-form")), chromedp.Click(chromedp.CSS("#export-form button")))
	var file string
	for deadline := time.Now().Add(20 * time.Second); file == "" && time.Now().Before(deadline); time.Sleep(100 * time.Millisecond) {
		if m, _ := filepath.Glob(filepath.Join(dir, "*contact.csv")); len(m) == 1 {
			file = m[0]
		}
	}
	if file == "" {
		t.Fatal("no CSV was downloaded")
	}
	f, err := os.Open(file)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatalf("downloaded CSV: %v", err)
	}
	if strings.Join(recs[0], ",") != "customer_id,email,probability,band,reasons,list_date" || len(recs) < 200 || len(recs) > 250 {
		t.Errorf("downloaded %d rows with header %v", len(recs)-1, recs[0])
	}
}

func mustLatestList(t *testing.T, e *testEnv, datasetID int64) int64 {
	t.Helper()
	l, err := e.st.LatestPublishedList(context.Background(), datasetID)
	if err != nil {
		t.Fatal(err)
	}
	return l.ID
}
