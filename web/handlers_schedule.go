package web

import (
	"encoding/json"
	"net/http"
	"strconv"
	"strings"
	"time"

	"ebb/internal/analysis"
	"ebb/internal/lists"
	"ebb/internal/problem"
	"ebb/internal/store"
	"ebb/web/views"
)

func (s *Server) scheduleView(w http.ResponseWriter, r *http.Request, d store.Dataset) (views.ScheduleView, error) {
	v := views.ScheduleView{Chrome: s.chrome(w, r, "Weekly schedule · "+d.Name, "lists"), DatasetID: d.ID, Dataset: d.Name,
		At: "06:00", Mode: "size", Size: "500", Threshold: "0.5", Holdout: "0.1", Enabled: true}
	wd := time.Monday
	sc, err := s.store.ScheduleOf(r.Context(), d.ID)
	switch {
	case err == nil:
		var rule analysis.ScheduleRule
		json.Unmarshal(sc.Rule, &rule)
		v.Current, wd, v.At, v.Publish, v.Enabled = analysis.DescribeSchedule(sc), sc.Weekday, sc.At, sc.Publish, sc.Enabled
		v.Holdout = strconv.FormatFloat(rule.Holdout, 'f', -1, 64)
		if rule.Rule.UseThreshold {
			v.Mode, v.Threshold = "threshold", strconv.FormatFloat(rule.Rule.Threshold, 'f', -1, 64)
		} else {
			v.Size = strconv.Itoa(rule.Rule.Size)
		}
	case !problem.Is(err, problem.NotFound):
		return v, err
	}
	for d := time.Sunday; d <= time.Saturday; d++ {
		v.Weekdays = append(v.Weekdays, views.Option{Value: strconv.Itoa(int(d)), Label: d.String(), Selected: d == wd})
	}
	return v, nil
}

func (s *Server) handleScheduleShow(w http.ResponseWriter, r *http.Request) {
	d, err := s.datasetParam(r)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	v, err := s.scheduleView(w, r, d)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	s.render(w, r, http.StatusOK, views.SchedulePage(v))
}

func (s *Server) handleScheduleSave(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	d, err := s.datasetParam(r)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	sc, err := parseScheduleForm(r)
	if err != nil {
		p := problem.As(err)
		if p == nil {
			s.fail(w, r, err)
			return
		}
		v, verr := s.scheduleView(w, r, d)
		if verr != nil {
			s.fail(w, r, verr)
			return
		}
		v.Error, v.At, v.Mode, v.Size, v.Threshold, v.Holdout = p.Message, r.PostFormValue("at"), r.PostFormValue("mode"), r.PostFormValue("size"),
			r.PostFormValue("threshold"), r.PostFormValue("holdout")
		v.Publish, v.Enabled = r.PostFormValue("publish") != "", r.PostFormValue("enabled") != ""
		s.render(w, r, http.StatusUnprocessableEntity, views.SchedulePage(v))
		return
	}
	sc.DatasetID, sc.CreatedBy, sc.CreatedAt = d.ID, u.Name, s.cfg.Now()
	if err := s.store.SaveSchedule(r.Context(), sc); err != nil {
		s.fail(w, r, err)
		return
	}
	s.flash(w, r, "The weekly schedule is saved.")
	seeOther(w, r, datasetPath(d.ID)+"/schedule")
}

// parseScheduleForm reads the schedule form.
func parseScheduleForm(r *http.Request) (store.Schedule, error) {
	var sc store.Schedule
	wd, err := strconv.Atoi(r.PostFormValue("weekday"))
	if err != nil || wd < 0 || wd > 6 {
		return sc, problem.New(problem.Invalid, "choose a day of the week")
	}
	h, m, err := analysis.ParseClock(r.PostFormValue("at"))
	if err != nil {
		return sc, err
	}
	rule := analysis.ScheduleRule{Bands: lists.DefaultBands}
	switch r.PostFormValue("mode") {
	case "size":
		k, err := strconv.Atoi(strings.TrimSpace(r.PostFormValue("size")))
		if err != nil || k < 1 {
			return sc, problem.New(problem.Invalid, "the number of customers must be a whole number of at least 1")
		}
		rule.Rule.Size = k
	case "threshold":
		p, err := numberIn(r.PostFormValue("threshold"), "the probability threshold", 0, 1)
		if err != nil {
			return sc, err
		}
		rule.Rule.Threshold, rule.Rule.UseThreshold = p, true
	default:
		return sc, problem.New(problem.Invalid, "choose how many customers the list takes")
	}
	share, err := numberIn(r.PostFormValue("holdout"), "the holdout share", 0, 0.5)
	if err != nil {
		return sc, err
	}
	rule.Holdout = share
	body, err := json.Marshal(rule)
	if err != nil {
		return sc, err
	}
	sc.Weekday, sc.At, sc.Rule = time.Weekday(wd), strconv.Itoa(100 + h)[1:]+":"+strconv.Itoa(100 + m)[1:], body
	sc.Publish, sc.Enabled = r.PostFormValue("publish") != "", r.PostFormValue("enabled") != ""
	return sc, nil
}

func datasetPath(id int64) string { return "/datasets/" + strconv.FormatInt(id, 10) }
