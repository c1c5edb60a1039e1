package web

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"mime"
	"net/http"
	"net/url"
	"slices"
	"strconv"
	"strings"

	"github.com/go-chi/chi/v5"

	"ebb/internal/analysis"
	"ebb/internal/auth"
	"ebb/internal/civil"
	"ebb/internal/problem"
	"ebb/internal/store"
	"ebb/web/views"
)

// pageRows is how many customers a list page shows at once.
const pageRows = 100

func (s *Server) handleLists(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	analyst := u.Role.Allows(auth.Analyst)
	ds, err := s.store.Datasets(r.Context())
	if err != nil {
		s.fail(w, r, err)
		return
	}
	v := views.ListsView{Chrome: s.chrome(w, r, "Lists", "lists")}
	for _, d := range ds {
		ls, err := s.store.Lists(r.Context(), d.ID, analyst)
		if err != nil {
			s.fail(w, r, err)
			return
		}
		ld := views.ListsDataset{ID: d.ID, Name: d.Name, CanDraft: analyst}
		if analyst {
			if sc, err := s.store.ScheduleOf(r.Context(), d.ID); err == nil {
				ld.Schedule = analysis.DescribeSchedule(sc)
			} else if !problem.Is(err, problem.NotFound) {
				s.fail(w, r, err)
				return
			}
		}
		for _, l := range ls[:min(len(ls), 20)] {
			sum := s.summary(l)
			line := views.ListLine{ID: l.ID, AsOf: l.AsOf.String(), State: listState(l), Model: fmt.Sprintf("%s (%d)", sum.Model, sum.ModelID),
				Rule: sum.RuleText, Selected: views.Count(sum.Selected), Contact: views.Count(sum.Contact), Holdout: views.Count(sum.Holdout)}
			if l.Published {
				line.Dated = l.PublishedAt.UTC().Format("2006-01-02 15:04 UTC") + " by " + l.PublishedBy
			}
			ld.Lists = append(ld.Lists, line)
		}
		v.Datasets = append(v.Datasets, ld)
	}
	s.render(w, r, http.StatusOK, views.ListsPage(v))
}

// summary returns a list's decoded summary (kept: it never changes).
func (s *Server) summary(l store.List) analysis.ListSummary {
	if sum, ok := s.summaries.get(l.ID); ok {
		return sum
	}
	sum := analysis.SummaryOf(l)
	s.summaries.put(l.ID, sum)
	return sum
}

func listState(l store.List) string {
	if l.Published {
		return "published"
	}
	return "draft"
}

// listFormDefaults are the draft form's starting values.
var listFormDefaults = views.ListFormView{Mode: "size", Size: "500", Threshold: "0.5", Cost: "2", Value: "40", Save: "0.2",
	Holdout: "0.1", High: "0.7", Medium: "0.4"}

func (s *Server) listFormView(w http.ResponseWriter, r *http.Request, d store.Dataset) views.ListFormView {
	v := listFormDefaults
	v.Chrome, v.DatasetID, v.Dataset, v.DataThrough = s.chrome(w, r, "Draft a list · "+d.Name, "lists"), d.ID, d.Name, d.DataThrough().String()
	v.ModelNote = "No model is in use yet: train models on the dataset page and choose one with \"Use for lists\"."
	if ms, err := s.store.Models(r.Context(), d.ID); err == nil {
		for _, m := range ms {
			if m.InUse {
				v.ModelNote = fmt.Sprintf("Scored with the model in use: %s (model %d, trained %s).", m.Name, m.ID, m.CreatedAt.UTC().Format("2006-01-02"))
			}
		}
	}
	return v
}

func (s *Server) handleListForm(w http.ResponseWriter, r *http.Request) {
	d, err := s.datasetParam(r)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	s.render(w, r, http.StatusOK, views.ListForm(s.listFormView(w, r, d)))
}

func (s *Server) datasetParam(r *http.Request) (store.Dataset, error) {
	id, err := idParam(r, "id")
	if err != nil {
		return store.Dataset{}, err
	}
	return s.store.DatasetByID(r.Context(), id)
}

// parseListForm reads the draft form into a request.
func parseListForm(r *http.Request) (analysis.ScoreRequest, error) {
	var req analysis.ScoreRequest
	num := func(name, what string, lo, hi float64) (float64, error) {
		return numberIn(r.PostFormValue(name), what, lo, hi)
	}
	var err error
	switch r.PostFormValue("mode") {
	case "size":
		k, err := strconv.Atoi(strings.TrimSpace(r.PostFormValue("size")))
		if err != nil || k < 1 {
			return req, problem.New(problem.Invalid, "the number of customers must be a whole number of at least 1")
		}
		req.Rule.Size = k
	case "threshold":
		if req.Rule.Threshold, err = num("threshold", "the probability threshold", 0, 1); err != nil {
			return req, err
		}
		req.Rule.UseThreshold = true
	case "value":
		req.Rule.BestValue = true
		if req.Rule.Value.CostPerContact, err = num("cost", "the cost per contact", 0, 1e9); err != nil {
			return req, err
		}
		if req.Rule.Value.KeptValue, err = num("value", "the value of a kept customer", 0, 1e9); err != nil {
			return req, err
		}
		if req.Rule.Value.SaveRate, err = num("save", "the save rate", 0, 1); err != nil {
			return req, err
		}
	default:
		return req, problem.New(problem.Invalid, "choose how many customers the list takes")
	}
	share, err := num("holdout", "the holdout share", 0, 0.5)
	if err != nil {
		return req, err
	}
	req.Holdout = &share
	if req.Bands.High, err = num("high", "the high band's threshold", 0, 1); err != nil {
		return req, err
	}
	if req.Bands.Medium, err = num("medium", "the medium band's threshold", 0, 1); err != nil {
		return req, err
	}
	if err := req.Bands.Validate(); err != nil {
		return req, err
	}
	if a := strings.TrimSpace(r.PostFormValue("as_of")); a != "" {
		d, err := civil.Parse(a)
		if err != nil {
			return req, problem.New(problem.Invalid, "the list date %q is not a date (want YYYY-MM-DD)", a)
		}
		req.AsOf = &d
	}
	return req, nil
}

func (s *Server) handleListDraft(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	d, err := s.datasetParam(r)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	req, err := parseListForm(r)
	if err == nil {
		err = s.hasModelInUse(r.Context(), d)
	}
	if err != nil {
		if p := problem.As(err); p != nil {
			v := s.listFormView(w, r, d)
			v.Error = p.Message
			v.Mode, v.Size, v.Threshold, v.Cost, v.Value, v.Save = r.PostFormValue("mode"), r.PostFormValue("size"), r.PostFormValue("threshold"),
				r.PostFormValue("cost"), r.PostFormValue("value"), r.PostFormValue("save")
			v.Holdout, v.High, v.Medium, v.AsOf = r.PostFormValue("holdout"), r.PostFormValue("high"), r.PostFormValue("medium"), r.PostFormValue("as_of")
			s.render(w, r, http.StatusUnprocessableEntity, views.ListForm(v))
			return
		}
		s.fail(w, r, err)
		return
	}
	req.DatasetID = d.ID
	body, err := json.Marshal(req)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	jid, err := s.jobs.Submit(r.Context(), analysis.KindScore, d.ID, body, u.Name)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	seeOther(w, r, jobPath(jid))
}

func (s *Server) hasModelInUse(ctx context.Context, d store.Dataset) error {
	ms, err := s.store.Models(ctx, d.ID)
	if err != nil {
		return err
	}
	if !slices.ContainsFunc(ms, func(m store.StoredModel) bool { return m.InUse }) {
		return problem.New(problem.Invalid, "dataset %q has no model in use: train models on the dataset page and choose one with \"Use for lists\"", d.Name)
	}
	return nil
}

// visibleList returns the list of the {id} parameter if the user may see
// it: viewers see published lists only (a draft is "not found" to them).
func (s *Server) visibleList(r *http.Request) (store.List, error) {
	id, err := idParam(r, "id")
	if err != nil {
		return store.List{}, err
	}
	l, err := s.store.ListByID(r.Context(), id)
	if err != nil {
		return l, err
	}
	if u, _ := currentUser(r); !l.Published && !u.Role.Allows(auth.Analyst) {
		return store.List{}, problem.New(problem.NotFound, "there is no list %d", id)
	}
	return l, nil
}

func (s *Server) handleListShow(w http.ResponseWriter, r *http.Request) {
	l, err := s.visibleList(r)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	d, err := s.store.DatasetByID(r.Context(), l.DatasetID)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	u, _ := currentUser(r)
	sum := s.summary(l)
	v := views.ListView{Chrome: s.chrome(w, r, "List of "+l.AsOf.String()+" · "+d.Name, "lists"), ID: l.ID, DatasetID: d.ID, Dataset: d.Name,
		AsOf: l.AsOf.String(), Draft: !l.Published, CanPublish: !l.Published && u.Role.Allows(auth.Analyst),
		AttrNames: sum.Attributes, ExportBase: listPath(l.ID)}
	if l.Published {
		v.Published = fmt.Sprintf("Published %s by %s.", l.PublishedAt.UTC().Format("2006-01-02 15:04 UTC"), l.PublishedBy)
	}
	v.Facts, v.Warnings, v.Changes = listFacts(l, sum)

	q := r.URL.Query()
	f := store.ListFilter{ListID: l.ID, DatasetID: l.DatasetID, Search: strings.TrimSpace(q.Get("q")), Band: -1, ByKey: q.Get("sort") == "key"}
	v.Search, v.Band, v.Status, v.AttrName, v.AttrValue, v.Sort = f.Search, q.Get("band"), q.Get("status"), q.Get("attr"), q.Get("value"), q.Get("sort")
	switch v.Band {
	case "high":
		f.Band = 2
	case "medium":
		f.Band = 1
	case "low":
		f.Band = 0
	}
	switch v.Status {
	case "contact":
		f.Status = []int{store.RowContact}
	case "holdout":
		f.Status = []int{store.RowHoldout}
	case "all":
	default:
		v.Status = "selected"
		f.Status = []int{store.RowContact, store.RowHoldout}
	}
	if v.AttrName != "" && slices.Contains(sum.Attributes, v.AttrName) {
		f.AttrName, f.AttrValue = v.AttrName, v.AttrValue
	}
	from, _ := strconv.Atoi(q.Get("from"))
	f.Offset, f.Limit = max(from, 0), pageRows
	// A list never changes, so the number of customers matching a filter
	// is counted once.
	countKey := fmt.Sprintf("%d\x00%s\x00%d\x00%v\x00%s\x00%s", l.ID, f.Search, f.Band, f.Status, f.AttrName, f.AttrValue)
	total, known := s.counts.get(countKey)
	pageKey := fmt.Sprintf("%s\x00%d\x00%v", countKey, f.Offset, f.ByKey)
	rows, cached := s.pages.get(pageKey)
	if !cached || !known {
		f.KnownTotal = known
		var n int
		if rows, n, err = s.store.ListRows(r.Context(), f); err != nil {
			s.fail(w, r, err)
			return
		}
		if !known {
			total = n
			s.counts.put(countKey, n)
		}
		s.pages.put(pageKey, rows)
	}
	statusWords := map[int]string{store.RowScored: "not selected", store.RowContact: "to contact", store.RowHoldout: "held out", store.RowNotContactable: "may not be contacted"}
	for _, c := range rows {
		v.Rows = append(v.Rows, views.ListRowLine{Rank: strconv.Itoa(c.Rank), Key: c.Key, Email: c.Email, Probability: views.Percent(c.Probability),
			Band: string(analysis.BandOf(c.Band)), Status: statusWords[c.Status], Reasons: c.Reasons})
	}
	switch {
	case total == 0:
		v.Showing = "No customer matches."
	default:
		v.Showing = fmt.Sprintf("Customers %s to %s of %s.", views.Count(f.Offset+1), views.Count(f.Offset+len(rows)), views.Count(total))
	}
	page := func(at int) string {
		q2 := url.Values{}
		for k, vs := range q {
			q2[k] = vs
		}
		q2.Set("from", strconv.Itoa(at))
		return listPath(l.ID) + "?" + q2.Encode() + "#customers"
	}
	if f.Offset > 0 {
		v.PrevURL = page(max(f.Offset-pageRows, 0))
	}
	if f.Offset+len(rows) < total {
		v.NextURL = page(f.Offset + pageRows)
	}
	s.render(w, r, http.StatusOK, views.ListPage(v))
}

func listPath(id int64) string { return "/lists/" + strconv.FormatInt(id, 10) }

// listFacts are the list's figures in sentences, warnings and changes.
func listFacts(l store.List, s analysis.ListSummary) (facts, warnings, changes []string) {
	facts = []string{
		fmt.Sprintf("Drawn as of %s with the %s model (model %d), churn definition %d: lapsed after %d silent days, outcomes judged %d days ahead.",
			l.AsOf, s.Model, s.ModelID, s.Definition, s.WindowDays, s.HorizonDays),
		fmt.Sprintf("%s active customers were scored; %s may not be contacted and were removed first, leaving %s eligible.",
			views.Count(s.Active), views.Count(s.NotContactable), views.Count(s.Eligible)),
		fmt.Sprintf("Rule: %s. %s selected: %s to contact and %s held out (holdout share %s, holdout period %s to %s).",
			s.RuleText, views.Count(s.Selected), views.Count(s.Contact), views.Count(s.Holdout), views.Percent(s.HoldoutShare), s.PeriodFrom, s.PeriodTo),
		fmt.Sprintf("By band among the selected: %s high, %s medium, %s low (high from %s, medium from %s).",
			views.Count(s.BandCounts[0]), views.Count(s.BandCounts[1]), views.Count(s.BandCounts[2]), views.Percent(s.Bands.High), views.Percent(s.Bands.Medium)),
		fmt.Sprintf("Expected: about %s of the %s selected will not order again within %d days without outreach (expected precision %s).",
			views.Count(int(s.ExpectedNoReorders+0.5)), views.Count(s.Selected), s.HorizonDays, views.Percent(s.ExpectedPrecision)),
	}
	if s.HeldOver > 0 {
		facts = append(facts, fmt.Sprintf("%s of the held-out customers were held out on a list in the last %d days and stay untreated until its horizon closes.",
			views.Count(s.HeldOver), s.HorizonDays))
	}
	if s.MDENote != "" {
		warnings = append(warnings, s.MDENote)
	} else {
		facts = append(facts, fmt.Sprintf("The holdout can detect a difference of %.1f points or more in the no-reorder rate between contacted and held-out customers (80%% power, 5%% two-sided test).", 100*s.MDE))
		if s.MDE > 0.1 {
			warnings = append(warnings, "The holdout is small: only a large effect of the outreach would be visible. A larger list or holdout share narrows it.")
		}
	}
	if c := s.Changes; c != nil {
		changes = []string{
			fmt.Sprintf("%s new customers, %s still on it (previous list of %s).", views.Count(c.New), views.Count(c.Still), c.PreviousAsOf),
			fmt.Sprintf("%s left: %s ordered since, %s are no longer among the selected.", views.Count(c.Left), views.Count(c.OrderedSince), views.Count(c.NoLongerAtRisk)),
		}
	}
	return facts, warnings, changes
}

func (s *Server) handleListPublish(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	id, err := idParam(r, "id")
	if err == nil {
		err = s.store.PublishList(r.Context(), id, u.Name, s.cfg.Now())
	}
	if err != nil {
		s.fail(w, r, err)
		return
	}
	// The outcomes now include this list (and any that matured since).
	if l, err := s.store.ListByID(r.Context(), id); err == nil {
		body, _ := json.Marshal(analysis.MeasureParams{DatasetID: l.DatasetID})
		if _, err := s.jobs.Submit(r.Context(), analysis.KindMeasure, l.DatasetID, body, u.Name); err != nil {
			s.log.Warn("queue measure after publishing", "list", id, "err", err)
		}
	}
	s.flash(w, r, "The list is published: marketing can see it and campaign tools can fetch it.")
	seeOther(w, r, listPath(id))
}

func (s *Server) handleListDiscard(w http.ResponseWriter, r *http.Request) {
	id, err := idParam(r, "id")
	if err == nil {
		err = s.store.DeleteDraftList(r.Context(), id)
	}
	if err != nil {
		s.fail(w, r, err)
		return
	}
	s.flash(w, r, "The draft was discarded.")
	seeOther(w, r, "/lists")
}

// handleListExport streams a list's customers to contact (CSV or JSON) or
// its holdout (CSV).
func (s *Server) handleListExport(w http.ResponseWriter, r *http.Request) {
	l, err := s.visibleList(r)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	// Each download: its export format and the end of its file name.
	file, ok := map[string][2]string{"export.csv": {analysis.ExportCSV, "contact.csv"}, "holdout.csv": {analysis.ExportHoldout, "holdout.csv"},
		"export.json": {analysis.ExportJSON, "contact.json"}}[chi.URLParam(r, "file")]
	if !ok {
		s.fail(w, r, problem.New(problem.NotFound, "there is no such download"))
		return
	}
	d, err := s.store.DatasetByID(r.Context(), l.DatasetID)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	s.streamList(w, r, l, file[0], fmt.Sprintf("ebb-%s-%s-%s", d.Name, l.AsOf, file[1]), r.URL.Query()["attr"])
}

// csvKey names a cached export: the list, its format and attributes.
type csvKey struct {
	list          int64
	format, attrs string
}

// maxCachedExport is the largest export kept in memory: a published list
// never changes, so the campaign tools that fetch it every few minutes get
// the same bytes without a query. Larger lists stream from the database
// every time, in flat memory.
const maxCachedExport = 4 << 20

// streamList sends an export; nothing is written before the export has
// checked its options, so a bad option still gets a clean error page.
func (s *Server) streamList(w http.ResponseWriter, r *http.Request, l store.List, format, filename string, attrs []string) {
	sum := s.summary(l)
	for _, a := range attrs {
		if !slices.Contains(sum.Attributes, a) {
			s.fail(w, r, problem.New(problem.Invalid, "this dataset's customers have no attribute %q", a))
			return
		}
	}
	ctype := "text/csv; charset=utf-8; header=present"
	if format == analysis.ExportJSON {
		ctype = "application/json"
	}
	w.Header().Set("Content-Type", ctype)
	w.Header().Set("Content-Disposition", mimeAttachment(filename))
	w.Header().Set("Cache-Control", "no-store")
	key := csvKey{l.ID, format, strings.Join(attrs, "\x00")}
	if b, ok := s.csvs.get(key); ok && l.Published {
		w.Write(b)
		return
	}
	small := l.Published && sum.Contact+sum.Holdout <= maxCachedExport/256
	var buf *bytes.Buffer
	out := io.Writer(w)
	if small {
		buf = &bytes.Buffer{}
		out = io.MultiWriter(w, buf)
	}
	if err := analysis.ExportList(r.Context(), s.store, l, format, attrs, out); err != nil {
		// The response has begun; the log keeps the error.
		s.log.Error("export list", "list", l.ID, "err", err)
		return
	}
	if small && buf.Len() <= maxCachedExport {
		s.csvs.put(key, buf.Bytes())
	}
}

// handleAPILatestList is the campaign tools' download: the latest
// published list of a dataset, for a bearer token of that dataset.
func (s *Server) handleAPILatestList(w http.ResponseWriter, r *http.Request) {
	refuse := func(status int, msg string) {
		if status == http.StatusUnauthorized {
			w.Header().Set("WWW-Authenticate", `Bearer realm="ebb"`)
		}
		http.Error(w, msg, status)
	}
	plain, ok := auth.ParseBearer(r.Header.Get("Authorization"))
	if !ok {
		refuse(http.StatusUnauthorized, "send an API token: Authorization: Bearer TOKEN")
		return
	}
	tok, err := s.tokens.Verify(r.Context(), plain)
	if err != nil {
		if p := problem.As(err); p != nil {
			refuse(http.StatusForbidden, p.Message)
			return
		}
		s.log.Error("verify token", "err", err)
		refuse(http.StatusInternalServerError, "something went wrong")
		return
	}
	d, err := s.store.DatasetByName(r.Context(), chi.URLParam(r, "name"))
	if err != nil || d.ID != tok.DatasetID {
		// The same answer as an unknown token, so a token does not reveal
		// which other datasets exist.
		refuse(http.StatusForbidden, "unknown token")
		return
	}
	l, err := s.store.LatestPublishedList(r.Context(), d.ID)
	if problem.Is(err, problem.NotFound) {
		refuse(http.StatusNotFound, "no list of this dataset has been published yet")
		return
	} else if err != nil {
		s.log.Error("latest list", "dataset", d.ID, "err", err)
		refuse(http.StatusInternalServerError, "something went wrong")
		return
	}
	s.streamList(w, r, l, analysis.ExportCSV, fmt.Sprintf("ebb-%s-%s-contact.csv", d.Name, l.AsOf), nil)
}

// mimeAttachment is a Content-Disposition that saves the response as name.
func mimeAttachment(name string) string {
	return mime.FormatMediaType("attachment", map[string]string{"filename": name})
}
