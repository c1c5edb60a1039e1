package web

import (
	"encoding/json"
	"fmt"
	"net/http"
	"strconv"

	"ebb/internal/analysis"
	"ebb/internal/jobs"
	"ebb/web/views"
)

var jobFilterRecent = jobs.Filter{Limit: 100}

// kindWords names a job kind for people.
func kindWords(kind string) string {
	switch kind {
	case analysis.KindWindow:
		return "churn window"
	case analysis.KindTrain:
		return "training"
	case analysis.KindScore:
		return "list"
	case analysis.KindScheduledList:
		return "scheduled list"
	case analysis.KindMeasure:
		return "outcomes"
	}
	return kind
}

func jobPath(id int64) string { return "/jobs/" + strconv.FormatInt(id, 10) }

func (s *Server) handleJobs(w http.ResponseWriter, r *http.Request) {
	js, err := s.jobs.List(r.Context(), jobFilterRecent)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	v := views.JobsView{Chrome: s.chrome(w, r, "Jobs", "jobs")}
	for _, j := range js {
		v.Jobs = append(v.Jobs, views.JobRow{ID: j.ID, Kind: kindWords(j.Kind), Status: string(j.Status),
			Progress: strconv.Itoa(int(j.Progress)) + "%", Message: jobNote(j), By: j.CreatedBy,
			Created: j.CreatedAt.UTC().Format("2006-01-02 15:04 UTC")})
	}
	s.render(w, r, http.StatusOK, views.Jobs(v))
}

func jobNote(j jobs.Job) string {
	if j.Error != "" {
		return j.Error
	}
	return j.Message
}

// jobFromURL returns the job named by the {id} parameter.
func (s *Server) jobFromURL(r *http.Request) (jobs.Job, error) {
	id, err := idParam(r, "id")
	if err != nil {
		return jobs.Job{}, err
	}
	return s.jobs.Get(r.Context(), id)
}

func (s *Server) handleJobShow(w http.ResponseWriter, r *http.Request) {
	j, err := s.jobFromURL(r)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	v := views.JobView{
		Chrome: s.chrome(w, r, fmt.Sprintf("Job %d", j.ID), "jobs"), ID: j.ID, Kind: kindWords(j.Kind), Status: string(j.Status),
		Finished: j.Status.Finished(), Progress: j.Progress, ProgressText: strconv.Itoa(int(j.Progress)),
		Message: j.Message, Error: j.Error, By: j.CreatedBy, Created: j.CreatedAt.UTC().Format("2006-01-02 15:04:05 UTC"),
		RerunOf: j.RerunOf, CanCancel: !j.Status.Finished(),
		CanRerun: j.Status == jobs.Failed || j.Status == jobs.Cancelled || j.Status == jobs.Interrupted,
	}
	if !j.FinishedAt.IsZero() {
		v.FinishedAt = j.FinishedAt.UTC().Format("2006-01-02 15:04:05 UTC")
	}
	if j.Kind == analysis.KindImport && len(j.Result) > 0 {
		importResult(&v, j)
	}
	if j.Kind == analysis.KindTrain && j.Status == jobs.Done {
		trainResult(&v, j)
		var res analysis.TrainJobResult
		if json.Unmarshal(j.Result, &res) == nil {
			v.ResultURL, v.ResultLabel = fmt.Sprintf("/datasets/%d/models", res.DatasetID), "Open the models"
		}
	}
	if (j.Kind == analysis.KindScore || j.Kind == analysis.KindScheduledList) && j.Status == jobs.Done {
		var res analysis.ScheduledResult
		if json.Unmarshal(j.Result, &res) == nil {
			if res.Note != "" {
				v.Summary = append(v.Summary, res.Note)
			}
			if res.ListID != 0 && res.Summary != nil {
				state := "drafted; review and publish it"
				if res.Published {
					state = "published"
				}
				v.Summary = append(v.Summary, fmt.Sprintf("The list is %s: %s selected, %s to contact, %s held out.", state,
					views.Count(res.Summary.Selected), views.Count(res.Summary.Contact), views.Count(res.Summary.Holdout)))
				v.ResultURL, v.ResultLabel = listPath(res.ListID), "Open the list"
			}
		}
	}
	if j.Kind == analysis.KindMeasure && j.Status == jobs.Done {
		var res analysis.MeasureParams
		if json.Unmarshal(j.Result, &res) == nil {
			v.Summary = []string{"The outcomes were measured: realized accuracy of the matured lists, the campaign effect, drift and cohort retention."}
			v.ResultURL, v.ResultLabel = datasetPath(res.DatasetID)+"/outcomes", "Open the outcomes"
		}
	}
	if j.Kind == analysis.KindWindow && j.Status == jobs.Done {
		var res analysis.WindowJobResult
		if json.Unmarshal(j.Result, &res) == nil {
			v.Summary = []string{"The churn window was derived by every method, with its sensitivity table."}
			v.ResultURL, v.ResultLabel = fmt.Sprintf("/datasets/%d/window", res.DatasetID), "Open the churn window"
		}
	}
	s.render(w, r, http.StatusOK, views.Job(v))
}

// importResult fills the job page with what an import did or why not.
func importResult(v *views.JobView, j jobs.Job) {
	var out analysis.ImportOutcome
	if err := json.Unmarshal(j.Result, &out); err != nil {
		return
	}
	var params analysis.ImportParams
	json.Unmarshal(j.Params, &params)
	if j.Status == jobs.Done {
		v.DatasetID, v.DatasetName = out.DatasetID, out.Dataset
		v.Summary = append(v.Summary, fmt.Sprintf("%s orders imported into dataset %q as version %d.", views.Count(out.Orders), out.Dataset, out.Version),
			fmt.Sprintf("%s new customers.", views.Count(out.NewCustomers)))
		if out.Customers != nil {
			v.Summary = append(v.Summary, fmt.Sprintf("Customers file: %s customers, %s of them not contactable.",
				views.Count(out.Customers.Read), views.Count(out.Customers.NotContactable)))
		}
		if out.Skipped > 0 {
			v.Summary = append(v.Summary, fmt.Sprintf("%s rows with problems were left out (listed below).", views.Count(out.Skipped)))
		}
		if out.Repeats > 0 {
			v.Summary = append(v.Summary, fmt.Sprintf("%s rows were already stored and were not added again.", views.Count(out.Repeats)))
		}
	}
	for _, p := range out.Problems {
		v.Problems = append(v.Problems, views.ProblemRow{Where: fmt.Sprintf("%s:%d:%d", p.File, p.Line, p.Col), Column: p.Column, Message: p.Message})
	}
	v.ProblemCount = views.Count(out.ProblemCount)
	v.MoreProblems = out.ProblemCount > len(out.Problems)
	if out.Report && params.Upload != "" {
		v.ReportURL = "/uploads/" + params.Upload + "/problems.csv"
	}
	if j.Status == jobs.Failed && params.Upload != "" {
		v.RetryURL = "/uploads/" + params.Upload + "?policy=skip"
	}
}

// jobStatus is what the job page's script polls.
type jobStatus struct {
	Status   string  `json:"status"`
	Progress float64 `json:"progress"`
	Message  string  `json:"message"`
	Error    string  `json:"error,omitempty"`
	Finished bool    `json:"finished"`
}

func (s *Server) handleJobStatus(w http.ResponseWriter, r *http.Request) {
	j, err := s.jobFromURL(r)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	w.Header().Set("Content-Type", "application/json")
	w.Header().Set("Cache-Control", "no-store")
	json.NewEncoder(w).Encode(jobStatus{Status: string(j.Status), Progress: j.Progress, Message: j.Message, Error: j.Error, Finished: j.Status.Finished()})
}

func (s *Server) handleJobCancel(w http.ResponseWriter, r *http.Request) {
	id, err := idParam(r, "id")
	if err == nil {
		err = s.jobs.Cancel(r.Context(), id)
	}
	if err != nil {
		s.fail(w, r, err)
		return
	}
	s.flash(w, r, "The job was asked to stop.")
	seeOther(w, r, jobPath(id))
}

func (s *Server) handleJobRerun(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	id, err := idParam(r, "id")
	var nid int64
	if err == nil {
		nid, err = s.jobs.Rerun(r.Context(), id, u.Name)
	}
	if err != nil {
		s.fail(w, r, err)
		return
	}
	seeOther(w, r, jobPath(nid))
}

// trainResult states a training run's figures in plain words: each model's
// ROC AUC with its interval and its difference from the recency baseline,
// and what a top-10% list caught and missed on the last test date.
func trainResult(v *views.JobView, j jobs.Job) {
	var res analysis.TrainJobResult
	if json.Unmarshal(j.Result, &res) != nil || res.Report == nil {
		return
	}
	rep := res.Report
	v.Summary = append(v.Summary, fmt.Sprintf("Trained on dataset %q version %d with churn definition %d: lapsed after %d silent days, labels look %d days ahead.",
		rep.Dataset, rep.Version, rep.Definition, rep.WindowDays, rep.HorizonDays),
		fmt.Sprintf("Test period: %s rows, of which %s did not order again within %d days.",
			views.Count(rep.Rows["test_evaluated"]), views.Count(rep.TestPositives), rep.HorizonDays))
	for _, m := range rep.Models {
		line := fmt.Sprintf("%s: ROC AUC %.3f (95%% interval %.3f to %.3f), average precision %.3f, Brier score %.3f",
			m.Name, m.ROCAUC.Estimate, m.ROCAUC.Lower, m.ROCAUC.Upper, m.AveragePrecision.Estimate, m.Brier.Estimate)
		if d := m.AUCvsBaseline; d != nil {
			line += fmt.Sprintf("; %+.3f ROC AUC against the recency baseline (%+.3f to %+.3f)", d.Estimate, d.Lower, d.Upper)
		}
		v.Summary = append(v.Summary, line+".")
		for _, l := range m.Lists {
			if l.Label == "top 10%" {
				v.Summary = append(v.Summary, fmt.Sprintf("%s, top 10%% list on the last test date: %s %s", m.Name, l.PrecisionSentence, l.RecallSentence))
			}
		}
	}
}
