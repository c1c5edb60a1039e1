package web

import (
	"encoding/json"
	"html"
	"math"
	"net/http"
	"net/http/httptest"
	"net/url"
	"slices"
	"strconv"
	"strings"
	"testing"
	"unicode/utf8"

	"ebb/internal/problem"
)

// maxFuzzInput bounds every fuzzed form or query, so a target measures the
// parser and not the size of its input (a browser form is far smaller).
const maxFuzzInput = 4096

// answerMessage returns the sentence a page shows for a refused request:
// a form's alert, or the error page's message.
func answerMessage(body string) string {
	if _, rest, ok := strings.Cut(body, `role="alert">`); ok {
		msg, _, _ := strings.Cut(rest, "</p>")
		return strings.TrimSpace(html.UnescapeString(msg))
	}
	if _, rest, ok := strings.Cut(body, `<div class="panel"><p>`); ok {
		msg, _, _ := strings.Cut(rest, "</p>")
		return strings.TrimSpace(html.UnescapeString(msg))
	}
	return ""
}

// checkAnswer fails unless the response has one of the allowed statuses,
// the server logged no failed request while answering it, and a refusal
// (4xx) carries a message of at least a few words.
func checkAnswer(t *testing.T, r *rig, logFrom int, rec *httptest.ResponseRecorder, what string, allowed ...int) {
	t.Helper()
	if logs := r.logs.String(); strings.Contains(logs[logFrom:], "request failed") {
		t.Fatalf("%s: the server logged a failure: %s", what, logs[logFrom:])
	}
	if !slices.Contains(allowed, rec.Code) {
		t.Fatalf("%s: status %d, want one of %v; body %.300q", what, rec.Code, allowed, rec.Body.String())
	}
	if rec.Code >= 400 {
		if msg := answerMessage(rec.Body.String()); len(strings.Fields(msg)) < 3 {
			t.Fatalf("%s: status %d without a clear message (got %q)", what, rec.Code, msg)
		}
	}
}

// finite reports whether every x is a number other than ±Inf and NaN.
func finite(xs ...float64) bool {
	for _, x := range xs {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return false
		}
	}
	return true
}

// formRequest is a POST carrying body as a form.
func formRequest(body string) *http.Request {
	req := httptest.NewRequest(http.MethodPost, "/", strings.NewReader(body))
	req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
	return req
}

// FuzzListFilter fuzzes the list page's query string (q, band, status,
// attr, value, sort, from): whatever the query, the page renders (200) and
// says which customers it shows.
func FuzzListFilter(f *testing.F) {
	for _, s := range []string{
		"", "q=C00042", "band=high&status=all&sort=key", "status=holdout&from=100", "from=-5", "from=9223372036854775807",
		"attr=plan&value=monthly", "attr=%22)%20OR%201%3D1--&value=x", "q='%20OR%201%3D1%20--", "band=medium&band=low", "%zz=1&q=%",
	} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, query string) {
		if len(query) > maxFuzzInput {
			return
		}
		r := sharedRig(t)
		from := len(r.logs.String())
		rec := r.serve("viewer", http.MethodGet, "/lists/"+itoa(r.listID)+"?"+url.PathEscape(query), nil)
		checkAnswer(t, r, from, rec, "list page ?"+query, http.StatusOK)
		if b := rec.Body.String(); !strings.Contains(b, "No customer matches.") && !strings.Contains(b, "Customers ") {
			t.Fatalf("list page ?%s does not say which customers it shows", query)
		}
	})
}

// FuzzParseListForm fuzzes the draft-a-list form: parseListForm either
// returns an Invalid problem with a message or a request within the form's
// documented ranges, and the handler answers 303 or 422, never 500.
func FuzzParseListForm(f *testing.F) {
	for _, s := range []string{
		"mode=size&size=300&holdout=0.1&high=0.7&medium=0.4",
		"mode=threshold&threshold=0.5&holdout=0.5&high=0.7&medium=0.4&as_of=2026-11-01",
		"mode=value&cost=2&value=40&save=0.2&holdout=0&high=0.9&medium=0.1",
		"mode=size&size=0&holdout=0.1&high=0.7&medium=0.4",
		"mode=value&cost=Inf&value=-1&save=2&holdout=0.1&high=0.4&medium=0.7",
		"mode=size&size=1&holdout=0.1&high=0.7&medium=0.4&as_of=2026-02-30",
		"mode=size&size=99999999999999999999&holdout=1e-320&high=1&medium=0",
		"mode=", "",
	} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, body string) {
		if len(body) > maxFuzzInput {
			return
		}
		req, err := parseListForm(formRequest(body))
		if err != nil {
			p := problem.As(err)
			if p == nil || p.Kind != problem.Invalid || len(strings.Fields(p.Message)) < 3 {
				t.Fatalf("parseListForm(%q) error %v is not an Invalid problem with a message", body, err)
			}
		} else {
			rule := req.Rule
			switch {
			case !finite(rule.Threshold, rule.Value.CostPerContact, rule.Value.KeptValue, rule.Value.SaveRate, req.Bands.High, req.Bands.Medium) ||
				req.Holdout != nil && !finite(*req.Holdout):
				t.Fatalf("parseListForm(%q) accepted a number that is not finite: %+v, holdout %v", body, req, *req.Holdout)
			case rule.UseThreshold && (rule.Threshold < 0 || rule.Threshold > 1):
				t.Fatalf("parseListForm(%q) threshold %v outside [0,1]", body, rule.Threshold)
			case rule.BestValue && (rule.Value.SaveRate < 0 || rule.Value.SaveRate > 1 || rule.Value.CostPerContact < 0 || rule.Value.KeptValue < 0):
				t.Fatalf("parseListForm(%q) value %+v out of range", body, rule.Value)
			case !rule.UseThreshold && !rule.BestValue && rule.Size < 1:
				t.Fatalf("parseListForm(%q) size %d", body, rule.Size)
			case req.Holdout == nil || *req.Holdout < 0 || *req.Holdout > 0.5:
				t.Fatalf("parseListForm(%q) holdout %v", body, req.Holdout)
			case req.Bands.Validate() != nil:
				t.Fatalf("parseListForm(%q) accepted invalid bands %+v", body, req.Bands)
			}
		}
		r := sharedRig(t)
		from := len(r.logs.String())
		rec := r.serve("analyst", http.MethodPost, "/datasets/"+itoa(r.dataset.ID)+"/lists", strings.NewReader(body))
		want := http.StatusUnprocessableEntity
		if err == nil {
			want = http.StatusSeeOther
		}
		checkAnswer(t, r, from, rec, "draft form "+body, want)
	})
}

// FuzzParseScheduleForm fuzzes the weekly schedule form: a rejection is an
// Invalid problem with a message, an acceptance has a weekday 0–6, a time
// HH:MM and a holdout within 0–0.5, and the handler answers 303 or 422.
func FuzzParseScheduleForm(f *testing.F) {
	for _, s := range []string{
		"weekday=1&at=07:30&mode=size&size=500&holdout=0.1&publish=on&enabled=on",
		"weekday=0&at=23:59&mode=threshold&threshold=0.6&holdout=0.5",
		"weekday=7&at=07:30&mode=size&size=500&holdout=0.1",
		"weekday=1&at=7:5&mode=size&size=500&holdout=0.1",
		"weekday=1&at=24:00&mode=size&size=500&holdout=0.1",
		"weekday=1&at=%2B1:%2B5&mode=size&size=1&holdout=0",
		"weekday=1&at=07:30';%20DROP%20TABLE%20schedules;--&mode=size&size=1&holdout=0",
		"weekday=-0&at=-0:00&mode=threshold&threshold=-0&holdout=-0",
		"",
	} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, body string) {
		if len(body) > maxFuzzInput {
			return
		}
		sc, err := parseScheduleForm(formRequest(body))
		if err != nil {
			p := problem.As(err)
			if p == nil || p.Kind != problem.Invalid || len(strings.Fields(p.Message)) < 3 {
				t.Fatalf("parseScheduleForm(%q) error %v is not an Invalid problem with a message", body, err)
			}
		} else {
			h, m, ok := strings.Cut(sc.At, ":")
			hh, err1 := strconv.Atoi(h)
			mm, err2 := strconv.Atoi(m)
			if !ok || len(h) != 2 || len(m) != 2 || err1 != nil || err2 != nil || hh > 23 || mm > 59 || hh < 0 || mm < 0 {
				t.Fatalf("parseScheduleForm(%q) time %q is not HH:MM", body, sc.At)
			}
			if !json.Valid(sc.Rule) {
				t.Fatalf("parseScheduleForm(%q) rule %q is not JSON", body, sc.Rule)
			}
			if sc.Weekday < 0 || sc.Weekday > 6 {
				t.Fatalf("parseScheduleForm(%q) weekday %d", body, sc.Weekday)
			}
		}
		r := sharedRig(t)
		from := len(r.logs.String())
		rec := r.serve("analyst", http.MethodPost, "/datasets/"+itoa(r.dataset.ID)+"/schedule", strings.NewReader(body))
		want := http.StatusUnprocessableEntity
		if err == nil {
			want = http.StatusSeeOther
		}
		checkAnswer(t, r, from, rec, "schedule form "+body, want)
	})
}

// FuzzWindowForms fuzzes the churn-window page's two forms (derive: the
// percentile, look-back and split; save: X, H, method, rationale, run):
// each answers 303, or 422 with the form's message, or 409 with a
// sentence; never 500.
func FuzzWindowForms(f *testing.F) {
	for _, s := range [][2]string{
		{"percentile=90&lookback=365&split=", "days=90&horizon=&method=percentile&rationale=a+quarter&run=0"},
		{"percentile=0&lookback=0", "days=x&horizon=30"},
		{"percentile=100.0000001&lookback=3651", "days=90&horizon=y"},
		{"percentile=NaN&lookback=1e3", "days=-1&horizon=-1&run=-9"},
		{"percentile=50&lookback=30&split=plan%27%3B--", "days=99999999999&horizon=0&method=%00&rationale=%22%3E%3Cscript%3E"},
		{"", ""},
	} {
		f.Add(s[0], s[1])
	}
	f.Fuzz(func(t *testing.T, derive, save string) {
		if len(derive) > maxFuzzInput || len(save) > maxFuzzInput {
			return
		}
		r := sharedRig(t)
		base := "/datasets/" + itoa(r.dataset.ID)
		from := len(r.logs.String())
		rec := r.serve("analyst", http.MethodPost, base+"/window", strings.NewReader(derive))
		checkAnswer(t, r, from, rec, "derive form "+derive, http.StatusSeeOther, http.StatusUnprocessableEntity)
		if rec.Code == http.StatusSeeOther {
			// The queued job must get the options the form accepted.
			var p struct {
				DatasetID int64 `json:"dataset_id"`
			}
			if body := r.jobs.last(); json.Unmarshal(body, &p) != nil || p.DatasetID != r.dataset.ID {
				t.Fatalf("derive form %q queued a job with parameters %q", derive, body)
			}
		}
		from = len(r.logs.String())
		rec = r.serve("analyst", http.MethodPost, base+"/definitions", strings.NewReader(save))
		checkAnswer(t, r, from, rec, "definition form "+save, http.StatusSeeOther, http.StatusUnprocessableEntity, http.StatusConflict)
	})
}

// FuzzMappingForm fuzzes the upload's mapping form (columns, date style
// and layout, target, dataset name, time zone, policy): it queues an
// import (303) or re-renders the form with a message (422).
func FuzzMappingForm(f *testing.F) {
	for _, s := range []string{
		"customer=customer_id&date=order_date&amount=amount&ref=order_id&dates=day-first&target=new&name=shop&timezone=UTC&policy=reject",
		"customer=customer_id&date=order_date&dates=layout&layout=DD%2FMM%2FYYYY&target=new&name=x&timezone=Europe%2FBerlin&policy=skip",
		"customer=customer_id&date=order_date&dates=layout&layout=&target=new&name=x&policy=skip",
		"customer=customer_id&date=order_date&dates=month-first&target=append&dataset=demo&policy=reject",
		"customer=customer_id&date=order_date&dates=month-first&target=append&dataset=nope&policy=reject",
		"customer=nope&date=nope&dates=iso&target=new&name=%27%20OR%201%3D1%20--&timezone=..%2F..%2Fetc%2Fpasswd&policy=skip",
		"customer=1&date=2&dates=day-first&target=elsewhere&policy=maybe",
		"",
	} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, body string) {
		if len(body) > maxFuzzInput {
			return
		}
		r := sharedRig(t)
		from := len(r.logs.String())
		rec := r.serve("analyst", http.MethodPost, "/uploads/"+r.upload+"/import", strings.NewReader(body))
		checkAnswer(t, r, from, rec, "mapping form "+body, http.StatusSeeOther, http.StatusUnprocessableEntity)
	})
}

// FuzzTryForm fuzzes the models page's "try a list" questions (model, k,
// threshold, cost, value, save) and the value chart they link: the page
// renders (200) with the answers or the form's message, and parseTry's
// acceptances are within range.
func FuzzTryForm(f *testing.F) {
	for _, s := range []string{
		"", "model=logistic&k=200", "model=baseline&threshold=0.35&cost=1&value=50&save=0.3",
		"k=0", "k=99999999999999999999", "threshold=1.5", "cost=-1", "save=NaN", "model=nope&k=5",
		"k=9223372036854775807", "threshold=-0&k=1&cost=0&value=0&save=0",
	} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, query string) {
		if len(query) > maxFuzzInput {
			return
		}
		escaped := url.PathEscape(query)
		tf, err := parseTry(httptest.NewRequest(http.MethodGet, "/?"+escaped, nil), "logistic")
		if err != nil {
			if p := problem.As(err); p == nil || p.Kind != problem.Invalid {
				t.Fatalf("parseTry(%q) error %v is not an Invalid problem", query, err)
			}
		} else if tf.hasK && tf.k < 1 || tf.hasThreshold && (tf.threshold < 0 || tf.threshold > 1 || !finite(tf.threshold)) || tf.value.Check() != nil ||
			!finite(tf.value.CostPerContact, tf.value.KeptValue, tf.value.SaveRate) {
			t.Fatalf("parseTry(%q) accepted %+v", query, tf)
		}
		r := sharedRig(t)
		base := "/datasets/" + itoa(r.dataset.ID) + "/models"
		from := len(r.logs.String())
		rec := r.serve("analyst", http.MethodGet, base+"?"+escaped, nil)
		checkAnswer(t, r, from, rec, "models page ?"+query, http.StatusOK)
		if err != nil {
			msg, _ := problem.Message(err)
			if !strings.Contains(html.UnescapeString(rec.Body.String()), msg) {
				t.Fatalf("models page ?%s does not show %q", query, msg)
			}
		}
		from = len(r.logs.String())
		rec = r.serve("analyst", http.MethodGet, base+"/value.svg?"+escaped, nil)
		checkAnswer(t, r, from, rec, "value chart ?"+query, http.StatusOK, http.StatusNotFound, http.StatusUnprocessableEntity)
		if rec.Code == http.StatusOK && !utf8.Valid(rec.Body.Bytes()) {
			t.Fatalf("value chart ?%s is not UTF-8", query)
		}
	})
}
