package main

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"strconv"
	"text/tabwriter"

	"ebb/internal/analysis"
	"ebb/internal/gaps"
	"ebb/internal/history"
	"ebb/internal/store"
)

func windowCommand() command {
	return command{
		name:    "window",
		summary: "derive the churn window X of a dataset, and optionally save it as the churn definition",
		detail: `
Derives X — the silent days after which a customer counts as lapsed — by
every method (mean-gap percentile, pooled-gap percentile, censoring-aware
Kaplan–Meier) on the dataset's current version, stores the derivation with
its sensitivity table (X = 1…365), and prints the chosen method's X.
--save stores a churn definition: X from --days (default: the method's X,
rounded up), H from --horizon (default X), with --note as the rationale.
--json prints one JSON object with days, method, percentile, customers_used,
single_order_customers and sensitivity (days, lapsed_share,
return_after_lapse_share), among others.`,
		setup: func(f *flags) func(context.Context, env, []string) error {
			var db, dataset, method, note string
			var percentile string
			var lookback, days, horizon int
			var save, asJSON bool
			var splitBy string
			f.String(&db, "db", "ebb.db", "FILE", "SQLite database file")
			f.String(&dataset, "dataset", "", "NAME", "dataset to derive the window of")
			f.String(&method, "method", "mean-gap", "METHOD", "mean-gap, pooled-gap or censored")
			f.String(&percentile, "percentile", "90", "P", "percentile q, 0 < q ≤ 100")
			f.Int(&lookback, "lookback", 365, "DAYS", "look-back period ending at data_through, in days")
			f.Bool(&save, "save", "save the result as the dataset's current churn definition")
			f.Int(&days, "days", 0, "X", "with --save: the window to save, in days (default: the derived X)")
			f.Int(&horizon, "horizon", 0, "H", "with --save: the horizon, in days (default: X)")
			f.String(&note, "note", "", "TEXT", "with --save: the rationale to record")
			f.String(&splitBy, "by", "", "ATTRIBUTE", "also split the sensitivity table by this customer attribute (e.g. channel)")
			f.Bool(&asJSON, "json", "print one JSON object instead of text")
			return func(ctx context.Context, e env, args []string) error {
				if len(args) > 0 {
					return fmt.Errorf("window: unexpected argument %q", args[0])
				}
				if dataset == "" {
					return errors.New("window: --dataset NAME is required")
				}
				m, err := gaps.ParseMethod(method)
				if err != nil {
					return fmt.Errorf("window: --method: %w", err)
				}
				q, err := strconv.ParseFloat(percentile, 64)
				if err != nil {
					return fmt.Errorf("window: --percentile %q is not a number", percentile)
				}
				if !save && (days != 0 || horizon != 0 || note != "") {
					return errors.New("window: --days, --horizon and --note need --save")
				}
				st, err := store.Open(ctx, db, store.Options{})
				if err != nil {
					return err
				}
				defer st.Close()
				d, err := st.DatasetByName(ctx, dataset)
				if err != nil {
					return fmt.Errorf("window: %w", err)
				}
				runID, rep, err := analysis.DeriveWindow(ctx, st, history.NewCache(1), d.ID,
					gaps.Options{Percentile: q, LookbackDays: lookback}, splitBy, "ebb window", e.now(), nil)
				if err != nil {
					return fmt.Errorf("window: %w", err)
				}
				w, _ := rep.Window(m)
				var saved *store.Definition
				if save {
					if !w.OK && days == 0 {
						return fmt.Errorf("window: %s; give --days to save a window anyway", w.Reason)
					}
					x := days
					if x == 0 {
						x = w.Days
					}
					if note == "" {
						note = fmt.Sprintf("%s %gth percentile over a %d-day look-back on version %d (ebb window)", m, q, lookback, rep.Version)
					}
					def, err := analysis.SaveDefinition(ctx, st, d.ID, analysis.DefinitionInput{WindowDays: x, HorizonDays: horizon,
						Method: string(m), Percentile: q, LookbackDays: lookback, DerivedDays: w.Days, RunID: runID, Rationale: note}, "ebb window", e.now())
					if err != nil {
						return fmt.Errorf("window: %w", err)
					}
					saved = &def
				}
				if asJSON {
					return printWindowJSON(e, rep, w, saved)
				}
				printWindowText(e, rep, m, saved)
				if !w.OK {
					return fmt.Errorf("window: %s", w.Reason)
				}
				return nil
			}
		},
	}
}

func printWindowText(e env, rep *analysis.WindowReport, chosen gaps.Method, saved *store.Definition) {
	fmt.Fprintf(e.stdout, "dataset %q version %d, data through %s, look-back %d days\n", rep.Dataset, rep.Version, rep.DataThrough, rep.Options.LookbackDays)
	if rep.Note != "" {
		fmt.Fprintln(e.stdout, rep.Note)
	}
	tw := tabwriter.NewWriter(e.stdout, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "method\tX (days)\tcustomers\tgaps\tone order day\tnot in look-back\t")
	for _, w := range rep.Windows {
		x := "—"
		if w.OK {
			x = strconv.Itoa(w.Days)
			if w.HasBand {
				x += fmt.Sprintf(" (%d–%d)", w.BandLow, w.BandHigh)
			}
		}
		mark := ""
		if w.Method == chosen {
			mark = " *"
		}
		fmt.Fprintf(tw, "%s%s\t%s\t%d\t%d\t%d\t%d\t\n", w.Method, mark, x, w.CustomersUsed, w.Episodes, w.SingleOrderCustomers, w.OutsideLookback)
	}
	tw.Flush()
	for _, w := range rep.Windows {
		if w.OK {
			fmt.Fprintf(e.stdout, "%s: %s\n", w.Method, w.Sentence)
		} else {
			fmt.Fprintf(e.stdout, "%s: %s\n", w.Method, w.Reason)
		}
	}
	if sp := rep.Split; sp != nil {
		if w, ok := rep.Window(chosen); ok && w.OK {
			fmt.Fprintf(e.stdout, "by %s at X = %d days:\n", sp.Attribute, w.Days)
			tw := tabwriter.NewWriter(e.stdout, 0, 0, 2, ' ', 0)
			fmt.Fprintln(tw, "  level	customers	lapsed today	returned after lapsing	")
			for l, name := range sp.Levels {
				c := sp.Cells[w.Days-1][1+l]
				fmt.Fprintf(tw, "  %s	%d	%.1f%%	%.1f%%	\n", name, sp.Customers[l], 100*c.LapsedShare(), 100*c.ReturnShare())
			}
			tw.Flush()
		}
	}
	if saved != nil {
		fmt.Fprintf(e.stdout, "saved churn definition %d: X = %d days, H = %d days\n", saved.Seq, saved.WindowDays, saved.HorizonDays)
	}
}

type windowJSON struct {
	Dataset              string            `json:"dataset"`
	Version              int               `json:"version"`
	DataThrough          string            `json:"data_through"`
	Method               gaps.Method       `json:"method"`
	Percentile           float64           `json:"percentile"`
	LookbackDays         int               `json:"lookback_days"`
	OK                   bool              `json:"ok"`
	Reason               string            `json:"reason,omitempty"`
	Days                 int               `json:"days"`
	Value                float64           `json:"value"`
	CustomersUsed        int               `json:"customers_used"`
	Episodes             int               `json:"episodes"`
	SingleOrderCustomers int               `json:"single_order_customers"`
	OutsideLookback      int               `json:"outside_lookback"`
	Sentence             string            `json:"sentence,omitempty"`
	Methods              []methodJSON      `json:"methods"`
	Sensitivity          []sensitivityJSON `json:"sensitivity"`
	Saved                *savedJSON        `json:"saved_definition,omitempty"`
}

type methodJSON struct {
	Method string `json:"method"`
	OK     bool   `json:"ok"`
	Days   int    `json:"days"`
	Reason string `json:"reason,omitempty"`
}

type sensitivityJSON struct {
	Days                  int     `json:"days"`
	LapsedShare           float64 `json:"lapsed_share"`
	ReturnAfterLapseShare float64 `json:"return_after_lapse_share"`
	MedianExtraWaitDays   float64 `json:"median_extra_wait_days"`
	LapseEpisodes         int     `json:"lapse_episodes"`
}

type savedJSON struct {
	Version     int `json:"version"`
	WindowDays  int `json:"days"`
	HorizonDays int `json:"horizon_days"`
}

func printWindowJSON(e env, rep *analysis.WindowReport, w gaps.Window, saved *store.Definition) error {
	out := windowJSON{Dataset: rep.Dataset, Version: rep.Version, DataThrough: rep.DataThrough, Method: w.Method,
		Percentile: w.Percentile, LookbackDays: rep.Options.LookbackDays, OK: w.OK, Reason: w.Reason, Days: w.Days, Value: w.Value,
		CustomersUsed: w.CustomersUsed, Episodes: w.Episodes, SingleOrderCustomers: w.SingleOrderCustomers,
		OutsideLookback: w.OutsideLookback, Sentence: w.Sentence}
	for _, m := range rep.Windows {
		out.Methods = append(out.Methods, methodJSON{Method: string(m.Method), OK: m.OK, Days: m.Days, Reason: m.Reason})
	}
	for _, r := range rep.Sensitivity {
		c := r.Cells[gaps.All]
		out.Sensitivity = append(out.Sensitivity, sensitivityJSON{Days: r.Days, LapsedShare: c.LapsedShare(),
			ReturnAfterLapseShare: c.ReturnShare(), MedianExtraWaitDays: c.MedianExtraWait, LapseEpisodes: c.Episodes})
	}
	if saved != nil {
		out.Saved = &savedJSON{Version: saved.Seq, WindowDays: saved.WindowDays, HorizonDays: saved.HorizonDays}
	}
	enc := json.NewEncoder(e.stdout)
	enc.SetIndent("", "  ")
	return enc.Encode(out)
}
