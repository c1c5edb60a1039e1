package web

import (
	"context"
	"net/http"
	"net/url"
	"strings"
	"testing"
)

// An analyst saves a weekly schedule; mistakes come back as sentences next
// to the form, and the lists page shows the schedule in words.
func TestSchedulePage(t *testing.T) {
	e := newEnv(t, true)
	d, _ := e.st.DatasetByName(context.Background(), "demo")
	c := e.signIn("analyst")
	path := "/datasets/" + itoa(d.ID) + "/schedule"
	if res, body := e.get(c, path); res.StatusCode != http.StatusOK || !strings.Contains(body, "has no schedule yet") {
		t.Fatalf("schedule page: %d", res.StatusCode)
	}
	for _, tt := range []struct {
		name string
		form url.Values
		want string
	}{
		{"bad time", url.Values{"weekday": {"1"}, "at": {"25:00"}, "mode": {"size"}, "size": {"100"}, "holdout": {"0.1"}}, "not a time of day"},
		{"bad day", url.Values{"weekday": {"9"}, "at": {"06:00"}, "mode": {"size"}, "size": {"100"}, "holdout": {"0.1"}}, "day of the week"},
		{"holdout too big", url.Values{"weekday": {"1"}, "at": {"06:00"}, "mode": {"size"}, "size": {"100"}, "holdout": {"0.7"}}, "holdout share"},
		{"threshold NaN", url.Values{"weekday": {"1"}, "at": {"06:00"}, "mode": {"threshold"}, "threshold": {"NaN"}, "holdout": {"0.1"}}, "from 0 to 1"},
	} {
		if res, body := e.postBody(c, path, tt.form); res.StatusCode != http.StatusUnprocessableEntity || !strings.Contains(body, tt.want) {
			t.Errorf("%s: %d, want a sentence with %q", tt.name, res.StatusCode, tt.want)
		}
	}
	form := url.Values{"weekday": {"1"}, "at": {"6:30"}, "mode": {"threshold"}, "threshold": {"0.6"}, "holdout": {"0.1"}, "publish": {"1"}, "enabled": {"1"}}
	if res := e.post(c, path, form); res.StatusCode != http.StatusSeeOther {
		t.Fatalf("save: %d", res.StatusCode)
	}
	sc, err := e.st.ScheduleOf(context.Background(), d.ID)
	if err != nil || sc.At != "06:30" || !sc.Publish || !sc.Enabled || sc.Weekday != 1 {
		t.Fatalf("stored schedule %+v, %v", sc, err)
	}
	_, body := e.get(c, "/lists")
	if !strings.Contains(body, "Every Monday at 06:30 UTC, publishes a list of every customer with a probability of at least 60%.") {
		t.Error("the lists page does not describe the schedule")
	}
}
