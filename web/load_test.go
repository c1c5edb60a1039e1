package web

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"net/http"
	"net/url"
	"slices"
	"strings"
	"sync"
	"testing"
	"time"

	"ebb/demo"
	"ebb/internal/analysis"
	"ebb/internal/jobs"
)

// TestConcurrentImportsTrainingAndReaders runs, at once on one store: an
// import through the upload flow (a job), a second import straight through
// analysis.Import, a training job and 50 readers loading pages over
// loopback. Every page must load (200), and neither a response nor a log
// line may say "database is locked": writes funnel through one connection
// and readers use their own pool (DEVELOPERS.md, Storage).
func TestConcurrentImportsTrainingAndReaders(t *testing.T) {
	if testing.Short() {
		t.Skip("load test")
	}
	e := newEnv(t, true)
	ctx := context.Background()
	d, err := e.st.DatasetByName(ctx, "demo")
	if err != nil {
		t.Fatal(err)
	}
	if _, err := analysis.SaveDefinition(ctx, e.st, d.ID, analysis.DefinitionInput{WindowDays: 90, Rationale: "a quarter"}, "test", testNow); err != nil {
		t.Fatal(err)
	}
	var orders bytes.Buffer
	e.business.WriteOrders(&orders)
	analyst := e.signIn("analyst")

	// The upload flow's import: upload, map, queue.
	res := e.upload(analyst, map[string]string{"orders": orders.String()}, nil)
	if res.StatusCode != http.StatusSeeOther {
		t.Fatalf("upload: %d", res.StatusCode)
	}
	mapping := url.Values{"customer": {"customer_id"}, "date": {"order_date"}, "amount": {"amount"}, "ref": {"order_id"}, "dates": {"iso"},
		"target": {"new"}, "name": {"uploaded"}, "timezone": {"UTC"}, "policy": {"reject"}}
	res = e.post(analyst, res.Header.Get("Location")+"/import", mapping)
	if res.StatusCode != http.StatusSeeOther {
		t.Fatalf("import form: %d", res.StatusCode)
	}
	importJob := res.Header.Get("Location")
	train, _ := json.Marshal(analysis.TrainParams{DatasetID: d.ID, Options: analysis.TrainOptions{Models: []string{"baseline", "logistic"}, Bootstrap: 10}})
	trainJob, err := e.runner.Submit(ctx, analysis.KindTrain, d.ID, train, "test")
	if err != nil {
		t.Fatal(err)
	}

	pages := []string{"/", "/lists", "/datasets", "/datasets/" + itoa(d.ID), "/datasets/" + itoa(d.ID) + "/window",
		"/datasets/" + itoa(d.ID) + "/models", "/jobs", "/account", "/datasets/" + itoa(d.ID) + "/orders-per-month.svg"}
	readers := make([]*http.Client, 50)
	for i := range readers {
		readers[i] = e.signIn("analyst")
	}
	stop := make(chan struct{})
	var wg sync.WaitGroup
	var mu sync.Mutex
	var failures []string
	loads := 0
	for i, c := range readers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for n := 0; ; n++ {
				select {
				case <-stop:
					return
				default:
				}
				p := pages[(i+n)%len(pages)]
				res, err := c.Get(e.srv.URL + p)
				var body []byte
				if err == nil {
					body, err = io.ReadAll(res.Body)
					res.Body.Close()
				}
				mu.Lock()
				loads++
				switch {
				case err != nil:
					failures = append(failures, fmt.Sprintf("GET %s: %v", p, err))
				case res.StatusCode != http.StatusOK:
					failures = append(failures, fmt.Sprintf("GET %s: status %d", p, res.StatusCode))
				case bytes.Contains(body, []byte("database is locked")):
					failures = append(failures, fmt.Sprintf("GET %s: the page says the database is locked", p))
				}
				mu.Unlock()
			}
		}()
	}

	// The direct import runs beside the jobs and the readers.
	direct := demo.Generate(demo.Options{})
	var directOrders bytes.Buffer
	direct.WriteOrders(&directOrders)
	imp, err := analysis.Import(ctx, e.st, analysis.ImportRequest{Dataset: "direct", Orders: analysis.Source{Name: "orders.csv", R: &directOrders}, Now: testNow})
	if err != nil {
		t.Errorf("direct import: %v", err)
	}
	waitCtx, cancel := context.WithTimeout(ctx, 60*time.Second)
	defer cancel()
	jobsDone := map[string]jobs.Job{}
	for what, id := range map[string]int64{"import": jobIDOf(t, importJob), "train": trainJob} {
		j, err := e.runner.Wait(waitCtx, id)
		if err != nil {
			t.Fatalf("wait for the %s job: %v", what, err)
		}
		jobsDone[what] = j
	}
	close(stop)
	wg.Wait()

	for what, j := range jobsDone {
		if j.Status != jobs.Done {
			t.Errorf("%s job: %s %s", what, j.Status, j.Error)
		}
	}
	// Both imports hold every demo order.
	want := len(e.business.Orders)
	if imp != nil && imp.Orders.Accepted != want {
		t.Errorf("direct import added %d orders, want %d", imp.Orders.Accepted, want)
	}
	for _, name := range []string{"uploaded", "direct"} {
		ds, err := e.st.DatasetByName(ctx, name)
		if err != nil {
			t.Errorf("dataset %s: %v", name, err)
			continue
		}
		vs, err := e.st.Versions(ctx, ds.ID)
		if err != nil || len(vs) != 1 {
			t.Errorf("dataset %s versions %v, %v", name, vs, err)
			continue
		}
		st, err := e.st.VersionStats(ctx, vs[0].ID)
		if err != nil || st.Orders != want {
			t.Errorf("dataset %s holds %d orders (%v), want %d", name, st.Orders, err, want)
		}
	}
	if loads < len(readers) {
		t.Errorf("only %d page loads ran", loads)
	}
	if len(failures) > 0 {
		slices.Sort(failures)
		t.Errorf("%d of %d page loads failed, e.g. %s", len(failures), loads, strings.Join(failures[:min(5, len(failures))], "; "))
	}
	if strings.Contains(e.logs.String(), "database is locked") {
		t.Error("the log says the database is locked")
	}
	t.Logf("%d page loads by %d readers during two imports and a training run", loads, len(readers))
}

// jobIDOf reads the id from a /jobs/N location.
func jobIDOf(t *testing.T, loc string) int64 {
	t.Helper()
	var id int64
	if _, err := fmt.Sscanf(loc, "/jobs/%d", &id); err != nil {
		t.Fatalf("job location %q: %v", loc, err)
	}
	return id
}
