package analysis

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"slices"

	"ebb/internal/lists"
	"ebb/internal/problem"
	"ebb/internal/store"
)

// Export formats of a list.
const (
	ExportCSV     = "csv"     // the customers to contact, RFC 4180
	ExportJSON    = "json"    // the same, as one JSON document
	ExportHoldout = "holdout" // the holdout, for suppression in other campaigns
)

// ListRowReader reads a list's rows (store.Store does).
type ListRowReader interface {
	EachListRowWith(ctx context.Context, datasetID, listID int64, statuses []int, attrs []string, fn func(store.ListedCustomer) error) error
}

// ExportList streams a list's customers to w: the ones to contact (CSV or
// JSON, with the chosen attribute columns after the fixed ones) or the
// holdout (CSV). Customers who may not be contacted are never written. It
// reads and writes a row at a time, so memory stays flat.
func ExportList(ctx context.Context, st ListRowReader, l store.List, format string, attrs []string, w io.Writer) error {
	var sum ListSummary
	if err := json.Unmarshal(l.Summary, &sum); err != nil {
		return fmt.Errorf("list %d: %w", l.ID, err)
	}
	for _, a := range attrs {
		if !slices.Contains(sum.Attributes, a) {
			return problem.New(problem.Invalid, "this dataset's customers have no attribute %q", a)
		}
	}
	status := store.RowContact
	var write func(lists.Row) error
	var finish func() error
	switch format {
	case ExportCSV:
		cw, err := lists.NewCSVWriter(w, attrs)
		if err != nil {
			return err
		}
		write, finish = cw.Write, cw.Flush
	case ExportJSON:
		jw, err := lists.NewJSONWriter(w, l.AsOf, attrs)
		if err != nil {
			return err
		}
		write, finish = jw.Write, jw.Close
	case ExportHoldout:
		hw, err := lists.NewHoldoutWriter(w)
		if err != nil {
			return err
		}
		status, write, finish, attrs = store.RowHoldout, hw.Write, hw.Flush, nil
	default:
		return problem.New(problem.Invalid, "unknown export format %q (want csv, json or holdout)", format)
	}
	err := st.EachListRowWith(ctx, l.DatasetID, l.ID, []int{status}, attrs, func(c store.ListedCustomer) error {
		return write(lists.Row{Key: c.Key, Email: c.Email, Probability: c.Probability, Band: BandOf(c.Band), Reasons: c.Reasons,
			ListDate: l.AsOf, Attrs: c.AttrValues})
	})
	if err != nil {
		return err
	}
	return finish()
}
