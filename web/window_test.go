package web

import (
	"context"
	"net/http"
	"net/url"
	"strings"
	"testing"

	"ebb/internal/analysis"
	"ebb/internal/jobs"
)

func TestWindowPageDeriveAndSave(t *testing.T) {
	e := newEnv(t, true)
	c := e.signIn("analyst")
	d, _ := e.st.DatasetByName(context.Background(), "demo")
	path := "/datasets/" + itoa(d.ID) + "/window"
	if res, body := e.get(c, path); res.StatusCode != http.StatusOK || !strings.Contains(body, "Derive the window") {
		t.Fatalf("window page before a derivation: %d", res.StatusCode)
	}
	if res, body := e.postBody(c, path, url.Values{"percentile": {"0"}, "lookback": {"365"}}); res.StatusCode != http.StatusUnprocessableEntity || !strings.Contains(body, "above 0 and at most 100") {
		t.Errorf("percentile 0: %d", res.StatusCode)
	}
	res := e.post(c, path, url.Values{"percentile": {"90"}, "lookback": {"365"}, "split": {"channel"}})
	if res.StatusCode != http.StatusSeeOther {
		t.Fatalf("derive: %d", res.StatusCode)
	}
	if j := e.waitJob(res.Header.Get("Location")); j.Status != jobs.Done {
		t.Fatalf("window job: %s %s", j.Status, j.Error)
	}
	res, body := e.get(c, path+"?x=90")
	if res.StatusCode != http.StatusOK {
		t.Fatalf("window page: %d", res.StatusCode)
	}
	for _, want := range []string{`id="method-mean-gap"`, `id="method-censored"`, `id="x-365"`, `<table class="compact" id="lookup">`, "gaps.svg", "repurchase.svg", "tradeoff.svg",
		"By channel, at X = 90 days", `<th scope="row">market_stall</th>`, `<option value="channel" selected>`} {
		if !strings.Contains(body, want) {
			t.Errorf("window page lacks %q", want)
		}
	}
	for _, chart := range []string{"gaps.svg", "gaps.svg?log=1", "repurchase.svg", "tradeoff.svg", "gaps.png", "tradeoff.png"} {
		res, b := e.get(c, path+"/"+chart)
		if res.StatusCode != http.StatusOK || (strings.Contains(chart, ".svg") && !strings.Contains(b, "<svg")) {
			t.Errorf("chart %s: %d", chart, res.StatusCode)
		}
	}
	if res, _ := e.get(c, path+"/pie.svg"); res.StatusCode != http.StatusNotFound {
		t.Errorf("unknown chart: %d", res.StatusCode)
	}
	form := url.Values{"days": {"90"}, "horizon": {""}, "method": {"censored"}, "rationale": {""}, "run": {"1"}}
	if res, body := e.postBody(c, "/datasets/"+itoa(d.ID)+"/definitions", form); res.StatusCode != http.StatusUnprocessableEntity || !strings.Contains(body, "say in a sentence why") {
		t.Errorf("save without a rationale: %d", res.StatusCode)
	}
	form.Set("rationale", "Rounded to a quarter; the censoring-aware band covers it.")
	if res := e.post(c, "/datasets/"+itoa(d.ID)+"/definitions", form); res.StatusCode != http.StatusSeeOther {
		t.Fatalf("save: %d", res.StatusCode)
	}
	def, err := e.st.CurrentDefinition(context.Background(), d.ID)
	if err != nil || def.WindowDays != 90 || def.HorizonDays != 90 || def.Method != "censored" || def.Percentile != 90 || def.LookbackDays != 365 || def.RunID != 1 || def.DerivedDays == 0 {
		t.Errorf("saved definition = %+v, %v", def, err)
	}
	for _, chart := range []string{"gaps.svg", "tradeoff.svg", "repurchase.svg"} {
		if _, svg := e.get(c, path+"/"+chart); !strings.Contains(svg, "chosen X = 90 d") {
			t.Errorf("%s does not mark the chosen X", chart)
		}
	}
	_, body = e.get(c, path)
	if !strings.Contains(body, "Saved: a customer counts as lapsed after 90 silent days.") || !strings.Contains(body, `<span class="tag">current</span>`) {
		t.Error("the saved definition is not shown as current")
	}
	if _, page := e.get(c, "/datasets/"+itoa(d.ID)); !strings.Contains(page, "Churn definition 1: a customer counts as lapsed after 90 silent days; labels look 90 days ahead.") {
		t.Error("the dataset page does not show the current churn definition")
	}
}

func TestTrainFromTheDatasetPage(t *testing.T) {
	e := newEnv(t, true)
	c := e.signIn("analyst")
	d, _ := e.st.DatasetByName(context.Background(), "demo")
	page := "/datasets/" + itoa(d.ID)
	if _, body := e.get(c, page); strings.Contains(body, `id="train"`) {
		t.Error("the Train button is offered before a churn definition exists")
	}
	if _, err := analysis.SaveDefinition(context.Background(), e.st, d.ID, analysis.DefinitionInput{WindowDays: 90, Rationale: "a quarter"}, "test", testNow); err != nil {
		t.Fatal(err)
	}
	if _, body := e.get(c, page); !strings.Contains(body, `id="train"`) {
		t.Fatal("no Train button once a definition exists")
	}
	res := e.post(c, page+"/train", nil)
	if res.StatusCode != http.StatusSeeOther {
		t.Fatalf("train: %d", res.StatusCode)
	}
	j := e.waitJob(res.Header.Get("Location"))
	if j.Status != jobs.Done {
		t.Fatalf("train job: %s %s\n%s", j.Status, j.Error, e.logs.String())
	}
	_, body := e.get(c, res.Header.Get("Location"))
	for _, want := range []string{"logistic: ROC AUC 0.", "against the recency baseline", "top 10% list on the last test date: Of the", "did not order again within 90 days.", "/models"} {
		if !strings.Contains(body, want) {
			t.Errorf("job page lacks %q", want)
		}
	}
	res, body = e.get(c, page+"/models")
	if res.StatusCode != http.StatusOK {
		t.Fatalf("models page: %d", res.StatusCode)
	}
	for _, want := range []string{`<th scope="row">baseline</th>`, `<th scope="row">logistic</th>`, `<span class="tag">in use</span>`,
		"A top 10% list on the last test date: Of the", "Gains by decile", "recency_days", "roc.svg", "pr.svg"} {
		if !strings.Contains(body, want) {
			t.Errorf("models page lacks %q", want)
		}
	}
	_, tried := e.get(c, page+"/models?model=logistic&k=100&threshold=0.6&cost=2&value=40&save=0.2")
	for _, want := range []string{"The 100 highest-risk customers: on average 100 customers per date", "Everyone at or above 0.6:",
		"the best list is the top", "value.svg?model=logistic"} {
		if !strings.Contains(tried, want) {
			t.Errorf("try-a-list answers lack %q", want)
		}
	}
	if res, b := e.get(c, page+"/models?k=zero"); res.StatusCode != http.StatusOK || !strings.Contains(b, "whole number of customers") {
		t.Errorf("a bad list size: %d", res.StatusCode)
	}
	if res, csv := e.get(c, page+"/test-rows.csv"); res.StatusCode != http.StatusOK || !strings.HasPrefix(csv, "customer_id,snapshot_date,label,baseline,logistic,trees,bgnbd\n") {
		t.Errorf("test rows download: %d %.60q", res.StatusCode, csv)
	}
	if !strings.Contains(body, "The feature p_active_bgnbd uses BG/NBD fitted on orders through") {
		t.Error("the models page does not say how the BG/NBD feature was fitted")
	}
	if !strings.Contains(body, "Permutation importance") {
		t.Error("no permutation importance on the models page")
	}
	for _, chart := range []string{"roc.svg", "pr.svg", "roc.png", "value.svg?model=logistic&cost=2&value=40&save=0.2", "calibration-logistic.svg", "scores-baseline.svg"} {
		if res, _ := e.get(c, page+"/models/"+chart); res.StatusCode != http.StatusOK {
			t.Errorf("chart %s: %d", chart, res.StatusCode)
		}
	}
	models, _ := e.st.Models(context.Background(), d.ID)
	var baseline int64
	for _, m := range models {
		if m.Name == "baseline" {
			baseline = m.ID
		}
	}
	if res := e.post(c, "/models/"+itoa(baseline)+"/use", nil); res.StatusCode != http.StatusSeeOther {
		t.Fatalf("use baseline: %d", res.StatusCode)
	}
	models, _ = e.st.Models(context.Background(), d.ID)
	for _, m := range models {
		if m.InUse != (m.ID == baseline) {
			t.Errorf("model %s in use = %v after choosing the baseline", m.Name, m.InUse)
		}
	}
}
