package web

import (
	"context"
	"encoding/csv"
	"io"
	"net/http"
	"net/url"
	"strings"
	"testing"

	"ebb/internal/analysis"
	"ebb/internal/history"
	"ebb/internal/jobs"
	"ebb/internal/store"
)

// trainedEnv is the demo with a definition and a logistic model in use.
func trainedEnv(t *testing.T) (*testEnv, store.Dataset) {
	t.Helper()
	e := newEnv(t, true)
	ctx := context.Background()
	d, _ := e.st.DatasetByName(ctx, "demo")
	if _, err := analysis.SaveDefinition(ctx, e.st, d.ID, analysis.DefinitionInput{WindowDays: 90, Rationale: "a quarter"}, "test", testNow); err != nil {
		t.Fatal(err)
	}
	if _, _, err := analysis.Train(ctx, e.st, history.NewCache(1), d.ID, analysis.TrainOptions{Models: []string{"baseline", "logistic"}, Bootstrap: 10}, "test", testNow, nil); err != nil {
		t.Fatal(err)
	}
	return e, d
}

// An analyst drafts a list from the form; viewers do not see the draft
// until it is published; the exports are RFC 4180 and hold no
// non-contactable customer; published lists do not change.
func TestListDraftReviewPublish(t *testing.T) {
	e, d := trainedEnv(t)
	analyst, viewer := e.signIn("analyst"), e.signIn("viewer")
	form := url.Values{"mode": {"size"}, "size": {"300"}, "holdout": {"0.1"}, "high": {"0.7"}, "medium": {"0.4"}, "as_of": {""}}
	bad := url.Values{"mode": {"size"}, "size": {"0"}, "holdout": {"0.1"}, "high": {"0.7"}, "medium": {"0.4"}}
	if res, body := e.postBody(analyst, "/datasets/"+itoa(d.ID)+"/lists", bad); res.StatusCode != http.StatusUnprocessableEntity || !strings.Contains(body, "at least 1") {
		t.Errorf("size 0: %d", res.StatusCode)
	}
	res := e.post(analyst, "/datasets/"+itoa(d.ID)+"/lists", form)
	if res.StatusCode != http.StatusSeeOther {
		t.Fatalf("draft: %d", res.StatusCode)
	}
	j := e.waitJob(res.Header.Get("Location"))
	if j.Status != jobs.Done {
		t.Fatalf("score job: %s %s", j.Status, j.Error)
	}
	ls, err := e.st.Lists(context.Background(), d.ID, true)
	if err != nil || len(ls) != 1 || ls[0].Published {
		t.Fatalf("lists %v, %v", ls, err)
	}
	id := itoa(ls[0].ID)
	if _, body := e.get(analyst, "/jobs/"+itoa(j.ID)); !strings.Contains(body, `href="/lists/`+id+`"`) {
		t.Error("the job page does not link the list")
	}
	res, body := e.get(analyst, "/lists/"+id)
	if res.StatusCode != http.StatusOK {
		t.Fatalf("list page: %d", res.StatusCode)
	}
	for _, want := range []string{"300 selected", "may not be contacted and were removed first", "The holdout can detect a difference of", `id="publish"`, "Customers 1 to 100 of 300."} {
		if !strings.Contains(body, want) {
			t.Errorf("list page lacks %q", want)
		}
	}
	// A viewer sees neither the draft nor its files.
	for _, p := range []string{"/lists/" + id, "/lists/" + id + "/export.csv"} {
		if res, _ := e.get(viewer, p); res.StatusCode != http.StatusNotFound {
			t.Errorf("viewer GET %s: %d, want 404", p, res.StatusCode)
		}
	}
	if _, body := e.get(viewer, "/lists"); strings.Contains(body, `href="/lists/`+id+`"`) {
		t.Error("the lists page shows the draft to a viewer")
	}
	if res := e.post(viewer, "/lists/"+id+"/publish", nil); res.StatusCode != http.StatusForbidden {
		t.Errorf("viewer publish: %d", res.StatusCode)
	}
	if res := e.post(analyst, "/lists/"+id+"/publish", nil); res.StatusCode != http.StatusSeeOther {
		t.Fatalf("publish: %d", res.StatusCode)
	}
	if res, _ := e.postBody(analyst, "/lists/"+id+"/publish", nil); res.StatusCode != http.StatusConflict {
		t.Errorf("publishing again: %d, want 409", res.StatusCode)
	}
	if res, _ := e.postBody(analyst, "/lists/"+id+"/discard", nil); res.StatusCode != http.StatusConflict {
		t.Errorf("discarding a published list: %d, want 409", res.StatusCode)
	}

	// The viewer now reads it, searches and filters.
	res, body = e.get(viewer, "/lists/"+id+"?status=contact&band=&sort=key")
	if res.StatusCode != http.StatusOK || strings.Contains(body, `id="publish"`) {
		t.Fatalf("viewer list page: %d", res.StatusCode)
	}
	key := between(body, "<td>C", "<")
	if key == "" {
		t.Fatal("no customer key on the page")
	}
	_, body = e.get(viewer, "/lists/"+id+"?status=all&q=c"+key)
	if !strings.Contains(body, "Customers 1 to 1 of 1.") || !strings.Contains(body, "<td>C"+key+"</td>") {
		t.Errorf("search by key (any case) did not find C%s", key)
	}
	_, body = e.get(viewer, "/lists/"+id+"?status=selected&attr=region&value=nowhere")
	if !strings.Contains(body, "No customer matches.") {
		t.Error("an attribute filter with no match shows rows")
	}

	// Exports: CSV with an attribute column, the holdout, JSON.
	res, body = e.get(viewer, "/lists/"+id+"/export.csv?attr=region")
	if res.StatusCode != http.StatusOK || !strings.HasPrefix(res.Header.Get("Content-Type"), "text/csv") || !strings.Contains(res.Header.Get("Content-Disposition"), "attachment") {
		t.Fatalf("export: %d %v", res.StatusCode, res.Header)
	}
	recs, err := csv.NewReader(strings.NewReader(body)).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if strings.Join(recs[0], ",") != "customer_id,email,probability,band,reasons,list_date,region" {
		t.Errorf("header %v", recs[0])
	}
	contactable := map[string]bool{}
	for _, c := range e.business.Customers {
		contactable[c.Key] = c.Contactable
	}
	_, hbody := e.get(viewer, "/lists/"+id+"/holdout.csv")
	hrecs, err := csv.NewReader(strings.NewReader(hbody)).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(recs)-1+len(hrecs)-1 != 300 || len(hrecs) < 2 {
		t.Errorf("%d to contact and %d held out, want 300 together", len(recs)-1, len(hrecs)-1)
	}
	held := map[string]bool{}
	for _, r := range hrecs[1:] {
		held[r[0]] = true
	}
	for _, r := range recs[1:] {
		if !contactable[r[0]] || held[r[0]] || r[6] == "" {
			t.Fatalf("exported row %v: contactable %v, held out %v", r, contactable[r[0]], held[r[0]])
		}
	}
	if res, body := e.get(viewer, "/lists/"+id+"/export.json"); res.StatusCode != http.StatusOK || !strings.HasPrefix(body, `{"list_date":`) {
		t.Errorf("json export: %d %.40s", res.StatusCode, body)
	}
	if res, _ := e.get(viewer, "/lists/"+id+"/export.csv?attr=shoe_size"); res.StatusCode != http.StatusUnprocessableEntity {
		t.Errorf("unknown attribute: %d", res.StatusCode)
	}
	if res, _ := e.get(viewer, "/lists/"+id+"/../../etc/passwd"); res.StatusCode != http.StatusNotFound {
		t.Errorf("a path outside the downloads: %d", res.StatusCode)
	}
}

// API tokens reach only their own dataset's latest published list; a
// revoked token is refused at once; drafts are never served.
func TestAPITokens(t *testing.T) {
	e, d := trainedEnv(t)
	ctx := context.Background()
	admin, analyst := e.signIn("admin"), e.signIn("analyst")
	res, body := e.postBody(admin, "/admin/tokens", url.Values{"name": {"mailer"}, "dataset": {itoa(d.ID)}})
	if res.StatusCode != http.StatusOK {
		t.Fatalf("create token: %d", res.StatusCode)
	}
	token := between(body, `<code id="token-value">`, "<")
	if !strings.HasPrefix(token, "ebb_") || !strings.Contains(body, "curl -fsS -H &#39;Authorization: Bearer "+token) {
		t.Fatalf("token %q not shown with its example", token)
	}
	if _, body := e.get(admin, "/admin/tokens"); strings.Contains(body, token) {
		t.Fatal("the tokens page shows a token again")
	}
	api := func(tok, dataset string) (int, string) {
		t.Helper()
		req, _ := http.NewRequest(http.MethodGet, e.srv.URL+"/api/v1/datasets/"+dataset+"/lists/latest.csv", nil)
		if tok != "" {
			req.Header.Set("Authorization", "Bearer "+tok)
		}
		res, err := http.DefaultClient.Do(req)
		if err != nil {
			t.Fatal(err)
		}
		defer res.Body.Close()
		var b strings.Builder
		if _, err := io.Copy(&b, res.Body); err != nil {
			t.Fatal(err)
		}
		return res.StatusCode, b.String()
	}
	if code, _ := api("", "demo"); code != http.StatusUnauthorized {
		t.Errorf("no token: %d", code)
	}
	if code, _ := api("ebb_wrong", "demo"); code != http.StatusForbidden {
		t.Errorf("unknown token: %d", code)
	}
	if code, body := api(token, "demo"); code != http.StatusNotFound || !strings.Contains(body, "no list") {
		t.Errorf("before any published list: %d %s", code, body)
	}
	// A draft is not served.
	res = e.post(analyst, "/datasets/"+itoa(d.ID)+"/lists", url.Values{"mode": {"threshold"}, "threshold": {"0.5"}, "holdout": {"0.1"}, "high": {"0.7"}, "medium": {"0.4"}})
	if j := e.waitJob(res.Header.Get("Location")); j.Status != jobs.Done {
		t.Fatalf("score job: %s", j.Error)
	}
	if code, _ := api(token, "demo"); code != http.StatusNotFound {
		t.Errorf("a draft through the API: %d, want 404", code)
	}
	ls, _ := e.st.Lists(ctx, d.ID, true)
	if err := e.st.PublishList(ctx, ls[0].ID, "test", testNow); err != nil {
		t.Fatal(err)
	}
	code, body := api(token, "demo")
	if code != http.StatusOK || !strings.HasPrefix(body, "customer_id,email,probability,band,reasons,list_date\r\n") {
		t.Fatalf("latest list: %d %.80q", code, body)
	}
	// A token of another dataset is refused here.
	other := e.importSmall(t, "other")
	otherTok, _, err := e.tokens.Create(ctx, other, "other tool", "test")
	if err != nil {
		t.Fatal(err)
	}
	if code, _ := api(otherTok, "demo"); code != http.StatusForbidden {
		t.Errorf("another dataset's token: %d", code)
	}
	if code, _ := api(token, "other"); code != http.StatusForbidden {
		t.Errorf("this token on another dataset: %d", code)
	}
	// Revoked: refused at once.
	ts, _ := e.tokens.Store.Tokens(ctx)
	for _, tk := range ts {
		if tk.Name == "mailer" {
			if res := e.post(admin, "/admin/tokens/"+itoa(tk.ID)+"/revoke", nil); res.StatusCode != http.StatusSeeOther {
				t.Fatalf("revoke: %d", res.StatusCode)
			}
		}
	}
	if code, body := api(token, "demo"); code != http.StatusForbidden || !strings.Contains(body, "revoked") {
		t.Errorf("revoked token: %d %s", code, body)
	}
	if res := e.post(analyst, "/admin/tokens", url.Values{"name": {"x"}, "dataset": {itoa(d.ID)}}); res.StatusCode != http.StatusForbidden {
		t.Errorf("an analyst creating a token: %d", res.StatusCode)
	}
}

// importSmall imports a two-order dataset and returns its id.
func (e *testEnv) importSmall(t *testing.T, name string) int64 {
	t.Helper()
	res, err := analysis.Import(context.Background(), e.st, analysis.ImportRequest{Dataset: name,
		Orders: analysis.Source{Name: "o.csv", R: strings.NewReader("customer_id,order_date\nA,2024-01-01\nB,2024-02-01\n")}, Now: testNow})
	if err != nil {
		t.Fatal(err)
	}
	return res.Import.DatasetID
}
