package main

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strconv"

	"ebb/internal/analysis"
	"ebb/internal/civil"
	"ebb/internal/history"
	"ebb/internal/store"
)

func scoreCommand() command {
	return command{
		name:    "score",
		summary: "draft (or publish) an at-risk list and write it as CSV",
		detail: `
Scores every customer active as of --as-of (default: the dataset's
data_through) with the model in use or --model, removes customers who may
not be contacted, selects the --size highest-risk customers (or every one
with a probability of at least --threshold; --threshold 0 lists every
eligible customer) and withholds the holdout members among them: a share
--holdout of customers, chosen per customer and holdout period by a keyed
hash. Every score is stored as a draft list; --publish publishes it at once.
--out receives the customers to contact (customer_id,email,probability,
band,reasons,list_date); --holdout-out the holdout, for suppression in other
campaigns. Probabilities are estimates for prioritising outreach, not
judgements about people; honour consent and unsubscribe rules.`,
		setup: func(f *flags) func(context.Context, env, []string) error {
			var db, dataset, model, asOf, threshold, holdout, out, holdoutOut string
			var size int
			var publish bool
			f.String(&db, "db", "ebb.db", "FILE", "SQLite database file")
			f.String(&dataset, "dataset", "", "NAME", "dataset to score")
			f.String(&model, "model", "", "ID", "model to score with (default: the model in use)")
			f.String(&asOf, "as-of", "", "YYYY-MM-DD", "date the list is drawn as of (default: data_through)")
			f.Int(&size, "size", 0, "K", "list the K highest-risk eligible customers")
			f.String(&threshold, "threshold", "", "P", "list every eligible customer with a probability of at least P (0-1)")
			f.String(&holdout, "holdout", "0.1", "SHARE", "share of customers held out, 0-0.5")
			f.String(&out, "out", "", "FILE.csv", "write the customers to contact here")
			f.String(&holdoutOut, "holdout-out", "", "FILE.csv", "write the holdout here")
			f.Bool(&publish, "publish", "publish the list at once instead of leaving a draft")
			return func(ctx context.Context, e env, args []string) error {
				if len(args) > 0 {
					return fmt.Errorf("score: unexpected argument %q", args[0])
				}
				if dataset == "" || out == "" {
					return errors.New("score: --dataset NAME and --out FILE.csv are required")
				}
				req := analysis.ScoreRequest{Rule: analysis.ListRule{Size: size}, Publish: publish, By: "ebb score", Now: e.now()}
				if threshold != "" {
					p, err := strconv.ParseFloat(threshold, 64)
					if err != nil || !(p >= 0 && p <= 1) {
						return fmt.Errorf("score: --threshold %q is not a probability between 0 and 1", threshold)
					}
					req.Rule.Threshold, req.Rule.UseThreshold = p, true
				}
				if size == 0 && threshold == "" {
					return errors.New("score: give --size K or --threshold P")
				}
				share, err := strconv.ParseFloat(holdout, 64)
				if err != nil {
					return fmt.Errorf("score: --holdout %q is not a share between 0 and 0.5", holdout)
				}
				req.Holdout = &share
				if model != "" {
					if req.ModelID, err = strconv.ParseInt(model, 10, 64); err != nil {
						return fmt.Errorf("score: --model %q is not a model id (see ebb model list)", model)
					}
				}
				if asOf != "" {
					d, err := civil.Parse(asOf)
					if err != nil {
						return fmt.Errorf("score: --as-of %q is not a date (want YYYY-MM-DD)", asOf)
					}
					req.AsOf = &d
				}
				st, err := store.Open(ctx, db, store.Options{})
				if err != nil {
					return err
				}
				defer st.Close()
				d, err := st.DatasetByName(ctx, dataset)
				if err != nil {
					return fmt.Errorf("score: %w", err)
				}
				req.DatasetID = d.ID
				res, err := analysis.Score(ctx, st, history.NewCache(1), req, nil)
				if err != nil {
					return fmt.Errorf("score: %w", err)
				}
				l, err := st.ListByID(ctx, res.ListID)
				if err != nil {
					return err
				}
				if err := writeExport(ctx, st, l, analysis.ExportCSV, out); err != nil {
					return err
				}
				if holdoutOut != "" {
					if err := writeExport(ctx, st, l, analysis.ExportHoldout, holdoutOut); err != nil {
						return err
					}
				}
				s := res.Summary
				state := "draft"
				if res.Published {
					state = "published"
				}
				fmt.Fprintf(e.stdout, "list %d (%s) of %s as of %s with model %d (%s)\n", res.ListID, state, d.Name, l.AsOf, s.ModelID, s.Model)
				fmt.Fprintf(e.stdout, "  %d active customers scored; %d may not be contacted; %d eligible\n", s.Active, s.NotContactable, s.Eligible)
				fmt.Fprintf(e.stdout, "  %d selected: %d to contact (%s), %d held out", s.Selected, s.Contact, out, s.Holdout)
				if holdoutOut != "" {
					fmt.Fprintf(e.stdout, " (%s)", holdoutOut)
				}
				fmt.Fprintf(e.stdout, "\n  expected: %.0f of them will not order again within %d days (precision %.1f%%)\n",
					s.ExpectedNoReorders, s.HorizonDays, 100*s.ExpectedPrecision)
				if s.MDENote != "" {
					fmt.Fprintf(e.stdout, "  %s\n", s.MDENote)
				} else {
					fmt.Fprintf(e.stdout, "  the holdout can detect a difference of %.1f points in the no-reorder rate (80%% power, 5%% two-sided)\n", 100*s.MDE)
				}
				return nil
			}
		},
	}
}

// writeExport writes one export of a list to a file, replacing it only
// once complete (a failed export leaves no half-written file).
func writeExport(ctx context.Context, st *store.Store, l store.List, format, path string) error {
	tmp, err := os.CreateTemp(filepath.Dir(path), ".ebb-export-*")
	if err != nil {
		return fmt.Errorf("score: %w", err)
	}
	defer os.Remove(tmp.Name())
	if err := analysis.ExportList(ctx, st, l, format, nil, tmp); err != nil {
		tmp.Close()
		return fmt.Errorf("score: write %s: %w", path, err)
	}
	if err := tmp.Close(); err != nil {
		return fmt.Errorf("score: write %s: %w", path, err)
	}
	if err := os.Rename(tmp.Name(), path); err != nil {
		return fmt.Errorf("score: %w", err)
	}
	return nil
}
