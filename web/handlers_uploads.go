package web

import (
	"crypto/rand"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"mime"
	"mime/multipart"
	"net/http"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"github.com/go-chi/chi/v5"

	"ebb/internal/analysis"
	"ebb/internal/ingest"
	"ebb/internal/problem"
	"ebb/internal/store"
	"ebb/web/views"
)

func (s *Server) uploadView(w http.ResponseWriter, r *http.Request, errMsg string) views.UploadView {
	return views.UploadView{Chrome: s.chrome(w, r, "Upload orders", "upload"), Error: errMsg,
		MaxSize: views.Bytes(s.cfg.MaxUpload), Append: r.FormValue("append")}
}

func (s *Server) handleUploadForm(w http.ResponseWriter, r *http.Request) {
	s.render(w, r, http.StatusOK, views.Upload(s.uploadView(w, r, "")))
}

// handleUpload streams the multipart body straight to files in a new
// upload folder (never into memory), then shows the mapping step.
func (s *Server) handleUpload(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	r.Body = http.MaxBytesReader(w, r.Body, s.cfg.MaxUpload)
	mr, err := r.MultipartReader()
	if err != nil {
		s.render(w, r, http.StatusBadRequest, views.Upload(s.uploadView(w, r, "The form was not sent as a file upload; use the form on this page.")))
		return
	}
	b := make([]byte, 16)
	rand.Read(b)
	up := store.Upload{Token: hex.EncodeToString(b), UserID: u.ID, CreatedAt: s.cfg.Now()}
	up.Dir = filepath.Join(s.cfg.UploadDir, up.Token)
	if err := os.MkdirAll(up.Dir, 0o700); err != nil {
		s.fail(w, r, fmt.Errorf("create upload folder: %w", err))
		return
	}
	appendTo := ""
	keep := false
	defer func() {
		if !keep {
			os.RemoveAll(up.Dir)
		}
	}()
	for {
		part, err := mr.NextPart()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			s.uploadFailed(w, r, err)
			return
		}
		switch part.FormName() {
		case "orders", "customers":
			if part.FileName() == "" {
				continue
			}
			dest := analysis.UploadOrders
			if part.FormName() == "customers" {
				dest = analysis.UploadCustomers
			}
			n, err := savePart(part, filepath.Join(up.Dir, dest))
			if err != nil {
				s.uploadFailed(w, r, err)
				return
			}
			name := filepath.Base(strings.ReplaceAll(part.FileName(), "\\", "/"))
			if part.FormName() == "orders" {
				up.OrdersName, up.OrdersSize = name, n
			} else if n > 0 {
				up.CustomersName, up.CustomersSize = name, n
			}
		case "append":
			v, _ := io.ReadAll(io.LimitReader(part, 200))
			appendTo = string(v)
		}
	}
	if up.OrdersName == "" || up.OrdersSize == 0 {
		s.render(w, r, http.StatusUnprocessableEntity, views.Upload(s.uploadView(w, r, "Choose a non-empty order file.")))
		return
	}
	if _, err := s.store.InsertUpload(r.Context(), up); err != nil {
		s.fail(w, r, err)
		return
	}
	keep = true
	target := "/uploads/" + up.Token
	if appendTo != "" {
		target += "?append=" + urlQueryEscape(appendTo)
	}
	seeOther(w, r, target)
}

func savePart(part *multipart.Part, path string) (int64, error) {
	f, err := os.OpenFile(path, os.O_CREATE|os.O_EXCL|os.O_WRONLY, 0o600)
	if err != nil {
		return 0, err
	}
	n, err := io.Copy(f, part)
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	return n, err
}

func (s *Server) uploadFailed(w http.ResponseWriter, r *http.Request, err error) {
	var tooBig *http.MaxBytesError
	if errors.As(err, &tooBig) {
		s.render(w, r, http.StatusRequestEntityTooLarge, views.Upload(s.uploadView(w, r,
			"The upload is larger than the limit of "+views.Bytes(s.cfg.MaxUpload)+"; ask the administrator to raise --max-upload, or import it with ebb import.")))
		return
	}
	s.fail(w, r, fmt.Errorf("receive upload: %w", err))
}

// mappingForm holds the mapping step's choices, from defaults or the form.
type mappingForm struct {
	customer, date, amount, ref string
	dates, layout               string
	target, name, dataset, tz   string
	policy                      string
}

func (s *Server) mappingView(w http.ResponseWriter, r *http.Request, up store.Upload, f *mappingForm, errMsg string) (views.MappingView, error) {
	file, err := os.Open(filepath.Join(up.Dir, analysis.UploadOrders))
	if err != nil {
		return views.MappingView{}, fmt.Errorf("open upload %s: %w", up.Token, err)
	}
	defer file.Close()
	p, err := ingest.Sniff(file, 8)
	if err != nil {
		return views.MappingView{}, problem.Wrap(problem.Invalid, err, "%s cannot be read as CSV: %v", up.OrdersName, err)
	}
	datasets, err := s.store.Datasets(r.Context())
	if err != nil {
		return views.MappingView{}, err
	}
	if f == nil {
		f = &mappingForm{customer: p.Columns.Customer, date: p.Columns.Date, amount: p.Columns.Amount, ref: p.Columns.Ref,
			target: "new", name: datasetNameFrom(up.OrdersName), tz: "UTC", policy: "reject"}
		switch p.Dates {
		case ingest.DatesISO, ingest.DatesDayFirst, ingest.DatesMonthFirst:
			f.dates = string(p.Dates)
		case ingest.DatesUnknown:
			f.dates = "layout"
		}
		if a := r.URL.Query().Get("append"); a != "" {
			f.target, f.dataset = "append", a
		}
		if r.URL.Query().Get("policy") == "skip" {
			f.policy = "skip"
		}
	}
	v := views.MappingView{
		Chrome: s.chrome(w, r, "Confirm the columns", "upload"), Token: up.Token, FileName: up.OrdersName,
		Customers: up.CustomersName, Delimiter: ingest.DelimiterName(p.Delimiter), Header: p.Header, Rows: p.Rows,
		DateStyle: string(p.Dates), DateChoice: f.dates, Layout: f.layout, Target: f.target, NewName: f.name,
		TimeZone: f.tz, Policy: f.policy, Error: errMsg,
	}
	v.Customer = columnOptions(p.Header, f.customer, "")
	v.Date = columnOptions(p.Header, f.date, "")
	v.Amount = columnOptions(p.Header, f.amount, "(no amount)")
	v.Ref = columnOptions(p.Header, f.ref, "(no order reference)")
	for _, d := range datasets {
		v.Datasets = append(v.Datasets, views.Option{Value: d.Name, Label: d.Name, Selected: d.Name == f.dataset})
	}
	return v, nil
}

func columnOptions(header []string, chosen, none string) []views.Option {
	var out []views.Option
	if none != "" {
		out = append(out, views.Option{Value: "", Label: none, Selected: chosen == ""})
	} else if chosen == "" {
		out = append(out, views.Option{Value: "", Label: "(choose a column)", Selected: true})
	}
	for _, h := range header {
		out = append(out, views.Option{Value: h, Label: h, Selected: h == chosen})
	}
	return out
}

// datasetNameFrom suggests a dataset name from a file name.
func datasetNameFrom(file string) string {
	name := strings.TrimSuffix(file, filepath.Ext(file))
	if len(name) > 60 {
		name = name[:60]
	}
	return name
}

func (s *Server) handleMappingForm(w http.ResponseWriter, r *http.Request) {
	up, err := s.store.UploadByToken(r.Context(), chi.URLParam(r, "token"))
	if err != nil {
		s.fail(w, r, err)
		return
	}
	v, err := s.mappingView(w, r, up, nil, "")
	if err != nil {
		s.fail(w, r, err)
		return
	}
	s.render(w, r, http.StatusOK, views.Mapping(v))
}

// handleImport checks the mapping choices and queues the import job.
func (s *Server) handleImport(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	up, err := s.store.UploadByToken(r.Context(), chi.URLParam(r, "token"))
	if err != nil {
		s.fail(w, r, err)
		return
	}
	f := &mappingForm{customer: r.PostFormValue("customer"), date: r.PostFormValue("date"), amount: r.PostFormValue("amount"),
		ref: r.PostFormValue("ref"), dates: r.PostFormValue("dates"), layout: strings.TrimSpace(r.PostFormValue("layout")),
		target: r.PostFormValue("target"), name: strings.TrimSpace(r.PostFormValue("name")), dataset: r.PostFormValue("dataset"),
		tz: strings.TrimSpace(r.PostFormValue("timezone")), policy: r.PostFormValue("policy")}
	params := analysis.ImportParams{Upload: up.Token, Columns: ingest.Columns{Customer: f.customer, Date: f.date, Amount: f.amount, Ref: f.ref},
		Policy: f.policy, TimeZone: f.tz}
	var datasetID int64
	msg := ""
	switch {
	case f.customer == "" || f.date == "":
		msg = "Choose the customer column and the order date column."
	case f.dates == "":
		msg = "Choose how the dates are written: these dates read both ways."
	case f.dates == "layout" && f.layout == "":
		msg = "Give the layout of the dates, e.g. DD.MM.YYYY."
	case f.target == "new" && f.name == "":
		msg = "Give the new dataset a name."
	case f.target == "append" && f.dataset == "":
		msg = "Choose the dataset to append to."
	case f.target != "new" && f.target != "append":
		msg = "Choose whether the orders make a new dataset or are appended."
	case f.policy != "reject" && f.policy != "skip":
		msg = "Choose what happens to rows with problems."
	}
	switch f.dates {
	case "day-first":
		params.Dates.DayFirst = true
	case "month-first":
		params.Dates.MonthFirst = true
	case "layout":
		params.Dates.Layout = f.layout
	}
	if f.target == "append" {
		params.Dataset, params.Append = f.dataset, true
		if msg == "" {
			ds, err := s.store.Datasets(r.Context())
			if err != nil {
				s.fail(w, r, err)
				return
			}
			for _, d := range ds {
				if d.Name == f.dataset {
					datasetID = d.ID
				}
			}
			if datasetID == 0 {
				msg = "There is no dataset called " + strconv.Quote(f.dataset) + " to append to."
			}
		}
	} else {
		params.Dataset = f.name
	}
	if msg != "" {
		v, err := s.mappingView(w, r, up, f, msg)
		if err != nil {
			s.fail(w, r, err)
			return
		}
		s.render(w, r, http.StatusUnprocessableEntity, views.Mapping(v))
		return
	}
	body, _ := json.Marshal(params)
	id, err := s.jobs.Submit(r.Context(), analysis.KindImport, datasetID, body, u.Name)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	seeOther(w, r, jobPath(id))
}

func (s *Server) handleProblemReport(w http.ResponseWriter, r *http.Request) {
	up, err := s.store.UploadByToken(r.Context(), chi.URLParam(r, "token"))
	if err != nil {
		s.fail(w, r, err)
		return
	}
	f, err := os.Open(filepath.Join(up.Dir, analysis.UploadReport))
	if errors.Is(err, os.ErrNotExist) {
		s.fail(w, r, problem.New(problem.NotFound, "this upload has no problem report (it has not been imported yet)"))
		return
	}
	if err != nil {
		s.fail(w, r, err)
		return
	}
	defer f.Close()
	w.Header().Set("Content-Type", "text/csv; charset=utf-8")
	w.Header().Set("Content-Disposition", mime.FormatMediaType("attachment",
		map[string]string{"filename": "problems-" + strings.TrimSuffix(up.OrdersName, filepath.Ext(up.OrdersName)) + ".csv"}))
	io.Copy(w, f)
}
