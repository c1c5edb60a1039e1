package model

import (
	"errors"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"ebb/internal/frame"
)

// Platt scaling, hand-worked: with two distinct scores the two-parameter
// logistic fit reproduces the mean (smoothed) target at each score exactly.
// Platt (1999) targets: positives (N₊+1)/(N₊+2), negatives 1/(N₋+2).
func TestPlattHandWorked(t *testing.T) {
	tests := []struct {
		name   string
		scores []float64
		labels []uint8
		// calibrated value expected at each distinct score
		at   []float64
		want []float64
	}{
		{
			// N₊ = 5, N₋ = 5: t₊ = 6/7, t₋ = 1/7.
			// score 0: 1 positive of 4 → (6/7 + 3/7)/4 = 9/28.
			// score 1: 4 positives of 6 → (24/7 + 2/7)/6 = 13/21.
			name:   "two scores, five positives",
			scores: []float64{0, 0, 0, 0, 1, 1, 1, 1, 1, 1},
			labels: []uint8{1, 0, 0, 0, 1, 1, 1, 1, 0, 0},
			at:     []float64{0, 1},
			want:   []float64{9.0 / 28, 13.0 / 21},
		},
		{
			// Separable: N₊ = 2, N₋ = 3: t₊ = 3/4, t₋ = 1/5; the fit is
			// finite and reproduces the targets: 1/5 at −2, 3/4 at 5.
			name:   "separable scores stay finite",
			scores: []float64{-2, -2, -2, 5, 5},
			labels: []uint8{0, 0, 0, 1, 1},
			at:     []float64{-2, 5},
			want:   []float64{0.2, 0.75},
		},
		{
			// One distinct score: slope 0, P = mean target
			// (3·(4/5) + 1·(1/3))/4 = 41/60 with N₊ = 3, N₋ = 1.
			name:   "one score",
			scores: []float64{0.4, 0.4, 0.4, 0.4},
			labels: []uint8{1, 1, 1, 0},
			at:     []float64{0.4, 0.9},
			want:   []float64{41.0 / 60, 41.0 / 60},
		},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			p, err := FitPlatt(tc.scores, tc.labels)
			if err != nil {
				t.Fatal(err)
			}
			for i, x := range tc.at {
				if got := p.Calibrate(x); !near(got, tc.want[i], 1e-10) {
					t.Errorf("calibrated(%v) = %.15f, want %.15f ± 1e-10", x, got, tc.want[i])
				}
			}
		})
	}
	// The first case in closed form: intercept = logit(9/28) = ln(9/19),
	// slope = logit(13/21) − logit(9/28) = ln(13/8) − ln(9/19).
	p, err := FitPlatt(tests[0].scores, tests[0].labels)
	if err != nil {
		t.Fatal(err)
	}
	if !near(p.Intercept, math.Log(9.0/19), 1e-10) || !near(p.Slope, math.Log(13.0/8)-math.Log(9.0/19), 1e-10) {
		t.Errorf("Platt = %+v, want intercept ln(9/19), slope ln(13/8) − ln(9/19)", *p)
	}
}

func TestCalibrationErrors(t *testing.T) {
	tests := []struct {
		name   string
		kind   CalibrationKind
		scores []float64
		labels []uint8
	}{
		{"length mismatch platt", CalibrationPlatt, []float64{1, 2}, []uint8{1}},
		{"length mismatch isotonic", CalibrationIsotonic, []float64{1, 2}, []uint8{1}},
		{"empty platt", CalibrationPlatt, nil, nil},
		{"empty isotonic", CalibrationIsotonic, nil, nil},
		{"NaN score platt", CalibrationPlatt, []float64{math.NaN(), 1}, []uint8{0, 1}},
		{"NaN score isotonic", CalibrationIsotonic, []float64{math.NaN(), 1}, []uint8{0, 1}},
		{"label 2", CalibrationPlatt, []float64{0, 1}, []uint8{0, 2}},
		{"unknown kind", "beta", []float64{0, 1}, []uint8{0, 1}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if _, err := FitCalibration(tc.kind, tc.scores, tc.labels); err == nil {
				t.Error("no error")
			}
		})
	}
}

// synthetic returns a frame of n rows: recency_days and k−1 other features,
// one of them with 10% missing values, labels drawn from a known logistic
// model, keys set. Seeded: the same arguments give the same frame.
func synthetic(tb testing.TB, n, k int, seed uint64) *frame.Frame {
	tb.Helper()
	names := make([]string, k)
	names[0] = "recency_days"
	for j := 1; j < k; j++ {
		names[j] = "f" + string(rune('a'+j-1))
	}
	f, err := frame.New(names, n)
	if err != nil {
		tb.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(seed, 7))
	for i := range n {
		eta := -1.0
		for j := range k {
			var v float64
			if j == 0 {
				v = math.Floor(rng.ExpFloat64() * 60)
				eta += 0.02 * v
			} else {
				v = rng.NormFloat64()*float64(j) + float64(j)
				eta += 0.3 * float64(j%3-1) * (v - float64(j)) / float64(j)
			}
			f.ColAt(j)[i] = v
		}
		if k > 2 && rng.Float64() < 0.1 {
			f.ColAt(2)[i] = frame.Missing
		}
		if rng.Float64() < sigmoid(eta) {
			f.Labels()[i] = 1
		}
		f.Customers()[i] = int32(i % 50000)
		f.Days()[i] = int32(19000 + i/50000)
	}
	return f
}

func TestPredictionsAreProbabilitiesAndCalibrationIsMonotone(t *testing.T) {
	train := synthetic(t, 4000, 6, 1)
	valid := synthetic(t, 2000, 6, 2)
	test := synthetic(t, 2000, 6, 3)
	features := train.Names()
	tests := []struct {
		name  string
		train func() (*Model, error)
		cal   CalibrationKind
	}{
		{"logistic uncalibrated", func() (*Model, error) { return TrainLogistic(train, features, LogisticOptions{C: 1}) }, ""},
		{"logistic platt", func() (*Model, error) { return TrainLogistic(train, features, LogisticOptions{C: 1}) }, CalibrationPlatt},
		{"logistic isotonic", func() (*Model, error) { return TrainLogistic(train, features, LogisticOptions{C: 0.01}) }, CalibrationIsotonic},
		{"baseline platt", func() (*Model, error) { return TrainBaseline("recency_days", 45) }, CalibrationPlatt},
		{"baseline isotonic", func() (*Model, error) { return TrainBaseline("recency_days", 45) }, CalibrationIsotonic},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			m, err := tc.train()
			if err != nil {
				t.Fatal(err)
			}
			if tc.cal != "" {
				if err := m.Calibrate(tc.cal, valid); err != nil {
					t.Fatal(err)
				}
			}
			raw, err := m.Score(test)
			if err != nil {
				t.Fatal(err)
			}
			p, err := m.Predict(test)
			if err != nil {
				t.Fatal(err)
			}
			for i, v := range p {
				if m.Kind == KindBaseline && tc.cal == "" {
					break
				}
				// Isotonic may return exactly 0 or 1 (an all-negative or
				// all-positive block); Platt and logistic are strictly inside.
				if tc.cal == CalibrationIsotonic {
					if !(v >= 0 && v <= 1) {
						t.Fatalf("row %d: prediction %v outside [0, 1]", i, v)
					}
				} else if !(v > 0 && v < 1) {
					t.Fatalf("row %d: prediction %v outside (0, 1)", i, v)
				}
			}
			// Calibration never reverses the order of raw scores.
			order := make([]int, len(raw))
			for i := range order {
				order[i] = i
			}
			slices.SortFunc(order, func(a, b int) int {
				switch {
				case raw[a] < raw[b]:
					return -1
				case raw[a] > raw[b]:
					return 1
				}
				return 0
			})
			for k := 1; k < len(order); k++ {
				if p[order[k]] < p[order[k-1]] {
					t.Fatalf("calibration not monotone: raw %v → %v but raw %v → %v",
						raw[order[k-1]], p[order[k-1]], raw[order[k]], p[order[k]])
				}
			}
			// Calibrated on the validation slice, the mean prediction there
			// is close to the observed rate (isotonic: exactly, up to
			// rounding; Platt: up to its target smoothing).
			if tc.cal != "" {
				pv, err := m.Predict(valid)
				if err != nil {
					t.Fatal(err)
				}
				var sp, sy float64
				for i, v := range pv {
					sp += v
					sy += float64(valid.Labels()[i])
				}
				tol := 1e-9
				if tc.cal == CalibrationPlatt {
					tol = 1.0 / float64(len(pv))
				}
				if !near(sp/float64(len(pv)), sy/float64(len(pv)), tol) {
					t.Errorf("mean calibrated %v, observed rate %v", sp/float64(len(pv)), sy/float64(len(pv)))
				}
			}
		})
	}
}

func TestBaselineScore(t *testing.T) {
	f, err := frame.FromColumns([]string{"other", "recency_days"},
		[][]float64{{1, 2, 3, 4}, {0, 30, 90, math.NaN()}}, nil, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		name   string
		column string
		x      float64
		want   []float64
		bad    bool
	}{
		{"X 60", "recency_days", 60, []float64{0, 0.5, 1.5, math.NaN()}, false},
		{"X 1", "recency_days", 1, []float64{0, 30, 90, math.NaN()}, false},
		{"X 0", "recency_days", 0, nil, true},
		{"X negative", "recency_days", -3, nil, true},
		{"no column name", "", 30, nil, true},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			m, err := TrainBaseline(tc.column, tc.x)
			if tc.bad {
				if err == nil {
					t.Fatal("no error")
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			got, err := m.Predict(f)
			if err != nil {
				t.Fatal(err)
			}
			for i := range got {
				if got[i] != tc.want[i] && !(math.IsNaN(got[i]) && math.IsNaN(tc.want[i])) {
					t.Errorf("score[%d] = %v, want %v", i, got[i], tc.want[i])
				}
			}
		})
	}
	m, _ := TrainBaseline("recency", 30)
	if _, err := m.Predict(f); err == nil {
		t.Error("missing column: no error")
	}
}

func TestFitLogisticErrors(t *testing.T) {
	mk := func(cols [][]float64, labels []uint8) *frame.Frame {
		names := make([]string, len(cols))
		for j := range cols {
			names[j] = string(rune('a' + j))
		}
		f, err := frame.FromColumns(names, cols, labels, nil, nil)
		if err != nil {
			t.Fatal(err)
		}
		return f
	}
	tests := []struct {
		name string
		f    *frame.Frame
		opt  LogisticOptions
		want error
	}{
		{"separable unpenalised", mk([][]float64{{1, 2, 3, 4}}, []uint8{0, 0, 1, 1}), LogisticOptions{C: math.Inf(1)}, ErrNotConverged},
		{"missing value", mk([][]float64{{1, math.NaN(), 3, 4}}, []uint8{0, 1, 0, 1}), LogisticOptions{}, nil},
		{"no labels", mk([][]float64{{1, 2}}, nil), LogisticOptions{}, nil},
		{"one class", mk([][]float64{{1, 2}}, []uint8{1, 1}), LogisticOptions{}, nil},
		{"negative C", mk([][]float64{{1, 2}}, []uint8{0, 1}), LogisticOptions{C: -1}, nil},
		{"collinear unpenalised", mk([][]float64{{1, 2, 3, 4, 5}, {2, 4, 6, 8, 10}}, []uint8{0, 1, 0, 1, 1}), LogisticOptions{C: math.Inf(1)}, ErrNotConverged},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := FitLogistic(tc.f, tc.opt)
			if err == nil {
				t.Fatal("no error")
			}
			if tc.want != nil && !errors.Is(err, tc.want) {
				t.Errorf("error %v, want %v", err, tc.want)
			}
		})
	}
	// The separable data fit fine with a penalty.
	if _, err := FitLogistic(mk([][]float64{{1, 2, 3, 4}}, []uint8{0, 0, 1, 1}), LogisticOptions{C: 1}); err != nil {
		t.Errorf("penalised separable fit: %v", err)
	}
}

func TestSaveLoadPredictsIdentically(t *testing.T) {
	train := synthetic(t, 3000, 5, 11)
	valid := synthetic(t, 1500, 5, 12)
	test := synthetic(t, 1500, 5, 13)
	meta := Meta{ChurnDefinitionVersion: "cd-7", DatasetVersion: "shop/v12", Seed: 1<<63 + 12345}
	tests := []struct {
		name  string
		build func() (*Model, error)
		cal   CalibrationKind
	}{
		{"logistic C=1 platt", func() (*Model, error) { return TrainLogistic(train, train.Names(), LogisticOptions{C: 1}) }, CalibrationPlatt},
		{"logistic unpenalised isotonic", func() (*Model, error) {
			return TrainLogistic(train, train.Names(), LogisticOptions{C: math.Inf(1)})
		}, CalibrationIsotonic},
		{"logistic uncalibrated", func() (*Model, error) {
			return TrainLogistic(train, []string{"fb", "recency_days"}, LogisticOptions{C: 0.3})
		}, ""},
		{"baseline isotonic", func() (*Model, error) { return TrainBaseline("recency_days", 37) }, CalibrationIsotonic},
		{"baseline platt", func() (*Model, error) { return TrainBaseline("recency_days", 37) }, CalibrationPlatt},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			m, err := tc.build()
			if err != nil {
				t.Fatal(err)
			}
			if tc.cal != "" {
				if err := m.Calibrate(tc.cal, valid); err != nil {
					t.Fatal(err)
				}
			}
			m.Meta = meta
			data, err := m.Save()
			if err != nil {
				t.Fatal(err)
			}
			back, err := Load(data)
			if err != nil {
				t.Fatalf("load: %v\n%s", err, data)
			}
			if back.Meta != meta {
				t.Errorf("meta %+v, want %+v", back.Meta, meta)
			}
			if back.Kind != m.Kind || !slices.Equal(back.Features, m.Features) {
				t.Errorf("kind/features %v %v, want %v %v", back.Kind, back.Features, m.Kind, m.Features)
			}
			if m.Logistic != nil && (back.Logistic.C != m.Logistic.C || !slices.Equal(back.Logistic.SE, m.Logistic.SE)) {
				t.Errorf("C/SE %v %v, want %v %v", back.Logistic.C, back.Logistic.SE, m.Logistic.C, m.Logistic.SE)
			}
			want, err := m.Predict(test)
			if err != nil {
				t.Fatal(err)
			}
			got, err := back.Predict(test)
			if err != nil {
				t.Fatal(err)
			}
			for i := range want {
				if math.Float64bits(got[i]) != math.Float64bits(want[i]) {
					t.Fatalf("row %d: reloaded model predicts %v (%x), original %v (%x)", i, got[i], math.Float64bits(got[i]), want[i], math.Float64bits(want[i]))
				}
			}
			again, err := back.Save()
			if err != nil {
				t.Fatal(err)
			}
			if string(again) != string(data) {
				t.Errorf("save → load → save changed the bytes:\n%s\n%s", data, again)
			}
		})
	}
}

func TestLoadRefusesBadModels(t *testing.T) {
	m, err := TrainBaseline("recency_days", 30)
	if err != nil {
		t.Fatal(err)
	}
	good, err := m.Save()
	if err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		name string
		data string
	}{
		{"not JSON", "{"},
		{"other format", strings.Replace(string(good), `"format":1`, `"format":2`, 1)},
		{"unknown field", strings.Replace(string(good), `"format":1`, `"format":1,"extra":true`, 1)},
		{"unknown kind", strings.Replace(string(good), `"recency_baseline"`, `"forest"`, 1)},
		{"zero window", strings.Replace(string(good), `"x":30`, `"x":0`, 1)},
		{"features disagree", strings.Replace(string(good), `"features":["recency_days"]`, `"features":["tenure_days"]`, 1)},
		{"logistic without parameters", `{"format":1,"kind":"logistic","features":["a"],"meta":{"churn_definition_version":"","dataset_version":"","seed":0}}`},
		{"isotonic out of order", strings.Replace(string(good), `"meta"`, `"calibration":{"kind":"isotonic","isotonic":{"x":[1,0],"y":[0,1]}},"meta"`, 1)},
		{"platt without parameters", strings.Replace(string(good), `"meta"`, `"calibration":{"kind":"platt"},"meta"`, 1)},
	}
	if _, err := Load(good); err != nil {
		t.Fatalf("good model refused: %v\n%s", err, good)
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if tc.data == string(good) {
				t.Fatal("test case did not change the model")
			}
			if _, err := Load([]byte(tc.data)); err == nil {
				t.Errorf("loaded %s", tc.data)
			}
		})
	}
}

// Coefficients recover the generating model on a large synthetic sample,
// and the unpenalised SEs agree with the spread of refits (a consistency
// check of the inverse-Hessian SEs on data unlike the references).
func TestLogisticRecoversGeneratingModel(t *testing.T) {
	f := synthetic(t, 60000, 2, 5) // recency_days, fa: η = −1 + 0.02·r + 0·fa
	fit, err := FitLogistic(f, LogisticOptions{C: math.Inf(1)})
	if err != nil {
		t.Fatal(err)
	}
	want := []float64{-1, 0.02, 0}
	got := append([]float64{fit.Intercept}, fit.Coef...)
	for j := range want {
		// 4 standard errors: fails by chance about once in 15 000 runs
		// per coefficient, and never with this fixed seed.
		if math.Abs(got[j]-want[j]) > 4*fit.SE[j] {
			t.Errorf("coef %d = %v ± %v, generating value %v", j, got[j], fit.SE[j], want[j])
		}
	}
}

func TestCalibrationKeepsNaN(t *testing.T) {
	tests := []struct {
		name string
		kind CalibrationKind
	}{
		{"platt", CalibrationPlatt},
		{"isotonic", CalibrationIsotonic},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			c, err := FitCalibration(tc.kind, []float64{0.1, 0.4, 0.2, 0.9}, []uint8{0, 1, 0, 1})
			if err != nil {
				t.Fatal(err)
			}
			s := []float64{math.NaN(), 0.3}
			c.Apply(s)
			if !math.IsNaN(s[0]) || math.IsNaN(s[1]) {
				t.Errorf("calibrated %v, want [NaN, a number]", s)
			}
		})
	}
}

// Training twice on the same data gives byte-identical saved models.
func TestTrainingIsRepeatable(t *testing.T) {
	train := synthetic(t, 5000, 6, 21)
	valid := synthetic(t, 2000, 6, 22)
	var saved [2][]byte
	for k := range saved {
		m, err := TrainLogistic(train, train.Names(), LogisticOptions{C: 0.5})
		if err != nil {
			t.Fatal(err)
		}
		if err := m.Calibrate(CalibrationIsotonic, valid); err != nil {
			t.Fatal(err)
		}
		if saved[k], err = m.Save(); err != nil {
			t.Fatal(err)
		}
	}
	if string(saved[0]) != string(saved[1]) {
		t.Errorf("two fits differ:\n%s\n%s", saved[0], saved[1])
	}
}
