package analysis

import (
	"bytes"
	"cmp"
	"context"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"slices"
	"strconv"
	"strings"
	"sync"
	"time"

	"ebb/internal/bgnbd"
	"ebb/internal/civil"
	"ebb/internal/evaluate"
	"ebb/internal/frame"
	"ebb/internal/history"
	"ebb/internal/jobs"
	"ebb/internal/model"
	"ebb/internal/problem"
	"ebb/internal/snapshots"
	"ebb/internal/store"
)

// TrainOptions configure a training run. Zero values take the defaults.
type TrainOptions struct {
	Models     []string // "baseline", "logistic", "trees", "bgnbd"; default all four
	Snapshots  int      // snapshot dates; default 100
	Seed       uint64   // default 1
	MaxRows    int      // row cap (whole customers kept); default 1,000,000
	TestSample int      // test rows evaluated (whole customers); default 200,000
	C          float64  // logistic L2 strength, scikit-learn's C; default 1
	Bootstrap  int      // replicates of each interval; default 200
	Folds      int      // rolling-origin folds; 1 (default) = the latest only
	// Calibration is "platt" (default) or "isotonic", fitted on the
	// validation slice.
	Calibration string
	// Clock times the stages (the CLI passes time.Now); nil times nothing.
	Clock func() time.Time `json:"-"`
	// Truth, when set, gives the true P(no order day within H) of a
	// customer at a date (NaN when unknown): only a generated business
	// knows it. The run then reports the ROC AUC of these probabilities on
	// the test rows, a bound no model can reach.
	Truth TruthFunc `json:"-"`
	// TestRows, when set, receives the evaluated test rows as CSV:
	// customer_id,snapshot_date,label, then one score column per model, so
	// the evaluation can be audited in any tool.
	TestRows io.Writer `json:"-"`
}

func (o TrainOptions) resolved() TrainOptions {
	if len(o.Models) == 0 {
		o.Models = []string{"baseline", "logistic", "trees", "bgnbd"}
	}
	if o.Snapshots == 0 {
		o.Snapshots = 100
	}
	if o.Seed == 0 {
		o.Seed = 1
	}
	if o.MaxRows == 0 {
		o.MaxRows = 1_000_000
	}
	if o.TestSample == 0 {
		o.TestSample = 200_000
	}
	if o.C == 0 {
		o.C = 1
	}
	if o.Bootstrap == 0 {
		o.Bootstrap = evaluate.DefaultReplicates
	}
	if o.Calibration == "" {
		o.Calibration = string(model.CalibrationPlatt)
	}
	return o
}

// CapCheck compares a model trained on every training row with the same
// model trained on a customer sample of half of them, on the same test
// rows: the row cap samples whole customers the same way, so a small
// difference here says the cap costs little.
type CapCheck struct {
	Model         string  `json:"model"`
	Rows          int     `json:"rows"`
	SampledRows   int     `json:"sampled_rows"`
	ROCAUC        float64 `json:"roc_auc"`
	SampledROCAUC float64 `json:"sampled_roc_auc"`
}

// TruthFunc returns P(no order day in (day, day+horizonDays] | the
// customer's true state at day), or NaN when it is not known.
type TruthFunc func(customerKey string, day civil.Date, horizonDays int) float64

// ListFigures are a list size's figures averaged over the test dates.
type ListFigures struct {
	Label     string  `json:"label"` // "top 10%"
	Size      float64 `json:"size"`  // mean customers on the list per date
	Precision float64 `json:"precision"`
	Recall    float64 `json:"recall"`
	// Sentences for the last test date, in the standard wording.
	PrecisionSentence string `json:"precision_sentence"`
	RecallSentence    string `json:"recall_sentence"`
}

// BGNBDFit records the BG/NBD parameters behind p_active_bgnbd and the
// last day of the orders they were fitted on.
type BGNBDFit struct {
	Params        bgnbd.Params `json:"params"`
	FittedThrough string       `json:"fitted_through"`
	LogLikelihood float64      `json:"log_likelihood"`
}

// FoldReport is one earlier fold: its test period and each model's point
// figures there.
type FoldReport struct {
	TestFrom, TestTo string
	Models           []FoldModel
}

// FoldModel is one model's figures on a fold's test period.
type FoldModel struct {
	Name                            string
	ROCAUC, AveragePrecision, Brier float64
}

// ModelReport is one model's evaluation on the test period.
type ModelReport struct {
	ID               int64              `json:"id,omitempty"`
	Name             string             `json:"name"`
	ROCAUC           evaluate.Interval  `json:"roc_auc"`
	AveragePrecision evaluate.Interval  `json:"average_precision"`
	Brier            evaluate.Interval  `json:"brier"`
	LogLoss          evaluate.Interval  `json:"log_loss"`
	AUCvsBaseline    *evaluate.Interval `json:"auc_vs_baseline,omitempty"`
	// ROCAUCFirstTime and ROCAUCRepeat split the headline by customers with
	// one order day and with more (0 when a group has one class only).
	ROCAUCFirstTime float64       `json:"roc_auc_first_time"`
	ROCAUCRepeat    float64       `json:"roc_auc_repeat"`
	Lists           []ListFigures `json:"lists"`
	Coefficients    []Coefficient `json:"coefficients,omitempty"`
	// Curves for the model page, thinned to at most curvePoints points.
	ROC         [][2]float64              `json:"roc"` // (false positive rate, true positive rate)
	PR          [][2]float64              `json:"pr"`  // (recall, precision)
	Calibration []evaluate.CalibrationBin `json:"calibration"`
	Gains       []evaluate.GainsRow       `json:"gains"`
	// ScoreHistogram counts calibrated scores in 20 bins of width 0.05, of
	// customers who did not order again (Lapsed) and who did (Returned).
	ScoreLapsed   []int `json:"score_lapsed"`
	ScoreReturned []int `json:"score_returned"`
	// Importance is each feature's permutation importance: the drop in test
	// ROC AUC when the feature's values are shuffled across rows
	// (Breiman 2001, cited from memory), largest first.
	Importance []Coefficient `json:"importance,omitempty"`
	// ScoreReference is the refit model's calibrated scores on the latest
	// slice, binned by their deciles: the reference for drift.
	ScoreReference *Reference `json:"score_reference,omitempty"`
}

// curvePoints bounds the points kept of a curve.
const curvePoints = 200

// thin keeps about n evenly spaced points of a curve, and its ends.
func thin(pts [][2]float64, n int) [][2]float64 {
	if len(pts) <= n {
		return pts
	}
	out := make([][2]float64, 0, n+1)
	step := float64(len(pts)-1) / float64(n-1)
	for i := 0; i < n; i++ {
		out = append(out, pts[int(float64(i)*step+0.5)])
	}
	return out
}

// Coefficient is one logistic term on the standardized scale.
type Coefficient struct {
	Term  string  `json:"term"`
	Value float64 `json:"value"`
}

// TrainReport is everything a training run found.
type TrainReport struct {
	Dataset       string             `json:"dataset"`
	Version       int                `json:"version"`
	Definition    int                `json:"definition"`
	WindowDays    int                `json:"window_days"`
	HorizonDays   int                `json:"horizon_days"`
	Dates         map[string]int     `json:"dates"` // per part
	RowsBeforeCap int                `json:"rows_before_cap"`
	Rows          map[string]int     `json:"rows"` // per part, and "test_evaluated"
	TestPositives int                `json:"test_positives"`
	Models        []ModelReport      `json:"models"`
	Seconds       map[string]float64 `json:"seconds"`
	Options       TrainOptions       `json:"-"`
	RefitOnDates  int                `json:"refit_on_dates"`
	BGNBD         *BGNBDFit          `json:"bgnbd,omitempty"`
	Notes         []string           `json:"notes,omitempty"`
	Features      []string           `json:"features"`
	// Folds are the earlier rolling-origin folds (oldest first), reported
	// separately; the headline figures are the latest fold's.
	Folds            []FoldReport `json:"folds,omitempty"`
	CalibratedOnDate string       `json:"calibrated_on"`
	// CapCheck shows what sampling rows by customer costs.
	CapCheck *CapCheck `json:"cap_check,omitempty"`
	// MaxRows is the row cap the run used.
	MaxRows int `json:"max_rows"`
	// ContactedRows counts snapshot rows left out because a published list
	// contacted the customer in the H days before (their outcome was
	// treated).
	ContactedRows int `json:"contacted_rows,omitempty"`
	// FeatureReferences are the features of the latest slice binned by
	// their deciles: the references for feature drift.
	FeatureReferences []FeatureReference `json:"feature_references,omitempty"`
	// TruthROCAUC is the ROC AUC of the true probabilities on the test
	// rows (generated data only; 0 when unknown).
	TruthROCAUC float64 `json:"truth_roc_auc,omitempty"`
}

// Train builds snapshots from the dataset's current version and churn
// definition, trains and calibrates each model, evaluates it on the test
// period beside the baseline, refits it on all labelled dates before the
// latest slice, recalibrates it on that slice, and stores the run and the
// refit models. The first trained set marks its best non-baseline model in
// use. It returns the run id and the report.
func Train(ctx context.Context, st *store.Store, cache *Histories, datasetID int64, opt TrainOptions, by string, now time.Time,
	progress func(pct float64, note string)) (int64, *TrainReport, error) {
	opt = opt.resolved()
	if opt.Calibration != string(model.CalibrationPlatt) && opt.Calibration != string(model.CalibrationIsotonic) {
		return 0, nil, problem.New(problem.Invalid, "unknown calibration %q (want platt or isotonic)", opt.Calibration)
	}
	if progress == nil {
		progress = func(float64, string) {}
	}
	rep := &TrainReport{Seconds: map[string]float64{}, Dates: map[string]int{}, Rows: map[string]int{}, Options: opt}
	last := time.Time{}
	stage := func(name string) {
		if opt.Clock == nil {
			return
		}
		t := opt.Clock()
		if !last.IsZero() && name != "" {
			rep.Seconds[name] = t.Sub(last).Seconds()
		}
		last = t
	}
	stage("")
	d, err := st.DatasetByID(ctx, datasetID)
	if err != nil {
		return 0, nil, err
	}
	def, err := st.CurrentDefinition(ctx, d.ID)
	if problem.Is(err, problem.NotFound) {
		return 0, nil, problem.New(problem.Invalid, "dataset %q has no churn definition yet: derive the window and save one first", d.Name)
	} else if err != nil {
		return 0, nil, err
	}
	rep.Dataset, rep.Version, rep.Definition, rep.WindowDays, rep.HorizonDays = d.Name, d.Seq, def.Seq, def.WindowDays, def.HorizonDays
	progress(2, "loading the order history")
	h, err := loadHistory(ctx, st, cache, d)
	if err != nil {
		return 0, nil, err
	}
	stage("load")

	progress(10, "building snapshots")
	dates, err := snapshots.Dates(h.First(), h.DataThrough(), def.HorizonDays, opt.Snapshots, opt.Seed)
	if err != nil {
		return 0, nil, err
	}
	parts, err := snapshots.Split(dates, def.HorizonDays, 0, 0)
	if err != nil {
		return 0, nil, err
	}
	// BG/NBD parameters for the p_active_bgnbd feature, fitted on orders up
	// to the earliest snapshot date, so no date's feature sees its future.
	sopt := snapshots.Options{WindowDays: def.WindowDays, HorizonDays: def.HorizonDays, Dates: dates, MaxRows: opt.MaxRows, Seed: opt.Seed}
	if params, info, err := snapshots.FitBGNBD(h, dates[0], bgnbdSample, opt.Seed); err == nil && info.Converged {
		sopt.BGNBD = &params
		rep.BGNBD = &BGNBDFit{Params: params, FittedThrough: dates[0].String(), LogLikelihood: info.LogLik}
	} else {
		rep.Notes = append(rep.Notes, "BG/NBD could not be fitted on the orders before the first snapshot date, so p_active_bgnbd is left out.")
	}
	// Rows of customers contacted by a published list in (t − H, t] are left
	// out: their outcome was treated.
	contacts, err := st.Contacts(ctx, d.ID)
	if err != nil {
		return 0, nil, err
	}
	if len(contacts) > 0 {
		horizon := civil.Date(def.HorizonDays)
		sopt.Contacted = func(c int, t civil.Date) bool {
			days := contacts[int32(c)]
			i, _ := slices.BinarySearch(days, t-horizon+1)
			return i < len(days) && days[i] <= t
		}
	}
	tab, err := snapshots.Build(h, sopt)
	if err != nil {
		return 0, nil, err
	}
	rep.RowsBeforeCap, rep.MaxRows, rep.ContactedRows = tab.RowsBeforeCap, opt.MaxRows, tab.Contacted
	rep.Features = tab.Names
	partOf := make(map[civil.Date]snapshots.Part, len(dates))
	for i, t := range dates {
		partOf[t] = parts[i]
		rep.Dates[parts[i].String()]++
	}
	fr, err := toFrame(tab)
	if err != nil {
		return 0, nil, err
	}
	var train, valid, test, refit []int
	latest := dates[len(dates)-1]
	for r, t := range tab.Date {
		p := partOf[t]
		rep.Rows[p.String()]++
		switch p {
		case snapshots.Train:
			train = append(train, r)
		case snapshots.Validation:
			valid = append(valid, r)
		case snapshots.Test:
			test = append(test, r)
		}
		if p != snapshots.Test {
			refit = append(refit, r)
		}
	}
	// The latest slice recalibrates the refit models: the test period's dates.
	latestSlice := slices.Clone(test)
	test = sampleCustomers(tab.Customer, test, opt.TestSample, opt.Seed)
	rep.Rows["test_evaluated"] = len(test)
	stage("snapshots")

	trainF, validF, testF := subset(fr, train), subset(fr, valid), subset(fr, test)
	testLabels := boolLabels(testF.Labels())
	for _, y := range testLabels {
		if y {
			rep.TestPositives++
		}
	}
	if rep.TestPositives == 0 || rep.TestPositives == len(testLabels) {
		return 0, nil, problem.New(problem.Invalid, "every test row has the same label, so no model can be judged; use a longer history, more snapshots or another horizon")
	}
	clusters := make([]int, testF.Rows())
	for i, c := range testF.Customers() {
		clusters[i] = int(c)
	}
	keys, err := st.CustomerKeys(ctx, d.ID)
	if err != nil {
		return 0, nil, err
	}
	if opt.Truth != nil {
		rep.TruthROCAUC = truthAUC(opt.Truth, testF, keys, def.HorizonDays, testLabels)
	}
	bopt := evaluate.BootstrapOptions{Replicates: opt.Bootstrap, Seed1: opt.Seed, Seed2: 0x65626221}
	spec := fitSpec{h: h, windowDays: def.WindowDays, horizonDays: def.HorizonDays, c: opt.C, seed: opt.Seed,
		bgnbdThrough: firstOf(dates, parts, snapshots.Validation)}

	// Each model trains, calibrates and is scored on its own goroutine:
	// the models are independent, and one model's serial stretches leave a
	// core idle that another can use. Results keep the order of opt.Models.
	progress(20, "training "+strings.Join(opt.Models, ", "))
	fits := make([]modelFit, len(opt.Models))
	parallel(len(opt.Models), func(i int) error {
		fits[i] = fitAndEvaluate(opt.Models[i], trainF, validF, testF, testLabels, spec, opt)
		return fits[i].err
	})
	var ranked []store.RankedList
	testScores := map[string][]float64{}
	for _, f := range fits {
		if f.err != nil {
			return 0, nil, f.err
		}
		rep.Models = append(rep.Models, f.report)
		ranked = append(ranked, f.ranked...)
		testScores[f.report.Name] = f.scores
		rep.Seconds["train_"+f.report.Name] = f.trainSeconds
		rep.Seconds["evaluate_"+f.report.Name] = f.evalSeconds
	}
	stage("models")

	// The evaluated rows are kept with the run (for the models page's
	// download) and written to TestRows when asked.
	var testRowsCSV bytes.Buffer
	if err := writeTestRows(&testRowsCSV, testF, keys, opt.Models, testScores); err != nil {
		return 0, nil, fmt.Errorf("write test rows: %w", err)
	}
	if opt.TestRows != nil {
		if _, err := opt.TestRows.Write(testRowsCSV.Bytes()); err != nil {
			return 0, nil, fmt.Errorf("write test rows: %w", err)
		}
	}

	if opt.Folds > 1 {
		progress(70, "earlier folds")
		if rep.Folds, err = earlierFolds(fr, tab, dates, spec, opt); err != nil {
			return 0, nil, err
		}
		stage("folds")
	}

	// Then, side by side: the intervals (one set of resampled customers
	// serves every model and every paired difference from the baseline),
	// the row-cap check, and the refit for lists of every model on every
	// labelled date before the latest slice, recalibrated on that slice.
	progress(75, "intervals and refitting on all labelled snapshots")
	refitF, sliceF := subset(fr, refit), subset(fr, latestSlice)
	rep.RefitOnDates = rep.Dates[snapshots.Train.String()] + rep.Dates[snapshots.Validation.String()] + rep.Dates[snapshots.Dropped.String()]
	rep.CalibratedOnDate = fmt.Sprintf("%s to %s", tab.Date[latestSlice[0]], latest)
	refitSpec := spec
	refitSpec.bgnbdThrough = firstOf(dates, parts, snapshots.Test)
	meta := model.Meta{ChurnDefinitionVersion: strconv.Itoa(def.Seq), DatasetVersion: strconv.Itoa(d.Seq), Seed: opt.Seed}
	refits := make([][]byte, len(fits))
	refs := make([]Reference, len(fits))
	rep.FeatureReferences = featureReferences(sliceF)
	var ivs []evaluate.Intervals
	var vsBase []evaluate.Interval
	n := len(fits)
	err = parallel(n+2, func(i int) error {
		var err error
		switch {
		case i < n:
			refits[i], refs[i], err = refitModel(fits[i], refitF, sliceF, refitSpec, meta, opt)
		case i == n:
			all := make([][]float64, n)
			for k, f := range fits {
				all[k] = f.scores
			}
			ivs, vsBase, err = evaluate.BootstrapMany(all, testLabels, clusters, slices.Index(opt.Models, "baseline"), bopt)
			if err != nil {
				err = fmt.Errorf("evaluate: %w", err)
			}
		case slices.Contains(opt.Models, "logistic"):
			rep.CapCheck, err = capCheck(tab, fr, train, validF, testF, testLabels, spec, opt)
		}
		return err
	})
	if err != nil {
		return 0, nil, err
	}
	for i := range rep.Models {
		mr := &rep.Models[i]
		mr.ROCAUC, mr.AveragePrecision, mr.Brier, mr.LogLoss = ivs[i].ROCAUC, ivs[i].AveragePrecision, ivs[i].Brier, ivs[i].LogLoss
		if vsBase != nil && mr.Name != "baseline" {
			mr.AUCvsBaseline = &vsBase[i]
		}
		mr.ScoreReference = &refs[i]
		if c := rep.CapCheck; c != nil && mr.Name == c.Model {
			c.ROCAUC = mr.ROCAUC.Estimate
		}
	}
	var stored []store.StoredModel
	order := bestFirst(rep.Models)
	for _, i := range order {
		summary, _ := json.Marshal(rep.Models[i])
		stored = append(stored, store.StoredModel{Name: fits[i].report.Name, Kind: string(fits[i].m.Kind), Model: refits[i], Summary: summary})
	}
	stage("intervals_and_refit")
	progress(97, "saving")
	optJSON, err := json.Marshal(opt)
	if err != nil {
		return 0, nil, fmt.Errorf("encode training options: %w", err)
	}
	repJSON, err := json.Marshal(rep)
	if err != nil {
		return 0, nil, err
	}
	useFirst := len(order) > 0 && rep.Models[order[0]].Name != "baseline"
	// The run, its models, rankings and test rows in one transaction: a run
	// is all there or not at all.
	runID, ids, err := st.InsertTrainingRun(ctx, store.TrainingRun{DatasetID: d.ID, VersionID: d.Version, DefinitionID: def.ID,
		Options: optJSON, Report: repJSON, CreatedBy: by, CreatedAt: now, Ranked: ranked, TestRows: testRowsCSV.Bytes()}, stored, useFirst)
	if err != nil {
		return 0, nil, err
	}
	for k, i := range order {
		rep.Models[i].ID = ids[k]
	}
	progress(100, "done")
	return runID, rep, nil
}

// bestFirst orders the models by test ROC AUC, best first, non-baselines
// before the baseline on a tie.
func bestFirst(ms []ModelReport) []int {
	idx := make([]int, len(ms))
	for i := range idx {
		idx[i] = i
	}
	slices.SortStableFunc(idx, func(a, b int) int {
		if (ms[a].Name == "baseline") != (ms[b].Name == "baseline") {
			if ms[a].Name == "baseline" {
				return 1
			}
			return -1
		}
		switch {
		case ms[a].ROCAUC.Estimate > ms[b].ROCAUC.Estimate:
			return -1
		case ms[a].ROCAUC.Estimate < ms[b].ROCAUC.Estimate:
			return 1
		}
		return 0
	})
	return idx
}

// modelFit is one model trained, calibrated and evaluated on the test rows.
type modelFit struct {
	m                         *model.Model
	report                    ModelReport
	scores                    []float64 // calibrated, on the test rows
	ranked                    []store.RankedList
	trainSeconds, evalSeconds float64
	err                       error
}

// fitAndEvaluate trains one model, calibrates it on the validation slice
// and evaluates it on the test rows (point figures; intervals come later).
func fitAndEvaluate(name string, trainF, validF, testF *frame.Frame, labels []bool, spec fitSpec, opt TrainOptions) modelFit {
	var f modelFit
	t0 := clockOf(opt)
	m, err := trainModel(name, trainF, validF, spec)
	if err != nil {
		f.err = err
		return f
	}
	if err := m.Calibrate(model.CalibrationKind(opt.Calibration), validF); err != nil {
		f.err = err
		return f
	}
	t1 := clockOf(opt)
	f.m = m
	if f.scores, err = m.Predict(testF); err != nil {
		f.err = err
		return f
	}
	f.report, f.err = evaluateModel(name, m, f.scores, testF, labels, spec.horizonDays, opt, &f.ranked)
	t2 := clockOf(opt)
	f.trainSeconds, f.evalSeconds = t1.Sub(t0).Seconds(), t2.Sub(t1).Seconds()
	return f
}

// refitModel refits an evaluated model on refitF (the trees keep the
// number of rounds early stopping chose), recalibrates it on sliceF and
// encodes it; it returns the calibrated scores on sliceF binned by their
// deciles, the reference for drift.
func refitModel(f modelFit, refitF, sliceF *frame.Frame, spec fitSpec, meta model.Meta, opt TrainOptions) ([]byte, Reference, error) {
	if f.m.Trees != nil {
		spec.rounds = max(len(f.m.Trees.Trees), 1)
	}
	m, err := trainModel(f.report.Name, refitF, nil, spec)
	if err != nil {
		return nil, Reference{}, err
	}
	if err := m.Calibrate(model.CalibrationKind(opt.Calibration), sliceF); err != nil {
		return nil, Reference{}, err
	}
	scores, err := m.Predict(sliceF)
	if err != nil {
		return nil, Reference{}, err
	}
	m.Meta = meta
	body, err := m.Save()
	return body, NewReference(scores), err
}

// clockOf reads the options' clock (the zero time without one).
func clockOf(opt TrainOptions) time.Time {
	if opt.Clock == nil {
		return time.Time{}
	}
	return opt.Clock()
}

// parallel runs fn(0) … fn(n−1) on their own goroutines and returns the
// error of the lowest index that failed.
func parallel(n int, fn func(i int) error) error {
	errs := make([]error, n)
	var wg sync.WaitGroup
	for i := range n {
		wg.Go(func() { errs[i] = fn(i) })
	}
	wg.Wait()
	for _, err := range errs {
		if err != nil {
			return err
		}
	}
	return nil
}

// bgnbdSample bounds the customers a BG/NBD fit reads (see
// snapshots.FitBGNBD).
const bgnbdSample = 50_000

// fitSpec is what fitting a model needs besides its frames.
type fitSpec struct {
	h                       *history.History
	windowDays, horizonDays int
	c                       float64 // logistic L2 strength
	seed                    uint64
	// rounds, when positive, fixes the trees' number instead of early
	// stopping (the refit uses the rounds the evaluated fit kept).
	rounds int
	// bgnbdThrough is the last order day the BG/NBD model's parameters
	// read: the first date its calibration uses, so neither calibration nor
	// test sees a fit on their own future.
	bgnbdThrough civil.Date
}

// firstOf returns the first date in part p (the last date when none is).
func firstOf(dates []civil.Date, parts []snapshots.Part, p snapshots.Part) civil.Date {
	for i, q := range parts {
		if q == p {
			return dates[i]
		}
	}
	return dates[len(dates)-1]
}

// trainModel fits one model. valid, when given, early-stops the trees.
func trainModel(name string, train, valid *frame.Frame, spec fitSpec) (*model.Model, error) {
	switch name {
	case "baseline":
		return model.TrainBaseline("recency_days", float64(spec.windowDays))
	case "logistic":
		return model.TrainLogistic(train, train.Names(), model.LogisticOptions{C: spec.c})
	case "trees":
		opt := model.TreesOptions{Seed: spec.seed}
		if spec.rounds > 0 {
			opt.MaxIter, valid = spec.rounds, nil
		}
		return model.TrainTrees(train, train.Names(), valid, opt)
	case "bgnbd":
		p, info, err := snapshots.FitBGNBD(spec.h, spec.bgnbdThrough, bgnbdSample, spec.seed)
		if err != nil {
			return nil, fmt.Errorf("fit BG/NBD through %s: %w", spec.bgnbdThrough, err)
		}
		if !info.Converged {
			return nil, problem.New(problem.Invalid, "BG/NBD did not converge on the orders through %s; leave it out with --models or use a longer history", spec.bgnbdThrough)
		}
		return model.NewBGNBD(p, float64(spec.horizonDays), spec.bgnbdThrough.String())
	}
	return nil, problem.New(problem.Invalid, "unknown model %q (want baseline, logistic, trees or bgnbd)", name)
}

// evaluateModel gives one model's point figures on the test rows; the
// intervals come after every model is scored (evaluate.BootstrapMany).
func evaluateModel(name string, m *model.Model, scores []float64, testF *frame.Frame, labels []bool, horizon int,
	opt TrainOptions, ranked *[]store.RankedList) (ModelReport, error) {
	mr := ModelReport{Name: name}
	var err error
	// First-time (one order day) and repeat customers separately.
	total, _ := testF.Col("order_days_total")
	var s1, s2 []float64
	var l1, l2 []bool
	for i, v := range total {
		if v == 1 {
			s1, l1 = append(s1, scores[i]), append(l1, labels[i])
		} else {
			s2, l2 = append(s2, scores[i]), append(l2, labels[i])
		}
	}
	mr.ROCAUCFirstTime, _ = evaluate.ROCAUC(s1, l1)
	mr.ROCAUCRepeat, _ = evaluate.ROCAUC(s2, l2)
	// Lists are drawn on one date: evaluate per test date, then average.
	byDate := map[int32][]int{}
	for i, d := range testF.Days() {
		byDate[d] = append(byDate[d], i)
	}
	days := make([]int32, 0, len(byDate))
	for d := range byDate {
		days = append(days, d)
	}
	slices.Sort(days)
	// One ranking per test date serves the stored summary and every list size.
	var rankings []*evaluate.Ranking
	for _, d := range days {
		rows := byDate[d]
		sc := make([]float64, len(rows))
		lb := make([]bool, len(rows))
		keys := make([]uint64, len(rows))
		pos := 0
		for k, r := range rows {
			sc[k], lb[k], keys[k] = scores[r], labels[r], tieKey(opt.Seed, testF.Customers()[r])
			if lb[k] {
				pos++
			}
		}
		*ranked = append(*ranked, store.RankedList{Model: name, Day: civil.Date(d).String(), Customers: len(rows), Positives: pos,
			Data: encodeRanked(sc, lb, keys)})
		if rk, err := evaluate.NewRanking(sc, lb, keys); err == nil {
			rankings = append(rankings, rk) // a date whose customers all ordered again has no recall
		}
	}
	for _, pct := range []float64{5, 10, 20} {
		var lists []evaluate.List
		var lastList evaluate.List
		for _, rk := range rankings {
			l, err := rk.TopPercent(pct)
			if err != nil {
				return mr, fmt.Errorf("evaluate %s: top %g%%: %w", name, pct, err)
			}
			lists = append(lists, l)
			lastList = l
		}
		if len(lists) == 0 {
			continue
		}
		avg, err := evaluate.AverageLists(lists)
		if err != nil {
			return mr, err
		}
		mr.Lists = append(mr.Lists, ListFigures{Label: fmt.Sprintf("top %g%%", pct), Size: avg.MeanSize, Precision: avg.MeanPrecision,
			Recall: avg.MeanRecall, PrecisionSentence: evaluate.PrecisionSentence(lastList.Size, lastList.Positives, horizon),
			RecallSentence: evaluate.RecallSentence(lastList.AllPositives, lastList.Positives)})
	}
	if roc, err := evaluate.ROCCurve(scores, labels); err == nil {
		pts := make([][2]float64, len(roc))
		for i, p := range roc {
			pts[i] = [2]float64{p.FPR, p.TPR}
		}
		mr.ROC = thin(pts, curvePoints)
	}
	if pr, err := evaluate.PRCurve(scores, labels); err == nil {
		pts := make([][2]float64, len(pr))
		for i, p := range pr {
			pts[i] = [2]float64{p.Recall, p.Precision}
		}
		mr.PR = thin(pts, curvePoints)
	}
	if mr.Calibration, err = evaluate.CalibrationQuantile(scores, labels, 10); err != nil {
		return mr, fmt.Errorf("evaluate %s: calibration: %w", name, err)
	}
	keys := make([]uint64, len(scores))
	for i, c := range testF.Customers() {
		keys[i] = tieKey(opt.Seed, c)
	}
	if rk, err := evaluate.NewRanking(scores, labels, keys); err == nil {
		mr.Gains, _ = rk.Gains(10)
	}
	mr.ScoreLapsed, mr.ScoreReturned = make([]int, 20), make([]int, 20)
	for i, p := range scores {
		b := min(max(int(p*20), 0), 19)
		if labels[i] {
			mr.ScoreLapsed[b]++
		} else {
			mr.ScoreReturned[b]++
		}
	}
	if m.Kind == model.KindLogistic {
		if mr.Importance, err = permutationImportance(m, testF, labels, opt.Seed); err != nil {
			return mr, fmt.Errorf("evaluate %s: importance: %w", name, err)
		}
	}
	if m.Logistic != nil {
		for j, term := range m.Logistic.Terms {
			mr.Coefficients = append(mr.Coefficients, Coefficient{Term: term, Value: m.Logistic.Coef[j]})
		}
	}
	return mr, nil
}

// capCheck trains the logistic model on a customer sample of half the
// training rows and scores it on the test rows.
func capCheck(tab *snapshots.Table, fr *frame.Frame, train []int, validF, testF *frame.Frame, labels []bool, spec fitSpec, opt TrainOptions) (*CapCheck, error) {
	half := sampleCustomers(tab.Customer, train, len(train)/2, opt.Seed+7)
	m, err := trainModel("logistic", subset(fr, half), validF, spec)
	if err != nil {
		return nil, fmt.Errorf("row cap check: %w", err)
	}
	if err := m.Calibrate(model.CalibrationKind(opt.Calibration), validF); err != nil {
		return nil, fmt.Errorf("row cap check: %w", err)
	}
	scores, err := m.Predict(testF)
	if err != nil {
		return nil, fmt.Errorf("row cap check: %w", err)
	}
	auc, err := evaluate.ROCAUC(scores, labels)
	if err != nil {
		return nil, fmt.Errorf("row cap check: %w", err)
	}
	return &CapCheck{Model: "logistic", Rows: len(train), SampledRows: len(half), SampledROCAUC: auc}, nil
}

// truthAUC is the ROC AUC of the true probabilities of the test rows, 0
// when any row's is unknown.
func truthAUC(truth TruthFunc, testF *frame.Frame, keys []string, horizon int, labels []bool) float64 {
	p := make([]float64, testF.Rows())
	for i, c := range testF.Customers() {
		p[i] = truth(keys[c], civil.Date(testF.Days()[i]), horizon)
		if math.IsNaN(p[i]) {
			return 0
		}
	}
	auc, err := evaluate.ROCAUC(p, labels)
	if err != nil {
		return 0
	}
	return auc
}

// tieKey breaks ties in scores by a keyed hash of the customer, never by
// input order.
func tieKey(seed uint64, customer int32) uint64 { return snapshots.CustomerHash(seed, customer) }

// sampleCustomers keeps about max of rows, whole customers at a time, by
// a keyed hash of the customer (customers[r] is row r's customer).
func sampleCustomers(customers []int32, rows []int, max int, seed uint64) []int {
	if len(rows) <= max {
		return rows
	}
	limit := snapshots.ShareLimit(float64(max) / float64(len(rows)))
	var out []int
	for _, r := range rows {
		if tieKey(seed+1, customers[r]) < limit {
			out = append(out, r)
		}
	}
	return out
}

func toFrame(tab *snapshots.Table) (*frame.Frame, error) {
	cols := make([][]float64, len(tab.Cols))
	for j, c := range tab.Cols {
		cols[j] = make([]float64, len(c))
		for i, v := range c {
			cols[j][i] = float64(v)
		}
	}
	days := make([]int32, len(tab.Date))
	for i, d := range tab.Date {
		days[i] = int32(d)
	}
	return frame.FromColumns(tab.Names, cols, tab.Label, tab.Customer, days)
}

func subset(f *frame.Frame, rows []int) *frame.Frame {
	s, err := f.Subset(rows)
	if err != nil {
		panic(err) // rows come from f itself
	}
	return s
}

func boolLabels(ys []uint8) []bool {
	out := make([]bool, len(ys))
	for i, y := range ys {
		out[i] = y == 1
	}
	return out
}

// writeTestRows writes the evaluated test rows with every model's
// calibrated score (RFC 4180 via encoding/csv).
func writeTestRows(w io.Writer, testF *frame.Frame, keys []string, names []string, scores map[string][]float64) error {
	cw := csv.NewWriter(w)
	cw.Write(append([]string{"customer_id", "snapshot_date", "label"}, names...))
	rec := make([]string, 3+len(names))
	for i := 0; i < testF.Rows(); i++ {
		rec[0] = keys[testF.Customers()[i]]
		rec[1] = civil.Date(testF.Days()[i]).String()
		rec[2] = strconv.Itoa(int(testF.Labels()[i]))
		for j, n := range names {
			rec[3+j] = strconv.FormatFloat(scores[n][i], 'g', 10, 64)
		}
		if err := cw.Write(rec); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

// KindTrain is the job kind of a training run.
const KindTrain = "train"

// TrainParams are a training job's parameters.
type TrainParams struct {
	DatasetID int64        `json:"dataset_id"`
	Options   TrainOptions `json:"options"`
}

// TrainJobResult is a training job's result: the run and its report.
type TrainJobResult struct {
	DatasetID int64        `json:"dataset_id"`
	RunID     int64        `json:"run_id"`
	Report    *TrainReport `json:"report"`
}

// TrainJob returns the job function of a training run.
//
// truth, when not nil, gives the true probabilities of a dataset known to be
// generated (nil for any other).
func TrainJob(st *store.Store, cache *Histories, now func() time.Time, truth func(dataset string) TruthFunc) jobs.Func {
	return func(ctx context.Context, j jobs.Job, p *jobs.Progress) ([]byte, error) {
		var params TrainParams
		if err := json.Unmarshal(j.Params, &params); err != nil {
			return nil, fmt.Errorf("train job %d: params: %w", j.ID, err)
		}
		params.Options.Clock = now
		if truth != nil {
			if d, err := st.DatasetByID(ctx, params.DatasetID); err == nil {
				params.Options.Truth = truth(d.Name)
			}
		}
		id, rep, err := Train(ctx, st, cache, params.DatasetID, params.Options, j.CreatedBy, now(), p.Set)
		if err != nil {
			return nil, err
		}
		return json.Marshal(TrainJobResult{DatasetID: params.DatasetID, RunID: id, Report: rep})
	}
}

// importanceRows bounds the test rows permutation importance shuffles:
// a drop in AUC is measured well on 50k rows, at a quarter of the cost.
const importanceRows = 50_000

// permutationImportance shuffles one feature at a time across (a customer
// sample of at most importanceRows of) the test rows, seeded, and reports
// how much the model's ROC AUC drops.
func permutationImportance(m *model.Model, testF *frame.Frame, labels []bool, seed uint64) ([]Coefficient, error) {
	if n := testF.Rows(); n > importanceRows {
		all := make([]int, n)
		for i := range all {
			all[i] = i
		}
		rows := sampleCustomers(testF.Customers(), all, importanceRows, seed+1)
		testF = subset(testF, rows)
		sub := make([]bool, len(rows))
		for k, i := range rows {
			sub[k] = labels[i]
		}
		labels = sub
	}
	base, err := m.Predict(testF)
	if err != nil {
		return nil, err
	}
	auc, err := evaluate.ROCAUC(base, labels)
	if err != nil {
		return nil, err
	}
	names := testF.Names()
	cols := make([][]float64, len(names))
	for j := range names {
		cols[j] = testF.ColAt(j)
	}
	rng := rand.New(rand.NewPCG(seed, 0x7065726d))
	perm := make([]int, testF.Rows())
	var out []Coefficient
	for j, name := range names {
		if !slices.Contains(m.Features, name) {
			continue
		}
		for i := range perm {
			perm[i] = i
		}
		rng.Shuffle(len(perm), func(a, b int) { perm[a], perm[b] = perm[b], perm[a] })
		shuffled := make([]float64, len(perm))
		for i, k := range perm {
			shuffled[i] = cols[j][k]
		}
		swapped := slices.Clone(cols)
		swapped[j] = shuffled
		f, err := frame.FromColumns(names, swapped, testF.Labels(), testF.Customers(), testF.Days())
		if err != nil {
			return nil, err
		}
		s, err := m.Predict(f)
		if err != nil {
			return nil, err
		}
		a, err := evaluate.ROCAUC(s, labels)
		if err != nil {
			return nil, err
		}
		out = append(out, Coefficient{Term: name, Value: auc - a})
	}
	slices.SortStableFunc(out, func(a, b Coefficient) int { return cmp.Compare(b.Value, a.Value) })
	return out, nil
}

// earlierFolds trains and evaluates every model on each rolling-origin
// fold before the latest one (point figures, no intervals).
func earlierFolds(fr *frame.Frame, tab *snapshots.Table, dates []civil.Date, spec fitSpec, opt TrainOptions) ([]FoldReport, error) {
	horizon := spec.horizonDays
	folds, err := snapshots.Folds(dates, horizon, opt.Folds)
	if err != nil {
		return nil, err
	}
	var out []FoldReport
	for _, parts := range folds[:len(folds)-1] {
		partOf := make(map[civil.Date]snapshots.Part, len(dates))
		var from, to civil.Date
		for i, t := range dates {
			partOf[t] = parts[i]
			if parts[i] == snapshots.Test {
				if from == 0 {
					from = t
				}
				to = t
			}
		}
		var train, valid, test []int
		for r, t := range tab.Date {
			switch partOf[t] {
			case snapshots.Train:
				train = append(train, r)
			case snapshots.Validation:
				valid = append(valid, r)
			case snapshots.Test:
				test = append(test, r)
			}
		}
		test = sampleCustomers(tab.Customer, test, opt.TestSample, opt.Seed)
		trainF, validF, testF := subset(fr, train), subset(fr, valid), subset(fr, test)
		labels := boolLabels(testF.Labels())
		fold := FoldReport{TestFrom: from.String(), TestTo: to.String()}
		foldSpec := spec
		foldSpec.bgnbdThrough = firstOf(dates, parts, snapshots.Validation)
		for _, name := range opt.Models {
			m, err := trainModel(name, trainF, validF, foldSpec)
			if err != nil {
				return nil, err
			}
			if err := m.Calibrate(model.CalibrationKind(opt.Calibration), validF); err != nil {
				return nil, err
			}
			scores, err := m.Predict(testF)
			if err != nil {
				return nil, err
			}
			fm := FoldModel{Name: name}
			fm.ROCAUC, _ = evaluate.ROCAUC(scores, labels)
			fm.AveragePrecision, _ = evaluate.AveragePrecision(scores, labels)
			fm.Brier, _ = evaluate.Brier(scores, labels)
			fold.Models = append(fold.Models, fm)
		}
		out = append(out, fold)
	}
	return out, nil
}
