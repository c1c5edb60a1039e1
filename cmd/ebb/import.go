package main

import (
	"context"
	"errors"
	"fmt"
	"path/filepath"

	"ebb/internal/analysis"
	"ebb/internal/ingest"
	"ebb/internal/store"
)

func importCommand() command {
	return command{
		name:    "import",
		args:    "ORDERS.csv",
		summary: "import an order file as a new dataset, or append it to one",
		detail: `
The order file is CSV with a header line (comma, semicolon or tab; UTF-8 with
or without a byte order mark). Columns are found by their header names
(customer_id, order_date, amount, order_id and common variants); --map names
them explicitly. Dates are ISO 8601 (2024-03-14 or 2024-03-14T18:05:00+01:00);
other layouts need --date-format, --day-first or --month-first.

A new --dataset name creates the dataset; an existing one needs --append.
Every problem is printed as FILE:LINE:COL: message (COL is the 1-based field
number). With --on-error reject (the default) a file with any problem
changes nothing; with skip the good rows are imported and the bad ones
reported. Exit status 0 on success, 1 when rejected.`,
		setup: func(f *flags) func(context.Context, env, []string) error {
			var o struct {
				db, dataset, customers, mapping, dateFormat, onError, tz, report string
				appendTo, dayFirst, monthFirst                                   bool
			}
			f.String(&o.db, "db", "ebb.db", "FILE", "SQLite database file")
			f.String(&o.dataset, "dataset", "", "NAME", "dataset to create, or to append to with --append")
			f.Bool(&o.appendTo, "append", "add the orders to an existing dataset as a new version")
			f.String(&o.customers, "customers", "", "FILE", "optional customers file: customer_id,email,signup_date,contactable, then attribute columns")
			f.String(&o.mapping, "map", "", "FIELD=COL,...", "column names for customer, date, amount and ref, e.g. customer=client_no,date=placed")
			f.String(&o.dateFormat, "date-format", "", "LAYOUT", "date layout from YYYY, MM, MMM, DD, hh, mm, ss, e.g. DD.MM.YYYY")
			f.Bool(&o.dayFirst, "day-first", "read slash dates as day first: 14/03/2024")
			f.Bool(&o.monthFirst, "month-first", "read slash dates as month first: 03/14/2024")
			f.String(&o.onError, "on-error", "reject", "POLICY", "reject the whole file on any problem, or skip bad rows")
			f.String(&o.tz, "timezone", "UTC", "TZ", "IANA time zone of a new dataset; timestamps become dates in it")
			f.String(&o.report, "report", "", "FILE", "write every problem to this CSV file (line, column, message)")
			return func(ctx context.Context, e env, args []string) error {
				if len(args) != 1 {
					return errors.New("import: give exactly one order file (see \"ebb import --help\")")
				}
				if o.dataset == "" {
					return errors.New("import: --dataset NAME is required")
				}
				cols, err := ingest.ParseColumns(o.mapping)
				if err != nil {
					return fmt.Errorf("import: --map: %w", err)
				}
				policy, err := ingest.ParsePolicy(o.onError)
				if err != nil {
					return fmt.Errorf("import: --on-error: %w", err)
				}
				if o.dayFirst && o.monthFirst {
					return errors.New("import: choose --day-first or --month-first, not both")
				}
				orders, size, err := openFile(args[0])
				if err != nil {
					return fmt.Errorf("import: %w", err)
				}
				defer orders.Close()
				req := analysis.ImportRequest{
					Dataset: o.dataset, Append: o.appendTo, TimeZone: o.tz,
					Orders:  analysis.Source{Name: filepath.Base(args[0]), R: orders, Size: size},
					Columns: cols, Policy: policy, Now: e.now(),
					Dates: ingest.DateOptions{Layout: o.dateFormat, DayFirst: o.dayFirst, MonthFirst: o.monthFirst},
				}
				if o.customers != "" {
					cf, csize, err := openFile(o.customers)
					if err != nil {
						return fmt.Errorf("import: %w", err)
					}
					defer cf.Close()
					req.Customers = &analysis.Source{Name: filepath.Base(o.customers), R: cf, Size: csize}
				}
				var report *analysis.Report
				if o.report != "" {
					if report, err = analysis.CreateReport(o.report); err != nil {
						return fmt.Errorf("import: --report: %w", err)
					}
					req.OnProblem = report.Add
				}

				st, err := store.Open(ctx, o.db, store.Options{})
				if err != nil {
					return err
				}
				defer st.Close()
				res, err := analysis.Import(ctx, st, req)
				if report != nil {
					if cerr := report.Close(); cerr != nil && err == nil {
						err = fmt.Errorf("import: --report: %w", cerr)
					}
				}
				var rej *ingest.Rejected
				if errors.As(err, &rej) {
					for _, p := range rej.Problems {
						fmt.Fprintln(e.stderr, p)
					}
					if rej.Count > len(rej.Problems) {
						fmt.Fprintf(e.stderr, "… and %d more problems%s\n", rej.Count-len(rej.Problems), reportHint(o.report))
					}
					return fmt.Errorf("%s; the database is unchanged", rej.Message())
				}
				if err != nil {
					return err
				}
				printImportSummary(e, res, o.report)
				return nil
			}
		},
	}
}

func reportHint(path string) string {
	if path == "" {
		return " (--report FILE lists them all)"
	}
	return " (all are in " + path + ")"
}

func printImportSummary(e env, res *analysis.ImportResult, report string) {
	s := res.Orders
	if s.ProblemCount > 0 {
		for _, p := range s.Problems {
			fmt.Fprintln(e.stderr, p)
		}
		if s.ProblemCount > len(s.Problems) {
			fmt.Fprintf(e.stderr, "… and %d more problems%s\n", s.ProblemCount-len(s.Problems), reportHint(report))
		}
	}
	verb := "imported"
	if !res.Import.New {
		verb = "appended"
	}
	line := fmt.Sprintf("%s %s as version %d of dataset %q: %d orders", verb, s.File, res.Import.Seq, res.Dataset, s.Accepted)
	if s.Accepted > 0 {
		line += fmt.Sprintf(" from %s to %s", s.FirstDay, s.LastDay)
	}
	line += fmt.Sprintf(", %d new customers", res.CustomersAdded)
	if res.Customers != nil {
		line += fmt.Sprintf("; %s: %d customers, %d not contactable", res.Customers.File, res.Customers.Accepted, res.Customers.NonContact)
		if res.Customers.Skipped > 0 {
			line += fmt.Sprintf(", %d bad rows skipped", res.Customers.Skipped)
		}
	}
	if s.Skipped > 0 {
		line += fmt.Sprintf("; %d bad rows skipped", s.Skipped)
	}
	if s.Repeats > 0 {
		line += fmt.Sprintf("; %d rows already stored were left out (first on line %d)", s.Repeats, s.RepeatLines[0])
	}
	fmt.Fprintln(e.stdout, line)
}
