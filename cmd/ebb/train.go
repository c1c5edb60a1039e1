package main

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"strconv"
	"strings"
	"text/tabwriter"
	"time"

	"ebb/internal/analysis"
	"ebb/internal/history"
	"ebb/internal/store"
)

func trainCommand() command {
	return command{
		name:    "train",
		summary: "train and evaluate churn models on a dataset's current churn definition",
		detail: `
Builds snapshots (random dates, every active customer, the label "did not
order again within H days"), splits them by time with H-day embargoes, trains
each model on the training period, calibrates it on the validation slice and
evaluates it on the test period beside the recency baseline: ROC AUC,
average precision and Brier score with 95% intervals from a bootstrap over
customers, and precision and recall of the top 5, 10 and 20% per test date.
The models offered for lists are refit on all labelled dates before the
latest slice and recalibrated on it. The dataset needs a saved churn
definition (ebb window --save).`,
		setup: func(f *flags) func(context.Context, env, []string) error {
			var db, dataset, models string
			var snaps, maxRows, boot, folds int
			var seed string
			var asJSON bool
			var testRows, calibration string
			f.String(&db, "db", "ebb.db", "FILE", "SQLite database file")
			f.String(&dataset, "dataset", "", "NAME", "dataset to train on")
			f.String(&testRows, "test-rows", "", "FILE", "write the evaluated test rows as CSV: customer_id,snapshot_date,label, then one score column per model")
			f.String(&models, "models", "baseline,logistic,trees,bgnbd", "LIST", "models to train, comma-separated: baseline, logistic, trees, bgnbd")
			f.Int(&snaps, "snapshots", 100, "N", "snapshot dates")
			f.String(&seed, "seed", "1", "N", "random seed of dates, sampling and bootstrap")
			f.Int(&maxRows, "max-rows", 1_000_000, "ROWS", "cap on snapshot rows (whole customers are kept or left out)")
			f.Int(&boot, "bootstrap", 200, "N", "bootstrap replicates of each interval")
			f.Int(&folds, "folds", 1, "K", "rolling-origin folds; the earlier ones are reported separately")
			f.String(&calibration, "calibration", "platt", "KIND", "calibration fitted on the validation slice: platt or isotonic")
			f.Bool(&asJSON, "json", "print one JSON object instead of text")
			return func(ctx context.Context, e env, args []string) error {
				if len(args) > 0 {
					return fmt.Errorf("train: unexpected argument %q", args[0])
				}
				if dataset == "" {
					return errors.New("train: --dataset NAME is required")
				}
				s, err := strconv.ParseUint(seed, 10, 64)
				if err != nil {
					return fmt.Errorf("train: --seed %q is not a whole number", seed)
				}
				st, err := store.Open(ctx, db, store.Options{})
				if err != nil {
					return err
				}
				defer st.Close()
				d, err := st.DatasetByName(ctx, dataset)
				if err != nil {
					return fmt.Errorf("train: %w", err)
				}
				opt := analysis.TrainOptions{Models: strings.Split(models, ","), Snapshots: snaps, Seed: s, MaxRows: maxRows,
					Bootstrap: boot, Folds: folds, Calibration: calibration, Clock: time.Now}
				if testRows != "" {
					f, err := os.Create(testRows)
					if err != nil {
						return fmt.Errorf("train: --test-rows: %w", err)
					}
					defer f.Close()
					opt.TestRows = f
				}
				runID, rep, err := analysis.Train(ctx, st, history.NewCache(1), d.ID, opt, "ebb train", e.now(), nil)
				if err != nil {
					return fmt.Errorf("train: %w", err)
				}
				ms, err := st.Models(ctx, d.ID)
				if err != nil {
					return err
				}
				inUse := int64(0)
				for _, m := range ms {
					if m.InUse {
						inUse = m.ID
					}
				}
				if asJSON {
					return printTrainJSON(e, runID, rep, inUse)
				}
				printTrainText(e, runID, rep, inUse)
				return nil
			}
		},
	}
}

type trainModelJSON struct {
	ID               int64   `json:"id"`
	Name             string  `json:"name"`
	ROCAUC           float64 `json:"roc_auc"`
	ROCAUCLow        float64 `json:"roc_auc_low"`
	ROCAUCHigh       float64 `json:"roc_auc_high"`
	AveragePrecision float64 `json:"average_precision"`
	Brier            float64 `json:"brier"`
	LogLoss          float64 `json:"log_loss"`
	TestRows         int     `json:"test_rows"`
	Positives        int     `json:"positives"`
}

func printTrainJSON(e env, runID int64, rep *analysis.TrainReport, inUse int64) error {
	out := struct {
		Run     int64                 `json:"run"`
		Models  []trainModelJSON      `json:"models"`
		InUse   int64                 `json:"in_use"`
		Seconds map[string]float64    `json:"seconds"`
		Rows    map[string]int        `json:"rows"`
		Folds   []analysis.FoldReport `json:"folds,omitempty"`
	}{Run: runID, InUse: inUse, Seconds: rep.Seconds, Rows: rep.Rows, Folds: rep.Folds}
	for _, m := range rep.Models {
		out.Models = append(out.Models, trainModelJSON{ID: m.ID, Name: m.Name, ROCAUC: m.ROCAUC.Estimate, ROCAUCLow: m.ROCAUC.Lower,
			ROCAUCHigh: m.ROCAUC.Upper, AveragePrecision: m.AveragePrecision.Estimate, Brier: m.Brier.Estimate, LogLoss: m.LogLoss.Estimate,
			TestRows: rep.Rows["test_evaluated"], Positives: rep.TestPositives})
	}
	enc := json.NewEncoder(e.stdout)
	enc.SetIndent("", "  ")
	return enc.Encode(out)
}

func printTrainText(e env, runID int64, rep *analysis.TrainReport, inUse int64) {
	fmt.Fprintf(e.stdout, "training run %d on dataset %q version %d, churn definition %d (X = %d days, H = %d days)\n",
		runID, rep.Dataset, rep.Version, rep.Definition, rep.WindowDays, rep.HorizonDays)
	fmt.Fprintf(e.stdout, "snapshot rows: %d train, %d validation, %d test (%d evaluated, %d did not order again); dates %v\n",
		rep.Rows["train"], rep.Rows["validation"], rep.Rows["test"], rep.Rows["test_evaluated"], rep.TestPositives, rep.Dates)
	tw := tabwriter.NewWriter(e.stdout, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "model\tROC AUC (95%)\tvs baseline\tavg precision\tBrier\t")
	for _, m := range rep.Models {
		vs := "—"
		if m.AUCvsBaseline != nil {
			vs = fmt.Sprintf("%+.3f (%+.3f to %+.3f)", m.AUCvsBaseline.Estimate, m.AUCvsBaseline.Lower, m.AUCvsBaseline.Upper)
		}
		mark := ""
		if m.ID == inUse {
			mark = " (in use)"
		}
		fmt.Fprintf(tw, "%s%s\t%.3f (%.3f–%.3f)\t%s\t%.3f\t%.4f\t\n", m.Name, mark, m.ROCAUC.Estimate, m.ROCAUC.Lower, m.ROCAUC.Upper,
			vs, m.AveragePrecision.Estimate, m.Brier.Estimate)
	}
	tw.Flush()
	for _, m := range rep.Models {
		for _, l := range m.Lists {
			if l.Label == "top 10%" {
				fmt.Fprintf(e.stdout, "%s, top 10%% on the last test date: %s %s\n", m.Name, l.PrecisionSentence, l.RecallSentence)
			}
		}
	}
	for _, f := range rep.Folds {
		fmt.Fprintf(e.stdout, "earlier fold, test %s to %s:", f.TestFrom, f.TestTo)
		for _, m := range f.Models {
			fmt.Fprintf(e.stdout, " %s ROC AUC %.3f;", m.Name, m.ROCAUC)
		}
		fmt.Fprintln(e.stdout)
	}
	if len(rep.Seconds) > 0 {
		fmt.Fprintf(e.stdout, "seconds per stage: %v\n", rep.Seconds)
	}
}

func modelCommand() command {
	return command{
		name:    "model",
		args:    "list | use ID",
		summary: "list a dataset's models, or choose the one lists use",
		setup: func(f *flags) func(context.Context, env, []string) error {
			var db, dataset string
			var asJSON bool
			f.String(&db, "db", "ebb.db", "FILE", "SQLite database file")
			f.String(&dataset, "dataset", "", "NAME", "dataset (for list)")
			f.Bool(&asJSON, "json", "print JSON (for list)")
			return func(ctx context.Context, e env, args []string) error {
				if len(args) == 0 {
					return errors.New("model: say list or use ID")
				}
				st, err := store.Open(ctx, db, store.Options{})
				if err != nil {
					return err
				}
				defer st.Close()
				switch args[0] {
				case "list":
					if dataset == "" {
						return errors.New("model list: --dataset NAME is required")
					}
					d, err := st.DatasetByName(ctx, dataset)
					if err != nil {
						return fmt.Errorf("model list: %w", err)
					}
					ms, err := st.Models(ctx, d.ID)
					if err != nil {
						return err
					}
					type row struct {
						ID      int64                `json:"id"`
						Name    string               `json:"name"`
						Run     int64                `json:"run"`
						InUse   bool                 `json:"in_use"`
						Summary analysis.ModelReport `json:"summary"`
					}
					var rows []row
					for _, m := range ms {
						r := row{ID: m.ID, Name: m.Name, Run: m.RunID, InUse: m.InUse}
						json.Unmarshal(m.Summary, &r.Summary)
						rows = append(rows, r)
					}
					if asJSON {
						enc := json.NewEncoder(e.stdout)
						enc.SetIndent("", "  ")
						return enc.Encode(rows)
					}
					tw := tabwriter.NewWriter(e.stdout, 0, 0, 2, ' ', 0)
					fmt.Fprintln(tw, "id\tname\trun\tROC AUC\tin use\t")
					for _, r := range rows {
						use := ""
						if r.InUse {
							use = "yes"
						}
						fmt.Fprintf(tw, "%d\t%s\t%d\t%.3f\t%s\t\n", r.ID, r.Name, r.Run, r.Summary.ROCAUC.Estimate, use)
					}
					return tw.Flush()
				case "use":
					if len(args) != 2 {
						return errors.New("model use: give the model id")
					}
					id, err := strconv.ParseInt(args[1], 10, 64)
					if err != nil {
						return fmt.Errorf("model use: %q is not a model id", args[1])
					}
					if err := st.UseModel(ctx, id); err != nil {
						return fmt.Errorf("model use: %w", err)
					}
					fmt.Fprintf(e.stdout, "lists of this dataset now use model %d\n", id)
					return nil
				}
				return fmt.Errorf("model: unknown action %q (want list or use)", args[0])
			}
		},
	}
}
