package web

import (
	"fmt"
	"net/http"
	"strings"

	"ebb/internal/charts"
	"ebb/internal/civil"
	"ebb/internal/problem"
	"ebb/internal/store"
	"ebb/web/views"
)

func (s *Server) handleDatasets(w http.ResponseWriter, r *http.Request) {
	ds, err := s.store.Datasets(r.Context())
	if err != nil {
		s.fail(w, r, err)
		return
	}
	v := views.DatasetsView{Chrome: s.chrome(w, r, "Datasets", "datasets")}
	for _, d := range ds {
		v.Datasets = append(v.Datasets, views.DatasetRow{
			ID: d.ID, Name: d.Name, Orders: views.Count(d.Orders), Customers: views.Count(d.Customers),
			FirstDay: d.FirstDay.String(), LastDay: d.LastDay.String(), DataThrough: d.DataThrough().String(),
			TimeZone: d.TimeZone, Version: views.Count(d.Seq),
		})
	}
	s.render(w, r, http.StatusOK, views.Datasets(v))
}

// datasetView builds a dataset's page from stored figures only.
func (s *Server) datasetView(w http.ResponseWriter, r *http.Request, id int64) (views.DatasetView, error) {
	ctx := r.Context()
	d, err := s.store.DatasetByID(ctx, id)
	if err != nil {
		return views.DatasetView{}, err
	}
	versions, err := s.store.Versions(ctx, id)
	if err != nil {
		return views.DatasetView{}, err
	}
	v := views.DatasetView{
		Chrome: s.chrome(w, r, "Dataset "+d.Name, "datasets"), ID: d.ID, Name: d.Name, CanEdit: true,
		DataThrough: d.DataThrough().String(), LatestOrder: d.LastDay.String(), ThroughSet: d.DataThroughSet != nil,
	}
	defs, err := s.store.Definitions(ctx, d.ID)
	if err != nil {
		return v, err
	}
	if len(defs) > 0 {
		def := defs[0]
		v.Definition = fmt.Sprintf("Churn definition %d: a customer counts as lapsed after %d silent days; labels look %d days ahead. Saved by %s on %s.",
			def.Seq, def.WindowDays, def.HorizonDays, def.CreatedBy, def.CreatedAt.UTC().Format("2006-01-02"))
	}
	st, err := s.store.VersionStats(ctx, d.Version)
	switch {
	case problem.Is(err, problem.NotFound):
		v.Facts = []views.Fact{{Label: "Orders", Value: views.Count(d.Orders)}, {Label: "Customers", Value: views.Count(d.Customers)}}
	case err != nil:
		return v, err
	default:
		v.Facts = []views.Fact{
			{Label: "Orders", Value: views.Count(st.Orders)},
			{Label: "Order days", Value: views.Count(st.OrderDays), Note: "orders of one customer on one day count once"},
			{Label: "Customers with orders", Value: views.Count(st.Customers)},
			{Label: "Ordered on one day only", Value: views.Percent(st.SingleDayShare()), Note: views.Count(st.SingleDayCustomers) + " customers"},
			{Label: "Contactable", Value: views.Count(st.Contactable), Note: "of " + views.Count(st.KnownCustomers) + " known customers"},
			{Label: "Orders with an amount", Value: views.Count(st.WithAmount)},
			{Label: "Date span", Value: st.FirstDay.String() + " to " + st.LastDay.String(), Note: views.Count(int(st.LastDay-st.FirstDay)+1) + " days"},
			{Label: "Time zone", Value: d.TimeZone},
		}
		v.HasChart = len(st.Months) > 0
		for _, m := range st.Months {
			v.Months = append(v.Months, views.MonthRow{Month: m.Month, Orders: views.Count(m.Orders),
				OrderDays: views.Count(m.OrderDays), NewCustomers: views.Count(m.NewCustomers)})
		}
	}
	for _, ver := range versions {
		v.Versions = append(v.Versions, views.VersionRow{
			Seq: views.Count(ver.Seq), Kind: ver.Kind, Source: ver.Source, Orders: views.Count(ver.OrdersAdded),
			NewCustomers: views.Count(ver.CustomersAdded), Skipped: views.Count(ver.RowsSkipped),
			Repeats: views.Count(ver.RepeatsSkipped), Finished: ver.FinishedAt.UTC().Format("2006-01-02 15:04 UTC"),
		})
	}
	return v, nil
}

func (s *Server) handleDatasetShow(w http.ResponseWriter, r *http.Request) {
	id, err := idParam(r, "id")
	if err != nil {
		s.fail(w, r, err)
		return
	}
	v, err := s.datasetView(w, r, id)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	s.render(w, r, http.StatusOK, views.Dataset(v))
}

func (s *Server) handleDataThrough(w http.ResponseWriter, r *http.Request) {
	id, err := idParam(r, "id")
	if err != nil {
		s.fail(w, r, err)
		return
	}
	text := strings.TrimSpace(r.PostFormValue("data_through"))
	var day *civil.Date
	if text != "" {
		d, perr := civil.Parse(text)
		if perr != nil {
			v, err := s.datasetView(w, r, id)
			if err != nil {
				s.fail(w, r, err)
				return
			}
			v.ThroughError = fmt.Sprintf("%q is not a date; write it as YYYY-MM-DD.", text)
			s.render(w, r, http.StatusUnprocessableEntity, views.Dataset(v))
			return
		}
		day = &d
	}
	if err := s.store.SetDataThrough(r.Context(), id, day); err != nil {
		s.fail(w, r, err)
		return
	}
	if day == nil {
		s.flash(w, r, "Data through is the latest order day again.")
	} else {
		s.flash(w, r, "Data through is now "+day.String()+".")
	}
	seeOther(w, r, fmt.Sprintf("/datasets/%d", id))
}

// handleMonthlyChart draws orders per month from the stored figures, as
// SVG or PNG by the path's extension.
func (s *Server) handleMonthlyChart(w http.ResponseWriter, r *http.Request) {
	id, err := idParam(r, "id")
	if err != nil {
		s.fail(w, r, err)
		return
	}
	d, err := s.store.DatasetByID(r.Context(), id)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	st, err := s.store.VersionStats(r.Context(), d.Version)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	ext := "svg"
	if strings.HasSuffix(r.URL.Path, ".png") {
		ext = "png"
	}
	s.sendChart(w, r, ext, fmt.Sprintf("orders-per-month-%d", d.ID), monthlyBars(d, st))
}

func monthlyBars(d store.Dataset, st store.VersionStats) charts.Bars {
	b := charts.Bars{Title: "Orders per month · " + d.Name, XLabel: "Month", YLabel: "Orders"}
	for _, m := range st.Months {
		b.Labels = append(b.Labels, m.Month)
		b.Values = append(b.Values, float64(m.Orders))
	}
	return b
}
