package web

import (
	"bytes"
	"context"
	"io"
	"mime/multipart"
	"net/http"
	"net/url"
	"strings"
	"testing"
	"time"

	"ebb/internal/jobs"
)

// upload posts files as the upload form does and returns the response.
func (e *testEnv) upload(c *http.Client, files map[string]string, fields map[string]string) *http.Response {
	e.t.Helper()
	var body bytes.Buffer
	mw := multipart.NewWriter(&body)
	for k, v := range fields {
		mw.WriteField(k, v)
	}
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
	io.Copy(io.Discard, res.Body)
	res.Body.Close()
	return res
}

// waitJob waits for the job at a /jobs/N location to finish.
func (e *testEnv) waitJob(loc string) jobs.Job {
	e.t.Helper()
	var id int64
	for _, c := range strings.TrimPrefix(loc, "/jobs/") {
		id = id*10 + int64(c-'0')
	}
	ctx, cancel := context.WithTimeout(context.Background(), 120*time.Second)
	defer cancel()
	j, err := e.runner.Wait(ctx, id)
	if err != nil {
		e.t.Fatalf("wait for job %d: %v", id, err)
	}
	return j
}

func TestUploadAmbiguousDatesNeedAChoice(t *testing.T) {
	e := newEnv(t, false)
	c := e.signIn("analyst")
	res := e.upload(c, map[string]string{"orders": "client,date,total\nA,03/04/2024,10\nB,04/05/2024,12\nA,01/06/2024,9\n"}, nil)
	if res.StatusCode != http.StatusSeeOther || !strings.HasPrefix(res.Header.Get("Location"), "/uploads/") {
		t.Fatalf("upload: %d %s", res.StatusCode, res.Header.Get("Location"))
	}
	mapping := res.Header.Get("Location")
	_, body := e.get(c, mapping)
	for _, want := range []string{`id="ambiguous-dates"`, "<th scope=\"col\">client</th>", `<option value="client" selected>`, `<option value="total" selected>`, "comma"} {
		if !strings.Contains(body, want) {
			t.Errorf("mapping page lacks %q", want)
		}
	}
	form := url.Values{"customer": {"client"}, "date": {"date"}, "amount": {"total"}, "ref": {""}, "target": {"new"},
		"name": {"slashes"}, "timezone": {"UTC"}, "policy": {"reject"}}
	// No date choice: the form comes back asking for one.
	res, body = e.postBody(c, mapping+"/import", form)
	if res.StatusCode != http.StatusUnprocessableEntity || !strings.Contains(body, "these dates read both ways") {
		t.Fatalf("import without a date choice: %d", res.StatusCode)
	}
	form.Set("dates", "day-first")
	res = e.post(c, mapping+"/import", form)
	if res.StatusCode != http.StatusSeeOther {
		t.Fatalf("import: %d", res.StatusCode)
	}
	j := e.waitJob(res.Header.Get("Location"))
	if j.Status != jobs.Done {
		t.Fatalf("job %s: %s", j.Status, j.Error)
	}
	d, err := e.st.DatasetByName(context.Background(), "slashes")
	if err != nil {
		t.Fatal(err)
	}
	// Day first: 03/04/2024 is 3 April, 01/06/2024 is 1 June.
	if d.FirstDay.String() != "2024-04-03" || d.LastDay.String() != "2024-06-01" || d.Orders != 3 {
		t.Errorf("dataset = %d orders %s to %s, want 3 from 2024-04-03 to 2024-06-01", d.Orders, d.FirstDay, d.LastDay)
	}
}

func TestUploadRejectThenSkipWithReport(t *testing.T) {
	e := newEnv(t, false)
	c := e.signIn("analyst")
	res := e.upload(c, map[string]string{
		"orders":    "customer_id,order_date,amount,order_id\nA,2024-01-01,5,R1\nB,2024-01-02,x,R2\nC,2024-01-03,7,R3\n",
		"customers": "customer_id,email,signup_date,contactable\nA,a@example.com,,true\nC,,,false\n",
	}, nil)
	mapping := res.Header.Get("Location")
	form := url.Values{"customer": {"customer_id"}, "date": {"order_date"}, "amount": {"amount"}, "ref": {"order_id"},
		"dates": {"iso"}, "target": {"new"}, "name": {"shop"}, "timezone": {"UTC"}, "policy": {"reject"}}
	res = e.post(c, mapping+"/import", form)
	j := e.waitJob(res.Header.Get("Location"))
	if j.Status != jobs.Failed || j.Error != "orders.csv was not imported: 1 problem" {
		t.Fatalf("job = %s %q", j.Status, j.Error)
	}
	_, body := e.get(c, res.Header.Get("Location"))
	for _, want := range []string{"orders.csv:3:3", `&#34;x&#34; is not a number`, "problems.csv", "policy=skip"} {
		if !strings.Contains(body, want) {
			t.Errorf("job page lacks %q", want)
		}
	}
	if _, err := e.st.DatasetByName(context.Background(), "shop"); err == nil {
		t.Error("a rejected import created the dataset")
	}
	rep, report := e.get(c, mapping+"/problems.csv")
	if rep.Header.Get("Content-Type") != "text/csv; charset=utf-8" ||
		report != "file,line,column_number,column,problem\norders.csv,3,3,amount,\"\"\"x\"\" is not a number (want e.g. 12.50, without a currency sign)\"\n" {
		t.Errorf("report = %s\n%s", rep.Header.Get("Content-Type"), report)
	}
	form.Set("policy", "skip")
	res = e.post(c, mapping+"/import", form)
	j = e.waitJob(res.Header.Get("Location"))
	if j.Status != jobs.Done {
		t.Fatalf("skip job = %s %q", j.Status, j.Error)
	}
	_, body = e.get(c, res.Header.Get("Location"))
	for _, want := range []string{"2 orders imported into dataset &#34;shop&#34; as version 1.", "1 rows with problems were left out", "2 customers, 1 of them not contactable"} {
		if !strings.Contains(body, want) {
			t.Errorf("skip job page lacks %q", want)
		}
	}
	// Append more orders to the dataset through the same flow.
	res = e.upload(c, map[string]string{"orders": "customer_id,order_date,amount,order_id\nA,2024-01-01,5,R1\nD,2024-02-01,4,R4\n"}, map[string]string{"append": "shop"})
	mapping = res.Header.Get("Location")
	if !strings.Contains(mapping, "append=shop") {
		t.Errorf("append upload went to %s", mapping)
	}
	form.Set("target", "append")
	form.Set("dataset", "shop")
	form.Set("policy", "reject")
	res = e.post(c, strings.Split(mapping, "?")[0]+"/import", form)
	if j := e.waitJob(res.Header.Get("Location")); j.Status != jobs.Done {
		t.Fatalf("append job = %s %q", j.Status, j.Error)
	}
	d, _ := e.st.DatasetByName(context.Background(), "shop")
	if d.Orders != 3 || d.Seq != 2 {
		t.Errorf("after append: %d orders, version %d; want 3 and 2 (R1 already stored)", d.Orders, d.Seq)
	}
}

func TestUploadLimits(t *testing.T) {
	e := newEnv(t, false)
	c := e.signIn("analyst")
	big := "customer_id,order_date\n" + strings.Repeat("A,2024-01-01\n", (9<<20)/13)
	res := e.upload(c, map[string]string{"orders": big}, nil)
	if res.StatusCode != http.StatusRequestEntityTooLarge {
		t.Errorf("upload over the limit: %d, want 413", res.StatusCode)
	}
	res = e.upload(c, map[string]string{"customers": "customer_id,email,signup_date,contactable\n"}, nil)
	if res.StatusCode != http.StatusUnprocessableEntity {
		t.Errorf("upload without an order file: %d, want 422", res.StatusCode)
	}
}

func TestDatasetPageAndDataThrough(t *testing.T) {
	e := newEnv(t, true)
	c := e.signIn("analyst")
	d, _ := e.st.DatasetByName(context.Background(), "demo")
	path := "/datasets/" + itoa(d.ID)
	res, body := e.get(c, path)
	if res.StatusCode != http.StatusOK {
		t.Fatalf("dataset page: %d", res.StatusCode)
	}
	for _, want := range []string{"19\u202f352", "orders-per-month.svg", "<th scope=\"row\">2023-11</th>", `id="data-through">2026-10-31`} {
		if !strings.Contains(body, want) {
			t.Errorf("dataset page lacks %q", want)
		}
	}
	if res, _ := e.postBody(c, path+"/data-through", url.Values{"data_through": {"31/10/2026"}}); res.StatusCode != http.StatusUnprocessableEntity {
		t.Errorf("bad date: %d, want 422", res.StatusCode)
	}
	if res := e.post(c, path+"/data-through", url.Values{"data_through": {"2026-10-24"}}); res.StatusCode != http.StatusSeeOther {
		t.Fatalf("set data through: %d", res.StatusCode)
	}
	_, body = e.get(c, path)
	if !strings.Contains(body, `id="data-through">2026-10-24`) || !strings.Contains(body, "Data through is now 2026-10-24.") {
		t.Error("the new data-through date or its confirmation is missing")
	}
	svg, chart := e.get(c, path+"/orders-per-month.svg")
	if svg.Header.Get("Content-Type") != "image/svg+xml" || !strings.Contains(chart, "<svg") || strings.Contains(chart, "<script") {
		t.Errorf("chart: %s", svg.Header.Get("Content-Type"))
	}
	png, _ := e.get(c, path+"/orders-per-month.png")
	if png.Header.Get("Content-Type") != "image/png" {
		t.Errorf("png chart: %s", png.Header.Get("Content-Type"))
	}
}
